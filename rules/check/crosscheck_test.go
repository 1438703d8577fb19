package check

import (
	"context"
	"encoding/csv"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"

	"github.com/crossform/crossform/dataset"
	"github.com/crossform/crossform/rules"
)

// crossDir holds the cross-check fixture, rule set and the independent
// recomputation (testdata/check/recompute.py, pandas; versions.txt).
var crossDir = filepath.Join("..", "..", "testdata", "check")

func readCSV(t *testing.T, path string) [][]string {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	return recs[1:]
}

// TestCrossCheck runs the checker end to end (dataset.Open, Study.Shape at
// record:AE and table:vitals, rules.Load) on the fixture extract and compares
// its discrepancies and per-rule counts row for row with those recomputed by
// plain pandas filters in testdata/check/recompute.py (pandas 1.5.3, Python
// 3.11.2; committed output expected_listing.csv and expected_summary.csv).
func TestCrossCheck(t *testing.T) {
	res, rs := crossCheck(t, filepath.Join(crossDir, "fixture"), crossDir, "recompute.py", false)
	// Manifest: every fixture file hashed, rule set hashed.
	m := res.Manifest
	if len(m.Inputs) != 3 || m.RuleSet.SHA256 != rs.Hash() || m.RuleSet.SHA256 == "" {
		t.Errorf("manifest inputs %+v, rule set %+v", m.Inputs, m.RuleSet)
	}
}

// crossCheck runs the checker on the study in studyDir with the rule set
// refDir/rules.yaml and compares its discrepancies (rule_id, site, subject,
// record_key, values) and per-rule counts (evaluated, violations,
// not_evaluable) row for row with refDir/expected_listing.csv and
// refDir/expected_summary.csv, written by the independent script named
// script. nonEmpty requires the expected listing to hold rows.
func crossCheck(t *testing.T, studyDir, refDir, script string, nonEmpty bool) (*Result, *rules.RuleSet) {
	t.Helper()
	study, err := dataset.Open(studyDir, dataset.Options{})
	if err != nil {
		t.Fatal(err)
	}
	rs, err := rules.Load(filepath.Join(refDir, "rules.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	res, err := Run(context.Background(), rs, study, Options{ToolVersion: "test"})
	if err != nil {
		t.Fatal(err)
	}
	if len(res.NotEvaluable) > 0 {
		t.Fatalf("not evaluable: %+v", res.NotEvaluable)
	}
	var got [][]string
	for _, f := range res.Findings {
		got = append(got, []string{f.RuleID, f.Site, f.Subject, f.RecordKey, FormatValues(f.Vars, f.Values)})
	}
	slices.SortFunc(got, func(a, b []string) int { return slices.Compare(a, b) })
	want := readCSV(t, filepath.Join(refDir, "expected_listing.csv"))
	slices.SortFunc(want, func(a, b []string) int { return slices.Compare(a, b) })
	if nonEmpty && len(want) == 0 {
		t.Fatal("expected_listing.csv is empty")
	}
	for i := 0; i < max(len(got), len(want)); i++ {
		var g, w string
		if i < len(got) {
			g = strings.Join(got[i], " | ")
		}
		if i < len(want) {
			w = strings.Join(want[i], " | ")
		}
		if g != w {
			t.Errorf("row %d:\n got %s\nwant %s (%s)", i+1, g, w, script)
		}
	}
	sum := readCSV(t, filepath.Join(refDir, "expected_summary.csv"))
	if len(sum) != len(res.Rules) {
		t.Fatalf("%d rule summaries, want %d", len(res.Rules), len(sum))
	}
	for i, s := range res.Rules {
		g := []string{s.RuleID, strconv.Itoa(s.Evaluated), strconv.Itoa(s.Violations), strconv.Itoa(s.NotEvaluable)}
		if !slices.Equal(g, sum[i]) {
			t.Errorf("rule summary %v, want %v (%s: rule_id, evaluated, violations, not_evaluable)", g, sum[i], script)
		}
	}
	return res, rs
}
