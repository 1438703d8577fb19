package dataset

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"strings"
)

// frow is one findings record kept for shaping.
type frow struct {
	subj     int32
	tc       int32 // test code id
	test     int32 // --TEST id, -1 when missing
	str      int32 // --STRESC id, -1 when missing
	unit     int32 // --STRESU id, -1 when missing
	ord      int32 // position in the domain (parts in order)
	flags    uint8
	prec     Precision // of --DTC
	visit    float64
	num      float64 // --STRESN, NaN when missing
	seq      float64 // --SEQ, -Inf when missing
	dlo, dhi float64 // --DTC interval, NaN when missing
}

const (
	fBL      = 1 << iota // --BLFL = Y
	fLOBX                // --LOBXFL = Y
	fNotDone             // --STAT = NOT DONE
)

func (r *frow) notDone() bool { return r.flags&fNotDone != 0 }

// isResult: a row that gives a value to a numeric or a text test.
func (r *frow) isResult() bool { return !r.notDone() && (!math.IsNaN(r.num) || r.str >= 0) }

// hasValue: a row that gives a value to a test of the given kind.
func (r *frow) hasValue(numeric bool) bool {
	if r.notDone() {
		return false
	}
	if numeric {
		return !math.IsNaN(r.num)
	}
	return r.str >= 0
}

type vkey struct {
	tc int32
	q  [maxQual]int32 // qualifier value ids; -2 when not part of the key
}

// An fvar is one findings test (with its added qualifiers) to be made a variable.
type fvar struct {
	key     vkey
	name    string
	label   string
	numeric bool
	unit    string
	quals   []string
	qvals   []string // qualifier values in key order, for sorting
	info    ShapedVar
	rows    []int32 // row indices sorted by subject, visit, --SEQ, order
}

// An fdomain is a findings domain read into rows, with its variables.
type fdomain struct {
	d                              *sdDomain
	rows                           []frow
	qnames                         []string // qualifier columns present, e.g. "VSPOS"
	qv                             []int32  // qualifier value ids, len(rows)*len(qnames)
	tcs, tests, strs, units, qvals interner
	vars                           []*fvar // variables made, sorted by test code then qualifier values
}

// readFindings reads a findings domain: drops rows without a subject in DM,
// a test code or a usable VISITNUM; detects the qualifiers to add; groups
// the rows into variables and checks their units.
func (sh *shaper) readFindings(d *sdDomain) *fdomain {
	f := &fdomain{d: d}
	for _, q := range sh.o.Qualifiers {
		if d.hasCol(d.code + q) {
			f.qnames = append(f.qnames, d.code+q)
		}
	}
	nq := len(f.qnames)
	textAt := func(c *Column, in *interner) func(int) int32 {
		if c == nil {
			return func(int) int32 { return -1 }
		}
		codes, lev := texts(c)
		remap := in.remap(lev)
		return func(i int) int32 { return recode(codes, remap, i) }
	}
	flagAt := func(c *Column, pred func(string) bool) func(int) bool {
		if c == nil {
			return func(int) bool { return false }
		}
		codes, lev := texts(c)
		fl := levelFlags(lev, pred)
		return func(i int) bool { return codes[i] >= 0 && fl[codes[i]] }
	}
	numAt := func(c *Column) func(int) float64 {
		if c == nil {
			return func(int) float64 { return math.NaN() }
		}
		v := numbers(c)
		return func(i int) float64 { return v[i] }
	}
	total := 0
	for _, t := range d.parts {
		total += t.NRows
	}
	f.rows, f.qv = make([]frow, 0, total), make([]int32, 0, total*nq)
	ord := int32(0)
	for _, t := range d.parts {
		col := func(s string) *Column { return t.Col(d.code + s) }
		subj := sh.rowSubjects(d.code, t)
		tc := textAt(col("TESTCD"), &f.tcs)
		test := textAt(col("TEST"), &f.tests)
		str := textAt(col("STRESC"), &f.strs)
		unit := textAt(col("STRESU"), &f.units)
		num, seq, visit := numAt(col("STRESN")), numAt(col("SEQ")), numAt(t.Col("VISITNUM"))
		bl, lobx, nd := flagAt(col("BLFL"), isYes), flagAt(col("LOBXFL"), isYes), flagAt(col("STAT"), isNotDone)
		qs := make([]func(int) int32, nq)
		for k, q := range f.qnames {
			qs[k] = textAt(t.Col(q), &f.qvals)
		}
		var dlo, dhi []float64
		var dp []Precision
		if c := col("DTC"); c != nil {
			dlo, dhi, dp = dateBounds(c)
		}
		for i, s := range subj {
			ord++
			if s < 0 {
				continue
			}
			r := frow{subj: s, tc: tc(i), test: test(i), str: str(i), unit: unit(i), ord: ord,
				visit: visit(i), num: num(i), seq: seq(i), dlo: math.NaN(), dhi: math.NaN()}
			switch {
			case r.tc < 0:
				sh.drop(d.code, DropNoTestCode, sh.subjects[s])
				continue
			case math.IsNaN(r.visit):
				sh.drop(d.code, DropNoVisit, sh.subjects[s])
				continue
			case r.visit != math.Trunc(r.visit) && !sh.o.IncludeUnscheduled:
				sh.drop(d.code, DropUnscheduled, sh.subjects[s])
				continue
			}
			if math.IsNaN(r.seq) {
				r.seq = math.Inf(-1)
			}
			if bl(i) {
				r.flags |= fBL
			}
			if lobx(i) {
				r.flags |= fLOBX
			}
			if nd(i) {
				r.flags |= fNotDone
			}
			if dlo != nil && dp[i] != PrecNone {
				r.dlo, r.dhi, r.prec = dlo[i], dhi[i], dp[i]
			}
			f.rows = append(f.rows, r)
			for k := range qs {
				f.qv = append(f.qv, qs[k](i))
			}
		}
	}
	f.makeVars(sh)
	return f
}

