package dataset

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"strings"
)

// addKeyCols adds USUBJID (and, after it, the extra key columns) and
// SITEID, gathered from DM for the output rows' DM rows idx.
func (sh *shaper) addKeyCols(t *Table, idx []int32, extra ...*Column) error {
	if err := t.Add(gather(sh.dm.Col("USUBJID"), idx)); err != nil {
		return err
	}
	for _, c := range extra {
		if err := t.Add(c); err != nil {
			return err
		}
	}
	if c := sh.dm.Col("SITEID"); c != nil {
		sc := gather(c, idx)
		sc.Prov.Derived = DerivedJoin
		t.Site = "SITEID"
		return t.Add(sc)
	}
	return nil
}

type visitKey struct {
	subj  int32
	visit float64
}

func compareVisitKey(a, b visitKey) int {
	return cmp.Or(cmp.Compare(a.subj, b.subj), cmp.Compare(a.visit, b.visit))
}

type svRow struct {
	visitKey
	lo, hi float64
	prec   Precision
}

// readSV reads SV's visits (subject, VISITNUM, SVSTDTC), applying the same
// visit filter as findings.
func (sh *shaper) readSV() (rows []svRow, hasDate bool, d *sdDomain) {
	d = sh.domain("SV")
	if d == nil || !sh.used(d) || !d.hasCol("VISITNUM") {
		return nil, false, nil
	}
	hasDate = d.hasCol("SVSTDTC")
	for _, t := range d.parts {
		subj := sh.rowSubjects(d.code, t)
		var visit []float64 // nil when this part has no VISITNUM: every row dropped
		if c := t.Col("VISITNUM"); c != nil {
			visit = numbers(c)
		}
		var lo, hi []float64
		var prec []Precision
		if c := t.Col("SVSTDTC"); c != nil {
			lo, hi, prec = dateBounds(c)
		}
		for i, s := range subj {
			if s < 0 {
				continue
			}
			v := math.NaN()
			if i < len(visit) {
				v = visit[i]
			}
			switch {
			case math.IsNaN(v):
				sh.drop(d.code, DropNoVisit, sh.subjects[s])
				continue
			case v != math.Trunc(v) && !sh.o.IncludeUnscheduled:
				sh.drop(d.code, DropUnscheduled, sh.subjects[s])
				continue
			}
			r := svRow{visitKey: visitKey{s, v}, lo: math.NaN(), hi: math.NaN()}
			if lo != nil && prec[i] != PrecNone {
				r.lo, r.hi, r.prec = lo[i], hi[i], prec[i]
			}
			rows = append(rows, r)
		}
	}
	return rows, hasDate, d
}

// visitLevel shapes the study to one row per subject and visit.
func (sh *shaper) visitLevel() (*Table, error) {
	var fds []*fdomain
	for _, d := range sh.domains {
		if sh.used(d) && d.isFindings() {
			fds = append(fds, sh.readFindings(d))
		}
	}
	sv, svDate, svd := sh.readSV()
	var keys []visitKey
	for _, f := range fds {
		for i := range f.rows {
			keys = append(keys, visitKey{f.rows[i].subj, f.rows[i].visit})
		}
	}
	for _, r := range sv {
		keys = append(keys, r.visitKey)
	}
	slices.SortFunc(keys, compareVisitKey)
	keys = slices.Compact(keys)
	if len(keys) == 0 {
		return nil, fmt.Errorf("level visit: %s has no findings domain (a table with --TESTCD and --STRESN or --STRESC) and no SV visits", sh.s.Path)
	}
	n := len(keys)
	rowOf := func(s int32, visit float64) int {
		i, _ := slices.BinarySearchFunc(keys, visitKey{s, visit}, compareVisitKey)
		return i
	}
	subj, visits := make([]int32, n), make([]float64, n)
	for i, k := range keys {
		subj[i], visits[i] = k.subj, k.visit
	}
	t := NewTable("VISIT", n)
	t.Level = LevelVisit
	vn := NewFloatColumn("VISITNUM", Ordinal, visits)
	vn.Why, vn.Prov = "visit number (key)", Provenance{Source: "VISITNUM"}
	idx := sh.dmIndex(subj)
	if err := sh.addKeyCols(t, idx, vn); err != nil {
		return nil, err
	}
	t.Keys = []string{"USUBJID", "VISITNUM"}
	if err := sh.addDMJoins(t, idx); err != nil {
		return nil, err
	}
	if svDate {
		if err := sh.addSVColumns(t, sv, svd, subj, rowOf); err != nil {
			return nil, err
		}
	}
	for _, f := range fds {
		for _, v := range f.vars {
			c, err := f.visitColumn(sh, v, keys)
			if err != nil {
				return nil, err
			}
			info := v.info
			sh.info[c.Name] = &info
			if err := t.Add(c); err != nil {
				return nil, err
			}
		}
	}
	return t, nil
}

