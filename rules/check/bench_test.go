package check

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/crossform/crossform/dataset"
)

// benchTable generates a visit-level table of n records (5 visits per
// subject, 20 sites) and p variables: V0000… continuous (normal, mean 100,
// SD 10, 1% missing), every fifth variable instead a category C0000… (A 60%,
// B 39%, C 1%). Seeded. The rules of benchRules then flag roughly 0.2–0.6%
// of records each.
func benchTable(b *testing.B, n, p int) *dataset.Table {
	b.Helper()
	rng := rand.New(rand.NewPCG(1, 1))
	t := dataset.NewTable("BENCH", n)
	t.Level, t.Keys, t.Site = "visit", []string{"USUBJID", "VISITNUM"}, "SITEID"
	subj := make([]int32, n)
	site := make([]int32, n)
	visit := make([]float64, n)
	nsubj := (n + 4) / 5
	subjLevels := make([]string, nsubj)
	for i := range subjLevels {
		subjLevels[i] = fmt.Sprintf("B-%02d-%06d", i%20, i)
	}
	for i := range n {
		subj[i], site[i], visit[i] = int32(i/5), int32((i/5)%20), float64(i%5+1)
	}
	siteLevels := make([]string, 20)
	for i := range siteLevels {
		siteLevels[i] = fmt.Sprintf("%02d", i)
	}
	must := func(err error) {
		if err != nil {
			b.Fatal(err)
		}
	}
	must(t.Add(dataset.NewCodeColumn("USUBJID", dataset.Identifier, subj, subjLevels)))
	must(t.Add(dataset.NewCodeColumn("SITEID", dataset.Nominal, site, siteLevels)))
	must(t.Add(dataset.NewFloatColumn("VISITNUM", dataset.Ordinal, visit)))
	for j := 3; j < p; j++ {
		if j%5 == 0 {
			codes := make([]int32, n)
			for i := range codes {
				// A 60%, B 39%, C 1%.
				switch u := rng.IntN(100); {
				case u < 60:
					codes[i] = 0
				case u < 99:
					codes[i] = 1
				default:
					codes[i] = 2
				}
			}
			must(t.Add(dataset.NewCodeColumn(fmt.Sprintf("C%04d", j), dataset.Nominal, codes, []string{"A", "B", "C"})))
			continue
		}
		v := make([]float64, n)
		for i := range v {
			v[i] = 100 + 10*rng.NormFloat64()
			if rng.IntN(100) == 0 {
				v[i] = math.NaN()
			}
		}
		must(t.Add(dataset.NewFloatColumn(fmt.Sprintf("V%04d", j), dataset.Continuous, v)))
	}
	return t
}

// benchRules writes n accepted rules over t's variables, cycling through the
// kinds order, band, group_range and implies.
func benchRules(t *dataset.Table, n int) string {
	var nums, cats []string
	for _, c := range t.Cols[3:] {
		if c.Storage == dataset.StoreFloat {
			nums = append(nums, c.Name)
		} else {
			cats = append(cats, c.Name)
		}
	}
	var b strings.Builder
	b.WriteString("schema: 1\nrules:\n")
	for i := range n {
		x, y := nums[(2*i)%len(nums)], nums[(2*i+1)%len(nums)]
		g := cats[i%len(cats)]
		fmt.Fprintf(&b, "  - id: r%03d\n    level: visit\n    status: accepted\n    severity: %s\n", i, []string{"critical", "major", "minor"}[i%3])
		switch i % 4 {
		case 0:
			fmt.Fprintf(&b, "    kind: order\n    variables: [%s, %s]\n    params: {tolerance: 40}\n", x, y)
		case 1:
			fmt.Fprintf(&b, "    kind: band\n    variables: [%s, %s]\n    params: {y_on_x: {slope: 0, intercept: 100, scale: 10}, x_on_y: {slope: 0, intercept: 100, scale: 10}, k: 3, flag_when: either}\n", x, y)
		case 2:
			fmt.Fprintf(&b, "    kind: group_range\n    variables: [%s, %s]\n    params: {limits: {A: [70, 130], B: [72, 128]}}\n", g, y)
		case 3:
			fmt.Fprintf(&b, "    kind: implies\n    variables: [%s, %s]\n    params: {when_in: [A], then_not_in: [C]}\n", g, cats[(i+1)%len(cats)])
		}
		fmt.Fprintf(&b, "    query: \"Please check {%s}.\"\n", x)
	}
	return b.String()
}

// BenchmarkRun: 200 accepted rules on 100,000 records × 1,000 variables
// (target under 20 s and 2 GB). Run with
//
//	go test ./rules/check -run '^$' -bench BenchmarkRun -benchtime 3x
func BenchmarkRun(b *testing.B) {
	for _, size := range []struct{ n, p, rules int }{{10_000, 100, 20}, {100_000, 1_000, 200}} {
		b.Run(fmt.Sprintf("records=%d/vars=%d/rules=%d", size.n, size.p, size.rules), func(b *testing.B) {
			t := benchTable(b, size.n, size.p)
			rs := ruleSet(b, benchRules(t, size.rules))
			o := Options{Table: func(string) (*dataset.Table, error) { return t, nil }}
			b.ReportAllocs()
			var findings int
			for b.Loop() {
				res, err := Run(context.Background(), rs, nil, o)
				if err != nil {
					b.Fatal(err)
				}
				if len(res.NotEvaluable) > 0 {
					b.Fatalf("not evaluable: %+v", res.NotEvaluable[0])
				}
				findings = len(res.Findings)
			}
			b.ReportMetric(float64(findings), "findings")
		})
	}
}
