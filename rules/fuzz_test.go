package rules

import (
	"errors"
	"os"
	"testing"
)

// FuzzParse: the rule-set loader never panics; every error carries a
// position; every rule set it accepts lints and re-encodes to a file it
// accepts again with the same rules.
func FuzzParse(f *testing.F) {
	for _, name := range []string{"testdata/start.yaml", "testdata/roundtrip_1.golden", "testdata/roundtrip_2.golden"} {
		b, err := os.ReadFile(name)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b)
	}
	f.Add([]byte("schema: 1\nrules:\n  - id: a\n    kind: expr\n    params: {require: 'X > 1'}\n"))
	f.Add([]byte("schema: 1\nrules: [{id: x, history: [{at: 2026-01-01T00:00:00Z, action: accepted}]}]\n"))
	f.Add([]byte("schema: 1\nrules:\n- &a {id: a}\n- *a\n"))
	f.Fuzz(func(t *testing.T, b []byte) {
		rs, err := Parse("f.yaml", b)
		if err != nil {
			var pe *ParseError
			if !errors.As(err, &pe) {
				t.Fatalf("error without position: %v", err)
			}
			return
		}
		for _, iss := range Lint(rs) {
			if iss.File != "f.yaml" {
				t.Fatalf("lint issue without file: %v", iss)
			}
		}
		out, err := rs.Bytes()
		if err != nil {
			return // e.g. history edited in memory; not reachable from Parse alone
		}
		rs2, err := Parse("f2.yaml", out)
		if err != nil {
			t.Fatalf("re-encoded rule set does not parse: %v\n%s", err, out)
		}
		if len(rs2.Rules) != len(rs.Rules) {
			t.Fatalf("re-encoded rule set has %d rules, want %d", len(rs2.Rules), len(rs.Rules))
		}
		for i := range rs.Rules {
			a, b := rs.Rules[i], rs2.Rules[i]
			if a.ID != b.ID || a.Kind != b.Kind || a.Status != b.Status || len(a.History) != len(b.History) {
				t.Fatalf("rule %d changed in a round trip: %+v vs %+v", i, a, b)
			}
		}
	})
}

// FuzzCompileExpr: the expression compiler never panics and its errors are
// *ExprError values with a 1-based position inside the expression.
func FuzzCompileExpr(f *testing.F) {
	for _, s := range []string{`DM_SEX == "M"`, `v("VS.SYSBP") > v("VS.DIABP")`, `X >`, `date("2024-02-30") < ST`,
		`all([1,2], # > 0) && len(A) > 2`, `let x = 1; x + Y > 2`, `v(1)`, `(((`, `"\u00e9" in ["é"]`, "A\n&&\nB >"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, src string) {
		_, names, err := CompileExpr(src)
		if err != nil {
			var ee *ExprError
			if !errors.As(err, &ee) {
				t.Fatalf("CompileExpr(%q) error %T without position: %v", src, err, err)
			}
			if ee.Line < 1 || ee.Column < 1 {
				t.Fatalf("CompileExpr(%q) error at %d:%d, want 1-based", src, ee.Line, ee.Column)
			}
			return
		}
		for _, n := range names {
			if n == "" {
				t.Fatalf("CompileExpr(%q) reports an empty variable name", src)
			}
		}
	})
}
