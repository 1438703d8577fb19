package check

import (
	"context"
	"errors"
	"fmt"
	"math"
	"strings"
	"testing"

	"github.com/crossform/crossform/dataset"
	"github.com/crossform/crossform/rules"
)

const twoRules = `schema: 1
rules:
  - id: order-bp
    kind: order
    level: visit
    status: accepted
    severity: critical
    variables: [VS.DIABP, VS.SYSBP]
  - id: range-ht
    kind: group_range
    level: visit
    status: accepted
    severity: minor
    variables: [SEX, HEIGHT]
    params: {limits: {M: [150, 200], F: [140, 190]}}
  - id: ae-dates
    kind: order
    level: record:AE
    status: accepted
    severity: major
    variables: [AESTDTC, AEENDTC]
  - id: proposed-one
    kind: order
    level: visit
    status: proposed
    severity: major
    variables: [VS.SYSBP, VS.DIABP]
`

func visitTable(t testing.TB, withHeight bool) *dataset.Table {
	cols := []tcol{
		id("USUBJID", "S1", "S1", "S2", "S3"), cat("SITEID", "01", "01", "02", "02"), num("VISITNUM", "1", "2", "1", "1"),
		num("VS.DIABP", "80", "130", "70", "90"), num("VS.SYSBP", "120", "120", "110", "85"), cat("SEX", "M", "M", "F", "F"),
	}
	if withHeight {
		cols = append(cols, num("HEIGHT", "180", "180", "200", "160"))
	}
	return buildTable(t, "VS", "visit", []string{"USUBJID", "VISITNUM"}, "SITEID", cols...)
}

// TestNotEvaluable drops HEIGHT from the visit table and has no AE table:
// the group_range rule and the AE rule must be reported as not evaluable
// with the reason, the order rule still runs, and nothing is silently
// skipped (every selected rule has a summary).
func TestNotEvaluable(t *testing.T) {
	rs := ruleSet(t, twoRules)
	res := runTables(t, rs, map[string]*dataset.Table{"visit": visitTable(t, false)}, Options{})
	if len(res.NotEvaluable) != 2 {
		t.Fatalf("NotEvaluable = %+v, want 2 rules", res.NotEvaluable)
	}
	ae, ht := res.NotEvaluable[0], res.NotEvaluable[1]
	if ae.RuleID != "ae-dates" || !strings.Contains(ae.Reason, "no table for level record:AE") {
		t.Errorf("NotEvaluable[0] = %+v, want ae-dates with the level's error", ae)
	}
	if ht.RuleID != "range-ht" || !strings.Contains(ht.Reason, `"HEIGHT"`) {
		t.Errorf("NotEvaluable[1] = %+v, want range-ht naming HEIGHT", ht)
	}
	if len(res.Rules) != 3 {
		t.Fatalf("Rules has %d summaries, want 3 (accepted only)", len(res.Rules))
	}
	for _, s := range res.Rules {
		wantEval := s.RuleID == "order-bp"
		if s.Evaluable != wantEval || (!wantEval && s.Reason == "") {
			t.Errorf("summary %s: Evaluable %v Reason %q", s.RuleID, s.Evaluable, s.Reason)
		}
	}
	// Type change: SEX numeric where group_range needs a group is fine, but
	// HEIGHT as text is not a number.
	tb := visitTable(t, false)
	if err := tb.Add(dataset.NewCodeColumn("HEIGHT", dataset.Nominal, []int32{0, 0, 0, 0}, []string{"tall"})); err != nil {
		t.Fatal(err)
	}
	res = runTables(t, rs, map[string]*dataset.Table{"visit": tb}, Options{})
	if len(res.NotEvaluable) != 2 || !strings.Contains(res.NotEvaluable[1].Reason, "not a number") {
		t.Errorf("HEIGHT as text: NotEvaluable = %+v, want range-ht: not a number", res.NotEvaluable)
	}
}

func TestLintRefused(t *testing.T) {
	rs := ruleSet(t, strings.Replace(twoRules, "id: range-ht", "id: order-bp", 1))
	_, err := Run(context.Background(), rs, nil, Options{Table: func(string) (*dataset.Table, error) { return nil, nil }})
	var le *LintError
	if !errors.As(err, &le) || len(le.Issues) == 0 || !strings.Contains(err.Error(), "duplicate id") {
		t.Fatalf("Run with a duplicate id: err = %v, want a *LintError naming the duplicate", err)
	}
	if le.Issues[0].Line == 0 {
		t.Errorf("lint issue without line: %+v", le.Issues[0])
	}
}

