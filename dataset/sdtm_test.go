package dataset

import (
	"errors"
	"fmt"
	"path/filepath"
	"reflect"
	"slices"
	"strings"
	"testing"
)

// The expected values in this file are hand-derived from the fixture study
// in testdata/sdtm (its README lists the situations each row sets up).

const fixtureDir = "testdata/sdtm"

func openFixture(t testing.TB) *Study {
	t.Helper()
	s, err := Open(fixtureDir, Options{})
	if err != nil {
		t.Fatalf("Open(%s): %v", fixtureDir, err)
	}
	return s
}

func shapeFixture(t *testing.T, level string, o ShapeOptions) (*Table, *ShapeReport) {
	t.Helper()
	l, err := ParseLevel(level)
	if err != nil {
		t.Fatalf("ParseLevel(%q): %v", level, err)
	}
	tbl, rep, err := openFixture(t).Shape(l, o)
	if err != nil {
		t.Fatalf("Shape(%s): %v", level, err)
	}
	if err := tbl.Validate(); err != nil {
		t.Fatalf("Shape(%s) table does not validate: %v", level, err)
	}
	return tbl, rep
}

// values returns column name of t as display values joined by ";".
func values(t *testing.T, tbl *Table, name string) string {
	t.Helper()
	c := tbl.Col(name)
	if c == nil {
		t.Fatalf("no column %q in %v", name, tbl.Names())
	}
	v := make([]string, tbl.NRows)
	for i := range v {
		v[i] = c.String(i)
	}
	return strings.Join(v, ";")
}

type colWant struct {
	name, values string
	typ          Type
	storage      Storage
}

func checkCols(t *testing.T, tbl *Table, want []colWant) {
	t.Helper()
	for _, w := range want {
		if got := values(t, tbl, w.name); got != w.values {
			t.Errorf("%s: values = %q, want %q", w.name, got, w.values)
		}
		c := tbl.Col(w.name)
		if w.typ != TypeUnknown && c.Type != w.typ {
			t.Errorf("%s: type = %v, want %v (%s)", w.name, c.Type, w.typ, c.Why)
		}
		if w.storage != 0 && c.Storage != w.storage {
			t.Errorf("%s: storage = %d, want %d", w.name, c.Storage, w.storage)
		}
	}
}

func checkNames(t *testing.T, tbl *Table, want []string) {
	t.Helper()
	if got := tbl.Names(); !slices.Equal(got, want) {
		t.Errorf("columns =\n  %q\nwant\n  %q", got, want)
	}
}

func TestParseLevel(t *testing.T) {
	tests := []struct {
		in      string
		want    Level
		wantErr string
	}{
		{in: "subject", want: Level{Kind: LevelSubject}},
		{in: " Visit ", want: Level{Kind: LevelVisit}},
		{in: "record:ae", want: Level{Kind: LevelRecord, Domain: "AE"}},
		{in: "RECORD: LB", want: Level{Kind: LevelRecord, Domain: "LB"}},
		{in: "table:labs_raw", want: Level{Kind: LevelTable, Domain: "labs_raw"}},
		{in: "record", wantErr: "needs a domain"},
		{in: "record:", wantErr: "needs a domain"},
		{in: "table:", wantErr: "needs a table name"},
		{in: "subject:DM", wantErr: "takes no domain"},
		{in: "patient", wantErr: `unknown level "patient"`},
		{in: "", wantErr: "unknown level"},
	}
	for _, tc := range tests {
		t.Run(tc.in, func(t *testing.T) {
			got, err := ParseLevel(tc.in)
			if tc.wantErr != "" {
				if err == nil || !strings.Contains(err.Error(), tc.wantErr) {
					t.Fatalf("ParseLevel(%q) error = %v, want one containing %q", tc.in, err, tc.wantErr)
				}
				return
			}
			if err != nil || got != tc.want {
				t.Fatalf("ParseLevel(%q) = %+v, %v, want %+v", tc.in, got, err, tc.want)
			}
			if back, err := ParseLevel(got.String()); err != nil || back != got {
				t.Errorf("ParseLevel(%q.String() = %q) = %+v, %v", tc.in, got.String(), back, err)
			}
		})
	}
}

func TestIsSDTM(t *testing.T) {
	if s := openFixture(t); !s.IsSDTM() {
		t.Errorf("fixture study: IsSDTM() = false, want true")
	}
	generic := &Study{Path: "mem", Tables: []*Table{mustCSV(t, "labs.csv", "PT,VISIT,ALT\nA,1,20\n")}}
	if generic.IsSDTM() {
		t.Errorf("study without DM: IsSDTM() = true, want false")
	}
}

func mustCSV(t testing.TB, name, text string) *Table {
	t.Helper()
	tbl, err := ReadCSV(name, strings.NewReader(text), CSVOptions{})
	if err != nil {
		t.Fatalf("ReadCSV(%s): %v", name, err)
	}
	return tbl
}

