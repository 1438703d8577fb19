package rules

import (
	"bytes"
	"errors"
	"flag"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"github.com/crossform/crossform/dataset"
)

var update = flag.Bool("update", false, "rewrite golden files")

func golden(t *testing.T, name string, got []byte) {
	t.Helper()
	path := filepath.Join("testdata", name+".golden")
	if *update {
		if err := os.WriteFile(path, got, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (run go test ./rules -update)", err)
	}
	if !bytes.Equal(got, want) {
		t.Errorf("%s differs from golden file:\n--- got\n%s\n--- want\n%s", name, got, want)
	}
}

// roundTripTable is a synthetic table (seeded) where DIA ≤ SYS always holds,
// FLAG = 1 exactly when SYS < 130, and SYS follows DIA; shift changes values
// so that a later extract differs.
func roundTripTable(t testing.TB, seed uint64, n int) *dataset.Table {
	r := rand.New(rand.NewPCG(seed, 7))
	dia, sys, fl := make([]float64, n), make([]float64, n), make([]float64, n)
	for i := range dia {
		dia[i] = float64(60 + r.IntN(40))
		sys[i] = dia[i] + float64(r.IntN(45))
		if sys[i] < 130 {
			fl[i] = 1
		}
	}
	return buildTable(t, "table", nil, tcol{name: "DIA", nums: dia}, tcol{name: "SYS", nums: sys}, tcol{name: "FLAG", nums: fl, typ: dataset.Binary})
}

func TestRoundTrip(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "rules.yaml")
	start, err := os.ReadFile("testdata/start.yaml")
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, start, 0o644); err != nil {
		t.Fatal(err)
	}
	at := time.Date(2026, 2, 1, 10, 0, 0, 0, time.UTC)

	// Extract 1: propose, merge, decide, save.
	t1 := roundTripTable(t, 1, 400)
	rs, err := Load(path)
	if err != nil {
		t.Fatal(err)
	}
	props, err := Propose(t1, "table", nil, ProposeOptions{Fingerprint: "extract-1", Now: at})
	if err != nil {
		t.Fatal(err)
	}
	if len(props) < 2 {
		t.Fatalf("Propose gave %d rules, want at least 2 (order and cutoff)", len(props))
	}
	rep := Merge(rs, props, "extract-1")
	if len(rep.Added) != len(props) {
		t.Errorf("Merge added %d, want %d", len(rep.Added), len(props))
	}
	ids := []string{props[0].ID, props[1].ID}
	if err := Decide(rs, ids[:1], ActionAccept, "asmith", "checked with the protocol", at.Add(time.Hour)); err != nil {
		t.Fatal(err)
	}
	if err := Decide(rs, ids[1:], ActionReject, "asmith", "", at.Add(time.Hour)); err != nil {
		t.Fatal(err)
	}
	if err := rs.Save(); err != nil {
		t.Fatal(err)
	}
	b1, _ := os.ReadFile(path)
	golden(t, "roundtrip_1", b1)

	// Extract 2: a changed table; propose again and merge into the saved file.
	t2 := roundTripTable(t, 2, 450)
	rs2, err := Load(path)
	if err != nil {
		t.Fatal(err)
	}
	props2, err := Propose(t2, "table", nil, ProposeOptions{Fingerprint: "extract-2", Now: at.Add(24 * time.Hour)})
	if err != nil {
		t.Fatal(err)
	}
	Merge(rs2, props2, "extract-2")
	if err := rs2.Save(); err != nil {
		t.Fatal(err)
	}
	b2, _ := os.ReadFile(path)
	golden(t, "roundtrip_2", b2)

	rs3, err := Load(path)
	if err != nil {
		t.Fatal(err)
	}
	for i, want := range []Status{StatusAccepted, StatusRejected} {
		r := rs3.Rule(ids[i])
		if r == nil {
			t.Fatalf("rule %s lost", ids[i])
		}
		if r.Status != want {
			t.Errorf("rule %s status %s, want %s", r.ID, r.Status, want)
		}
		if len(r.History) != 2 || r.History[0].Action != "proposed" || r.History[1].By != "asmith" {
			t.Errorf("rule %s history %+v, want proposed then asmith's decision", r.ID, r.History)
		}
		if r.Evidence == nil || r.Evidence.Fingerprint != "extract-2" {
			t.Errorf("rule %s evidence %+v, want refreshed from extract-2", r.ID, r.Evidence)
		}
	}
	// Every comment line and the hand-written rule survive byte for byte.
	for _, line := range strings.Split(string(start), "\n") {
		if strings.Contains(line, "#") && !bytes.Contains(b2, []byte(line)) {
			t.Errorf("comment line lost: %q", line)
		}
	}
	hand := rs3.Rule("hand-sbp-limit")
	if hand == nil || hand.Status != StatusAccepted || hand.Origin != OriginHand || len(hand.History) != 1 {
		t.Errorf("hand-written rule changed: %+v", hand)
	}
}