// sortedRows returns the row indices sorted by subject, visit, test code,
// --SEQ and file order, sorting packed keys rather than indices.
func (f *fdomain) sortedRows() []int32 {
	var visits []float64
	for i := range f.rows {
		visits = append(visits, f.rows[i].visit)
	}
	visits = Distinct(visits)
	rank := make(map[float64]uint64, len(visits))
	for i, v := range visits {
		rank[v] = uint64(i)
	}
	type key struct {
		k   uint64 // subject (24 bits), visit rank (20), test code (20)
		seq float64
		i   int32
	}
	packed := len(visits) < 1<<20 && len(f.tcs.s) < 1<<20 && len(f.rows) > 0 && slices.MaxFunc(f.rows, func(a, b frow) int { return cmp.Compare(a.subj, b.subj) }).subj < 1<<24
	keys := make([]key, len(f.rows))
	for i := range f.rows {
		r := &f.rows[i]
		keys[i] = key{uint64(r.subj)<<40 | rank[r.visit]<<20 | uint64(r.tc), r.seq, int32(i)}
	}
	slices.SortFunc(keys, func(a, b key) int {
		if !packed { // too many subjects, visits or tests for the packed key
			x, y := &f.rows[a.i], &f.rows[b.i]
			return cmp.Or(cmp.Compare(x.subj, y.subj), cmp.Compare(x.visit, y.visit), cmp.Compare(x.tc, y.tc), cmp.Compare(a.seq, b.seq), cmp.Compare(a.i, b.i))
		}
		return cmp.Or(cmp.Compare(a.k, b.k), cmp.Compare(a.seq, b.seq), cmp.Compare(a.i, b.i))
	})
	out := make([]int32, len(keys))
	for i, k := range keys {
		out[i] = k.i
	}
	return out
}

