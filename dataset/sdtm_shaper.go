package dataset

import (
	"fmt"
	"math"
	"sort"
	"strings"
)

// An sdDomain is one SDTM domain: the tables whose DOMAIN value (else name)
// is its code. Split domains (LBCH, LBHE with DOMAIN = LB) have several parts.
type sdDomain struct {
	code  string
	parts []*Table
}

// hasCol reports whether any part has the column.
func (d *sdDomain) hasCol(name string) bool {
	for _, t := range d.parts {
		if t.Col(name) != nil {
			return true
		}
	}
	return false
}

// files returns the sources of the parts, comma-separated.
func (d *sdDomain) files() string {
	f := make([]string, len(d.parts))
	for i, t := range d.parts {
		f[i] = t.Source
	}
	return strings.Join(f, ", ")
}

// isFindings: a --TESTCD and a standardised result (SDTM.md §2).
func (d *sdDomain) isFindings() bool {
	return d.hasCol(d.code+"TESTCD") && (d.hasCol(d.code+"STRESN") || d.hasCol(d.code+"STRESC"))
}

// notSubjectData lists the special-purpose, trial design and relationship
// domains that are neither findings nor events/interventions (SDTM.md §1).
var notSubjectData = map[string]bool{"DM": true, "SV": true, "SE": true, "SM": true, "CO": true,
	"TA": true, "TE": true, "TV": true, "TI": true, "TS": true, "TD": true, "TM": true, "RELREC": true}

// isEvents: an events or interventions domain, by its topic or timing variables.
func (d *sdDomain) isEvents() bool {
	if d.isFindings() || notSubjectData[d.code] || strings.HasPrefix(d.code, "SUPP") || !d.hasCol("USUBJID") {
		return false
	}
	for _, s := range []string{"TERM", "DECOD", "TRT", "STDTC"} {
		if d.hasCol(d.code + s) {
			return true
		}
	}
	return false
}

// domainCode returns the table's DOMAIN value (first non-missing, upper
// case) when it is a prefix of the table name, else the table name.
func domainCode(t *Table) string {
	name := strings.ToUpper(t.Name)
	if c := t.Col("DOMAIN"); c != nil {
		for i := 0; i < t.NRows; i++ {
			if v := strings.ToUpper(strings.TrimSpace(c.String(i))); v != "" {
				if strings.HasPrefix(name, v) {
					return v
				}
				break
			}
		}
	}
	return name
}

type dropKey struct{ domain, reason string }

type dropAcc struct {
	rows int
	subj map[string]bool
}

// A shaper holds the subject index built from DM and the report being made.
type shaper struct {
	s   *Study
	o   ShapeOptions
	rep *ShapeReport
	dm  *Table

	subjects []string // sorted USUBJIDs of DM
	dmRow    []int32  // DM row of each subject
	subjOf   map[string]int32
	orphans  map[string]bool
	domains  []*sdDomain // sorted by code
	want     map[string]bool

	drops      map[dropKey]*dropAcc
	collisions map[[2]string]*Collision
	info       map[string]*ShapedVar
}