func TestShapeVisit(t *testing.T) {
	tbl, rep := shapeFixture(t, "visit", ShapeOptions{})
	if tbl.NRows != 10 || !slices.Equal(tbl.Keys, []string{"USUBJID", "VISITNUM"}) || tbl.Site != "SITEID" || tbl.Level != "visit" {
		t.Fatalf("table: %d rows, keys %q, site %q, level %q; want 10 rows, keys [USUBJID VISITNUM], site SITEID, level visit",
			tbl.NRows, tbl.Keys, tbl.Site, tbl.Level)
	}
	checkNames(t, tbl, []string{"USUBJID", "VISITNUM", "SITEID",
		"DM.SEX", "DM.AGE", "DM.RACE", "DM.ARM", "DM.BRTHDTC", "DM.RFICDTC", "DM.RFSTDTC", "DM.RFXSTDTC",
		"SV.STDTC", "SV.STDY",
		"LB.ALT", "LB.CRP", "LB.HCG", "VS.DIABP", "VS.PULSE", "VS.SYSBP.SITTING", "VS.SYSBP.STANDING"})
	checkCols(t, tbl, []colWant{
		// Subjects sorted by USUBJID (DM lists 004 first), visits by VISITNUM;
		// 002 visit 3 comes from VS alone (no SV record).
		{"USUBJID", "T1-01-001;T1-01-001;T1-01-001;T1-01-002;T1-01-002;T1-01-002;T1-02-003;T1-02-003;T1-02-003;T1-02-004", Identifier, StoreCode},
		{"VISITNUM", "1;2;3;1;2;3;1;2;3;1", Ordinal, StoreFloat},
		{"SITEID", "01;01;01;01;01;01;02;02;02;02", Identifier, StoreCode},
		{"DM.SEX", "M;M;M;F;F;F;M;M;M;F", Binary, StoreCode},
		{"DM.ARM", "DRUG A;DRUG A;DRUG A;PLACEBO;PLACEBO;PLACEBO;DRUG A;DRUG A;DRUG A;", Binary, StoreCode},
		{"DM.RFICDTC", "2024-01-02;2024-01-02;2024-01-02;2024-01-05;2024-01-05;2024-01-05;2024-02-01;2024-02-01;2024-02-01;2024-02-03", DateTime, StoreDate},
		{"SV.STDTC", "2024-01-03;2024-01-10;2024-01-24;2024-01-06;2024-01-12;;2024-02-02;2024-02-08;2024-02-22;2024-02-04", DateTime, StoreDate},
		// Study day: 2024-01-03 is 7 days before RFSTDTC 2024-01-10 → −7 (no
		// +1 before the reference); 2024-01-10 → 1; 2024-01-24 → 15. Subject
		// 004 has no RFSTDTC.
		{"SV.STDY", "-7;1;15;-6;1;;-6;1;15;", Continuous, StoreFloat},
		// 004's ALT is NOT DONE → missing.
		{"LB.ALT", "25;;30;20;22;;35;;;", Ordinal, StoreFloat},
		// 001's CRP is "<5" (text only) in a numeric test → missing.
		{"LB.CRP", ";;;7;;;3;;;", Binary, StoreFloat},
		// 002 has NEGATIVE (LBSEQ 2) and POSITIVE (LBSEQ 3, earlier in the
		// file): the last by LBSEQ wins.
		{"LB.HCG", "NEGATIVE;;;POSITIVE;;;;;;", Binary, StoreCode},
		{"VS.DIABP", "80;78;85;76;74;;90;88;;95", Ordinal, StoreFloat},
		// 001 visit 2: 70 and 74 → mean 72; 003 visit 1: 80 twice → 80;
		// 002 visit 1 NOT DONE.
		{"VS.PULSE", "72;72;75;;68;;80;;;", Ordinal, StoreFloat},
		// VSPOS varies for SYSBP within 001 visit 2, so it splits the test;
		// the unscheduled 150 at VISITNUM 3.01 is excluded.
		{"VS.SYSBP.SITTING", "130;128;135;118;120;125;140;138;132;145", Ordinal, StoreFloat},
		{"VS.SYSBP.STANDING", ";122;;;;;;;;", Ordinal, StoreFloat},
	})
	provs := map[string]Provenance{
		"VS.SYSBP.SITTING": {Domain: "VS", TestCode: "SYSBP", Source: "VSSTRESN", File: filepath.Join(fixtureDir, "vs.csv"), Derived: DerivedPivot},
		"LB.HCG":           {Domain: "LB", TestCode: "HCG", Source: "LBSTRESC", File: filepath.Join(fixtureDir, "lb.csv"), Derived: DerivedPivot},
		"DM.SEX":           {Domain: "DM", Source: "SEX", File: filepath.Join(fixtureDir, "dm.csv"), Derived: DerivedJoin},
		"SV.STDY":          {Domain: "SV", Source: "SVSTDTC", File: filepath.Join(fixtureDir, "sv.csv") + ", " + filepath.Join(fixtureDir, "dm.csv"), Derived: DerivedStudyDay},
	}
	for name, want := range provs {
		if got := tbl.Col(name).Prov; got != want {
			t.Errorf("%s: provenance = %+v, want %+v", name, got, want)
		}
	}
	if c := tbl.Col("VS.SYSBP.SITTING"); c.Unit != "mmHg" || c.Label != "Systolic Blood Pressure (VSPOS=SITTING)" {
		t.Errorf("VS.SYSBP.SITTING: unit %q label %q, want mmHg, %q", c.Unit, c.Label, "Systolic Blood Pressure (VSPOS=SITTING)")
	}

	if rep.Rows != 10 || rep.Subjects != 4 || rep.Level != (Level{Kind: LevelVisit}) {
		t.Errorf("report: rows %d subjects %d level %v, want 10, 4, visit", rep.Rows, rep.Subjects, rep.Level)
	}
	if want := []AddedQualifier{{Domain: "VS", TestCode: "SYSBP", Qualifier: "VSPOS", Cells: 1}}; !reflect.DeepEqual(rep.Qualifiers, want) {
		t.Errorf("Qualifiers = %+v, want %+v", rep.Qualifiers, want)
	}
	wantMixed := []MixedUnit{{Domain: "VS", TestCode: "WEIGHT", Var: "VS.WEIGHT", Units: []UnitCount{
		{Unit: "LB", Rows: 1, Sites: []string{"01"}}, {Unit: "kg", Rows: 3, Sites: []string{"01"}}}}}
	if !reflect.DeepEqual(rep.MixedUnits, wantMixed) {
		t.Errorf("MixedUnits = %+v, want %+v", rep.MixedUnits, wantMixed)
	}
	wantColl := []Collision{
		{Var: "LB.HCG", Site: "01", Cells: 1, Rows: 2, Differing: 1},
		{Var: "VS.PULSE", Site: "01", Cells: 1, Rows: 2, Differing: 1},
		{Var: "VS.PULSE", Site: "02", Cells: 1, Rows: 2, Differing: 0},
	}
	if !reflect.DeepEqual(rep.Collisions, wantColl) {
		t.Errorf("Collisions = %+v, want %+v", rep.Collisions, wantColl)
	}
	wantSites := []SiteCollisions{{Site: "01", Cells: 2, Rows: 4, Diff: 2}, {Site: "02", Cells: 1, Rows: 2, Diff: 0}}
	if got := rep.CollisionsBySite(); !reflect.DeepEqual(got, wantSites) {
		t.Errorf("CollisionsBySite() = %+v, want %+v", got, wantSites)
	}
	wantDrop := []Drop{
		{Domain: "SV", Reason: DropUnscheduled, Rows: 1, Subjects: 1},
		{Domain: "VS", Reason: DropNotInDM, Rows: 1, Subjects: 1},
		{Domain: "VS", Reason: DropMixedUnits, Rows: 4, Subjects: 2},
		{Domain: "VS", Reason: DropUnscheduled, Rows: 1, Subjects: 1},
	}
	if !reflect.DeepEqual(rep.Dropped, wantDrop) {
		t.Errorf("Dropped = %+v, want %+v", rep.Dropped, wantDrop)
	}
	if got := rep.DroppedRows(DropUnscheduled); got != 2 {
		t.Errorf("DroppedRows(unscheduled) = %d, want 2", got)
	}
	if want := []string{"T1-03-999"}; !slices.Equal(rep.SubjectsWithoutDM, want) {
		t.Errorf("SubjectsWithoutDM = %q, want %q", rep.SubjectsWithoutDM, want)
	}
	wantVars := []struct {
		name                                       string
		n, rows, notDone, noResult, unused, noUnit int
		quals                                      []string
	}{
		{"LB.ALT", 5, 6, 1, 0, 0, 0, nil},
		{"LB.CRP", 2, 3, 0, 0, 1, 0, nil},
		{"LB.HCG", 2, 3, 0, 0, 0, 3, nil},
		{"VS.PULSE", 5, 8, 1, 0, 0, 0, nil},
		{"VS.SYSBP.SITTING", 10, 10, 0, 0, 0, 0, []string{"VSPOS=SITTING"}},
		{"DM.AGE", 10, 0, 0, 0, 0, 0, nil},
	}
	for _, w := range wantVars {
		v := rep.Var(w.name)
		if v == nil {
			t.Errorf("report has no variable %q", w.name)
			continue
		}
		if v.N != w.n || v.Rows != w.rows || v.NotDone != w.notDone || v.NoResult != w.noResult || v.Unused != w.unused || v.NoUnit != w.noUnit || !slices.Equal(v.Qualifiers, w.quals) {
			t.Errorf("report %s: N %d rows %d notDone %d noResult %d unused %d noUnit %d quals %q; want %d %d %d %d %d %d %q",
				w.name, v.N, v.Rows, v.NotDone, v.NoResult, v.Unused, v.NoUnit, v.Qualifiers,
				w.n, w.rows, w.notDone, w.noResult, w.unused, w.noUnit, w.quals)
		}
	}
	if got, want := len(rep.Vars), len(tbl.Cols)-3; got != want {
		t.Errorf("report lists %d variables, table has %d non-key columns", got, want)
	}
	if rep.Var("VS.WEIGHT") != nil || tbl.Col("VS.WEIGHT") != nil {
		t.Errorf("VS.WEIGHT (mixed units) was made")
	}
}