// makeVars adds to each test code the qualifiers that vary within a subject
// × visit × test code cell (among rows with a result), groups the rows into
// variables, and sets each variable's kind (numeric when any result is),
// unit, name and counts. Tests with mixed units or no result make no variable.
func (f *fdomain) makeVars(sh *shaper) {
	nq, code := len(f.qnames), f.d.code
	ntc := len(f.tcs.s)
	order := f.sortedRows()
	res := make([]int32, 0, len(order))
	for _, i := range order {
		if f.rows[i].isResult() {
			res = append(res, i)
		}
	}
	varied := make([]int, ntc*nq)
	for a := 0; a < len(res); {
		x := &f.rows[res[a]]
		b := a + 1
		for b < len(res) {
			y := &f.rows[res[b]]
			if y.subj != x.subj || y.visit != x.visit || y.tc != x.tc {
				break
			}
			b++
		}
		for k := 0; k < nq; k++ {
			first := f.qv[int(res[a])*nq+k]
			for j := a + 1; j < b; j++ {
				if f.qv[int(res[j])*nq+k] != first {
					varied[int(x.tc)*nq+k]++
					break
				}
			}
		}
		a = b
	}
	added := make([][]int, ntc)
	for tc := 0; tc < ntc; tc++ {
		for k := 0; k < nq; k++ {
			if n := varied[tc*nq+k]; n > 0 {
				added[tc] = append(added[tc], k)
				sh.rep.Qualifiers = append(sh.rep.Qualifiers, AddedQualifier{Domain: code, TestCode: f.tcs.s[tc], Qualifier: f.qnames[k], Cells: n})
			}
		}
	}
	slices.SortFunc(sh.rep.Qualifiers, func(a, b AddedQualifier) int {
		return cmp.Or(strings.Compare(a.Domain, b.Domain), strings.Compare(a.TestCode, b.TestCode), strings.Compare(a.Qualifier, b.Qualifier))
	})
	// Group rows into variables.
	byKey := map[vkey]*fvar{}
	var all []*fvar
	for _, i := range order { // so that each variable's rows are sorted too
		r := &f.rows[i]
		k := vkey{tc: r.tc}
		for j := range k.q {
			k.q[j] = -2
		}
		for _, j := range added[r.tc] {
			k.q[j] = f.qv[int(i)*nq+j]
		}
		v := byKey[k]
		if v == nil {
			v = &fvar{key: k}
			byKey[k] = v
			all = append(all, v)
		}
		v.rows = append(v.rows, i)
	}
	for _, v := range all {
		tc := f.tcs.s[v.key.tc]
		v.name = code + "." + nameSegment(tc)
		if nameSegment(tc) != tc {
			sh.warn("%s test code %q is not a valid name: variable named %q", code, tc, v.name)
		}
		for _, k := range added[v.key.tc] {
			val := ""
			if id := v.key.q[k]; id >= 0 {
				val = f.qvals.s[id]
			}
			seg := nameSegment(val)
			if q := f.qnames[k][len(code):]; strings.HasSuffix(q, "NUM") && val != "" {
				seg = strings.TrimSuffix(q, "NUM") + seg
			}
			v.name += "." + seg
			v.quals = append(v.quals, f.qnames[k]+"="+val)
			v.qvals = append(v.qvals, val)
		}
		for _, i := range v.rows {
			if r := &f.rows[i]; r.isResult() && !math.IsNaN(r.num) {
				v.numeric = true
				break
			}
		}
	}
	slices.SortFunc(all, func(a, b *fvar) int {
		if c := strings.Compare(f.tcs.s[a.key.tc], f.tcs.s[b.key.tc]); c != 0 {
			return c
		}
		for k := range a.qvals {
			if c := compareText(a.qvals[k], b.qvals[k]); c != 0 {
				return c
			}
		}
		return 0
	})
	names := map[string]bool{}
	for _, v := range all {
		if names[v.name] {
			n := v.name
			for j := 2; names[v.name]; j++ {
				v.name = fmt.Sprintf("%s_%d", n, j)
			}
			sh.warn("variable name %q taken by another qualifier value: %s named %q", n, strings.Join(v.quals, ", "), v.name)
		}
		names[v.name] = true
		if f.finishVar(sh, v) {
			f.vars = append(f.vars, v)
		}
	}
}