func newShaper(s *Study, o ShapeOptions, l Level) (*shaper, error) {
	if !s.IsSDTM() {
		return nil, ErrNotSDTM
	}
	if o.Qualifiers == nil {
		o.Qualifiers = DefaultQualifiers
	}
	if len(o.Qualifiers) > maxQual {
		return nil, fmt.Errorf("%d qualifiers given, at most %d", len(o.Qualifiers), maxQual)
	}
	if o.DMVars == nil {
		o.DMVars = DefaultDMVars
	}
	sh := &shaper{s: s, o: o, rep: &ShapeReport{Level: l}, dm: s.Table("DM"),
		subjOf: map[string]int32{}, orphans: map[string]bool{}, drops: map[dropKey]*dropAcc{},
		collisions: map[[2]string]*Collision{}, info: map[string]*ShapedVar{}}
	if o.Domains != nil {
		sh.want = map[string]bool{}
		for _, d := range o.Domains {
			sh.want[strings.ToUpper(d)] = true
		}
	}
	codes, lev := texts(sh.dm.Col("USUBJID"))
	first := make([]int32, len(lev))
	for i := range first {
		first[i] = -1
	}
	for i, k := range codes {
		switch {
		case k < 0:
			sh.drop("DM", DropNoSubject, "")
		case first[k] >= 0:
			sh.drop("DM", DropDuplicateDM, lev[k])
		default:
			first[k] = int32(i)
		}
	}
	for k, r := range first {
		if r >= 0 {
			sh.subjects = append(sh.subjects, lev[k])
		}
	}
	sort.Strings(sh.subjects)
	sh.dmRow = make([]int32, len(sh.subjects))
	for i, u := range sh.subjects {
		sh.subjOf[u] = int32(i)
	}
	for k, r := range first {
		if r >= 0 {
			sh.dmRow[sh.subjOf[lev[k]]] = r
		}
	}
	if sh.dm.Col("SITEID") == nil {
		sh.warn("DM has no SITEID: the shaped table has no site column")
	}
	byCode := map[string]*sdDomain{}
	for _, t := range s.Tables {
		c := domainCode(t)
		if byCode[c] == nil {
			byCode[c] = &sdDomain{code: c}
			sh.domains = append(sh.domains, byCode[c])
		}
		byCode[c].parts = append(byCode[c].parts, t)
	}
	sort.Slice(sh.domains, func(i, j int) bool { return sh.domains[i].code < sh.domains[j].code })
	return sh, nil
}

func (sh *shaper) warn(f string, a ...any) {
	sh.rep.Warnings = append(sh.rep.Warnings, fmt.Sprintf(f, a...))
}

func (sh *shaper) drop(domain, reason, usubjid string) {
	k := dropKey{domain, reason}
	a := sh.drops[k]
	if a == nil {
		a = &dropAcc{subj: map[string]bool{}}
		sh.drops[k] = a
	}
	a.rows++
	if usubjid != "" {
		a.subj[usubjid] = true
	}
}

// domain returns the domain with the given code, or nil.
func (sh *shaper) domain(code string) *sdDomain {
	for _, d := range sh.domains {
		if d.code == code {
			return d
		}
	}
	return nil
}

// used reports whether a domain takes part at visit and subject level.
func (sh *shaper) used(d *sdDomain) bool { return sh.want == nil || sh.want[d.code] }

// rowSubjects returns the subject index of every row of t, or -1 for a row
// without USUBJID or whose subject is not in DM; those rows are counted as
// dropped from domain.
func (sh *shaper) rowSubjects(domain string, t *Table) []int32 {
	out := make([]int32, t.NRows)
	c := t.Col("USUBJID")
	if c == nil {
		for i := range out {
			out[i] = -1
			sh.drop(domain, DropNoSubject, "")
		}
		return out
	}
	codes, lev := texts(c)
	ls := make([]int32, len(lev))
	for i, u := range lev {
		if s, ok := sh.subjOf[u]; ok {
			ls[i] = s
		} else {
			ls[i] = -2
		}
	}
	for i, k := range codes {
		switch {
		case k < 0:
			out[i] = -1
			sh.drop(domain, DropNoSubject, "")
		case ls[k] == -2:
			out[i] = -1
			sh.orphans[lev[k]] = true
			sh.drop(domain, DropNotInDM, lev[k])
		default:
			out[i] = ls[k]
		}
	}
	return out
}

// site returns the SITEID of subject s, "" when DM has none.
func (sh *shaper) site(s int32) string {
	if c := sh.dm.Col("SITEID"); c != nil {
		return c.String(int(sh.dmRow[s]))
	}
	return ""
}

