package check

import (
	"strings"
	"testing"

	"github.com/crossform/crossform/dataset"
)

// row renders a finding as "site|subject|visit|seq|key|values|query|detail"
// for comparison with a hand-written expectation.
func row(f Finding) string {
	return strings.Join([]string{f.Site, f.Subject, f.Visit, f.Seq, f.Key, FormatValues(f.Vars, f.Values), f.Query, f.Detail}, "|")
}

// TestKinds runs one rule of each kind through the checker on a hand-built
// table and compares the discrepancy rows and counts with expectations
// derived by hand from each kind's definition (rules/kinds.go,
// rules/derived.go, rules/expr.go): boundaries, ties at the tolerance,
// partial dates and missing values. Every expected value is hand-derived.
func TestKinds(t *testing.T) {
	visit := func(t *testing.T, cols ...tcol) *dataset.Table {
		return buildTable(t, "VS", "visit", []string{"USUBJID", "VISITNUM"}, "SITEID", cols...)
	}
	subject := func(t *testing.T, cols ...tcol) *dataset.Table {
		return buildTable(t, "DM", "subject", []string{"USUBJID"}, "SITEID", cols...)
	}
	ae := func(t *testing.T, cols ...tcol) *dataset.Table {
		return buildTable(t, "AE", "record:AE", []string{"USUBJID", "AESEQ"}, "SITEID", cols...)
	}
	tests := []struct {
		name  string
		level string
		rule  string // YAML of the rule's kind, variables, params and query
		table func(t *testing.T) *dataset.Table
		want  []string
		// evaluated, violations, not evaluable
		n, v, ne int
	}{
		{
			name: "order numbers, tie passes", level: "visit",
			rule: `kind: order
    variables: [VS.DIABP, VS.SYSBP]
    query: "Diastolic BP {VS.DIABP} is above systolic BP {VS.SYSBP}."`,
			table: func(t *testing.T) *dataset.Table {
				return visit(t, id("USUBJID", "S1", "S1", "S1", "S2", "S2"), cat("SITEID", "01", "01", "01", "02", "02"),
					num("VISITNUM", "1", "2", "3", "1", "2"),
					num("VS.DIABP", "80", "120", "121", "", "150"), num("VS.SYSBP", "120", "120", "120", "118", "95"))
			},
			want: []string{
				"01|S1|3||R|USUBJID=S1;VISITNUM=3|VS.DIABP=121; VS.SYSBP=120|Diastolic BP 121 is above systolic BP 120.|",
				"02|S2|2||R|USUBJID=S2;VISITNUM=2|VS.DIABP=150; VS.SYSBP=95|Diastolic BP 150 is above systolic BP 95.|",
			},
			n: 4, v: 2, ne: 1,
		},
		{
			name: "order numbers, tie at tolerance passes", level: "visit",
			rule: `kind: order
    variables: [VS.DIABP, VS.SYSBP]
    params: {tolerance: 5}`,
			table: func(t *testing.T) *dataset.Table {
				return visit(t, id("USUBJID", "S1", "S1", "S1"), cat("SITEID", "01", "01", "01"), num("VISITNUM", "1", "2", "3"),
					num("VS.DIABP", "125", "125.5", "130"), num("VS.SYSBP", "120", "120", ""))
			},
			want: []string{"01|S1|2||R|USUBJID=S1;VISITNUM=2|VS.DIABP=125.5; VS.SYSBP=120||"},
			n:    2, v: 1, ne: 1,
		},
		{
			name: "order dates with partial dates", level: "record:AE",
			rule: `kind: order
    variables: [AESTDTC, AEENDTC]
    query: "The end date of '{AETERM}' ({AEENDTC}) is before its start date ({AESTDTC})."`,
			table: func(t *testing.T) *dataset.Table {
				return ae(t, id("USUBJID", "S1", "S1", "S1", "S2", "S2", "S2"), cat("SITEID", "01", "01", "01", "02", "02", "02"),
					num("AESEQ", "1", "2", "3", "1", "2", "3"),
					cat("AETERM", "HEADACHE", "NAUSEA", "RASH", "COUGH", "FEVER", "DIZZINESS"),
					date("AESTDTC", "2024-03-12", "2024-03-12", "2024-03", "2024-03", "2024-04-01", "2024-04-01T10:00"),
					date("AEENDTC", "2024-03-09", "2024-03-12", "2024-03-10", "2024-02-28", "", "2024-03-31"))
			},
			// RASH: 2024-03 vs 2024-03-10 is unknown (not evaluable); COUGH:
			// the whole of March is after 2024-02-28 (fails); the query leaves
			// {AETERM} as written, since AETERM is not a rule variable.
			want: []string{
				"01|S1||1|R|USUBJID=S1;AETERM=HEADACHE;AESTDTC=2024-03-12|AESTDTC=2024-03-12; AEENDTC=2024-03-09|The end date of '{AETERM}' (2024-03-09) is before its start date (2024-03-12).|",
				"02|S2||1|R|USUBJID=S2;AETERM=COUGH;AESTDTC=2024-03|AESTDTC=2024-03; AEENDTC=2024-02-28|The end date of '{AETERM}' (2024-02-28) is before its start date (2024-03).|",
				"02|S2||3|R|USUBJID=S2;AETERM=DIZZINESS;AESTDTC=2024-04-01T10:00|AESTDTC=2024-04-01T10:00; AEENDTC=2024-03-31|The end date of '{AETERM}' (2024-03-31) is before its start date (2024-04-01T10:00).|",
			},
			n: 4, v: 3, ne: 2,
		},
		{
			name: "implies", level: "subject",
			rule: `kind: implies
    variables: [SEX, PREG]
    params: {when_in: [M], then_not_in: [POSITIVE]}
    query: "A pregnancy result {PREG} is recorded for a subject recorded as sex {SEX}."`,
			table: func(t *testing.T) *dataset.Table {
				return subject(t, id("USUBJID", "S1", "S2", "S3", "S4", "S5"), cat("SITEID", "01", "01", "02", "02", "02"),
					cat("SEX", "M", "M", "F", "M", ""), cat("PREG", "POSITIVE", "NEGATIVE", "POSITIVE", "", "POSITIVE"))
			},
			want: []string{"01|S1|||R|USUBJID=S1|SEX=M; PREG=POSITIVE|A pregnancy result POSITIVE is recorded for a subject recorded as sex M.|"},
			n:    3, v: 1, ne: 2,
		},
		{
			name: "cutoff, value on the cut is not below", level: "subject",
			rule: `kind: cutoff
    variables: [LOWBW, BW]
    params: {flag: "Y", below: 2500}`,
			table: func(t *testing.T) *dataset.Table {
				return subject(t, id("USUBJID", "S1", "S2", "S3", "S4", "S5"), cat("SITEID", "01", "01", "01", "01", "01"),
					cat("LOWBW", "Y", "N", "Y", "N", ""), num("BW", "2400", "2500", "2500", "2499.9", "2000"))
			},
			want: []string{
				"01|S3|||R|USUBJID=S3|LOWBW=Y; BW=2500||",
				"01|S4|||R|USUBJID=S4|LOWBW=N; BW=2499.9||",
			},
			n: 4, v: 2, ne: 1,
		},
		{
			name: "band, residual equal to k·scale passes", level: "visit",
			rule: `kind: band
    variables: [X, Y]
    params: {y_on_x: {slope: 1, intercept: 0, scale: 1}, x_on_y: {slope: 1, intercept: 0, scale: 10}, k: 2, flag_when: y_on_x}`,
			table: func(t *testing.T) *dataset.Table {
				return visit(t, id("USUBJID", "S1", "S1", "S1", "S1"), cat("SITEID", "01", "01", "01", "01"), num("VISITNUM", "1", "2", "3", "4"),
					num("X", "10", "10", "10", "10"), num("Y", "12", "12.5", "7.9", ""))
			},
			want: []string{
				"01|S1|2||R|USUBJID=S1;VISITNUM=2|X=10; Y=12.5||Y is outside the band predicted from X",
				"01|S1|3||R|USUBJID=S1;VISITNUM=3|X=10; Y=7.9||Y is outside the band predicted from X",
			},
			n: 3, v: 2, ne: 1,
		},
		{
			name: "derived BMI, tie at tolerance passes", level: "visit",
			rule: `kind: derived
    variables: [BMI, WEIGHT, HEIGHT]
    params: {formula: bmi, tolerance: 0.1}
    query: "BMI {BMI} does not match weight {WEIGHT} kg and height {HEIGHT} cm."`,
			table: func(t *testing.T) *dataset.Table {
				return visit(t, id("USUBJID", "S1", "S1", "S2", "S2", "S3"), cat("SITEID", "01", "01", "02", "02", "02"),
					num("VISITNUM", "1", "2", "1", "2", "1"),
					num("BMI", "26.8", "31.4", "25.1", "25.11", "25"), num("WEIGHT", "82", "82", "100", "100", "100"),
					num("HEIGHT", "175", "175", "200", "200", ""))
			},
			// 82 / 1.75² = 26.7755…: 26.8 is 0.0245 off (passes), 31.4 is 4.62
			// off; 100 / 2² = 25: 25.1 is exactly 0.1 off (passes), 25.11 fails.
			want: []string{
				"01|S1|2||R|USUBJID=S1;VISITNUM=2|BMI=31.4; WEIGHT=82; HEIGHT=175|BMI 31.4 does not match weight 82 kg and height 175 cm.|expected BMI about 26.78",
				"02|S2|2||R|USUBJID=S2;VISITNUM=2|BMI=25.11; WEIGHT=100; HEIGHT=200|BMI 25.11 does not match weight 100 kg and height 200 cm.|expected BMI about 25",
			},
			n: 4, v: 2, ne: 1,
		},
		{
			name: "presence", level: "record:AE",
			rule: `kind: presence
    variables: [AEOUT, AEENDTC]
    params: {when: in, values: [RECOVERED/RESOLVED], then: present}`,
			table: func(t *testing.T) *dataset.Table {
				return ae(t, id("USUBJID", "S1", "S1", "S1", "S1"), cat("SITEID", "01", "01", "01", "01"), num("AESEQ", "1", "2", "3", "4"),
					cat("AETERM", "A", "B", "C", "D"), date("AESTDTC", "2024-01-01", "2024-01-02", "2024-01-03", "2024-01-04"),
					cat("AEOUT", "RECOVERED/RESOLVED", "RECOVERED/RESOLVED", "NOT RECOVERED/NOT RESOLVED", ""),
					date("AEENDTC", "2024-01-05", "", "", ""))
			},
			want: []string{"01|S1||2|R|USUBJID=S1;AETERM=B;AESTDTC=2024-01-02|AEOUT=RECOVERED/RESOLVED; AEENDTC=||"},
			n:    3, v: 1, ne: 1,
		},
		{
			name: "group_range, limits inclusive", level: "subject",
			rule: `kind: group_range
    variables: [SEX, HEIGHT]
    params: {limits: {M: [150, 200], F: [140, 190]}}
    query: "Height {HEIGHT} cm is unusual for sex {SEX}."`,
			table: func(t *testing.T) *dataset.Table {
				return subject(t, id("USUBJID", "S1", "S2", "S3", "S4", "S5", "S6"), cat("SITEID", "01", "01", "01", "02", "02", "02"),
					cat("SEX", "M", "M", "F", "F", "U", ""), num("HEIGHT", "200", "200.5", "139", "140", "170", "170"))
			},
			want: []string{
				"01|S2|||R|USUBJID=S2|SEX=M; HEIGHT=200.5|Height 200.5 cm is unusual for sex M.|",
				"01|S3|||R|USUBJID=S3|SEX=F; HEIGHT=139|Height 139 cm is unusual for sex F.|",
			},
			n: 4, v: 2, ne: 2,
		},
		{
			name: "visit_change, change equal to the limit passes", level: "visit",
			rule: `kind: visit_change
    variables: [WEIGHT]
    params: {scale: diff, low: -10, high: 10}`,
			table: func(t *testing.T) *dataset.Table {
				return visit(t, id("USUBJID", "S1", "S1", "S1", "S2", "S2", "S2"), cat("SITEID", "01", "01", "01", "02", "02", "02"),
					num("VISITNUM", "1", "2", "3", "1", "2", "3"), num("WEIGHT", "70", "80", "91", "60", "", "45"))
			},
			want: []string{
				"01|S1|3||R|USUBJID=S1;VISITNUM=3|WEIGHT=91||previous value 80 at visit 2",
				"02|S2|3||R|USUBJID=S2;VISITNUM=3|WEIGHT=45||previous value 60 at visit 1",
			},
			n: 3, v: 2, ne: 3,
		},
		{
			// Pulse pressure at least 10: 100 − 90 is on the limit (passes).
			name: "expr", level: "visit",
			rule: `kind: expr
    params: {require: "VS_SYSBP - VS_DIABP >= 10"}`,
			table: func(t *testing.T) *dataset.Table {
				return visit(t, id("USUBJID", "S1", "S1", "S1", "S1"), cat("SITEID", "01", "01", "01", "01"), num("VISITNUM", "1", "2", "3", "4"),
					num("VS.SYSBP", "120", "100", "100", ""), num("VS.DIABP", "80", "90", "91", "80"))
			},
			want: []string{"01|S1|3||R|USUBJID=S1;VISITNUM=3|VS_SYSBP=100; VS_DIABP=91||"},
			n:    3, v: 1, ne: 1,
		},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			yaml := "schema: 1\nrules:\n  - id: R\n    status: accepted\n    severity: major\n    level: " + tc.level + "\n    " + tc.rule + "\n"
			rs := ruleSet(t, yaml)
			res := runTables(t, rs, map[string]*dataset.Table{tc.level: tc.table(t)}, Options{})
			if len(res.NotEvaluable) > 0 {
				t.Fatalf("not evaluable: %+v", res.NotEvaluable)
			}
			var got []string
			for _, f := range res.Findings {
				got = append(got, row(f))
			}
			if strings.Join(got, "\n") != strings.Join(tc.want, "\n") {
				t.Errorf("findings:\n got %s\nwant %s", strings.Join(got, "\n     "), strings.Join(tc.want, "\n     "))
			}
			s := res.Rules[0]
			if s.Evaluated != tc.n || s.Violations != tc.v || s.NotEvaluable != tc.ne {
				t.Errorf("summary: evaluated %d, violations %d, not evaluable %d; want %d, %d, %d (hand-derived)",
					s.Evaluated, s.Violations, s.NotEvaluable, tc.n, tc.v, tc.ne)
			}
		})
	}
}
