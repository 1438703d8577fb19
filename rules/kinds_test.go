package rules

import (
	"errors"
	"slices"
	"testing"

	"github.com/crossform/crossform/dataset"
)

// Every case is hand-derived from the kind's definition (kinds.go); the
// comment beside each row says why.
func TestKindVerdicts(t *testing.T) {
	cases := []struct {
		name string
		cols []tcol
		keys []string
		rule Rule
		want []Verdict
	}{
		{
			name: "order numbers with tolerance",
			cols: []tcol{{name: "DIA", nums: []float64{80, 120, 120.5, 121, nan, 0.3}},
				{name: "SYS", nums: []float64{120, 120, 120, 120, 120, 0.1}}},
			rule: Rule{Kind: KindOrder, Vars: []string{"DIA", "SYS"}, Params: map[string]any{"tolerance": 0.5}},
			// 80 ≤ 120.5; equal; tie at tolerance passes; 121 > 120.5; missing; 0.3 ≤ 0.1+0.5
			want: []Verdict{P, P, P, F, N, P},
		},
		{
			name: "order numbers zero tolerance rounding",
			cols: []tcol{{name: "X", nums: []float64{0.30000000000000004, 0.31}},
				{name: "Y", nums: []float64{0.3, 0.3}}},
			rule: Rule{Kind: KindOrder, Vars: []string{"X", "Y"}},
			// a difference of one ulp is within the 1e-9 relative slack; 0.01 is not
			want: []Verdict{P, F},
		},
		{
			name: "order dates with partial dates",
			cols: []tcol{{name: "ST", dates: []string{"2024-03-12", "2024-03-12", "2024-03", "2024-03", "2024-03-12", "", "2024-03-12T10:00", "2024"}},
				{name: "EN", dates: []string{"2024-03-12", "2024-03-09", "2024-03-10", "2024-04-01", "2024-03", "2024-03-01", "2024-03-12T09:00", "2023-12-31"}}},
			rule: Rule{Kind: KindOrder, Vars: []string{"ST", "EN"}, Params: map[string]any{"unit": "day"}},
			// equal days; end before start; month vs day inside it: unknown;
			// whole March before April 1; day vs its month: unknown; missing;
			// same day at day unit; year 2024 after 2023-12-31
			want: []Verdict{P, F, N, P, N, N, P, F},
		},
		{
			name: "order dates at minute unit and tolerance",
			cols: []tcol{{name: "A", dates: []string{"2024-03-12T10:00", "2024-03-12T10:00", "2024-03-12"}},
				{name: "B", dates: []string{"2024-03-12T09:00", "2024-03-12T08:59", "2024-03-12T09:00"}}},
			rule: Rule{Kind: KindOrder, Vars: []string{"A", "B"}, Params: map[string]any{"unit": "minute", "tolerance": 60}},
			// 10:00 ≤ 09:00+60 min (tie at tolerance); 10:00 > 09:59; a date-only
			// value spans the day at minute unit: unknown
			want: []Verdict{P, F, N},
		},
		{
			name: "implies then_in",
			cols: []tcol{{name: "SEV", codes: []string{"MILD", "MILD", "SEVERE", "MILD", "", "MILD"}},
				{name: "GR", nums: []float64{1, 3, 1, nan, 1, 2}, typ: dataset.Ordinal}},
			rule: Rule{Kind: KindImplies, Vars: []string{"SEV", "GR"}, Params: map[string]any{"when_in": []any{"MILD"}, "then_in": []any{1, 2}}},
			// in B; 3 not in B; premise false; Y missing; X missing; 2 in B
			want: []Verdict{P, F, P, N, N, P},
		},
		{
			name: "implies then_not_in",
			cols: []tcol{{name: "SEX", codes: []string{"M", "M", "F"}}, {name: "PREG", codes: []string{"N", "Y", "Y"}}},
			rule: Rule{Kind: KindImplies, Vars: []string{"SEX", "PREG"}, Params: map[string]any{"when_in": []any{"M"}, "then_not_in": []any{"Y"}}},
			want: []Verdict{P, F, P},
		},
		{
			name: "cutoff",
			cols: []tcol{{name: "LOW", nums: []float64{1, 0, 1, 0, 0, nan, 1}, typ: dataset.Binary},
				{name: "BWT", nums: []float64{2495, 2523, 2500, 2499, 2500, 2000, nan}}},
			rule: Rule{Kind: KindCutoff, Vars: []string{"LOW", "BWT"}, Params: map[string]any{"flag": "1", "below": 2500}},
			// 1 & below; 0 & not below; 1 at the cut (not below); 0 but below;
			// 0 at the cut; flag missing; weight missing
			want: []Verdict{P, P, F, F, P, N, N},
		},
		{
			name: "band both directions",
			cols: []tcol{{name: "X", nums: []float64{10, 10, 10, 10, 0, nan}}, {name: "Y", nums: []float64{20, 25, 26, 14.9, 0, 1}}},
			rule: Rule{Kind: KindBand, Vars: []string{"X", "Y"}, Params: map[string]any{"k": 5,
				"y_on_x": map[string]any{"slope": 2, "intercept": 0, "scale": 1},
				"x_on_y": map[string]any{"slope": 0.5, "intercept": 0, "scale": 0.5}}},
			// Y|X residual 0 / 5 (tie at k·scale) / 6 / -5.1; X|Y residuals 0 / -2.5 / -3 / 2.55 vs 2.5
			want: []Verdict{P, P, F, F, P, N},
		},
		{
			name: "band one direction and logs",
			cols: []tcol{{name: "X", nums: []float64{1, 1, -1}}, {name: "Y", nums: []float64{1, 200, 1}}},
			rule: Rule{Kind: KindBand, Vars: []string{"X", "Y"}, Params: map[string]any{"k": 5, "log_x": true, "log_y": true, "flag_when": "y_on_x",
				"y_on_x": map[string]any{"slope": 1, "intercept": 0, "scale": 1}}},
			// ln 1 = 0; ln 200 = 5.3 > 5; log of a negative: not evaluable
			want: []Verdict{P, F, N},
		},
		{
			name: "derived bmi with carried height",
			keys: []string{"USUBJID", "VISITNUM"},
			cols: []tcol{{name: "USUBJID", codes: []string{"A", "A", "A", "B", "B"}}, {name: "VISITNUM", nums: []float64{1, 2, 3, 2, 3}},
				{name: "BMI", nums: []float64{24.5, 24.6, 30, 20, 20}}, {name: "WEIGHT", nums: []float64{75, 75.4, 75, 60, 60}},
				{name: "HEIGHT", nums: []float64{175, nan, nan, nan, nan}}},
			rule: Rule{Kind: KindDerived, Vars: []string{"BMI", "WEIGHT", "HEIGHT"}, Params: map[string]any{"formula": "bmi", "tolerance": 0.1, "carry": []any{"HEIGHT"}}},
			// 75/1.75² = 24.49; 75.4/1.75² = 24.62; 30 vs 24.49; B has no height
			want: []Verdict{P, P, F, N, N},
		},
		{
			name: "derived map, scale and linear",
			cols: []tcol{{name: "MAP", nums: []float64{93.3, 95, nan}}, {name: "SYS", nums: []float64{120, 120, 120}}, {name: "DIA", nums: []float64{80, 80, 80}}},
			rule: Rule{Kind: KindDerived, Vars: []string{"MAP", "SYS", "DIA"}, Params: map[string]any{"formula": "map", "tolerance": 1}},
			// 80 + 40/3 = 93.33; 95 is 1.67 off; missing
			want: []Verdict{P, F, N},
		},
		{
			name: "derived scale pounds",
			cols: []tcol{{name: "LB", nums: []float64{176.4, 180}}, {name: "KG", nums: []float64{80, 80}}},
			rule: Rule{Kind: KindDerived, Vars: []string{"LB", "KG"}, Params: map[string]any{"formula": "scale", "factor": 2.20462, "tolerance": 0.1}},
			// 80 × 2.20462 = 176.37
			want: []Verdict{P, F},
		},
		{
			name: "derived linear",
			cols: []tcol{{name: "T", nums: []float64{7, 8}}, {name: "A", nums: []float64{2, 2}}, {name: "B", nums: []float64{2, 2}}},
			rule: Rule{Kind: KindDerived, Vars: []string{"T", "A", "B"}, Params: map[string]any{"formula": "linear", "coef": []any{1, 1, 2}}},
			// 1 + 2 + 2·2 = 7
			want: []Verdict{P, F},
		},
		{
			name: "derived age with partial birth date",
			cols: []tcol{{name: "AGE", nums: []float64{40, 39, 41, 38, 40, 40}},
				{name: "BRTH", dates: []string{"1984-06-15", "1984-06-15", "1984", "1984", "", "1984-03"}},
				{name: "REF", dates: []string{"2024-06-15", "2024-06-15", "2024-05-01", "2024-05-01", "2024-05-01", "2024-03-10"}}},
			rule: Rule{Kind: KindDerived, Vars: []string{"AGE", "BRTH", "REF"}, Params: map[string]any{"formula": "age"}},
			// birthday reached: 40; 39 wrong; year-only birth: 39 or 40, so 41 fails
			// and 38 fails; birth missing; March 1984 to 10 March 2024: 39 or 40
			want: []Verdict{P, F, F, F, N, P},
		},
		{
			name: "presence gate",
			cols: []tcol{{name: "CMYN", codes: []string{"N", "N", "Y", "", "Y"}}, {name: "CMTRT", codes: []string{"", "aspirin", "aspirin", "x", ""}}},
			rule: Rule{Kind: KindPresence, Vars: []string{"CMYN", "CMTRT"}, Params: map[string]any{"when": "in", "values": []any{"N"}, "then": "absent"}},
			// N and none; N with a record; premise false; gate missing; premise false
			want: []Verdict{P, F, P, N, P},
		},
		{
			name: "presence when present then present",
			cols: []tcol{{name: "X", nums: []float64{1, 1, nan, nan}}, {name: "Y", nums: []float64{2, nan, nan, 3}}},
			rule: Rule{Kind: KindPresence, Vars: []string{"X", "Y"}, Params: map[string]any{"when": "present", "then": "present"}},
			want: []Verdict{P, F, P, P},
		},
		{
			name: "group_range",
			cols: []tcol{{name: "SEX", codes: []string{"F", "F", "M", "M", "U", "", "F"}}, {name: "CREAT", nums: []float64{40, 100.5, 130, 20, 50, 50, nan}}},
			rule: Rule{Kind: KindGroupRange, Vars: []string{"SEX", "CREAT"}, Params: map[string]any{"limits": map[string]any{"F": []any{40, 100}, "M": []any{50, 140}}}},
			// at the low limit; above F's high; inside M; below M's low; level
			// without limits; sex missing; value missing
			want: []Verdict{P, F, P, F, N, N, N},
		},
		{
			name: "visit_change log",
			keys: []string{"USUBJID", "VISITNUM"},
			cols: []tcol{{name: "USUBJID", codes: []string{"A", "A", "A", "A", "A", "B", "B"}}, {name: "VISITNUM", nums: []float64{1, 2, 3, 4, 5, 1, 2}},
				{name: "WEIGHT", nums: []float64{80, 81, 178.6, nan, 80, 70, 70}}},
			rule: Rule{Kind: KindVisitChange, Vars: []string{"WEIGHT"}, Params: map[string]any{"scale": "log", "low": -0.1, "high": 0.1}},
			// first visit; ln(81/80) = 0.012; ln(178.6/81) = 0.79; missing;
			// ln(80/178.6) = -0.80 (previous non-missing value); first of B; 0
			want: []Verdict{N, P, F, N, F, N, P},
		},
		{
			name: "visit_change diff unsorted rows",
			keys: []string{"USUBJID", "VISITNUM"},
			cols: []tcol{{name: "USUBJID", codes: []string{"A", "A", "A"}}, {name: "VISITNUM", nums: []float64{3, 1, 2}}, {name: "Y", nums: []float64{10, 0, 5}}},
			rule: Rule{Kind: KindVisitChange, Vars: []string{"Y"}, Params: map[string]any{"scale": "diff", "low": -5, "high": 5}},
			// visit 3 − visit 2 = 5 (tie at the limit); visit 1 first; 5 − 0 = 5
			want: []Verdict{P, N, P},
		},
		{
			name: "expr when/require with names and v()",
			cols: []tcol{{name: "DM.SEX", codes: []string{"M", "M", "F", "", "M"}}, {name: "LB.HCG", codes: []string{"", "NEGATIVE", "POSITIVE", "", ""}},
				{name: "VS.SYSBP", nums: []float64{120, 130, 140, 150, nan}}},
			rule: Rule{Kind: KindExpr, Params: map[string]any{"when": `DM_SEX == "M" && v("VS.SYSBP") > 100`, "require": "LB_HCG == nil", "nullable": []any{"LB.HCG"}}},
			// male, no HCG; male with HCG; female: when false; sex missing: not
			// evaluable; SYSBP missing: not evaluable
			want: []Verdict{P, F, P, N, N},
		},
		{
			name: "expr dates and missing require variable",
			cols: []tcol{{name: "ST", dates: []string{"2024-03-12", "2024-03-12", "2024-03", "2024-03-12"}}, {name: "EN", dates: []string{"2024-03-13", "2024-03-11", "2024-03-13", ""}}},
			rule: Rule{Kind: KindExpr, Params: map[string]any{"require": `EN >= ST && ST >= date("2024-01-01")`}},
			// ordered; end first; partial start is nil: not evaluable; end missing
			want: []Verdict{P, F, N, N},
		},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			tb := buildTable(t, "table", tc.keys, tc.cols...)
			r := tc.rule
			r.ID = "test"
			if r.Kind == KindExpr {
				r.Vars = exprVarsOf(&r)
			}
			got := verdicts(t, &r, tb)
			if !slices.Equal(got, tc.want) {
				t.Errorf("verdicts = %v, want %v", got, tc.want)
			}
		})
	}
}