func TestShapeVisitOptions(t *testing.T) {
	t.Run("IncludeUnscheduled", func(t *testing.T) {
		tbl, rep := shapeFixture(t, "visit", ShapeOptions{IncludeUnscheduled: true})
		checkCols(t, tbl, []colWant{
			{name: "VISITNUM", values: "1;2;3;3.01;1;2;3;1;2;3;1"},
			{name: "SV.STDTC", values: "2024-01-03;2024-01-10;2024-01-24;2024-01-26;2024-01-06;2024-01-12;;2024-02-02;2024-02-08;2024-02-22;2024-02-04"},
			{name: "VS.SYSBP.SITTING", values: "130;128;135;150;118;120;125;140;138;132;145"},
		})
		if got := rep.DroppedRows(DropUnscheduled); got != 0 {
			t.Errorf("DroppedRows(unscheduled) = %d, want 0", got)
		}
	})
	t.Run("no qualifiers", func(t *testing.T) {
		// Without VSPOS in the key, 001 visit 2 holds sitting 128 and
		// standing 122: one collision, mean 125.
		tbl, rep := shapeFixture(t, "visit", ShapeOptions{Qualifiers: []string{}})
		checkCols(t, tbl, []colWant{{name: "VS.SYSBP", values: "130;125;135;118;120;125;140;138;132;145"}})
		if tbl.Col("VS.SYSBP.SITTING") != nil || len(rep.Qualifiers) != 0 {
			t.Errorf("qualifier added with Qualifiers empty: %+v", rep.Qualifiers)
		}
		want := Collision{Var: "VS.SYSBP", Site: "01", Cells: 1, Rows: 2, Differing: 1}
		if !slices.Contains(rep.Collisions, want) {
			t.Errorf("Collisions = %+v, want to contain %+v", rep.Collisions, want)
		}
	})
	t.Run("DMVars and Domains", func(t *testing.T) {
		tbl, rep := shapeFixture(t, "visit", ShapeOptions{DMVars: []string{"SEX", "NOSUCH"}, Domains: []string{"lb"}})
		checkNames(t, tbl, []string{"USUBJID", "VISITNUM", "SITEID", "DM.SEX", "LB.ALT", "LB.CRP", "LB.HCG"})
		// Only LB visits: 001 {1,3}, 002 {1,2}, 003 {1}, 004 {1}.
		checkCols(t, tbl, []colWant{{name: "VISITNUM", values: "1;3;1;2;1;1"}})
		if len(rep.Dropped) != 0 || len(rep.MixedUnits) != 0 {
			t.Errorf("VS or SV read although not in Domains: dropped %+v, mixed %+v", rep.Dropped, rep.MixedUnits)
		}
	})
	t.Run("type override", func(t *testing.T) {
		o := ShapeOptions{Infer: InferOptions{Vars: map[string]VarSpec{"VS.DIABP": {Type: Continuous, Source: "test"}}}}
		tbl, _ := shapeFixture(t, "visit", o)
		if c := tbl.Col("VS.DIABP"); c.Type != Continuous || c.Why != "set by test" {
			t.Errorf("VS.DIABP: type %v (%s), want continuous set by test", c.Type, c.Why)
		}
	})
}

