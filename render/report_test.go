package render

import (
	"bytes"
	"crypto/sha256"
	"encoding/base64"
	"encoding/xml"
	"html"
	"io"
	"math"
	"regexp"
	"strings"
	"testing"
	"time"

	"github.com/crossform/crossform/dataset"
	"github.com/crossform/crossform/rules"
	"github.com/crossform/crossform/rules/check"
)

// reportFixture is a small invented report: one table, one card per figure type, a
// checker result with a flagged site and a comparison with a previous listing.
func reportFixture(t testing.TB) *ReportData {
	t.Helper()
	in, tree, part, edges := clusterStudy(t)
	at := time.Date(2026, 3, 1, 9, 30, 0, 0, time.UTC)
	rule := func(id, kind string, vars []string, st rules.Status, params map[string]any) *rules.Rule {
		return &rules.Rule{ID: id, Kind: kind, Level: "visit", Vars: vars, Params: params, Severity: rules.Major, Status: st,
			Statement: "Statement of " + id + " <checked & escaped>", Query: "Please check {" + vars[0] + "}.",
			History:  []rules.Event{{At: at, By: "crossform", Action: "proposed", Note: "proposed from scan"}},
			Evidence: &rules.Evidence{Fingerprint: "sha256:0011", N: 100, Support: 100, Violations: 2, Confidence: 0.97, Suggested: "spearman(SYSBP, DIABP) = 0.81"}}
	}
	nan := math.NaN()
	ex := []Example{{Site: "03", Key: []string{"CF-03-007", "4"}, Values: []string{"120", "131"}, Query: "Please check 120.", Detail: "above the band"}}
	d := &ReportData{
		ToolVersion: "test", Generated: at,
		Study:    ReportStudy{Name: "CF-001", Path: "extract-1", Fingerprint: "sha256:0011", Files: []string{"dm.csv", "vs.csv"}, Subjects: 40, Sites: 3},
		RuleSet:  ReportRuleSet{Path: "rules.yaml", Hash: "ab12", Proposed: 3, Accepted: 1},
		Cautions: []string{"Candidates for review, not errors."},
		Tables: []ReportTable{{Level: "visit", Name: "visit", Rows: 160,
			Profiles: []dataset.VarProfile{
				{Table: "visit", Name: "SYSBP", Label: "Systolic BP", Type: "continuous", N: 150, Missing: 10, Rows: 160, Distinct: 60, Min: "96", Median: "131", Max: "182", Unit: "mmHg"},
				{Table: "visit", Name: "SEX", Type: "binary", N: 160, Rows: 160, Distinct: 2, Top: []dataset.LevelFreq{{Level: "F", Count: 90}, {Level: "M", Count: 70}}},
			},
			Assoc: &ReportAssoc{In: in, Tree: tree, Part: part, Edges: edges, MinStrength: 0.3, Pairs: 78, Estimated: 76}}},
		Proposals: []Proposal{
			{Rule: rule("band-1", rules.KindBand, []string{"SYSBP", "DIABP"}, rules.StatusProposed, nil), Pass: 98, Fail: 2, KeyNames: []string{"USUBJID", "VISITNUM"}, Examples: ex,
				Plot: Plot{Caption: "band", Scatter: &ScatterPlot{XName: "SYSBP", YName: "DIABP", Total: 4,
					Points: []ScatterPoint{{100, 65, false}, {130, 82, false}, {160, 99, false}, {120, 131, true}},
					Area:   []XY{{100, 55}, {160, 90}, {160, 108}, {100, 73}},
					Lines:  []PlotLine{{Role: "centre", Points: []XY{{100, 64}, {160, 99}}}, {Role: "limit", Points: []XY{{90, 60}, {150, 100}}}}}}},
			{Rule: rule("order-1", rules.KindOrder, []string{"RFICDTC", "SVSTDTC"}, rules.StatusAccepted, nil), Pass: 10, Fail: 1,
				Plot: Plot{Scatter: &ScatterPlot{XName: "RFICDTC", YName: "SVSTDTC", XDate: true, YDate: true, Total: 3,
					Points: []ScatterPoint{{19800, 19801, false}, {19810, 19815, false}, {19820, 19812, true}},
					Lines:  []PlotLine{{Role: "diagonal", Points: []XY{{19800, 19800}, {19820, 19820}}}}}}},
			{Rule: rule("implies-1", rules.KindImplies, []string{"SEX", "HCG"}, rules.StatusProposed, nil), Pass: 50, Fail: 1,
				Plot: Plot{Cross: &CrossTable{RowVar: "SEX", ColVar: "HCG", Rows: []string{"M", "F"}, Cols: []string{"(blank)", "NEGATIVE"},
					Counts: [][]int{{69, 1}, {40, 50}}, Forbidden: [][]bool{{false, true}, {false, false}}}}},
			{Rule: rule("visit_change-1", rules.KindVisitChange, []string{"WEIGHT"}, rules.StatusProposed, nil), Pass: 30, Fail: 1,
				Plot: Plot{Trajectories: &TrajectoryPlot{YName: "WEIGHT", Visits: []float64{1, 2, 3}, Labels: []string{"SCREENING", "WEEK 2", ""},
					Series: []Series{{Subject: "A", X: []float64{1, 2, 3}, Y: []float64{80, 81, nan}, Fail: []bool{false, false, false}},
						{Subject: "B", Flagged: true, X: []float64{1, 2, 3}, Y: []float64{70, 154, 71}, Fail: []bool{false, true, true}}}, Others: 5}}},
			{Rule: rule("group_range-1", rules.KindGroupRange, []string{"SEX", "HEIGHT"}, rules.StatusRejected, nil), Pass: 30, Fail: 1,
				Plot: Plot{Strip: &StripPlot{GroupVar: "SEX", YName: "HEIGHT", Groups: []StripGroup{
					{Level: "F", Values: []float64{160, 165, 250}, Fail: []bool{false, false, true}, N: 3, Lo: 140, Hi: 190},
					{Level: "M", Values: []float64{175, 180}, Fail: []bool{false, false}, N: 2, Lo: nan, Hi: nan}}}}},
			{Rule: rule("expr-1", rules.KindExpr, []string{"AGE"}, rules.StatusProposed, nil), Unevaluable: `variable "AGE" is absent`},
		},
		Discrepancies: &ReportDiscrepancies{IncludesProposed: true, Previous: "listing-1.csv",
			Classes:  &check.ClassCounts{New: 1, Persisting: 1, Changed: 1, Resolved: 1},
			Resolved: []check.Finding{{Key: "order-1|USUBJID=CF-01-002", RuleID: "order-1", Site: "01", Subject: "CF-01-002", Vars: []string{"RFICDTC", "SVSTDTC"}, Values: []string{"2024-03-02", "2024-03-01"}}},
			Result: &check.Result{
				Findings: []check.Finding{
					{Key: "band-1|x", RuleID: "band-1", Severity: rules.Major, Site: "03", Subject: "CF-03-007", Visit: "4", VisitLabel: "WEEK 4", Vars: []string{"SYSBP", "DIABP"}, Values: []string{"120", "131"}, Query: "Please check 120.", Class: check.New},
					{Key: "order-1|y", RuleID: "order-1", Severity: rules.Critical, Site: "03", Subject: "CF-03-009", Visit: "1", Vars: []string{"RFICDTC", "SVSTDTC"}, Values: []string{"2024-05-06", "2024-05-02"}, Query: "Consent after visit.", Class: check.Persisting, Changed: true},
				},
				NotEvaluable: []check.Unevaluable{{RuleID: "expr-1", Kind: "expr", Level: "visit", Reason: `variable "AGE" is absent`}},
				Rules: []check.RuleSummary{
					{RuleID: "band-1", Kind: "band", Level: "visit", Severity: rules.Major, Status: rules.StatusProposed, Evaluable: true, Records: 100, Evaluated: 100, Violations: 1, Rate: 0.01},
					{RuleID: "expr-1", Kind: "expr", Level: "visit", Severity: rules.Minor, Status: rules.StatusProposed, Reason: `variable "AGE" is absent`, Rate: nan},
				},
				Sites: []check.SiteSummary{
					{Site: "01", Subjects: 15, Evaluations: 600, Violations: 0, Rate: 0, Test: check.SiteTestResult{Site: "01", Tested: true, Ratio: 0, P: 1, Q: 1}},
					{Site: "03", Subjects: 12, Evaluations: 480, Violations: 2, Rate: 2.0 / 480, Test: check.SiteTestResult{Site: "03", Tested: true, Ratio: math.Inf(1), P: 0.001, Q: 0.002, Flagged: true}},
					{Site: "09", Subjects: 2, Evaluations: 20, Rate: 0, Test: check.SiteTestResult{Site: "09", Reason: "fewer than 3 subjects", Ratio: nan, P: nan, Q: nan}},
				},
			}},
	}
	return d
}