// addSVColumns adds SV.STDTC, the earliest SVSTDTC of each visit, and
// SV.STDY, its study day from DM.RFSTDTC (SDTM.md §2: day − reference day,
// plus one on or after the reference; full dates only).
func (sh *shaper) addSVColumns(t *Table, sv []svRow, d *sdDomain, subj []int32, rowOf func(int32, float64) int) error {
	n := len(subj)
	lo, hi, prec := make([]float64, n), make([]float64, n), make([]Precision, n)
	cnt := make([]int, n)
	differ := make([]bool, n)
	for i := range lo {
		lo[i], hi[i] = math.NaN(), math.NaN()
	}
	for _, r := range sv {
		if r.prec == PrecNone {
			continue
		}
		o := rowOf(r.subj, r.visit)
		cnt[o]++
		switch {
		case cnt[o] == 1:
		case r.lo != lo[o] || r.hi != hi[o]:
			differ[o] = true
			if r.lo > lo[o] || r.lo == lo[o] && r.hi >= hi[o] {
				continue
			}
		default:
			continue
		}
		lo[o], hi[o], prec[o] = r.lo, r.hi, r.prec
	}
	for o := range cnt {
		sh.collide("SV.STDTC", subj[o], cnt[o], differ[o])
	}
	dc := newDateCol("SV.STDTC", lo, hi, prec)
	dc.Why = "visit start date (SVSTDTC; earliest when repeated)"
	dc.Prov = Provenance{Domain: "SV", Source: "SVSTDTC", File: d.files(), Derived: DerivedVisit}
	applySpec(dc, sh.o.Infer)
	if err := t.Add(dc); err != nil {
		return err
	}
	rf := sh.dm.Col("RFSTDTC")
	if rf == nil {
		sh.warn("DM has no RFSTDTC: SV.STDY not made")
		return nil
	}
	rlo, _, rprec := dateBounds(rf)
	dy := make([]float64, n)
	for o := range dy {
		dy[o] = math.NaN()
		r := sh.dmRow[subj[o]]
		if prec[o] >= PrecDay && rprec[r] >= PrecDay {
			k := math.Floor(lo[o]) - math.Floor(rlo[r])
			if k >= 0 {
				k++
			}
			dy[o] = k
		}
	}
	sc := NewFloatColumn("SV.STDY", Continuous, dy)
	sc.Why, sc.Unit = "study day of the visit start date from DM.RFSTDTC", "DAYS"
	sc.Prov = Provenance{Domain: "SV", Source: "SVSTDTC", File: d.files() + ", " + sh.dm.Source, Derived: DerivedStudyDay}
	applySpec(sc, sh.o.Infer)
	return t.Add(sc)
}

// subjectLevel shapes the study to one row per DM subject.
func (sh *shaper) subjectLevel() (*Table, error) {
	n := len(sh.subjects)
	t := NewTable("SUBJECT", n)
	t.Level = LevelSubject
	for _, c := range sh.dm.Cols {
		if err := t.Add(gather(c, sh.dmRow)); err != nil {
			return nil, err
		}
	}
	t.Keys = []string{"USUBJID"}
	if t.Col("SITEID") != nil {
		t.Site = "SITEID"
	}
	refLo, refHi := make([]float64, n), make([]float64, n)
	for i := range refLo {
		refLo[i], refHi[i] = math.NaN(), math.NaN()
	}
	for _, name := range []string{"RFSTDTC", "RFXSTDTC"} { // RFXSTDTC wins when present
		c := sh.dm.Col(name)
		if c == nil {
			continue
		}
		lo, hi, prec := dateBounds(c)
		for s, r := range sh.dmRow {
			if prec[r] != PrecNone {
				refLo[s], refHi[s] = lo[r], hi[r]
			}
		}
	}
	for _, d := range sh.domains {
		if !sh.used(d) {
			continue
		}
		var cols []*Column
		switch {
		case d.isFindings():
			f := sh.readFindings(d)
			for _, v := range f.vars {
				c, info, err := f.baselineColumn(sh, v, refLo, refHi)
				if err != nil {
					return nil, err
				}
				sh.info[c.Name] = info
				cols = append(cols, c)
			}
		case d.isEvents():
			var err error
			if cols, err = sh.eventColumns(d); err != nil {
				return nil, err
			}
		}
		for _, c := range cols {
			if err := t.Add(c); err != nil {
				return nil, err
			}
		}
	}
	return t, nil
}

// severityOrder is the AESEV codelist order, C66769 (SDTM.md §2).
var severityOrder = []string{"MILD", "MODERATE", "SEVERE"}