func TestShapeSubject(t *testing.T) {
	tbl, rep := shapeFixture(t, "subject", ShapeOptions{})
	if tbl.NRows != 4 || !slices.Equal(tbl.Keys, []string{"USUBJID"}) || tbl.Site != "SITEID" || tbl.Level != "subject" {
		t.Fatalf("table: %d rows, keys %q, site %q, level %q", tbl.NRows, tbl.Keys, tbl.Site, tbl.Level)
	}
	checkNames(t, tbl, []string{"STUDYID", "DOMAIN", "USUBJID", "SUBJID", "SITEID", "BRTHDTC", "AGE", "AGEU", "SEX", "RACE",
		"ARMCD", "ARM", "RFICDTC", "RFSTDTC", "RFXSTDTC", "CMYN", "AEYN",
		"AE.ANY", "AE.N", "AE.FIRSTSTDTC", "AE.MAXSEV", "AE.MAXTOXGR", "AE.ANYSER",
		"CM.ANY", "CM.N", "CM.FIRSTSTDTC",
		"LB.ALT.BL", "LB.CRP.BL", "LB.HCG.BL",
		"VS.DIABP.BL", "VS.PULSE.BL", "VS.SYSBP.SITTING.BL", "VS.SYSBP.STANDING.BL"})
	checkCols(t, tbl, []colWant{
		{"USUBJID", "T1-01-001;T1-01-002;T1-02-003;T1-02-004", Identifier, StoreCode},
		{"BRTHDTC", "1960;1975-06;1980-03-15;1990", DateTime, StoreDate},
		{"RFSTDTC", "2024-01-10;2024-01-12;2024-02-08;", DateTime, StoreDate},
		{"AE.ANY", "Y;Y;N;N", Binary, StoreCode},
		{"AE.N", "2;2;0;0", Continuous, StoreFloat},
		// 002: "2024-01" starts before 2024-01-13.
		{"AE.FIRSTSTDTC", "2024-01-11;2024-01;;", DateTime, StoreDate},
		{"AE.MAXSEV", "MODERATE;SEVERE;;", Ordinal, StoreCode},
		{"AE.MAXTOXGR", "2;3;;", Ordinal, StoreFloat},
		// 001: N and a missing AESER → unknown; 003, 004: no AE → N.
		{"AE.ANYSER", ";Y;N;N", Binary, StoreCode},
		// 003's ibuprofen has CMOCCUR = N: not counted.
		{"CM.ANY", "Y;N;Y;N", Binary, StoreCode},
		{"CM.N", "1;0;1;0", Continuous, StoreFloat},
		{"CM.FIRSTSTDTC", "2024-01-11;;2023;", DateTime, StoreDate},
		// ALT: 001 and 002 by LBLOBXFL (002's flag is on visit 2), 003 last
		// before RFSTDTC (no RFXSTDTC), 004 NOT DONE.
		{"LB.ALT.BL", "25;22;35;", Ordinal, StoreFloat},
		{"LB.CRP.BL", ";7;3;", Binary, StoreFloat},
		// 002: two results on the same day, last by LBSEQ.
		{"LB.HCG.BL", "NEGATIVE;POSITIVE;;", Binary, StoreCode},
		// 001 VSBLFL; 002 the 2024-01-12 result on its first-dose day; 003
		// the 2024-02-02 result (2024-02-09 is after RFSTDTC); 004 (no
		// reference date) its first visit.
		{"VS.DIABP.BL", "78;74;90;95", Ordinal, StoreFloat},
		// 001: only the flagged 70 of the two visit 2 readings; 003: mean of 80, 80.
		{"VS.PULSE.BL", "70;68;80;", Ordinal, StoreFloat},
		{"VS.SYSBP.SITTING.BL", "128;120;140;145", Ordinal, StoreFloat},
		{"VS.SYSBP.STANDING.BL", "122;;;", Ordinal, StoreFloat},
	})
	if levels := tbl.Col("AE.MAXSEV").Levels; !slices.Equal(levels, []string{"MILD", "MODERATE", "SEVERE"}) {
		t.Errorf("AE.MAXSEV levels = %q, want MILD < MODERATE < SEVERE", levels)
	}
	provs := map[string]Provenance{
		"AE.N":          {Domain: "AE", Source: "AESEQ", File: filepath.Join(fixtureDir, "ae.csv"), Derived: DerivedCount},
		"AE.ANY":        {Domain: "AE", Source: "AESEQ", File: filepath.Join(fixtureDir, "ae.csv"), Derived: DerivedAny},
		"AE.MAXSEV":     {Domain: "AE", Source: "AESEV", File: filepath.Join(fixtureDir, "ae.csv"), Derived: DerivedMax},
		"CM.FIRSTSTDTC": {Domain: "CM", Source: "CMSTDTC", File: filepath.Join(fixtureDir, "cm.csv"), Derived: DerivedFirst},
		"VS.DIABP.BL":   {Domain: "VS", TestCode: "DIABP", Source: "VSSTRESN", File: filepath.Join(fixtureDir, "vs.csv"), Derived: DerivedBaseline},
		"LB.HCG.BL":     {Domain: "LB", TestCode: "HCG", Source: "LBSTRESC", File: filepath.Join(fixtureDir, "lb.csv"), Derived: DerivedBaseline},
		"AGE":           {Domain: "DM", Source: "AGE", File: filepath.Join(fixtureDir, "dm.csv")},
	}
	for name, want := range provs {
		if got := tbl.Col(name).Prov; got != want {
			t.Errorf("%s: provenance = %+v, want %+v", name, got, want)
		}
	}
	baselines := map[string]BaselineCount{
		"LB.ALT.BL":            {Flag: 2, BeforeReference: 1},
		"LB.CRP.BL":            {BeforeReference: 2},
		"LB.HCG.BL":            {BeforeReference: 2},
		"VS.DIABP.BL":          {Flag: 1, BeforeReference: 2, FirstVisit: 1},
		"VS.PULSE.BL":          {Flag: 1, BeforeReference: 2},
		"VS.SYSBP.SITTING.BL":  {Flag: 1, BeforeReference: 2, FirstVisit: 1},
		"VS.SYSBP.STANDING.BL": {BeforeReference: 1},
	}
	for name, want := range baselines {
		v := rep.Var(name)
		if v == nil || v.Baseline == nil {
			t.Errorf("report %s: no baseline counts", name)
			continue
		}
		if *v.Baseline != want {
			t.Errorf("report %s: baseline counts %+v, want %+v", name, *v.Baseline, want)
		}
	}
	if v := rep.Var("AE.MAXSEV"); v == nil || v.Rows != 4 || v.Baseline != nil {
		t.Errorf("report AE.MAXSEV = %+v, want 4 rows, no baseline", v)
	}
	wantColl := []Collision{
		{Var: "LB.HCG.BL", Site: "01", Cells: 1, Rows: 2, Differing: 1},
		{Var: "VS.PULSE.BL", Site: "02", Cells: 1, Rows: 2, Differing: 0},
	}
	if !reflect.DeepEqual(rep.Collisions, wantColl) {
		t.Errorf("Collisions = %+v, want %+v", rep.Collisions, wantColl)
	}
	wantDrop := []Drop{
		{Domain: "AE", Reason: DropNotInDM, Rows: 1, Subjects: 1},
		{Domain: "CM", Reason: DropNotOccurred, Rows: 1, Subjects: 1},
		{Domain: "VS", Reason: DropNotInDM, Rows: 1, Subjects: 1},
		{Domain: "VS", Reason: DropMixedUnits, Rows: 4, Subjects: 2},
		{Domain: "VS", Reason: DropUnscheduled, Rows: 1, Subjects: 1},
	}
	if !reflect.DeepEqual(rep.Dropped, wantDrop) {
		t.Errorf("Dropped = %+v, want %+v", rep.Dropped, wantDrop)
	}
}