// TestRunCounts checks findings, per-rule and per-site counts on a small
// table (hand-derived): S1 visit 2 has DIABP 130 > SYSBP 120 and S3 has 90 >
// 85 (order-bp fails twice); S2 is F with HEIGHT 200 > 190 (range-ht fails
// once). Site 01: 1 subject, 2 records, 4 evaluations, 1 violation; site 02:
// 2 subjects, 2 records, 4 evaluations, 2 violations.
func TestRunCounts(t *testing.T) {
	rs := ruleSet(t, twoRules)
	res := runTables(t, rs, map[string]*dataset.Table{"visit": visitTable(t, true), "record:AE": buildTable(t, "AE", "record:AE", []string{"USUBJID"}, "SITEID",
		id("USUBJID", "S1"), cat("SITEID", "01"), cat("AETERM", "X"), date("AESTDTC", "2024-01-02"), date("AEENDTC", "2024-01-01"))}, Options{})
	var keys []string
	for _, f := range res.Findings {
		keys = append(keys, f.Key+"/"+string(f.Severity))
	}
	want := []string{
		"ae-dates|USUBJID=S1;AETERM=X;AESTDTC=2024-01-02/major",
		"order-bp|USUBJID=S1;VISITNUM=2/critical",
		"range-ht|USUBJID=S2;VISITNUM=1/minor",
		"order-bp|USUBJID=S3;VISITNUM=1/critical",
	}
	if strings.Join(keys, "\n") != strings.Join(want, "\n") {
		t.Errorf("findings:\n%s\nwant\n%s", strings.Join(keys, "\n"), strings.Join(want, "\n"))
	}
	if got := res.AtOrAbove(rules.Major); got != 3 {
		t.Errorf("AtOrAbove(major) = %d, want 3", got)
	}
	if got := res.AtOrAbove(rules.Critical); got != 2 {
		t.Errorf("AtOrAbove(critical) = %d, want 2", got)
	}
	if got := res.AtOrAbove(rules.Minor); got != 4 {
		t.Errorf("AtOrAbove(minor) = %d, want 4", got)
	}
	if len(res.Sites) != 2 {
		t.Fatalf("Sites = %+v", res.Sites)
	}
	s1, s2 := res.Sites[0], res.Sites[1]
	// Site 01: visit table 2 rows + AE 1 row; evaluations 2 (order) + 2 (range) + 1 (AE).
	if s1.Site != "01" || s1.Subjects != 1 || s1.Records != 3 || s1.Evaluations != 5 || s1.Violations != 2 || s1.BySeverity[rules.Major] != 1 {
		t.Errorf("site 01 = %+v, want 1 subject, 3 records, 5 evaluations, 2 violations", s1)
	}
	if s2.Site != "02" || s2.Subjects != 2 || s2.Records != 2 || s2.Evaluations != 4 || s2.Violations != 2 || math.Abs(s2.Rate-0.5) > 0 {
		t.Errorf("site 02 = %+v, want 2 subjects, 2 records, 4 evaluations, 2 violations, rate 0.5", s2)
	}
	if s1.Test.Tested || s1.Test.Reason == "" {
		t.Errorf("site 01 test = %+v, want untested (below minimum size)", s1.Test)
	}

	// Proposed rules run only when asked.
	res = runTables(t, rs, map[string]*dataset.Table{"visit": visitTable(t, true)}, Options{IncludeProposed: true})
	n := 0
	for _, f := range res.Findings {
		if f.RuleID == "proposed-one" {
			n++
			if f.RuleStatus != rules.StatusProposed {
				t.Errorf("proposed finding with RuleStatus %q", f.RuleStatus)
			}
		}
	}
	if n != 2 { // SYSBP ≤ DIABP fails where DIABP < SYSBP: S1 visit 1, S2
		t.Errorf("IncludeProposed: %d findings of proposed-one, want 2", n)
	}
}

// TestDuplicateNaturalKey: two AE records with the same term and start date
// get distinct keys, the second suffixed "#2"; --SEQ is not in the key.
func TestDuplicateNaturalKey(t *testing.T) {
	tb := buildTable(t, "AE", "record:AE", []string{"USUBJID", "AESEQ"}, "SITEID",
		id("USUBJID", "S1", "S1"), cat("SITEID", "01", "01"), num("AESEQ", "4", "7"), cat("AETERM", "A;B", "A;B"),
		date("AESTDTC", "2024-01-02", "2024-01-02"), date("AEENDTC", "2024-01-01", "2024-01-01"))
	rs := ruleSet(t, twoRules)
	res := runTables(t, rs, map[string]*dataset.Table{"record:AE": tb}, Options{})
	var keys []string
	for _, f := range res.Findings {
		if f.RuleID == "ae-dates" {
			keys = append(keys, f.Key+" seq "+f.Seq)
		}
	}
	want := []string{`ae-dates|USUBJID=S1;AETERM=A\;B;AESTDTC=2024-01-02 seq 4`, `ae-dates|USUBJID=S1;AETERM=A\;B;AESTDTC=2024-01-02#2 seq 7`}
	if strings.Join(keys, "\n") != strings.Join(want, "\n") {
		t.Errorf("keys:\n%s\nwant\n%s", strings.Join(keys, "\n"), strings.Join(want, "\n"))
	}
}