// finishVar counts the variable's rows and checks its units. It
// reports false (after counting the rows as dropped) when no variable is made.
func (f *fdomain) finishVar(sh *shaper, v *fvar) bool {
	code := f.d.code
	tc := f.tcs.s[v.key.tc]
	info := ShapedVar{Qualifiers: v.quals, Rows: len(v.rows)}
	unitRows := map[int32]int{}
	unitSites := map[int32]map[string]bool{}
	results := 0
	for _, i := range v.rows {
		r := &f.rows[i]
		switch {
		case r.notDone():
			info.NotDone++
		case !r.isResult():
			info.NoResult++
		case v.numeric && math.IsNaN(r.num):
			info.Unused++
		}
		if v.label == "" && r.test >= 0 {
			v.label = f.tests.s[r.test]
		}
		if !r.hasValue(v.numeric) {
			continue
		}
		results++
		if r.unit < 0 {
			info.NoUnit++
			continue
		}
		unitRows[r.unit]++
		if unitSites[r.unit] == nil {
			unitSites[r.unit] = map[string]bool{}
		}
		unitSites[r.unit][sh.site(r.subj)] = true
	}
	if len(v.quals) > 0 {
		v.label = strings.TrimSpace(v.label + " (" + strings.Join(v.quals, ", ") + ")")
	}
	dropAll := func(reason string) {
		for _, i := range v.rows {
			sh.drop(code, reason, sh.subjects[f.rows[i].subj])
		}
	}
	if results == 0 {
		dropAll(DropNoResult)
		return false
	}
	if len(unitRows) > 1 {
		m := MixedUnit{Domain: code, TestCode: tc, Var: v.name}
		for u, n := range unitRows {
			uc := UnitCount{Unit: f.units.s[u], Rows: n}
			for s := range unitSites[u] {
				uc.Sites = append(uc.Sites, s)
			}
			slices.Sort(uc.Sites)
			m.Units = append(m.Units, uc)
		}
		slices.SortFunc(m.Units, func(a, b UnitCount) int { return strings.Compare(a.Unit, b.Unit) })
		sh.rep.MixedUnits = append(sh.rep.MixedUnits, m)
		dropAll(DropMixedUnits)
		return false
	}
	for u := range unitRows {
		v.unit = f.units.s[u]
	}
	v.info = info
	return true
}

// combine resolves the rows of one cell: the mean of their numeric results,
// or the text result of the last row (rows are in --SEQ, then file order).
// n is the number of rows that gave a value, differ whether they disagreed.
func (f *fdomain) combine(v *fvar, rows []int32) (val string, n int, differ bool) {
	if v.numeric {
		sum, first := 0.0, math.NaN()
		for _, i := range rows {
			r := &f.rows[i]
			if !r.hasValue(true) {
				continue
			}
			if n == 0 {
				first = r.num
			} else if r.num != first {
				differ = true
			}
			sum += r.num
			n++
		}
		if n == 0 {
			return "", 0, false
		}
		return FormatFloat(sum / float64(n)), n, differ
	}
	last := int32(-1)
	for _, i := range rows {
		r := &f.rows[i]
		if !r.hasValue(false) {
			continue
		}
		if n > 0 && r.str != last {
			differ = true
		}
		last = r.str
		n++
	}
	if n == 0 {
		return "", 0, false
	}
	return f.strs.s[last], n, differ
}

// column builds the variable's column from one text value per output row
// (has false: missing), typed by Builder.Column.
func (f *fdomain) column(sh *shaper, v *fvar, name string, vals []string, has []bool, derived string) (*Column, error) {
	b := NewBuilder(name)
	for i, s := range vals {
		b.Append(s, !has[i])
	}
	c, err := b.Column(sh.o.Infer)
	if err != nil {
		return nil, fmt.Errorf("shaping %s: %w", f.d.code, err)
	}
	src := f.d.code + "STRESC"
	if v.numeric {
		src = f.d.code + "STRESN"
	}
	c.Prov = Provenance{Domain: f.d.code, TestCode: f.tcs.s[v.key.tc], Source: src, File: f.d.files(), Derived: derived}
	if c.Unit == "" {
		c.Unit = v.unit
	}
	if c.Label == "" {
		c.Label = v.label
	}
	return c, nil
}