func TestShapeRecord(t *testing.T) {
	t.Run("AE", func(t *testing.T) {
		tbl, rep := shapeFixture(t, "record:AE", ShapeOptions{DMVars: []string{"SEX", "AGE", "RFICDTC"}})
		if !slices.Equal(tbl.Keys, []string{"USUBJID", "AESEQ"}) || tbl.Site != "SITEID" || tbl.Level != "record:AE" || tbl.Name != "AE" {
			t.Fatalf("table %s: keys %q, site %q, level %q", tbl.Name, tbl.Keys, tbl.Site, tbl.Level)
		}
		checkNames(t, tbl, []string{"USUBJID", "SITEID", "STUDYID", "DOMAIN", "AESEQ", "AETERM", "AEDECOD", "AESTDTC", "AEENDTC",
			"AESEV", "AETOXGR", "AESER", "AEOUT", "AEREL", "DM.SEX", "DM.AGE", "DM.RFICDTC"})
		checkCols(t, tbl, []colWant{
			// Sorted by subject then AESEQ (the file has 001's AESEQ 2 first);
			// the AE of T1-03-999 (not in DM) is dropped.
			{"USUBJID", "T1-01-001;T1-01-001;T1-01-002;T1-01-002", Identifier, StoreCode},
			{"SITEID", "01;01;01;01", Identifier, StoreCode},
			{"AESEQ", "1;2;1;2", Identifier, StoreCode},
			{"AESTDTC", "2024-01-11;2024-01-15;2024-01;2024-01-13", DateTime, StoreDate},
			{"AESEV", "MILD;MODERATE;SEVERE;MILD", Ordinal, StoreCode},
			{"AESER", "N;;Y;N", Binary, StoreCode},
			{"DM.SEX", "M;M;F;F", Binary, StoreCode},
			{"DM.RFICDTC", "2024-01-02;2024-01-02;2024-01-05;2024-01-05", DateTime, StoreDate},
		})
		if want := []Drop{{Domain: "AE", Reason: DropNotInDM, Rows: 1, Subjects: 1}}; !reflect.DeepEqual(rep.Dropped, want) {
			t.Errorf("Dropped = %+v, want %+v", rep.Dropped, want)
		}
		if rep.Rows != 4 || rep.Subjects != 2 {
			t.Errorf("report rows %d subjects %d, want 4, 2", rep.Rows, rep.Subjects)
		}
		if got := tbl.Col("AESEV").Prov; got != (Provenance{Domain: "AE", Source: "AESEV", File: filepath.Join(fixtureDir, "ae.csv")}) {
			t.Errorf("AESEV provenance = %+v", got)
		}
		// A cross-form record check works on the joined columns: AE start ≥ consent.
		st, ic := tbl.Col("AESTDTC"), tbl.Col("DM.RFICDTC")
		for i := 0; i < tbl.NRows; i++ {
			if got := LessEq(ic.DateLo[i], ic.DateHi[i], st.DateLo[i], st.DateHi[i], PrecDay); i == 2 && got != Unknown || i != 2 && got != True {
				t.Errorf("row %d: RFICDTC ≤ AESTDTC = %v", i, got)
			}
		}
	})
	t.Run("LB long", func(t *testing.T) {
		tbl, _ := shapeFixture(t, "record:lb", ShapeOptions{})
		checkCols(t, tbl, []colWant{
			{name: "LBSEQ", values: "1;2;3;4;1;2;3;4;5;1;2;1"},
			{name: "LBTESTCD", values: "ALT;HCG;ALT;CRP;ALT;HCG;HCG;ALT;CRP;ALT;CRP;ALT"},
			{name: "DM.SEX", values: "M;M;M;M;F;F;F;F;F;M;M;F"},
		})
		if !slices.Equal(tbl.Keys, []string{"USUBJID", "LBSEQ"}) {
			t.Errorf("keys = %q", tbl.Keys)
		}
	})
	t.Run("DM", func(t *testing.T) {
		tbl, _ := shapeFixture(t, "record:DM", ShapeOptions{})
		checkCols(t, tbl, []colWant{{name: "SUBJID", values: "001;002;003;004"}})
		if slices.ContainsFunc(tbl.Names(), func(n string) bool { return strings.HasPrefix(n, "DM.") }) {
			t.Errorf("record:DM joins DM to itself: %q", tbl.Names())
		}
	})
}