func TestBindErrors(t *testing.T) {
	tb := buildTable(t, "visit", nil, tcol{name: "X", nums: []float64{1}}, tcol{name: "S", codes: []string{"a"}}, tcol{name: "D", dates: []string{"2024"}})
	cases := []struct {
		name      string
		rule      Rule
		unevalErr bool // want *UnevaluableError, else *RuleError
	}{
		{"absent variable", Rule{Kind: KindOrder, Vars: []string{"X", "Z"}}, true},
		{"number vs text", Rule{Kind: KindOrder, Vars: []string{"X", "S"}}, true},
		{"number vs date", Rule{Kind: KindOrder, Vars: []string{"X", "D"}}, true},
		{"visit_change without keys", Rule{Kind: KindVisitChange, Vars: []string{"X"}, Params: map[string]any{"low": -1, "high": 1}}, true},
		{"expr unknown variable", Rule{Kind: KindExpr, Params: map[string]any{"require": "Q > 1"}}, true},
		{"unknown kind", Rule{Kind: "orderr", Vars: []string{"X", "X"}}, false},
		{"wrong variable count", Rule{Kind: KindOrder, Vars: []string{"X"}}, false},
		{"bad unit", Rule{Kind: KindOrder, Vars: []string{"X", "X"}, Params: map[string]any{"unit": "week"}}, false},
		{"implies without then", Rule{Kind: KindImplies, Vars: []string{"S", "S"}, Params: map[string]any{"when_in": []any{"a"}}}, false},
		{"band without fits", Rule{Kind: KindBand, Vars: []string{"X", "X"}}, false},
		{"derived unknown formula", Rule{Kind: KindDerived, Vars: []string{"X", "X"}, Params: map[string]any{"formula": "bsa"}}, false},
		{"group_range low above high", Rule{Kind: KindGroupRange, Vars: []string{"S", "X"}, Params: map[string]any{"limits": map[string]any{"a": []any{2, 1}}}}, false},
		{"expr syntax", Rule{Kind: KindExpr, Params: map[string]any{"require": "X >"}}, false},
		{"expr not boolean", Rule{Kind: KindExpr, Params: map[string]any{"require": `"text"`}}, false},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			r := tc.rule
			r.ID = "r1"
			_, err := Bind(&r, tb)
			var ue *UnevaluableError
			var re *RuleError
			switch {
			case err == nil:
				t.Fatalf("Bind = nil error, want one")
			case tc.unevalErr && !errors.As(err, &ue):
				t.Errorf("Bind error = %v (%T), want *UnevaluableError", err, err)
			case !tc.unevalErr && !errors.As(err, &re):
				t.Errorf("Bind error = %v (%T), want *RuleError", err, err)
			}
		})
	}
}

