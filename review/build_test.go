package review

import (
	"bytes"
	"context"
	"regexp"
	"strings"
	"testing"

	"github.com/crossform/crossform/render"
	"github.com/crossform/crossform/rules"
	"github.com/crossform/crossform/rules/check"
)

var (
	externalRef = regexp.MustCompile(`(?i)(src|href|action)\s*=\s*["']?\s*(https?:|//)`)
	linkCSS     = regexp.MustCompile(`(?i)<link[^>]*rel=["']?stylesheet`)
	scriptSrc   = regexp.MustCompile(`(?i)<script[^>]*\ssrc\s*=`)
	svgCard     = regexp.MustCompile(`(?s)<article class="card" id="rule-([^"]+)"[^>]*data-kind="([a-z_]+)".*?</article>`)
)

func demoReport(t testing.TB, in Input) (*render.ReportData, []byte) {
	t.Helper()
	st, path := demoFixture(t)
	rs, err := rules.Load(path)
	if err != nil {
		t.Fatal(err)
	}
	in.Study, in.RuleSet, in.Now, in.ToolVersion = st, rs, fixedNow, "test"
	d, err := Build(context.Background(), in)
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := render.ReportHTML(&buf, d, render.ReportOptions{}); err != nil {
		t.Fatal(err)
	}
	return d, buf.Bytes()
}

// TestDemoReport: the report of the demo study is small, self-contained, has every
// section, and draws the figure each rule kind calls for.
func TestDemoReport(t *testing.T) {
	d, page := demoReport(t, Input{IncludeProposed: true, Signals: true})
	if len(page) >= 5<<20 {
		t.Errorf("report is %d bytes, want < 5 MB", len(page))
	}
	t.Logf("demo report: %d bytes, %d rules, %d findings", len(page), len(d.Proposals), len(d.Discrepancies.Result.Findings))
	for _, re := range []*regexp.Regexp{externalRef, linkCSS, scriptSrc} {
		if m := re.Find(page); m != nil {
			t.Errorf("report refers outside itself: %q", m)
		}
	}
	if n := bytes.Count(page, []byte("http://")) + bytes.Count(page, []byte("https://")); n != bytes.Count(page, []byte(`xmlns="http://www.w3.org/2000/svg"`)) {
		t.Errorf("%d http(s) URLs besides the SVG namespace", n-bytes.Count(page, []byte(`xmlns="http://www.w3.org/2000/svg"`)))
	}
	s := string(page)
	for _, want := range []string{`id="overview"`, `id="variables"`, `id="associations"`, `id="proposals"`, `id="discrepancies"`, `id="sites"`,
		`id="sites-table"`, `id="vars-0"`, `id="vars-1"`, `id="by-rule"`, `id="by-site"`, `id="listing"`, "Read this first", "CFX-201"} {
		if !strings.Contains(s, want) {
			t.Errorf("report lacks %q", want)
		}
	}
	if len(d.Tables) != 2 || d.Tables[0].Level != "visit" || d.Tables[1].Level != "subject" {
		t.Errorf("tables %v, want visit and subject (the rule set's levels)", levels(d))
	}
	drawn := map[string]int{}
	cards := svgCard.FindAllStringSubmatch(s, -1)
	if len(cards) != len(d.Proposals) {
		t.Errorf("%d cards, want %d", len(cards), len(d.Proposals))
	}
	for _, c := range cards {
		if strings.Contains(c[0], `<svg xmlns="http://www.w3.org/2000/svg" class="plot"`) {
			drawn[c[2]]++
		}
	}
	kinds := map[string]bool{}
	for _, p := range d.Proposals {
		kinds[p.Rule.Kind] = true
	}
	for _, k := range []string{rules.KindBand, rules.KindOrder, rules.KindImplies, rules.KindVisitChange, rules.KindGroupRange, rules.KindPresence} {
		if kinds[k] && drawn[k] == 0 {
			t.Errorf("no %s card has a figure", k)
		}
	}
	for _, p := range d.Proposals {
		if p.Rule.Kind == rules.KindBand && p.Plot.Scatter != nil && len(p.Plot.Scatter.Area) == 0 {
			t.Errorf("band %s: no band drawn", p.Rule.ID)
		}
		if p.Unevaluable == "" && p.Fail != p.Rule.Evidence.Violations {
			t.Errorf("%s: %d flagged on the extract it was proposed from, evidence says %d", p.Rule.ID, p.Fail, p.Rule.Evidence.Violations)
		}
	}
}

func levels(d *render.ReportData) []string {
	var out []string
	for _, t := range d.Tables {
		out = append(out, t.Level)
	}
	return out
}

// TestDemoReportDeterministic: two builds of the same inputs give the same bytes.
func TestDemoReportDeterministic(t *testing.T) {
	da, a := demoReport(t, Input{IncludeProposed: true, Signals: true, Workers: 1})
	db, b := demoReport(t, Input{IncludeProposed: true, Signals: true, Workers: 4})
	// Each call reads its own copy of the rule set: only the copies' paths may differ.
	a = bytes.ReplaceAll(a, []byte(da.RuleSet.Path), []byte("RULES"))
	b = bytes.ReplaceAll(b, []byte(db.RuleSet.Path), []byte("RULES"))
	if !bytes.Equal(a, b) {
		t.Error("two reports of the same inputs differ")
	}
}

// TestDemoReportClasses: against a previous listing the discrepancies are classed.
func TestDemoReportClasses(t *testing.T) {
	d, _ := demoReport(t, Input{IncludeProposed: true})
	cur := d.Discrepancies.Result.Findings
	if len(cur) < 3 {
		t.Fatalf("%d findings, want at least 3", len(cur))
	}
	prev := append([]check.Finding(nil), cur[1:]...)
	prev[0].Values = append([]string(nil), prev[0].Values...)
	prev[0].Values[0] += "0"
	gone := cur[0]
	gone.Key, gone.RecordKey = gone.RuleID+"|USUBJID=GONE", "USUBJID=GONE"
	prev = append(prev, gone)
	d2, page := demoReport(t, Input{IncludeProposed: true, Previous: prev, PreviousPath: "listing-1.csv"})
	c := d2.Discrepancies.Classes
	want := check.ClassCounts{New: 1, Persisting: len(cur) - 1, Changed: 1, Resolved: 1}
	if c == nil || *c != want {
		t.Fatalf("classes %+v, want %+v", c, want)
	}
	if !bytes.Contains(page, []byte("1 resolved")) || !bytes.Contains(page, []byte("listing-1.csv")) {
		t.Error("report does not show the classes")
	}
}

func BenchmarkBuildDemo(b *testing.B) {
	st, path := demoFixture(b)
	rs, err := rules.Load(path)
	if err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	for b.Loop() {
		if _, err := Build(context.Background(), Input{Study: st, RuleSet: rs, Now: fixedNow, IncludeProposed: true, Signals: true}); err != nil {
			b.Fatal(err)
		}
	}
}
