package rules

import (
	"strings"
	"testing"
)

// TestLintContradictions: hand-built rule sets; which ones no record can pass
// is hand-derived from the inequalities (e.g. x ≤ y − 1 and y ≤ x sum to
// 0 ≤ −1).
func TestLintContradictions(t *testing.T) {
	order := func(id, x, y, extra string) string {
		return "  - id: " + id + "\n    kind: order\n    level: visit\n    severity: major\n    variables: [" + x + ", " + y + "]\n" + extra
	}
	exprRule := func(params string) string {
		return "  - id: e\n    kind: expr\n    level: visit\n    severity: minor\n    params: {" + params + "}\n"
	}
	cases := []struct {
		name, rules string
		want        string // substring of the only warning; "" for none
	}{
		{"order pair strict", order("a", "DBP", "SBP", "    params: {tolerance: -1}\n") + order("b", "SBP", "DBP", ""),
			"rule b: contradicts rule a (line 3): DBP ≤ SBP − 1 and SBP ≤ DBP cannot both hold"},
		{"order pair equality is allowed", order("a", "DBP", "SBP", "") + order("b", "SBP", "DBP", ""), ""},
		{"order pair with slack", order("a", "X", "Y", "    params: {tolerance: -1}\n") + order("b", "Y", "X", "    params: {tolerance: 2}\n"), ""},
		{"order pair in other units", order("a", "ST", "EN", "    params: {tolerance: -1, unit: hour}\n") + order("b", "EN", "ST", "    params: {tolerance: 1, unit: minute}\n"),
			"contradicts rule a"},
		{"order pair at other levels", order("a", "X", "Y", "    params: {tolerance: -1}\n") + strings.Replace(order("b", "Y", "X", ""), "level: visit", "level: subject", 1), ""},
		{"order pair, one rejected", order("a", "X", "Y", "    params: {tolerance: -1}\n") + order("b", "Y", "X", "    status: rejected\n"), ""},
		{"order self", order("a", "X", "X", "    params: {tolerance: -0.5}\n"), "X ≤ X − 0.5 never holds"},
		{"expr when excludes require", exprRule("when: 'SBP > 180', require: 'SBP < 120'"), "require never holds when when holds (no value of SBP satisfies both)"},
		{"expr flipped operands", exprRule("when: '180 < SBP', require: 'SBP <= 180'"), "no value of SBP"},
		{"expr boundary closed", exprRule("when: 'SBP >= 180', require: 'SBP <= 180'"), ""},
		{"expr when alone", exprRule("when: 'AGE < 18 && AGE > 75', require: 'X > 0'"), "when never holds (no value of AGE satisfies it)"},
		{"expr require alone", exprRule("require: 'v(\"VS.SYSBP\") == 1 and v(\"VS.SYSBP\") == -2'"), "require never holds (no value of VS_SYSBP"},
		{"expr disjunction is not analysed", exprRule("when: 'SBP > 180 || SBP < 90', require: 'SBP < 120'"), ""},
		{"expr two variables", exprRule("when: 'SBP > DBP', require: 'SBP < DBP'"), ""},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			rs, err := Parse("r.yaml", []byte("schema: 1\nrules:\n"+c.rules))
			if err != nil {
				t.Fatal(err)
			}
			var got []string
			for _, is := range Lint(rs) {
				got = append(got, is.Error())
				if !is.Warning {
					t.Errorf("error %q, want warnings only", is.Error())
				}
			}
			switch {
			case c.want == "" && len(got) > 0:
				t.Errorf("Lint = %q, want no issue", got)
			case c.want != "" && (len(got) != 1 || !strings.Contains(got[0], c.want)):
				t.Errorf("Lint = %q, want one warning containing %q", got, c.want)
			}
		})
	}
}