// collide counts a cell of variable name filled by n ≥ 2 rows.
func (sh *shaper) collide(name string, s int32, n int, differ bool) {
	if n < 2 {
		return
	}
	k := [2]string{name, sh.site(s)}
	c := sh.collisions[k]
	if c == nil {
		c = &Collision{Var: name, Site: k[1]}
		sh.collisions[k] = c
	}
	c.Cells++
	c.Rows += n
	if differ {
		c.Differing++
	}
}

// dmIndex returns, for subjects subj (one per output row), their DM rows.
func (sh *shaper) dmIndex(subj []int32) []int32 {
	idx := make([]int32, len(subj))
	for i, s := range subj {
		idx[i] = sh.dmRow[s]
	}
	return idx
}

// addDMJoins adds the o.DMVars present in DM as "DM.NAME" columns.
func (sh *shaper) addDMJoins(t *Table, idx []int32) error {
	for _, name := range sh.o.DMVars {
		c := sh.dm.Col(name)
		if c == nil || name == "USUBJID" || name == "SITEID" {
			continue
		}
		j := gather(c, idx)
		j.Name = "DM." + name
		j.Prov.Domain, j.Prov.Derived = "DM", DerivedJoin
		if j.Prov.Source == "" {
			j.Prov.Source = name
		}
		if err := t.Add(j); err != nil {
			return err
		}
	}
	return nil
}

// finish fills the report from the shaped table and sorts its lists.
func (sh *shaper) finish(t *Table) {
	r := sh.rep
	r.Rows = t.NRows
	if k := t.Col("USUBJID"); k != nil {
		seen := map[string]bool{}
		for i := 0; i < t.NRows; i++ {
			seen[k.String(i)] = true
		}
		r.Subjects = len(seen)
	}
	for _, c := range t.Cols {
		if t.IsKey(c.Name) {
			continue
		}
		v := varInfo(c)
		if inf := sh.info[c.Name]; inf != nil {
			inf.Name, inf.Type, inf.Unit, inf.Label, inf.Prov, inf.N = v.Name, v.Type, v.Unit, v.Label, v.Prov, v.N
			v = *inf
		}
		r.Vars = append(r.Vars, v)
	}
	for k, a := range sh.drops {
		r.Dropped = append(r.Dropped, Drop{Domain: k.domain, Reason: k.reason, Rows: a.rows, Subjects: len(a.subj)})
	}
	sort.Slice(r.Dropped, func(i, j int) bool {
		a, b := r.Dropped[i], r.Dropped[j]
		return a.Domain < b.Domain || a.Domain == b.Domain && a.Reason < b.Reason
	})
	for _, c := range sh.collisions {
		r.Collisions = append(r.Collisions, *c)
	}
	sort.Slice(r.Collisions, func(i, j int) bool {
		a, b := r.Collisions[i], r.Collisions[j]
		return a.Var < b.Var || a.Var == b.Var && a.Site < b.Site
	})
	for u := range sh.orphans {
		r.SubjectsWithoutDM = append(r.SubjectsWithoutDM, u)
	}
	sort.Strings(r.SubjectsWithoutDM)
	t.Warnings = append(t.Warnings, r.Warnings...)
	t.Source = sh.s.Path
}