func TestShapeTable(t *testing.T) {
	s := openFixture(t)
	tbl, rep, err := s.Shape(Level{Kind: LevelTable, Domain: "vs"}, ShapeOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if tbl != s.Table("VS") {
		t.Errorf("table:vs did not return the study's VS table")
	}
	if rep.Rows != 33 || rep.Subjects != 5 || len(rep.Vars) != len(tbl.Cols)-len(tbl.Keys) {
		t.Errorf("report: rows %d subjects %d vars %d; want 33, 5, %d", rep.Rows, rep.Subjects, len(rep.Vars), len(tbl.Cols)-len(tbl.Keys))
	}
}

func TestShapeErrors(t *testing.T) {
	s := openFixture(t)
	generic := &Study{Path: "mem", Tables: []*Table{mustCSV(t, "labs.csv", "PT,VISIT,ALT\nA,1,20\n")}}
	tests := []struct {
		name    string
		study   *Study
		level   Level
		o       ShapeOptions
		wantErr string
		is      error
	}{
		{name: "no DM", study: generic, level: Level{Kind: LevelVisit}, is: ErrNotSDTM},
		{name: "no DM record", study: generic, level: Level{Kind: LevelRecord, Domain: "LABS"}, is: ErrNotSDTM},
		{name: "unknown domain", study: s, level: Level{Kind: LevelRecord, Domain: "EG"}, wantErr: `no domain "EG"`},
		{name: "unknown table", study: s, level: Level{Kind: LevelTable, Domain: "eg"}, wantErr: `no table "eg"`},
		{name: "unknown kind", study: s, level: Level{Kind: "site"}, wantErr: `unknown level "site"`},
		{name: "too many qualifiers", study: s, level: Level{Kind: LevelVisit},
			o: ShapeOptions{Qualifiers: []string{"A", "B", "C", "D", "E", "F", "G", "H", "I"}}, wantErr: "at most 8"},
		{name: "override contradicted", study: s, level: Level{Kind: LevelVisit},
			o: ShapeOptions{Infer: InferOptions{Vars: map[string]VarSpec{"LB.HCG": {Type: Continuous}}}}, wantErr: `"NEGATIVE" is not a number`},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, _, err := tc.study.Shape(tc.level, tc.o)
			switch {
			case err == nil:
				t.Fatalf("Shape(%v) succeeded, want an error", tc.level)
			case tc.is != nil && !errors.Is(err, tc.is):
				t.Fatalf("Shape(%v) error = %v, want %v", tc.level, err, tc.is)
			case tc.wantErr != "" && !strings.Contains(err.Error(), tc.wantErr):
				t.Fatalf("Shape(%v) error = %v, want one containing %q", tc.level, err, tc.wantErr)
			}
		})
	}
	// A generic table is still available.
	if tbl, _, err := generic.Shape(Level{Kind: LevelTable, Domain: "LABS"}, ShapeOptions{}); err != nil || tbl.NRows != 1 {
		t.Errorf("table:LABS on a generic study: %v", err)
	}
}

