package check

import (
	"context"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"

	"github.com/crossform/crossform/dataset"
	"github.com/crossform/crossform/dataset/demostudy"
	"github.com/crossform/crossform/rules"
)

// demoCrossDir holds the demo study's rule set and the output of its
// independent recomputation (testdata/check/demo/recompute_demo.py, pandas;
// versions.txt).
var demoCrossDir = filepath.Join("..", "..", "testdata", "check", "demo")

// TestCrossCheckDemo generates the invented demo study CFX-201
// (demostudy.Generate with DefaultConfig, written by WriteCSV), runs the
// checker on it end to end (dataset.Open, Study.Shape at visit and record:AE
// levels, rules.Load of testdata/check/demo/rules.yaml) and compares its
// discrepancies (rule_id, site, subject, record_key, values) and per-rule
// counts (evaluated, violations, not_evaluable) row for row with those
// recomputed from the same CSV files by plain pandas pivots, joins and
// filters in testdata/check/demo/recompute_demo.py (pandas 1.5.3, PyYAML 6.0,
// Python 3.11.2, Debian bookworm; committed output expected_listing.csv and
// expected_summary.csv). The rules touch the study's planted problems
// (transposed blood pressures, visits before consent, AE end before start,
// severity/grade mismatches) and creatinine limits by sex.
func TestCrossCheckDemo(t *testing.T) {
	st, err := demostudy.Generate(demostudy.DefaultConfig())
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	if err := st.WriteCSV(dir); err != nil {
		t.Fatal(err)
	}
	study, err := dataset.Open(dir, dataset.Options{})
	if err != nil {
		t.Fatal(err)
	}
	rs, err := rules.Load(filepath.Join(demoCrossDir, "rules.yaml"))
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
	want := readCSV(t, filepath.Join(demoCrossDir, "expected_listing.csv"))
	slices.SortFunc(want, func(a, b []string) int { return slices.Compare(a, b) })
	if len(want) == 0 {
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
			t.Errorf("row %d:\n got %s\nwant %s (recompute_demo.py)", i+1, g, w)
		}
	}
	sum := readCSV(t, filepath.Join(demoCrossDir, "expected_summary.csv"))
	if len(sum) != len(res.Rules) {
		t.Fatalf("%d rule summaries, want %d", len(res.Rules), len(sum))
	}
	for i, s := range res.Rules {
		g := []string{s.RuleID, strconv.Itoa(s.Evaluated), strconv.Itoa(s.Violations), strconv.Itoa(s.NotEvaluable)}
		if !slices.Equal(g, sum[i]) {
			t.Errorf("rule summary %v, want %v (recompute_demo.py: rule_id, evaluated, violations, not_evaluable)", g, sum[i])
		}
	}
	if res.Manifest.RuleSet.SHA256 != rs.Hash() {
		t.Errorf("manifest rule set %+v, want hash %s", res.Manifest.RuleSet, rs.Hash())
	}
}
