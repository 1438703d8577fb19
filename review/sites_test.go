package review

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"regexp"
	"slices"
	"strings"
	"testing"

	"github.com/crossform/crossform/dataset"
	"github.com/crossform/crossform/rules"
	"github.com/crossform/crossform/rules/check"
	"github.com/crossform/crossform/signals"
)

// TestDemoReportSites: on the demo study the Sites section flags exactly the two sites
// with planted problems, site 06 (near-identical subjects) and site 07 (weights recorded
// in pounds from visit 4 on), and shows why: a group table at 06, a distribution figure of
// VS.WEIGHT at 07 whose flagged visits are visit 4 and later.
func TestDemoReportSites(t *testing.T) {
	d, page := demoReport(t, Input{IncludeProposed: true, Signals: true})
	s := d.Sites
	if s == nil || s.Note != "" {
		t.Fatalf("Sites = %+v, want computed signals", s)
	}
	var flagged []string
	for _, r := range s.Rows {
		if r.Flagged {
			flagged = append(flagged, r.Site)
		}
	}
	if want := []string{"06", "07"}; !slices.Equal(flagged, want) {
		t.Fatalf("flagged sites %v, want %v (the demo's planted site problems)", flagged, want)
	}
	if !s.Rows[0].Flagged || !s.Rows[1].Flagged || s.Rows[2].Flagged {
		t.Error("flagged sites are not listed first")
	}
	if len(s.Rows) != 14 || s.Subjects != 600 {
		t.Errorf("%d sites, %d subjects; want the demo's 14 sites and 600 subjects", len(s.Rows), s.Subjects)
	}
	for _, r := range s.Rows {
		if r.Rank == 0 || len(r.Components) != len(signals.Components) {
			t.Errorf("site %s: no quality score (rank %d, %d components)", r.Site, r.Rank, len(r.Components))
		}
	}
	if len(s.Flagged) != 2 {
		t.Fatalf("%d flagged-site blocks, want 2", len(s.Flagged))
	}
	f06, f07 := s.Flagged[0], s.Flagged[1]
	if len(f06.Groups) == 0 {
		t.Fatal("site 06: no group of near-identical subjects")
	}
	g := f06.Groups[0]
	if len(g.Subjects) < 2 || len(g.Pairs) == 0 || len(g.Vars) == 0 {
		t.Errorf("site 06 group: %d subjects, %d pairs, %d agreeing variables", len(g.Subjects), len(g.Pairs), len(g.Vars))
	}
	for _, sub := range g.Subjects {
		if !strings.HasPrefix(sub, "CFX-201-06-") {
			t.Errorf("site 06 group holds subject %s of another site", sub)
		}
	}
	for _, v := range g.Vars {
		if len(v.Values) != len(g.Subjects) || !(v.Chance >= 0 && v.Chance <= 1) || v.Pairs < 1 {
			t.Errorf("site 06 variable %s: %d values for %d subjects, chance %g, %d pairs", v.Name, len(v.Values), len(g.Subjects), v.Chance, v.Pairs)
		}
	}
	var weight *[]bool
	var labels []string
	for _, p := range f07.Figures {
		if p.Shift != nil && p.Shift.YName == "VS.WEIGHT" {
			weight, labels = &p.Shift.Flag, p.Shift.Strata
		}
	}
	if weight == nil {
		t.Fatal("site 07: no distribution figure of VS.WEIGHT")
	}
	// The demo plants pounds from the fourth visit on: visits before are not flagged,
	// and some from there on are.
	before, after := 0, 0
	for k, fl := range *weight {
		if fl && k < 3 {
			before++
		}
		if fl && k >= 3 {
			after++
		}
	}
	if before != 0 || after == 0 {
		t.Errorf("site 07 VS.WEIGHT flags by visit %v (%v): %d before visit 4, %d from it; want 0 and some", *weight, labels, before, after)
	}
	found := false
	for _, x := range f07.Tests {
		found = found || x.Kind == "distribution" && x.Vars == "VS.WEIGHT" && x.Ratio > 2
	}
	if !found {
		t.Errorf("site 07 tests %+v lack the VS.WEIGHT shift with median ratio > 2 (pounds against kilograms)", f07.Tests)
	}
	html := string(page)
	for _, want := range []string{`id="sites"`, `href="#sites"`, `id="sites-table"`, `id="site-06"`, `id="site-07"`, "Near-identical subjects, group",
		`aria-labelledby="s07-0-t s07-0-d"`} {
		if !strings.Contains(html, want) {
			t.Errorf("report lacks %q", want)
		}
	}
	cards := regexp.MustCompile(`<article class="sitecard" id="site-([^"]+)"`).FindAllStringSubmatch(html, -1)
	if len(cards) != 2 || cards[0][1] != "06" || cards[1][1] != "07" {
		t.Errorf("site cards %v, want 06 and 07", cards)
	}
}

// TestDemoReportNoSignals: without Input.Signals the section says it was not computed.
func TestDemoReportNoSignals(t *testing.T) {
	d, page := demoReport(t, Input{})
	if d.Sites != nil {
		t.Errorf("Sites = %+v without Input.Signals", d.Sites)
	}
	if !strings.Contains(string(page), "Site and subject signals were not computed for this report.") {
		t.Error("report does not say the signals were not computed")
	}
}