// groups calls fn for each run of rows (sorted as in fvar.rows) with equal keys.
func groups(rows []int32, same func(a, b int32) bool, fn func(g []int32)) {
	for a := 0; a < len(rows); {
		b := a + 1
		for b < len(rows) && same(rows[a], rows[b]) {
			b++
		}
		fn(rows[a:b])
		a = b
	}
}

// visitColumn makes the variable's visit-level column, one value per
// output row; keys are the output rows' (subject, visit), sorted.
func (f *fdomain) visitColumn(sh *shaper, v *fvar, keys []visitKey) (*Column, error) {
	nOut := len(keys)
	vals, has := make([]string, nOut), make([]bool, nOut)
	o := 0 // cursor into keys: groups come in key order
	same := func(a, b int32) bool {
		return f.rows[a].subj == f.rows[b].subj && f.rows[a].visit == f.rows[b].visit
	}
	groups(v.rows, same, func(g []int32) {
		r := &f.rows[g[0]]
		val, n, differ := f.combine(v, g)
		sh.collide(v.name, r.subj, n, differ)
		if n > 0 {
			k := visitKey{r.subj, r.visit}
			for compareVisitKey(keys[o], k) < 0 {
				o++
			}
			vals[o], has[o] = val, true
		}
	})
	return f.column(sh, v, v.name, vals, has, DerivedPivot)
}

// baselineColumn makes the subject-level baseline variable NAME.BL (rules
// in Study.Shape). ref gives each subject's reference interval (NaN when none).
func (f *fdomain) baselineColumn(sh *shaper, v *fvar, refLo, refHi []float64) (*Column, *ShapedVar, error) {
	n := len(sh.subjects)
	name := v.name + ".BL"
	vals, has := make([]string, n), make([]bool, n)
	bc := &BaselineCount{}
	same := func(a, b int32) bool { return f.rows[a].subj == f.rows[b].subj }
	pick := make([]int32, 0, 16)
	groups(v.rows, same, func(g []int32) {
		s := f.rows[g[0]].subj
		pick = pick[:0]
		var lobx, bl []int32
		anyValue, anyDated := false, false
		for _, i := range g {
			r := &f.rows[i]
			if !r.hasValue(v.numeric) {
				continue
			}
			anyValue = true
			if r.prec >= PrecDay {
				anyDated = true
			}
			if r.flags&fLOBX != 0 {
				lobx = append(lobx, i)
			}
			if r.flags&fBL != 0 {
				bl = append(bl, i)
			}
		}
		if !anyValue {
			return
		}
		hasRef := !math.IsNaN(refLo[s])
		switch {
		case len(lobx) > 0:
			pick, bc.Flag = lobx, bc.Flag+1
		case len(bl) > 0:
			pick, bc.Flag = bl, bc.Flag+1
		case hasRef && anyDated:
			last := math.Inf(-1)
			for _, i := range g {
				r := &f.rows[i]
				if r.hasValue(v.numeric) && r.prec >= PrecDay && LessEq(r.dlo, r.dhi, refLo[s], refHi[s], PrecDay) == True {
					last = math.Max(last, math.Floor(r.dlo))
				}
			}
			if math.IsInf(last, -1) {
				bc.None++
				return
			}
			for _, i := range g {
				r := &f.rows[i]
				if r.hasValue(v.numeric) && r.prec >= PrecDay && math.Floor(r.dlo) == last {
					pick = append(pick, i)
				}
			}
			bc.BeforeReference++
		default:
			first := math.Inf(1)
			for _, i := range g {
				if r := &f.rows[i]; r.hasValue(v.numeric) {
					first = math.Min(first, r.visit)
				}
			}
			for _, i := range g {
				if r := &f.rows[i]; r.hasValue(v.numeric) && r.visit == first {
					pick = append(pick, i)
				}
			}
			bc.FirstVisit++
		}
		val, k, differ := f.combine(v, pick)
		sh.collide(name, s, k, differ)
		vals[s], has[s] = val, k > 0
	})
	c, err := f.column(sh, v, name, vals, has, DerivedBaseline)
	if err != nil {
		return nil, nil, err
	}
	info := v.info
	info.Baseline = bc
	return c, &info, nil
}
