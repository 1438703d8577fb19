package check

import (
	"path/filepath"
	"testing"

	"github.com/crossform/crossform/dataset/demostudy"
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
	res, rs := crossCheck(t, dir, demoCrossDir, "recompute_demo.py", true)
	if res.Manifest.RuleSet.SHA256 != rs.Hash() {
		t.Errorf("manifest rule set %+v, want hash %s", res.Manifest.RuleSet, rs.Hash())
	}
}