func TestComputeIDStable(t *testing.T) {
	a := &Rule{Kind: KindOrder, Level: "visit", Vars: []string{"VS.DIABP", "VS.SYSBP"}, Params: map[string]any{"tolerance": 0}}
	b := &Rule{Kind: KindOrder, Level: "visit", Vars: []string{"VS.DIABP", "VS.SYSBP"}, Params: map[string]any{"tolerance": 2}, Statement: "other"}
	c := &Rule{Kind: KindOrder, Level: "visit", Vars: []string{"VS.SYSBP", "VS.DIABP"}}
	d := &Rule{Kind: KindImplies, Level: "visit", Vars: []string{"X", "Y"}, Params: map[string]any{"when_in": []any{"b", "a"}, "then_in": []any{1}}}
	e := &Rule{Kind: KindImplies, Level: "visit", Vars: []string{"X", "Y"}, Params: map[string]any{"when_in": []any{"a", "b"}, "then_in": []any{"1"}}}
	if ComputeID(a) != ComputeID(b) {
		t.Errorf("tolerance changed the id: %s vs %s", ComputeID(a), ComputeID(b))
	}
	if ComputeID(a) == ComputeID(c) {
		t.Errorf("swapped variables kept the id %s", ComputeID(a))
	}
	if ComputeID(d) != ComputeID(e) {
		t.Errorf("value order changed the id: %s vs %s", ComputeID(d), ComputeID(e))
	}
	if got := ComputeID(a); len(got) != len("order-")+10 || got[:6] != "order-" {
		t.Errorf("ComputeID = %q, want order- and 10 hex digits", got)
	}
}