// recordLevel shapes one domain at record level.
func (sh *shaper) recordLevel(code string) (*Table, error) {
	d := sh.domain(code)
	if d == nil {
		if t := sh.s.Table(code); t != nil {
			d = &sdDomain{code: domainCode(t), parts: []*Table{t}} // one part of a split domain
		} else {
			codes := make([]string, len(sh.domains))
			for i, d := range sh.domains {
				codes[i] = d.code
			}
			return nil, fmt.Errorf("level record:%s: no domain %q in %s (domains: %s)", code, code, sh.s.Path, strings.Join(codes, ", "))
		}
	}
	if !d.hasCol("USUBJID") {
		return nil, fmt.Errorf("level record:%s: domain %s has no USUBJID (use table:%s for a table without subjects)", code, d.code, d.parts[0].Name)
	}
	type rec struct {
		part, row, subj int32
		seq             float64
	}
	var recs []rec
	seqName := d.code + "SEQ"
	for p, t := range d.parts {
		subj := sh.rowSubjects(d.code, t)
		var seq []float64
		if c := t.Col(seqName); c != nil {
			seq = numbers(c)
		}
		if t.Col("SITEID") != nil && d.code != "DM" {
			sh.warn("%s has its own SITEID column; the site is taken from DM", t.Name)
		}
		for i, s := range subj {
			if s < 0 || t == sh.dm && int32(i) != sh.dmRow[s] { // DM duplicates are already counted
				continue
			}
			q := math.Inf(1)
			if seq != nil && !math.IsNaN(seq[i]) {
				q = seq[i]
			}
			recs = append(recs, rec{int32(p), int32(i), s, q})
		}
	}
	sort.SliceStable(recs, func(i, j int) bool {
		a, b := recs[i], recs[j]
		if a.subj != b.subj {
			return a.subj < b.subj
		}
		return a.seq < b.seq
	})
	n := len(recs)
	t := NewTable(d.code, n)
	t.Level = sh.rep.Level.String()
	subj := make([]int32, n)
	for i, r := range recs {
		subj[i] = r.subj
	}
	idx := sh.dmIndex(subj)
	if err := sh.addKeyCols(t, idx); err != nil {
		return nil, err
	}
	// The domain's own columns, in first-seen order over the parts.
	var names []string
	seen := map[string]bool{"USUBJID": true, "SITEID": true}
	for _, p := range d.parts {
		for _, c := range p.Cols {
			if !seen[c.Name] {
				seen[c.Name] = true
				names = append(names, c.Name)
			}
		}
	}
	for _, name := range names {
		var c *Column
		if len(d.parts) == 1 {
			rows := make([]int32, n)
			for i, r := range recs {
				rows[i] = r.row
			}
			c = gather(d.parts[0].Col(name), rows)
		} else {
			var err error
			if c, err = sh.concatText(d, name, func(i int) (int32, int32) { return recs[i].part, recs[i].row }, n); err != nil {
				return nil, err
			}
		}
		if err := t.Add(c); err != nil {
			return nil, err
		}
	}
	if d.code != "DM" {
		if err := sh.addDMJoins(t, idx); err != nil {
			return nil, err
		}
	}
	keys := []string{"USUBJID"}
	if t.Col(seqName) != nil {
		keys = append(keys, seqName)
	} else if d.code != "DM" {
		sh.warn("%s has no %s: records are keyed by USUBJID only", d.code, seqName)
	}
	t.Keys = keys
	return t, nil
}

// concatText builds column name over the parts of d from its display text,
// re-typed by Builder.Column; rows not parsed as the type keep their raw text.
func (sh *shaper) concatText(d *sdDomain, name string, at func(i int) (part, row int32), n int) (*Column, error) {
	cols := make([]*Column, len(d.parts))
	invalid := make([]map[int]string, len(d.parts))
	var prov *Provenance
	for p, t := range d.parts {
		if c := t.Col(name); c != nil {
			cols[p] = c
			if prov == nil {
				pv := c.Prov
				prov = &pv
			}
			for _, v := range c.Invalid {
				if invalid[p] == nil {
					invalid[p] = map[int]string{}
				}
				invalid[p][v.Row] = v.Raw
			}
		}
	}
	b := NewBuilder(name)
	for i := 0; i < n; i++ {
		p, r := at(i)
		c := cols[p]
		switch {
		case c == nil:
			b.Append("", true)
		case c.Missing(int(r)):
			raw, ok := invalid[p][int(r)]
			b.Append(raw, !ok)
		default:
			b.Append(c.String(int(r)), false)
		}
	}
	c, err := b.Column(sh.o.Infer)
	if err != nil {
		return nil, fmt.Errorf("domain %s: %w", d.code, err)
	}
	c.Prov = *prov
	c.Prov.File = d.files()
	return c, nil
}