func TestSaveConflict(t *testing.T) {
	path := filepath.Join(t.TempDir(), "r.yaml")
	rs := New(path)
	if err := rs.Save(); err != nil {
		t.Fatal(err)
	}
	a, err := Load(path)
	if err != nil {
		t.Fatal(err)
	}
	b, err := Load(path)
	if err != nil {
		t.Fatal(err)
	}
	a.Rules = append(a.Rules, &Rule{ID: "x", Kind: KindOrder, Level: "table", Vars: []string{"A", "B"}, Status: StatusProposed})
	if err := a.Save(); err != nil {
		t.Fatal(err)
	}
	if err := b.Save(); !errors.Is(err, ErrConflict) {
		t.Errorf("second Save = %v, want ErrConflict", err)
	}
	if err := New(path).Save(); !errors.Is(err, ErrConflict) {
		t.Errorf("Save of a new set over an existing file = %v, want ErrConflict", err)
	}
	if ents, _ := os.ReadDir(filepath.Dir(path)); len(ents) != 1 {
		t.Errorf("directory holds %d files, want only the rule set (no temporary files)", len(ents))
	}
}

func TestParseErrors(t *testing.T) {
	cases := []struct {
		name, src string
		line      int
		msg       string
	}{
		{"syntax", "schema: 1\nrules:\n  - id: [x\n", 2, "did not find expected"},
		{"no schema", "rules: []\n", 1, "missing key \"schema\""},
		{"bad schema", "schema: 2\nrules: []\n", 1, "schema 2 is not supported"},
		{"rules not list", "schema: 1\nrules: 3\n", 2, "rules: not a list"},
		{"rule not mapping", "schema: 1\nrules:\n  - 3\n", 3, "rule is not a mapping"},
		{"bad status", "schema: 1\nrules:\n  - id: a\n    status: acepted\n", 4, "unknown status \"acepted\""},
		{"bad severity", "schema: 1\nrules:\n  - id: a\n    severity: high\n", 4, "unknown severity"},
		{"bad history time", "schema: 1\nrules:\n  - id: a\n    history:\n      - at: yesterday\n        action: accepted\n", 5, "not an RFC 3339 time"},
		{"variables not list", "schema: 1\nrules:\n  - id: a\n    variables: X\n", 4, "variables: not a list"},
		{"empty", "", 1, "empty rule set"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			_, err := Parse("r.yaml", []byte(tc.src))
			var pe *ParseError
			if !errors.As(err, &pe) {
				t.Fatalf("Parse error = %v, want *ParseError", err)
			}
			if pe.Line != tc.line || !strings.Contains(err.Error(), tc.msg) || !strings.HasPrefix(err.Error(), "r.yaml:") {
				t.Errorf("Parse error = %q (line %d), want line %d containing %q", err, pe.Line, tc.line, tc.msg)
			}
		})
	}
}

