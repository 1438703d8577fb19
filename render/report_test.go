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
	"github.com/crossform/crossform/signals"
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
		Sites: sitesFixture(),
	}
	return d
}

// sitesFixture is a small invented Sites section: site 07 flagged by a distribution shift
// and a relationship, site 06 by a group of near-identical subjects, site 01 not flagged,
// site 09 too small to test.
func sitesFixture() *ReportSites {
	nan := math.NaN()
	comps := func(v ...float64) []signals.Component {
		var out []signals.Component
		for i, n := range signals.Components {
			out = append(out, signals.Component{Name: n, Value: v[2*i], Z: v[2*i+1]})
		}
		return out
	}
	return &ReportSites{Subjects: 120, Profile: 30, MinSiteN: 20, Components: signals.Components, Scored: "the 2 discrepancies listed",
		Rows: []SiteRow{
			{SiteSignal: signals.SiteSignal{Site: "06", Subjects: 26, RelationTests: 9, ShiftTests: 48, DuplicateSubjects: 3, MaxRatio: nan, Flagged: true},
				Score: 1.08, Rank: 1, Components: comps(0, 0, 0, 0, 0.1635, -2.39, 3, 6.7)},
			{SiteSignal: signals.SiteSignal{Site: "07", Subjects: 48, RelationTests: 9, RelationFlags: 1, ShiftTests: 84, ShiftFlags: 2, MaxRatio: 2.36491, MaxRatioVar: "VS.WEIGHT", Flagged: true},
				Score: 0.83, Rank: 2, Components: comps(0.02, 0.5, 0, 0, 0.1659, -1.14, 3, 4.47)},
			{SiteSignal: signals.SiteSignal{Site: "01", Subjects: 34, RelationTests: 9, ShiftTests: 84, MaxRatio: nan},
				Score: -0.2, Rank: 3, Components: comps(0, 0, 0, 0, 0.17, 0.3, 0, 0)},
			{SiteSignal: signals.SiteSignal{Site: "09", Subjects: 12, MaxRatio: nan}},
		},
		Flagged: []FlaggedSite{
			{Site: "06", Groups: []NearGroup{{ID: 1, Subjects: []string{"CF-06-008", "CF-06-012", "CF-06-014"},
				Pairs: []NearPair{{A: "CF-06-008", B: "CF-06-014", Dist: 0.0082, Z: -10.97, P: 0.005, Compared: 30, Agree: 12},
					{A: "CF-06-012", B: "CF-06-014", Dist: 0.0128, Z: -9.11, P: 0.008, Compared: 30, Agree: 11}},
				Vars: []NearVar{{Name: "AGE", Chance: 0.029, Pairs: 2, Values: []string{"54", "54", "54"}},
					{Name: "SEX", Chance: 0.499, Pairs: 1, Values: []string{"F", "", "F"}}}}}},
			{Site: "07", NotDrawn: 1,
				Tests: []SiteTest{
					{Kind: "relationship", Table: "visit", Vars: "VS.BMI ~ VS.WEIGHT", N: 48, NOthers: 552, Site: 0.338, Others: 0.760, Ratio: nan, Effect: nan, Q: 0.0037},
					{Kind: "distribution", Table: "visit", Vars: "VS.WEIGHT", Stratum: "visit 4 (WEEK 4)", N: 36, NOthers: 426, Site: 193.9, Others: 84.45, Ratio: 2.296, Effect: 0.999, Q: 2.6e-102},
				},
				Figures: []Plot{
					{Caption: "VS.WEIGHT by visit", Shift: &ShiftPlot{YName: "VS.WEIGHT", Site: "07", Strata: []string{"SCREENING", "WEEK 2", "WEEK 4"},
						SiteQ:   [][3]float64{{75, 84, 92}, {76, 85, 93}, {180, 194, 205}},
						OthersQ: [][3]float64{{74, 84.5, 95}, {75, 85, 96}, {nan, nan, nan}},
						N:       []int{40, 38, 36}, NOthers: []int{500, 480, 0}, Flag: []bool{false, false, true}}},
					{Caption: "VS.BMI against VS.WEIGHT", Scatter: &ScatterPlot{XName: "VS.WEIGHT", YName: "VS.BMI", Total: 5, Groups: [2]string{"other sites", "site 07"},
						Points: []ScatterPoint{{70, 24, false}, {90, 30, false}, {110, 36, false}, {180, 28, true}, {200, 31, true}}}},
				}},
		}}
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
	for _, want := range []string{`id="overview"`, `id="variables"`, `id="associations"`, `id="proposals"`, `id="discrepancies"`, `id="sites"`,
		`href="#sites"`, `id="site-06"`, `id="site-07"`, `href="#site-07"`, "Near-identical subjects, group 1: CF-06-008, CF-06-012, CF-06-014",
		`aria-labelledby="s07-0-t s07-0-d"`, `aria-labelledby="s07-1-t s07-1-d"`, "Not evaluable", "2 of 2", "2 flagged pairs",
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

// TestReportSitesAbsent: without signals, or with a note, the section says so and draws
// no site card.
func TestReportSitesAbsent(t *testing.T) {
	for _, c := range []struct {
		name  string
		sites *ReportSites
		want  string
	}{
		{"nil", nil, "Site and subject signals were not computed for this report."},
		{"note", &ReportSites{Note: "Site signals need a site column <none>."}, "Site signals need a site column &lt;none&gt;."},
	} {
		t.Run(c.name, func(t *testing.T) {
			d := reportFixture(t)
			d.Sites = c.sites
			page := string(renderReport(t, d, ReportOptions{}))
			if !strings.Contains(page, `id="sites"`) || !strings.Contains(page, c.want) {
				t.Errorf("Sites section lacks %q", c.want)
			}
			if strings.Contains(page, `class="sitecard"`) || strings.Contains(page, `id="sites-table"`) {
				t.Error("Sites section without signals has a site table or card")
			}
		})
	}
}

// TestShiftSVG: a shift plot draws two boxes per stratum with values and one cross per
// flagged stratum with a site median.
func TestShiftSVG(t *testing.T) {
	nan := math.NaN()
	p := &ShiftPlot{YName: "WEIGHT", Site: "07", Strata: []string{"V1", "V2", "V3", "V4"},
		SiteQ:   [][3]float64{{70, 80, 90}, {nan, nan, nan}, {170, 180, 190}, {175, 185, 195}},
		OthersQ: [][3]float64{{71, 81, 91}, {72, 82, 92}, {73, 83, 93}, {74, 84, 94}},
		N:       []int{30, 0, 30, 30}, NOthers: []int{300, 300, 300, 300}, Flag: []bool{false, true, true, true}}
	s := plotSVG(Plot{Shift: p}, "x")
	// hand-derived: 4 others' boxes, 3 site boxes (V2 has no site values), the clip
	// rectangle and 2 legend swatches
	if got := strings.Count(s, "<rect "); got != 4+3+1+2 {
		t.Errorf("%d rect elements, want 10 (7 boxes, the clip rectangle and 2 legend swatches)", got)
	}
	// flagged V3 and V4 have a site median; V2 does not; the legend has one cross too
	if got := strings.Count(s, `stroke="`+plotFail+`" stroke-width="1.8"`); got != 2+1 {
		t.Errorf("%d crosses, want 3 (2 flagged strata and the legend)", got)
	}
}

// TestPlotSVGWellFormed: every figure is well-formed XML with a title and description.
func TestPlotSVGWellFormed(t *testing.T) {
	d := reportFixture(t)
	ps := d.Proposals
	for _, f := range d.Sites.Flagged {
		for _, p := range f.Figures {
			ps = append(ps, Proposal{Rule: &rules.Rule{ID: "site " + f.Site}, Plot: p})
		}
	}
	for _, p := range ps {
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