// eventColumns makes the subject-level summaries of an events or
// interventions domain: ANY, N, FIRSTSTDTC, MAXSEV, MAXTOXGR, ANYSER.
func (sh *shaper) eventColumns(d *sdDomain) ([]*Column, error) {
	code, n := d.code, len(sh.subjects)
	count := make([]float64, n)
	flo, fhi, fprec := make([]float64, n), make([]float64, n), make([]Precision, n)
	sev := make([]int32, n)
	gr := make([]float64, n)
	serY, serMiss := make([]bool, n), make([]bool, n)
	for i := range flo {
		flo[i], fhi[i], sev[i], gr[i] = math.NaN(), math.NaN(), -1, math.NaN()
	}
	var rows, sevUnused, grUnused int
	hasDate, hasSev, hasGr, hasSer := d.hasCol(code+"STDTC"), d.hasCol(code+"SEV"), d.hasCol(code+"TOXGR"), d.hasCol(code+"SER")
	for _, t := range d.parts {
		subj := sh.rowSubjects(code, t)
		col := func(s string) *Column { return t.Col(code + s) }
		var occN []bool
		var occ []int32
		if c := col("OCCUR"); c != nil {
			var lev []string
			occ, lev = texts(c)
			occN = levelFlags(lev, isNo)
		}
		var lo, hi []float64
		var prec []Precision
		if c := col("STDTC"); c != nil {
			lo, hi, prec = dateBounds(c)
		}
		var sevC []int32
		var sevRank []int32
		if c := col("SEV"); c != nil {
			var lev []string
			sevC, lev = texts(c)
			sevRank = make([]int32, len(lev))
			for k, s := range lev {
				sevRank[k] = int32(slices.Index(severityOrder, strings.ToUpper(strings.TrimSpace(s))))
			}
		}
		var grV []float64
		grC := col("TOXGR")
		if grC != nil {
			grV = numbers(grC)
		}
		var serC []int32
		var serYes []bool
		if c := col("SER"); c != nil {
			var lev []string
			serC, lev = texts(c)
			serYes = levelFlags(lev, isYes)
		}
		for i, s := range subj {
			if s < 0 {
				continue
			}
			if occ != nil && occ[i] >= 0 && occN[occ[i]] {
				sh.drop(code, DropNotOccurred, sh.subjects[s])
				continue
			}
			rows++
			count[s]++
			if lo != nil && prec[i] != PrecNone {
				if math.IsNaN(flo[s]) || lo[i] < flo[s] || lo[i] == flo[s] && hi[i] < fhi[s] {
					flo[s], fhi[s], fprec[s] = lo[i], hi[i], prec[i]
				}
			}
			if sevC != nil && sevC[i] >= 0 {
				if k := sevRank[sevC[i]]; k < 0 {
					sevUnused++
				} else if k > sev[s] {
					sev[s] = k
				}
			}
			if grC != nil && !grC.Missing(i) {
				if math.IsNaN(grV[i]) {
					grUnused++
				} else if math.IsNaN(gr[s]) || grV[i] > gr[s] {
					gr[s] = grV[i]
				}
			}
			if serC != nil {
				switch {
				case serC[i] < 0:
					serMiss[s] = true
				case serYes[serC[i]]:
					serY[s] = true
				}
			} else if hasSer {
				serMiss[s] = true // this part has no --SER
			}
		}
	}
	src := "USUBJID"
	if d.hasCol(code + "SEQ") {
		src = code + "SEQ"
	}
	prov := func(source, derived string) Provenance {
		return Provenance{Domain: code, Source: source, File: d.files(), Derived: derived}
	}
	var out []*Column
	add := func(c *Column, why string, p Provenance, unused int) {
		c.Why, c.Prov = why, p
		applySpec(c, sh.o.Infer)
		sh.info[c.Name] = &ShapedVar{Rows: rows, Unused: unused}
		out = append(out, c)
	}
	anyC := make([]int32, n)
	for s := range anyC {
		if count[s] > 0 {
			anyC[s] = 1
		}
	}
	add(NewCodeColumn(code+".ANY", Binary, anyC, []string{"N", "Y"}), "Y when the subject has any "+code+" record", prov(src, DerivedAny), 0)
	add(NewFloatColumn(code+".N", Continuous, count), "number of "+code+" records of the subject", prov(src, DerivedCount), 0)
	if hasDate {
		add(newDateCol(code+".FIRSTSTDTC", flo, fhi, fprec), "earliest "+code+"STDTC of the subject (by the start of its interval)", prov(code+"STDTC", DerivedFirst), 0)
	}
	if hasSev {
		add(NewCodeColumn(code+".MAXSEV", Ordinal, sev, slices.Clone(severityOrder)), "worst "+code+"SEV of the subject (MILD < MODERATE < SEVERE)", prov(code+"SEV", DerivedMax), sevUnused)
	}
	if hasGr {
		add(NewFloatColumn(code+".MAXTOXGR", Ordinal, gr), "highest "+code+"TOXGR of the subject", prov(code+"TOXGR", DerivedMax), grUnused)
	}
	if hasSer {
		ser := make([]int32, n)
		for s := range ser {
			switch {
			case serY[s]:
				ser[s] = 1
			case serMiss[s]:
				ser[s] = -1
			}
		}
		add(NewCodeColumn(code+".ANYSER", Binary, ser, []string{"N", "Y"}), "Y when any "+code+"SER = Y; N when none or no record", prov(code+"SER", DerivedAny), 0)
	}
	return out, nil
}
