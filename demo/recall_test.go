package demo

import (
	"testing"

	"github.com/crossform/crossform/dataset/demostudy"
	"github.com/crossform/crossform/rules/check"
	"github.com/crossform/crossform/signals"
)

// Hand-built: which planted records count as caught.
func TestRecall(t *testing.T) {
	truth := []demostudy.Problem{
		{Class: demostudy.ClassBPTransposed, Domain: "VS", USUBJID: "S1", SiteID: "01", VisitNum: 3, Key: "SYSBP"},
		{Class: demostudy.ClassBPTransposed, Domain: "VS", USUBJID: "S2", SiteID: "01", VisitNum: 2, Key: "SYSBP"},
		{Class: demostudy.ClassAEEndBeforeStart, Domain: "AE", USUBJID: "S1", SiteID: "01", Key: "2"},
		{Class: demostudy.ClassCMGateContradiction, Domain: "DM", USUBJID: "S3", SiteID: "02", Key: "CMYN"},
		{Class: demostudy.ClassWeightInPounds, Domain: "VS", USUBJID: "S4", SiteID: "07", VisitNum: 4, Key: "WEIGHT"},
		{Class: demostudy.ClassFabricatedSubjects, Domain: "DM", USUBJID: "S5", SiteID: "06"},
	}
	findings := []check.Finding{
		{Subject: "S1", Visit: "3", Level: "visit", Vars: []string{"VS.DIABP", "VS.SYSBP"}}, // catches S1 visit 3
		{Subject: "S2", Visit: "3", Level: "visit", Vars: []string{"VS.DIABP", "VS.SYSBP"}}, // wrong visit
		{Subject: "S2", Visit: "2", Level: "visit", Vars: []string{"LB.ALT", "LB.AST"}},     // unrelated rule
		{Subject: "S1", Seq: "2", Level: "record:AE", Vars: []string{"AESTDTC", "AEENDTC"}}, // catches AESEQ 2
		{Subject: "S3", Level: "subject", Vars: []string{"CMYN", "CM.N"}},                   // subject level
	}
	sig := &signals.Report{
		SubjectIDs: []string{"S4", "S5", "S6"},
		Shifts:     []signals.Shift{{Site: "07", Var: "VS.WEIGHT", Stratum: "VISITNUM=4", Flag: true}},
		Duplicates: &signals.DuplicateResult{Groups: []signals.DuplicateGroup{{ID: 1, Site: "06", Rows: []int{1, 2}}}},
	}
	want := map[string][2]int{ // planted, caught
		demostudy.ClassBPTransposed:        {2, 1},
		demostudy.ClassAEEndBeforeStart:    {1, 1},
		demostudy.ClassCMGateContradiction: {1, 1},
		demostudy.ClassWeightInPounds:      {1, 1},
		demostudy.ClassFabricatedSubjects:  {1, 1},
		demostudy.ClassPregnancyMale:       {0, 0},
	}
	got := map[string]ClassRecall{}
	for _, r := range Recall(truth, findings, sig) {
		got[r.Class] = r
	}
	if len(got) != len(demostudy.ProblemClasses()) {
		t.Errorf("got %d classes, want every class of demostudy.ProblemClasses (%d)", len(got), len(demostudy.ProblemClasses()))
	}
	for c, w := range want {
		if g := got[c]; g.Planted != w[0] || g.Caught != w[1] {
			t.Errorf("%s: planted %d caught %d, want %d and %d", c, g.Planted, g.Caught, w[0], w[1])
		}
	}
	if r := got[demostudy.ClassPregnancyMale].Rate(); r != 1 {
		t.Errorf("Rate with nothing planted = %g, want 1", r)
	}
}

func TestFalseAlarmRate(t *testing.T) {
	res := &check.Result{
		Findings: []check.Finding{{Level: "visit", RecordKey: "a"}, {Level: "visit", RecordKey: "a"}, {Level: "subject", RecordKey: "a"}},
		Tables:   []check.TableInfo{{Rows: 100}, {Rows: 50}},
	}
	if f, n := FalseAlarmRate(res); f != 2 || n != 150 {
		t.Errorf("FalseAlarmRate = %d of %d, want 2 of 150 (two findings on one record count once)", f, n)
	}
}