// TestShapeSplitDomain: LBCH and LBHE with DOMAIN = LB are one domain.
func TestShapeSplitDomain(t *testing.T) {
	dm := mustCSV(t, "dm.csv", "USUBJID,SITEID,SEX\nS-1,01,F\nS-2,02,M\n")
	ch := mustCSV(t, "lbch.csv", "DOMAIN,USUBJID,LBSEQ,LBTESTCD,LBSTRESN,LBSTRESU,VISITNUM,LBDTC\n"+
		"LB,S-1,1,ALT,20,U/L,1,2024-01-01\nLB,S-2,1,ALT,30,U/L,1,2024-01-02\n")
	he := mustCSV(t, "lbhe.csv", "DOMAIN,USUBJID,LBSEQ,LBTESTCD,LBSTRESN,LBSTRESU,VISITNUM\n"+
		"LB,S-1,2,HGB,130,g/L,1\nLB,S-2,2,HGB,150,g/L,1\n")
	s := &Study{Path: "mem", Tables: []*Table{dm, ch, he}}
	tbl, _, err := s.Shape(Level{Kind: LevelVisit}, ShapeOptions{})
	if err != nil {
		t.Fatal(err)
	}
	checkNames(t, tbl, []string{"USUBJID", "VISITNUM", "SITEID", "DM.SEX", "LB.ALT", "LB.HGB"})
	checkCols(t, tbl, []colWant{{name: "LB.ALT", values: "20;30"}, {name: "LB.HGB", values: "130;150"}})
	if got, want := tbl.Col("LB.HGB").Prov.File, "lbch.csv, lbhe.csv"; got != want {
		t.Errorf("LB.HGB provenance file = %q, want %q", got, want)
	}
	rec, _, err := s.Shape(Level{Kind: LevelRecord, Domain: "LB"}, ShapeOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if err := rec.Validate(); err != nil {
		t.Fatal(err)
	}
	checkCols(t, rec, []colWant{
		{name: "LBTESTCD", values: "ALT;HGB;ALT;HGB"},
		{name: "LBSTRESN", values: "20;130;30;150"},
		// LBHE has no LBDTC: missing on its rows; still a date column.
		{name: "LBDTC", values: "2024-01-01;;2024-01-02;", typ: DateTime, storage: StoreDate},
	})
	// One part by its table name: prefix LB from DOMAIN, so keyed by LBSEQ.
	part, _, err := s.Shape(Level{Kind: LevelRecord, Domain: "LBHE"}, ShapeOptions{DMVars: []string{}})
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(part.Keys, []string{"USUBJID", "LBSEQ"}) || part.NRows != 2 {
		t.Errorf("record:LBHE: keys %q, %d rows; want [USUBJID LBSEQ], 2", part.Keys, part.NRows)
	}
	checkCols(t, part, []colWant{{name: "LBTESTCD", values: "HGB;HGB"}})
}

func TestNameSegment(t *testing.T) {
	tests := []struct{ in, want string }{
		{"SITTING", "SITTING"},
		{"left arm", "LEFT_ARM"},
		{"  ", "NA"},
		{"", "NA"},
		{"PRE-DOSE (1 h)", "PRE_DOSE_1_H"},
		{"2", "2"},
	}
	for _, tc := range tests {
		if got := nameSegment(tc.in); got != tc.want {
			t.Errorf("nameSegment(%q) = %q, want %q (theoretical: documented rule)", tc.in, got, tc.want)
		}
	}
}

// TestShapeTimePoint: a varying --TPTNUM is added as "TPT<n>", numerically ordered.
func TestShapeTimePoint(t *testing.T) {
	dm := mustCSV(t, "dm.csv", "USUBJID,SITEID\nS-1,01\n")
	var b strings.Builder
	b.WriteString("DOMAIN,USUBJID,EGSEQ,EGTESTCD,EGSTRESN,EGSTRESU,EGTPTNUM,VISITNUM\n")
	for i, tp := range []int{10, 2, 1} {
		fmt.Fprintf(&b, "EG,S-1,%d,QTCF,%d,ms,%d,1\n", i+1, 400+tp, tp)
	}
	s := &Study{Path: "mem", Tables: []*Table{dm, mustCSV(t, "eg.csv", b.String())}}
	tbl, rep, err := s.Shape(Level{Kind: LevelVisit}, ShapeOptions{})
	if err != nil {
		t.Fatal(err)
	}
	checkNames(t, tbl, []string{"USUBJID", "VISITNUM", "SITEID", "EG.QTCF.TPT1", "EG.QTCF.TPT2", "EG.QTCF.TPT10"})
	checkCols(t, tbl, []colWant{{name: "EG.QTCF.TPT10", values: "410"}})
	if len(rep.Collisions) != 0 {
		t.Errorf("collisions after splitting by time point: %+v", rep.Collisions)
	}
}

// synthStudy builds an in-memory SDTM study: n subjects at 10 sites, visits
// scheduled visits, tests VS tests per visit (one repeated reading per
// subject), and ae adverse events per subject.
func synthStudy(tb testing.TB, n, visits, tests, ae int) *Study {
	var dm, vs, aes strings.Builder
	dm.WriteString("USUBJID,SITEID,SEX,AGE,RFSTDTC\n")
	vs.WriteString("USUBJID,VSSEQ,VSTESTCD,VSSTRESN,VSSTRESU,VISITNUM,VSDTC,VSBLFL\n")
	aes.WriteString("USUBJID,AESEQ,AETERM,AESTDTC,AESEV,AESER\n")
	sev := []string{"MILD", "MODERATE", "SEVERE"}
	for s := 0; s < n; s++ {
		id := fmt.Sprintf("S-%02d-%04d", s%10, s)
		fmt.Fprintf(&dm, "%s,%02d,%c,%d,2024-01-10\n", id, s%10, "MF"[s%2], 20+s%50)
		seq := 0
		for v := 1; v <= visits; v++ {
			for k := 0; k < tests; k++ {
				seq++
				bl := ""
				if v == 1 {
					bl = "Y"
				}
				fmt.Fprintf(&vs, "%s,%d,T%02d,%g,u%d,%d,2024-01-%02d,%s\n", id, seq, k, float64(100+(s*7+v*3+k)%50)+0.5, k, v, v+1, bl)
			}
		}
		seq++
		fmt.Fprintf(&vs, "%s,%d,T00,%d,u0,1,2024-01-02,\n", id, seq, 90+s%7)
		for a := 0; a < ae; a++ {
			fmt.Fprintf(&aes, "%s,%d,Event %d,2024-02-%02d,%s,%c\n", id, a+1, a, 1+a%28, sev[(s+a)%3], "NY"[(s+a)%5/4])
		}
	}
	tables := []*Table{mustCSV(tb, "dm.csv", dm.String()), mustCSV(tb, "vs.csv", vs.String())}
	if ae > 0 {
		tables = append(tables, mustCSV(tb, "ae.csv", aes.String()))
	}
	return &Study{Path: "synthetic", Tables: tables}
}

func TestShapeSynthetic(t *testing.T) {
	s := synthStudy(t, 20, 3, 4, 2)
	tbl, rep, err := s.Shape(Level{Kind: LevelVisit}, ShapeOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if tbl.NRows != 60 || len(tbl.Cols) != 3+3+4 {
		t.Fatalf("visit level: %d rows, %d columns (%q), want 60 rows, 10 columns", tbl.NRows, len(tbl.Cols), tbl.Names())
	}
	// Every subject has one repeated T00 reading at visit 1: 20 collisions
	// over 10 sites, all differing (the repeat is an integer, the others x.5).
	cells := 0
	for _, c := range rep.CollisionsBySite() {
		cells += c.Cells
		if c.Cells != 2 || c.Diff != 2 {
			t.Errorf("site %s: %d cells (%d differing), want 2 (2)", c.Site, c.Cells, c.Diff)
		}
	}
	if cells != 20 {
		t.Errorf("collisions: %d cells, want 20", cells)
	}
	// Subject S-00-0000, visit 1, T00: 100 + (0·7 + 1·3 + 0) mod 50 + 0.5 =
	// 103.5 and the repeat 90 + 0 mod 7 = 90; mean 96.75.
	if got := tbl.Col("VS.T00").Floats[0]; got != 96.75 {
		t.Errorf("VS.T00[0] = %v, want 96.75", got)
	}
	sub, _, err := s.Shape(Level{Kind: LevelSubject}, ShapeOptions{})
	if err != nil {
		t.Fatal(err)
	}
	// Baseline of T00 by VSBLFL: the flagged visit 1 reading only, 103.5.
	if got := sub.Col("VS.T00.BL").Floats[0]; got != 103.5 {
		t.Errorf("VS.T00.BL[0] = %v, want 103.5", got)
	}
	if got := sub.Col("AE.N").Floats[0]; got != 2 {
		t.Errorf("AE.N[0] = %v, want 2", got)
	}
	if err := sub.Validate(); err != nil {
		t.Fatal(err)
	}
}

func BenchmarkShape(b *testing.B) {
	for _, sz := range []struct{ n, visits, tests, ae int }{{60, 6, 50, 3}, {600, 6, 50, 3}} {
		s := synthStudy(b, sz.n, sz.visits, sz.tests, sz.ae)
		for _, level := range []string{"visit", "subject"} {
			l, _ := ParseLevel(level)
			b.Run(fmt.Sprintf("%s/subjects=%d/rows=%d", level, sz.n, s.Table("VS").NRows), func(b *testing.B) {
				b.ReportAllocs()
				for b.Loop() {
					if _, _, err := s.Shape(l, ShapeOptions{}); err != nil {
						b.Fatal(err)
					}
				}
			})
		}
	}
	s := synthStudy(b, 5000, 1, 1, 20)
	b.Run(fmt.Sprintf("record:AE/rows=%d", s.Table("AE").NRows), func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			if _, _, err := s.Shape(Level{Kind: LevelRecord, Domain: "AE"}, ShapeOptions{}); err != nil {
				b.Fatal(err)
			}
		}
	})
}