func TestLint(t *testing.T) {
	src := `schema: 1
colour: blue
rules:
  - id: a
    kind: order
    level: table
    severity: major
    variables: [DIA, SYS]
  - id: a
    kind: order
    level: table
    severity: major
    variables: [DIA, NOPE]
  - id: b
    kind: ordre
    level: table
  - id: c
    kind: expr
    level: table
    severity: minor
    params:
      require: "SYS >"
  - id: d
    kind: implies
    level: table
    severity: minor
    variables: [DIA]
`
	rs, err := Parse("r.yaml", []byte(src))
	if err != nil {
		t.Fatal(err)
	}
	tb := buildTable(t, "table", nil, tcol{name: "DIA", nums: []float64{1}}, tcol{name: "SYS", nums: []float64{2}})
	got := Lint(rs, tb)
	var lines []string
	for _, i := range got {
		lines = append(lines, i.Error())
	}
	want := []string{
		`r.yaml:2:1: warning: unknown key "colour" (known: notes, rules, schema, study, title)`,
		`r.yaml:9:5: rule a: duplicate id (first used at line 4)`,
		`r.yaml:13:5: rule a: variable "NOPE" is not in table "T" (level table)`,
		`r.yaml:15:5: rule b: unknown kind "ordre" (want band, cutoff, derived, expr, group_range, implies, order, presence, visit_change)`,
		`r.yaml:22:16: rule c: params.require:1:5: unexpected token EOF`,
		`r.yaml:27:5: rule d: implies needs 2 variables (X, Y), got 1`,
	}
	if !slices.Equal(lines, want) {
		t.Errorf("Lint =\n%s\nwant\n%s", strings.Join(lines, "\n"), strings.Join(want, "\n"))
	}
}

func TestDecideAndSelect(t *testing.T) {
	rs := New("r.yaml")
	for i, k := range []string{KindOrder, KindOrder, KindImplies} {
		rs.Rules = append(rs.Rules, &Rule{ID: string(rune('a' + i)), Kind: k, Status: StatusProposed, Evidence: &Evidence{Confidence: 0.9 + 0.04*float64(i)}})
	}
	at := time.Date(2026, 3, 1, 8, 0, 0, 0, time.FixedZone("CET", 3600))
	ids := Select(rs, Filter{Kind: KindOrder, MinConfidence: 0.93, Status: StatusProposed})
	if !slices.Equal(ids, []string{"b"}) {
		t.Fatalf("Select = %v, want [b]", ids)
	}
	if err := Decide(rs, []string{"b", "zz"}, ActionAccept, "me", "", at); err == nil || !strings.Contains(err.Error(), `unknown rule id "zz"`) {
		t.Errorf("Decide with an unknown id = %v, want an error naming it", err)
	}
	if rs.Rule("b").Status != StatusProposed {
		t.Errorf("a failed Decide changed rule b")
	}
	if err := Decide(rs, ids, ActionAccept, "me", "ok", at); err != nil {
		t.Fatal(err)
	}
	if err := Decide(rs, []string{"b"}, ActionReject, "me", "", at); err == nil {
		t.Errorf("rejecting an accepted rule succeeded, want an error (retire it)")
	}
	if err := Decide(rs, []string{"b"}, ActionRetire, "", "", at); err == nil {
		t.Errorf("a decision without a name succeeded")
	}
	if err := Decide(rs, []string{"b"}, ActionRetire, "you", "superseded", at); err != nil {
		t.Fatal(err)
	}
	h := rs.Rule("b").History
	if len(h) != 2 || h[0].Action != "accepted" || h[1].Action != "retired" || !h[1].At.Equal(at) || h[1].At.Location() != time.UTC {
		t.Errorf("history = %+v", h)
	}
	// Merge never resurrects a rejected rule.
	if err := Decide(rs, []string{"a"}, ActionReject, "me", "", at); err != nil {
		t.Fatal(err)
	}
	Merge(rs, []*Rule{{ID: "a", Kind: KindOrder, Status: StatusProposed, Origin: OriginProposer}}, "fp")
	if rs.Rule("a").Status != StatusRejected {
		t.Errorf("Merge changed a rejected rule to %s", rs.Rule("a").Status)
	}
}