func TestFillQuery(t *testing.T) {
	r := &Rule{Query: "SBP {VS.SYSBP} and DBP {VS.DIABP} at {VISIT}{"}
	got := FillQuery(r, []string{"VS.SYSBP", "VS.DIABP"}, []string{"120", ""})
	want := "SBP 120 and DBP (blank) at {VISIT}{"
	if got != want {
		t.Errorf("FillQuery = %q, want %q", got, want)
	}
}

func TestEvaluate(t *testing.T) {
	tb := buildTable(t, "table", nil, tcol{name: "A", nums: []float64{1, 3, nan, 2}}, tcol{name: "B", nums: []float64{2, 2, 2, 2}})
	c, err := Bind(&Rule{ID: "x", Kind: KindOrder, Vars: []string{"A", "B"}}, tb)
	if err != nil {
		t.Fatal(err)
	}
	fails, ne, n := Evaluate(c, tb)
	if !slices.Equal(fails, []int{1}) || !slices.Equal(ne, []int{2}) || n != 3 {
		t.Errorf("Evaluate = %v, %v, %d; want [1], [2], 3", fails, ne, n)
	}
	if v := c.Values(1); !slices.Equal(v, []string{"3", "2"}) {
		t.Errorf("Values(1) = %v, want [3 2]", v)
	}
}