func TestNaturalKey(t *testing.T) {
	vs := buildTable(t, "VS", "record:VS", []string{"USUBJID", "VSSEQ"}, "", id("USUBJID", "S1"), num("VSSEQ", "1"),
		cat("VSTESTCD", "SYSBP"), num("VISITNUM", "1"), num("VSTPTNUM", "1"), date("VSDTC", "2024-01-01"))
	cm := buildTable(t, "CM", "record:CM", []string{"USUBJID", "CMSEQ"}, "", id("USUBJID", "S1"), num("CMSEQ", "1"),
		cat("CMTRT", "ASPIRIN"), date("CMSTDTC", "2024-01-01"))
	xx := buildTable(t, "XX", "record:XX", []string{"USUBJID", "XXSEQ"}, "", id("USUBJID", "S1"), num("XXSEQ", "1"), num("XXVAL", "1"))
	tests := []struct {
		name  string
		t     *dataset.Table
		level string
		want  string
	}{
		{"findings", vs, "record:VS", "USUBJID,VSTESTCD,VISITNUM,VSTPTNUM,VSDTC"},
		{"interventions", cm, "record:CM", "USUBJID,CMTRT,CMSTDTC"},
		{"no natural key: --SEQ as last resort", xx, "record:XX", "USUBJID,XXSEQ"},
		{"visit", visitTable(t, false), "visit", "USUBJID,VISITNUM"},
	}
	for _, tc := range tests {
		if got := strings.Join(NaturalKey(tc.t, tc.level), ","); got != tc.want {
			t.Errorf("%s: NaturalKey = %s, want %s", tc.name, got, tc.want)
		}
	}
}

func TestRunCancelled(t *testing.T) {
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	tb := visitTable(t, true)
	_, err := Run(ctx, ruleSet(t, twoRules), nil, Options{Table: func(string) (*dataset.Table, error) { return tb, nil }})
	if !errors.Is(err, context.Canceled) {
		t.Errorf("Run with a cancelled context: err = %v, want context.Canceled", err)
	}
}

// TestCompare reruns the checker on a corrected extract against the first
// run's findings (hand-derived): S1 visit 2 corrected (resolved), S3 still
// wrong but with a new value (persisting, changed), S2 height still out of
// range (persisting), S2 visit 1 newly wrong (new).
func TestCompare(t *testing.T) {
	rs := ruleSet(t, twoRules)
	first := runTables(t, rs, map[string]*dataset.Table{"visit": visitTable(t, true)}, Options{})
	second := buildTable(t, "VS", "visit", []string{"USUBJID", "VISITNUM"}, "SITEID",
		id("USUBJID", "S1", "S1", "S2", "S3"), cat("SITEID", "01", "01", "02", "02"), num("VISITNUM", "1", "2", "1", "1"),
		num("VS.DIABP", "80", "110", "120", "91"), num("VS.SYSBP", "120", "120", "110", "85"), cat("SEX", "M", "M", "F", "F"),
		num("HEIGHT", "180", "180", "200", "160"))
	res := runTables(t, rs, map[string]*dataset.Table{"visit": second}, Options{})
	if _, err := res.Compare(first.Findings, ""); err != nil {
		t.Fatal(err)
	}
	if *res.Classes != (ClassCounts{New: 1, Persisting: 2, Changed: 1, Resolved: 1}) {
		t.Errorf("Classes = %+v", *res.Classes)
	}
	var got []string
	for _, f := range res.Findings {
		got = append(got, fmt.Sprintf("%s %s %v", f.Key, f.Class, f.Changed))
	}
	want := []string{
		"order-bp|USUBJID=S2;VISITNUM=1 new false",
		"range-ht|USUBJID=S2;VISITNUM=1 persisting false",
		"order-bp|USUBJID=S3;VISITNUM=1 persisting true",
	}
	if strings.Join(got, "\n") != strings.Join(want, "\n") {
		t.Errorf("findings:\n%s\nwant\n%s", strings.Join(got, "\n"), strings.Join(want, "\n"))
	}
	if len(res.Resolved) != 1 || res.Resolved[0].Key != "order-bp|USUBJID=S1;VISITNUM=2" {
		t.Errorf("Resolved = %+v", res.Resolved)
	}
	if s := res.Sites[1]; s.Site != "02" || s.New != 1 || s.Persisting != 2 || s.PerSubject != 1.5 {
		t.Errorf("site 02 = %+v, want 1 new, 2 persisting, 1.5 per subject", s)
	}
	if res.Manifest.Counts.Classes == nil || res.Manifest.Counts.Classes.Resolved != 1 {
		t.Errorf("manifest classes = %+v", res.Manifest.Counts.Classes)
	}
}