// TestSignalTables: signals run on an SDTM folder or on one table with one row per
// subject and a site column; anything else gets a note saying why.
func TestSignalTables(t *testing.T) {
	mk := func(name string, subjects []string, site string) *dataset.Table {
		n := len(subjects)
		tb := dataset.NewTable(name, n)
		var lv []string
		codes := make([]int32, n)
		for i, s := range subjects {
			k := slices.Index(lv, s)
			if k < 0 {
				k = len(lv)
				lv = append(lv, s)
			}
			codes[i] = int32(k)
		}
		sites := make([]int32, n)
		x, y := make([]float64, n), make([]float64, n)
		r := rand.New(rand.NewPCG(1, 1))
		for i := range n {
			sites[i] = int32(i % 3)
			x[i] = 50 + 10*r.NormFloat64()
			y[i] = x[i] + 5*r.NormFloat64()
		}
		for _, c := range []*dataset.Column{
			dataset.NewCodeColumn("SUBJ", dataset.Identifier, codes, lv),
			dataset.NewCodeColumn("CENTRE", dataset.Nominal, sites, []string{"A", "B", "C"}),
			dataset.NewFloatColumn("X", dataset.Continuous, x),
			dataset.NewFloatColumn("Y", dataset.Continuous, y),
		} {
			if err := tb.Add(c); err != nil {
				t.Fatal(err)
			}
		}
		if err := tb.SetKeys([]string{"SUBJ"}, site); err != nil {
			t.Fatal(err)
		}
		return tb
	}
	ids := func(n int, repeat bool) []string {
		out := make([]string, n)
		for i := range out {
			k := i
			if repeat {
				k = i / 2
			}
			out[i] = fmt.Sprintf("S%03d", k)
		}
		return out
	}
	cases := []struct {
		name   string
		tables []*dataset.Table
		note   string // "" when signals are computed
	}{
		{"one row per subject", []*dataset.Table{mk("SUBJECTS", ids(90, false), "CENTRE")}, ""},
		{"no site", []*dataset.Table{mk("SUBJECTS", ids(90, false), "")}, `need a site column; table "SUBJECTS" has none`},
		{"repeated subjects", []*dataset.Table{mk("VISITS", ids(90, true), "CENTRE")}, `more than one row for SUBJ "S000"`},
		{"two tables", []*dataset.Table{mk("A", ids(90, false), "CENTRE"), mk("B", ids(90, false), "CENTRE")}, "this study has 2 tables"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			st := &dataset.Study{Path: "x", Tables: c.tables}
			got, err := siteSignals(context.Background(), Input{Study: st}, newTables(st, dataset.ShapeOptions{}), nil)
			if err != nil {
				t.Fatal(err)
			}
			if c.note == "" {
				if got.Note != "" || len(got.Rows) != 3 || got.Subjects != 90 {
					t.Errorf("note %q, %d sites, %d subjects; want signals of 3 sites and 90 subjects", got.Note, len(got.Rows), got.Subjects)
				}
				return
			}
			if !strings.Contains(got.Note, c.note) || len(got.Rows) != 0 {
				t.Errorf("note %q with %d sites, want one containing %q and no sites", got.Note, len(got.Rows), c.note)
			}
		})
	}
}

// TestSiteSignalsCancelled: a cancelled context is an error, not a note.
func TestSiteSignalsCancelled(t *testing.T) {
	st, _ := demoFixture(t)
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := siteSignals(ctx, Input{Study: st}, newTables(st, dataset.ShapeOptions{}), nil); err == nil {
		t.Error("siteSignals with a cancelled context succeeded")
	}
}

func TestQuartiles(t *testing.T) {
	nan := math.NaN()
	mpg := []float64{21, 21, 22.8, 21.4, 18.7, 18.1, 14.3, 24.4, 22.8, 19.2, 17.8, 16.4, 17.3, 15.2, 10.4, 10.4, 14.7, 32.4,
		30.4, 33.9, 21.5, 15.5, 15.2, 13.3, 19.2, 27.3, 26, 30.4, 15.8, 19.7, 15, 21.4}
	cases := []struct {
		name   string
		x      []float64
		want   [3]float64
		source string
	}{
		{"mtcars mpg", mpg, [3]float64{15.425, 19.2, 22.8}, `R 4.2.2: quantile(mtcars$mpg, c(.25, .5, .75))`},
		{"eight values", []float64{2, 4, 4, 5, 7, 9, 10, 1.5}, [3]float64{3.5, 4.5, 7.5}, `R 4.2.2: quantile(c(2, 4, 4, 5, 7, 9, 10, 1.5), c(.25, .5, .75))`},
		{"one value", []float64{3}, [3]float64{3, 3, 3}, "hand-derived: h = 0 for every p"},
		{"empty", nil, [3]float64{nan, nan, nan}, "documented: NaN when empty"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got := quartiles(slices.Clone(c.x))
			for k := range got {
				if !(math.Abs(got[k]-c.want[k]) <= 1e-12 || math.IsNaN(got[k]) && math.IsNaN(c.want[k])) {
					t.Errorf("quartiles(%s) = %v, want %v (%s)", c.name, got, c.want, c.source)
					break
				}
			}
		})
	}
}

func TestCheckRecords(t *testing.T) {
	res := &check.Result{Findings: []check.Finding{
		{RuleID: "a", Site: "01", Subject: "S1", Vars: []string{"X", "Y"}, Severity: rules.Major},
		{RuleID: "b", Site: "02", Subject: "S2", Vars: []string{"Z"}},
	}}
	got := CheckRecords(res)
	want := []signals.CheckRecord{{Site: "01", Subject: "S1", Variable: "X"}, {Site: "01", Subject: "S1", Variable: "Y"}, {Site: "02", Subject: "S2", Variable: "Z"}}
	if !slices.Equal(got, want) {
		t.Errorf("CheckRecords = %+v, want %+v (one record per finding and variable)", got, want)
	}
}