func TestShapeRecordWithoutSubjects(t *testing.T) {
	dm := mustCSV(t, "dm.csv", "USUBJID,SITEID\nS-1,01\n")
	ts := mustCSV(t, "ts.csv", "STUDYID,DOMAIN,TSPARMCD,TSVAL\nT1,TS,AGEMIN,18\n")
	s := &Study{Path: "mem", Tables: []*Table{dm, ts}}
	if _, _, err := s.Shape(Level{Kind: LevelRecord, Domain: "TS"}, ShapeOptions{}); err == nil || !strings.Contains(err.Error(), "use table:TS") {
		t.Errorf("record:TS error = %v, want one pointing to table:TS", err)
	}
}

// TestShapeSVPartWithoutVisit: an SV table without VISITNUM, next to one
// with it, drops its rows with a reason instead of failing.
func TestShapeSVPartWithoutVisit(t *testing.T) {
	dm := mustCSV(t, "dm.csv", "USUBJID,SITEID,RFSTDTC\nS-1,01,2024-01-10\n")
	sv1 := mustCSV(t, "sv.csv", "DOMAIN,USUBJID,VISITNUM,SVSTDTC\nSV,S-1,1,2024-01-10\n")
	sv2 := mustCSV(t, "svx.csv", "DOMAIN,USUBJID,SVSTDTC\nSV,S-1,2024-01-20\n")
	s := &Study{Path: "mem", Tables: []*Table{dm, sv1, sv2}}
	tbl, rep, err := s.Shape(Level{Kind: LevelVisit}, ShapeOptions{})
	if err != nil {
		t.Fatal(err)
	}
	checkCols(t, tbl, []colWant{{name: "SV.STDTC", values: "2024-01-10"}, {name: "SV.STDY", values: "1"}})
	if want := []Drop{{Domain: "SV", Reason: DropNoVisit, Rows: 1, Subjects: 1}}; !reflect.DeepEqual(rep.Dropped, want) {
		t.Errorf("Dropped = %+v, want %+v", rep.Dropped, want)
	}
}

// TestShapeMessy: every kind of unusable row is counted under its reason.
func TestShapeMessy(t *testing.T) {
	dm := mustCSV(t, "dm.csv", "USUBJID,SITEID,SEX\nS-1,01,F\nS-1,09,M\n,02,M\nS-2,02,M\n")
	lb := mustCSV(t, "lb.csv", "USUBJID,LBSEQ,LBTESTCD,LBSTRESC,LBSTRESN,LBSTAT,VISITNUM\n"+
		"S-1,1,ALT,20,20,,1\n"+ // kept
		"S-1,2,,30,30,,1\n"+ // no test code
		"S-2,1,ALT,25,25,,V2\n"+ // VISITNUM not a number
		"S-2,2,BILI,,,NOT DONE,1\n"+ // only NOT DONE: no variable
		",3,ALT,1,1,,1\n") // no USUBJID
	s := &Study{Path: "mem", Tables: []*Table{dm, lb}}
	for _, level := range []Level{{Kind: LevelVisit}, {Kind: LevelSubject}, {Kind: LevelRecord, Domain: "LB"}} {
		tbl, rep, err := s.Shape(level, ShapeOptions{})
		if err != nil {
			t.Fatalf("%v: %v", level, err)
		}
		if err := tbl.Validate(); err != nil {
			t.Fatalf("%v: %v", level, err)
		}
		want := []Drop{
			{Domain: "DM", Reason: DropDuplicateDM, Rows: 1, Subjects: 1},
			{Domain: "DM", Reason: DropNoSubject, Rows: 1},
			{Domain: "LB", Reason: DropNoSubject, Rows: 1},
		}
		if level.Kind != LevelRecord {
			want = append(want[:2],
				Drop{Domain: "LB", Reason: DropNoSubject, Rows: 1},
				Drop{Domain: "LB", Reason: DropNoVisit, Rows: 1, Subjects: 1},
				Drop{Domain: "LB", Reason: DropNoTestCode, Rows: 1, Subjects: 1},
				Drop{Domain: "LB", Reason: DropNoResult, Rows: 1, Subjects: 1})
		}
		if !reflect.DeepEqual(rep.Dropped, want) {
			t.Errorf("%v: Dropped = %+v, want %+v", level, rep.Dropped, want)
		}
		// The first DM record of S-1 is kept: site 01, not 09.
		if got := tbl.SiteOf(0); got != "01" {
			t.Errorf("%v: site of S-1 = %q, want 01", level, got)
		}
	}
}