func renderReport(t testing.TB, d *ReportData, o ReportOptions) []byte {
	t.Helper()
	var buf bytes.Buffer
	if err := ReportHTML(&buf, d, o); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

func TestReportHTMLGolden(t *testing.T) {
	got := renderReport(t, reportFixture(t), ReportOptions{})
	clusterGolden(t, "report_static.golden", got)
	rc := &ReviewControls{Action: "/decide", Token: "tok123", Reviewer: "A. Reviewer", Flash: "Rule band-1 accepted.", FlashKind: "ok",
		State: map[string]string{"band-1": "s1", "order-1": "s2"}}
	clusterGolden(t, "report_review.golden", renderReport(t, reportFixture(t), ReportOptions{Review: rc}))
}

// TestReportDeterministic: the same data give the same bytes (no map order reaches the
// output), and only the run time distinguishes two runs.
func TestReportDeterministic(t *testing.T) {
	a := renderReport(t, reportFixture(t), ReportOptions{})
	for range 3 {
		if b := renderReport(t, reportFixture(t), ReportOptions{}); !bytes.Equal(a, b) {
			t.Fatal("two renderings of the same data differ")
		}
	}
	d := reportFixture(t)
	d.Generated = d.Generated.Add(90 * time.Minute)
	b := renderReport(t, d, ReportOptions{})
	strip := func(x []byte) string {
		return strings.ReplaceAll(strings.ReplaceAll(string(x), "2026-03-01 09:30:00 UTC", "T"), "2026-03-01 11:00:00 UTC", "T")
	}
	if strip(a) != strip(b) {
		t.Error("reports of the same data at two run times differ beyond the run time")
	}
}

var (
	externalRE = regexp.MustCompile(`(?i)(src|href|action)\s*=\s*["']?\s*(https?:|//)`)
	linkCSSRE  = regexp.MustCompile(`(?i)<link[^>]*rel=["']?stylesheet`)
	scriptSrc  = regexp.MustCompile(`(?i)<script[^>]*\ssrc\s*=`)
	styleRE    = regexp.MustCompile(`(?s)<style>(.*?)</style>`)
	scriptRE   = regexp.MustCompile(`(?s)<script>(.*?)</script>`)
	cspMetaRE  = regexp.MustCompile(`<meta http-equiv="Content-Security-Policy" content="([^"]*)">`)
)

// CheckSelfContained returns a description of the first reference in an HTML page to
// anything outside it ("" when none): an http(s) or protocol-relative src, href or form
// action, a stylesheet link, or a script with a src.
func checkSelfContained(page []byte) string {
	for _, re := range []*regexp.Regexp{externalRE, linkCSSRE, scriptSrc} {
		if m := re.Find(page); m != nil {
			return string(m)
		}
	}
	return ""
}

func TestReportSelfContained(t *testing.T) {
	page := renderReport(t, reportFixture(t), ReportOptions{})
	if bad := checkSelfContained(page); bad != "" {
		t.Errorf("report refers outside itself: %q", bad)
	}
	// The checker itself must catch what it is for.
	for _, bad := range []string{`<img src="https://x.test/a.png">`, `<a href='http://x.test'>`, `<link rel="stylesheet" href="a.css">`, `<script src="a.js"></script>`, `<img src="//cdn.test/a">`} {
		if checkSelfContained([]byte(bad)) == "" {
			t.Errorf("checkSelfContained(%q) found nothing", bad)
		}
	}
}

// TestReportCSPHashes: the inline style and script are exactly the ones the policy's
// hashes allow (CSP Level 3, §8.4: the hash is over the element's text), so a browser
// runs them and nothing else.
func TestReportCSPHashes(t *testing.T) {
	page := string(renderReport(t, reportFixture(t), ReportOptions{}))
	meta := cspMetaRE.FindStringSubmatch(page)
	if meta == nil {
		t.Fatal("no CSP meta element")
	}
	csp := html.UnescapeString(meta[1])
	if csp != ReportCSP() {
		t.Errorf("meta CSP = %q, want %q", csp, ReportCSP())
	}
	for _, c := range []struct {
		name string
		re   *regexp.Regexp
	}{{"style", styleRE}, {"script", scriptRE}} {
		ms := c.re.FindAllStringSubmatch(page, -1)
		if len(ms) != 1 {
			t.Fatalf("%d <%s> elements, want 1", len(ms), c.name)
		}
		h := sha256.Sum256([]byte(ms[0][1]))
		want := "'sha256-" + base64.StdEncoding.EncodeToString(h[:]) + "'"
		if !strings.Contains(csp, c.name+"-src "+want) {
			t.Errorf("CSP %q does not allow the page's %s (hash %s)", csp, c.name, want)
		}
	}
	if strings.Contains(page, " style=\"") || strings.Contains(page, " onclick=") || strings.Contains(page, "javascript:") {
		t.Error("page has an inline style attribute, event handler or javascript: URL, which the policy blocks")
	}
}

// TestReportSections: every section and every card is present, text is escaped, and
// each figure kind is drawn.
func TestReportSections(t *testing.T) {
	page := string(renderReport(t, reportFixture(t), ReportOptions{}))
	for _, want := range []string{`id="overview"`, `id="variables"`, `id="associations"`, `id="proposals"`, `id="discrepancies"`,
		`id="rule-band-1"`, `id="rule-order-1"`, `id="rule-implies-1"`, `id="rule-visit_change-1"`, `id="rule-group_range-1"`, `id="rule-expr-1"`,
		"&lt;checked &amp; escaped&gt;", "▲ flagged", "not tested: fewer than 3 subjects", "1 resolved", `data:image/svg&#43;xml;base64,`,
		"2024-03-18", "SCREENING", "not evaluable: variable &#34;AGE&#34; is absent", "Candidates for review, not errors."} {
		if !strings.Contains(page, want) {
			t.Errorf("report lacks %q", want)
		}
	}
	if strings.Contains(page, "<form") {
		t.Error("static report has a form")
	}
	if strings.Contains(page, "ZgotmplZ") {
		t.Error("template refused a value (ZgotmplZ)")
	}
}

// TestPlotSVGWellFormed: every figure is well-formed XML with a title and description.
func TestPlotSVGWellFormed(t *testing.T) {
	for _, p := range reportFixture(t).Proposals {
		s := plotSVG(p.Plot, "p0")
		if p.Unevaluable != "" {
			if s != "" {
				t.Errorf("%s: figure without data", p.Rule.ID)
			}
			continue
		}
		dec := xml.NewDecoder(strings.NewReader(s))
		for {
			_, err := dec.Token()
			if err == io.EOF {
				break
			}
			if err != nil {
				t.Errorf("%s: SVG not well formed: %v", p.Rule.ID, err)
				break
			}
		}
		for _, want := range []string{`<title id="p0-t">`, `<desc id="p0-d">`, `role="img"`} {
			if !strings.Contains(s, want) {
				t.Errorf("%s: SVG lacks %s", p.Rule.ID, want)
			}
		}
	}
}

func TestNiceTicks(t *testing.T) {
	cases := []struct {
		name   string
		lo, hi float64
		want   []float64
	}{
		// hand-derived: span 100, raw step 20 → step 20
		{"0-100", 0, 100, []float64{0, 20, 40, 60, 80, 100}},
		// span 0.9, raw step 0.18 → step 0.2, first multiple ≥ 0.05 is 0.2
		{"0.05-0.95", 0.05, 0.95, []float64{0.2, 0.4, 0.6, 0.8}},
		// span 93, raw 18.6 → step 20
		{"87-180", 87, 180, []float64{100, 120, 140, 160, 180}},
		// negative to positive, span 2, raw 0.4 → step 0.5
		{"-1-1", -1, 1, []float64{-1, -0.5, 0, 0.5, 1}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got := niceTicks(c.lo, c.hi, maxTicks)
			if len(got) != len(c.want) {
				t.Fatalf("niceTicks(%g, %g) = %v, want %v (hand-derived)", c.lo, c.hi, got, c.want)
			}
			for i := range got {
				if math.Abs(got[i]-c.want[i]) > 1e-12 {
					t.Fatalf("niceTicks(%g, %g) = %v, want %v (hand-derived)", c.lo, c.hi, got, c.want)
				}
			}
		})
	}
}

func TestAnchor(t *testing.T) {
	for _, c := range []struct{ in, want string }{
		{"band-05ea7c62ca", "rule-band-05ea7c62ca"},
		{"my rule/#1", "rule-my-rule-1"},
		{`"><script>`, "rule--script-"},
	} {
		if got := Anchor(c.in); got != c.want {
			t.Errorf("Anchor(%q) = %q, want %q", c.in, got, c.want)
		}
	}
}

func BenchmarkReportHTML(b *testing.B) {
	d := reportFixture(b)
	b.ReportAllocs()
	for b.Loop() {
		if err := ReportHTML(io.Discard, d, ReportOptions{}); err != nil {
			b.Fatal(err)
		}
	}
}
