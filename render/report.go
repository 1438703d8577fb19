package render

// The reviewer's HTML report: one self-contained file (styles, script and plots inline,
// nothing fetched from a network) that a reviewer can open from disk or send by email, and
// the same page with decision forms that package review serves on the local machine.

import (
	"bytes"
	"crypto/sha256"
	_ "embed"
	"encoding/base64"
	"fmt"
	"html/template"
	"io"
	"math"
	"regexp"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/crossform/crossform/cluster"
	"github.com/crossform/crossform/dataset"
	"github.com/crossform/crossform/rules"
	"github.com/crossform/crossform/rules/check"
	"github.com/crossform/crossform/signals"
)

//go:embed assets/report.css
var reportCSS string

//go:embed assets/report.js
var reportJS string

//go:embed assets/report.tmpl
var reportTmpl string

// ReportData is everything the reviewer's report shows. The caller computes it (package
// review builds it from a study and a rule set); ReportHTML only lays it out. Slices are
// shown in the order given, so a caller that sorts them gets the same bytes for the same
// inputs; only Generated varies from run to run.
type ReportData struct {
	Title       string // page title; "" means "crossform review report"
	ToolVersion string
	// Generated is the time of the run, shown in UTC; the only value in the report that
	// changes when the same inputs are reported twice.
	Generated time.Time
	Study     ReportStudy
	RuleSet   ReportRuleSet
	// Cautions are shown on the overview, each as one paragraph (EDIT-CHECKS.md §6).
	Cautions []string
	// Tables holds one entry per analysed table (level): its variable profiles and the
	// associations between its variables.
	Tables []ReportTable
	// Proposals holds one card per rule of the rule set, in the order given.
	Proposals []Proposal
	// Discrepancies is the checker's result; nil when no rule was run.
	Discrepancies *ReportDiscrepancies
	// Sites holds the site and subject signals; nil when they were not computed.
	Sites *ReportSites
}

// ReportStudy describes the extract the report is about.
type ReportStudy struct {
	Name        string // e.g. the study folder's base name
	Path        string
	Fingerprint string   // fingerprint of the extract (e.g. the hash of its files)
	Files       []string // the files read, base names, sorted
	Subjects    int      // distinct subjects, 0 when unknown
	Sites       int      // distinct sites, 0 when unknown
}

// ReportRuleSet describes the rule set the proposals come from.
type ReportRuleSet struct {
	Path string
	Hash string // SHA-256 of the file as read, hex
	// Counts of rules by status.
	Proposed, Accepted, Rejected, Retired int
}

// ReportTable is one analysed table: its profile and its associations.
type ReportTable struct {
	Level    string // "visit", "subject", "record:AE", "table"
	Name     string // the table's name
	Rows     int
	Profiles []dataset.VarProfile
	Assoc    *ReportAssoc // nil when the table has fewer than two analysable variables
}

// ReportAssoc is the association analysis of one table: the strength matrix, its
// hierarchical clustering cut at MinStrength, the edges to draw and the strong
// associations across forms.
type ReportAssoc struct {
	In          cluster.Input
	Tree        *cluster.Tree
	Part        *cluster.Partition
	Edges       []GraphEdge
	Deps        []cluster.Dependency
	MinStrength float64 // strength at which the tree was cut
	Pairs       int     // pairs of variables
	Estimated   int     // pairs with an estimate
}

// A Proposal is one rule's card: the rule, what the data say about it and a plot that
// shows why.
type Proposal struct {
	Rule *rules.Rule
	// Unevaluable says why the rule could not run on this extract ("" when it could).
	Unevaluable string
	// Verdicts on this extract: records passing, failing and not evaluable.
	Pass, Fail, NotEval int
	Plot                Plot
	// KeyNames name the columns of each example's Key.
	KeyNames []string
	// Examples are the first failing records (at most a few), in table order.
	Examples []Example
}

// An Example is one failing record of a proposal.
type Example struct {
	Site   string
	Key    []string // values of the record's key columns (Proposal.KeyNames)
	Values []string // the rule's variables' values, in Rule.Vars order
	Query  string   // the query text filled with the record's values
	Detail string   // why it failed, when the rule can say
}

// Plot is the figure of a proposal: at most one of the pointers is set; none means the
// card has no figure (Caption then says why).
type Plot struct {
	Scatter      *ScatterPlot
	Cross        *CrossTable
	Trajectories *TrajectoryPlot
	Strip        *StripPlot
	Shift        *ShiftPlot
	Caption      string
}

// XY is a point in data coordinates.
type XY struct{ X, Y float64 }

// A ScatterPoint is one record in a scatter plot; Fail marks a record the rule flags.
type ScatterPoint struct {
	X, Y float64
	Fail bool
}

// A PlotLine is a reference line in data coordinates. Role is "centre" (a fitted line),
// "limit" (the edge of what the rule allows) or "diagonal" (y = x, or y = x − tolerance).
type PlotLine struct {
	Role   string
	Points []XY
}

// ScatterPlot plots Y against X for the records of a two-variable rule. Dates are days
// since 1970-01-01 (XDate, YDate) and their ticks are printed as ISO 8601 dates.
type ScatterPlot struct {
	XName, YName string
	XDate, YDate bool
	Points       []ScatterPoint // drawn in order: passing records first, failing on top
	Total        int            // records with both values (Points may be a sample of them)
	// Area is the allowed region as a closed polygon (e.g. a band); nil when none.
	Area  []XY
	Lines []PlotLine
	// Groups, when Groups[0] is set, name two groups of points other than passing and
	// flagged records: points with Fail false are Groups[0], drawn grey underneath, the
	// others Groups[1], drawn dark on top (e.g. the other sites and one site).
	Groups [2]string
}

// CrossTable is the contingency table of two categorical variables; Forbidden marks the
// cells the rule does not allow.
type CrossTable struct {
	RowVar, ColVar string
	Rows, Cols     []string
	Counts         [][]int  // [row][col]
	Forbidden      [][]bool // [row][col]
}

// TrajectoryPlot draws each subject's values of YName over visits; segments into a flagged
// visit are marked.
type TrajectoryPlot struct {
	YName  string
	Visits []float64 // visit numbers (x positions), ascending
	Labels []string  // visit labels, parallel to Visits ("" to print the number)
	Series []Series
	Others int // subjects with values not drawn
}

// Series is one subject's trajectory: X visit numbers, Y values (NaN where missing) and
// Fail marking the visits the rule flags.
type Series struct {
	Subject string
	Flagged bool
	X, Y    []float64
	Fail    []bool
}

// StripPlot draws the values of YName per level of GroupVar, with each level's limits.
type StripPlot struct {
	GroupVar, YName string
	Groups          []StripGroup
}

// StripGroup is one level of a StripPlot: the values drawn (a sample of N), the failing
// ones marked, and the limits (NaN when the level has none).
type StripGroup struct {
	Level  string
	Values []float64
	Fail   []bool
	N      int
	Lo, Hi float64
}

// ShiftPlot compares one variable's distribution at one site with the other sites'
// pooled values, stratum by stratum (visits): each side's quartiles as a box with its
// median, the medians joined across strata, and the strata whose test is flagged marked.
type ShiftPlot struct {
	YName, Site string
	Strata      []string // x labels, in order
	// SiteQ and OthersQ hold per stratum the 25th, 50th and 75th percentiles of the
	// site's and the other sites' values; NaN when there are none.
	SiteQ, OthersQ [][3]float64
	N, NOthers     []int  // values per stratum
	Flag           []bool // per stratum: the site's test is flagged
}

// ReportDiscrepancies is what the checker found.
type ReportDiscrepancies struct {
	// IncludesProposed is true when proposed rules were run too, as a preview.
	IncludesProposed bool
	Result           *check.Result
	// Classes, Resolved and Previous are set when the run was compared with a previous
	// listing (Previous is its path).
	Classes  *check.ClassCounts
	Resolved []check.Finding
	Previous string
	// MaxRows bounds the findings listed (0 means 300); the counts cover all of them.
	MaxRows int
}

// ReportSites is the Sites section: the site and subject signals of package signals (site
// relationship and distribution tests, near-identical subjects, quality scores), one row
// per site, and for each flagged site the tests, figures and tables that show why.
type ReportSites struct {
	// Note says why no signals are shown ("" when they were computed; the other fields
	// are then empty).
	Note     string
	Subjects int // subjects of the subject-level table
	Profile  int // variables of the subject profile that near-identical subjects are compared on
	MinSiteN int // sites (and strata) with fewer subjects are not tested
	// Components name the quality-score components, in the order of SiteRow.Components.
	Components []string
	// Scored says which findings the quality scores count (e.g. "the 271 discrepancies
	// listed below"); "" when none were counted.
	Scored  string
	Rows    []SiteRow     // flagged sites first, then by site code
	Flagged []FlaggedSite // one per flagged site, in the order of Rows
}

// SiteRow is one site's line of the Sites table.
type SiteRow struct {
	signals.SiteSignal
	// Score is the site's quality-score total (robust z units, higher is worse), Rank its
	// rank among the sites (1 = worst; 0 when the site has no score) and Components its
	// ingredients in the order of ReportSites.Components.
	Score      float64
	Rank       int
	Components []signals.Component
}

// FlaggedSite shows why one site is flagged: its flagged tests, a figure per flagged
// variable or pair (at most a few), and its groups of near-identical subjects.
type FlaggedSite struct {
	Site    string
	Tests   []SiteTest
	Figures []Plot
	// NotDrawn counts the flagged variables and pairs without a figure.
	NotDrawn int
	Groups   []NearGroup
}

// SiteTest is one flagged site test.
type SiteTest struct {
	Kind    string // "relationship" or "distribution"
	Table   string // the table's level or name
	Vars    string // "X ~ Y" for a relationship, the variable for a distribution
	Stratum string // e.g. "visit 4 (WEEK 4)"; "" when the table has no strata
	// N and NOthers count subjects (relationship) or values (distribution) at the site
	// and at the other sites.
	N, NOthers int
	// Site and Others are Spearman's ρ (relationship) or the median (distribution) at the
	// site and over the other sites pooled.
	Site, Others float64
	Ratio        float64 // median ratio, NaN for a relationship
	Effect       float64 // Brunner–Munzel relative effect, NaN for a relationship
	Q            float64 // Benjamini–Hochberg q-value
}

// NearGroup is a group of near-identical subjects at one site: its subjects, its flagged
// pairs, and the subjects' values of the variables that agree in those pairs.
type NearGroup struct {
	ID       int // 1-based, as numbered by signals.Duplicates
	Subjects []string
	// Hidden counts subjects of the group not shown.
	Hidden int
	Pairs  []NearPair
	Vars   []NearVar // least likely to agree by chance first
}

// NearPair is one flagged pair of a NearGroup.
type NearPair struct {
	A, B string
	// Dist is the robust Gower distance, Z its robust z against the nearest-neighbour
	// distances, P the empirical tail probability.
	Dist, Z, P float64
	// Compared counts variables present on both subjects, Agree those that agree.
	Compared, Agree int
}

// NearVar is one variable that agrees in at least one pair of a NearGroup.
type NearVar struct {
	Name string
	// Chance is the share of all pairs of subjects that agree on the variable at least as
	// closely (signals.Agreement.Chance).
	Chance float64
	Pairs  int      // pairs of the group that agree on it
	Values []string // each subject's value, in the order of NearGroup.Subjects
}

// ReportOptions control ReportHTML.
type ReportOptions struct {
	// Review adds the decision forms of the local review page; nil writes the static
	// report.
	Review *ReviewControls
}

// ReviewControls are the review page's per-request values.
type ReviewControls struct {
	Action   string // form action path, e.g. "/decide"
	Token    string // anti-forgery token, sent back with every form
	Reviewer string // pre-filled reviewer name
	// Flash is a message about the last decision; FlashKind is "ok", "conflict" or
	// "error".
	Flash, FlashKind string
	// State maps a rule id to the state token the form carries, so the server can tell
	// whether the rule changed since this page was rendered.
	State map[string]string
}

// ReportCSP returns the Content-Security-Policy of the report: nothing may load but the
// report's own inline style and script (allowed by their SHA-256 hashes) and data: images,
// and forms may post only to the page's own origin.
func ReportCSP() string {
	return "default-src 'none'; style-src " + cspHash(reportCSS) + "; script-src " + cspHash(reportJS) +
		"; img-src data:; form-action 'self'; base-uri 'none'"
}

func cspHash(s string) string {
	h := sha256.Sum256([]byte(s))
	return "'sha256-" + base64.StdEncoding.EncodeToString(h[:]) + "'"
}

var reportTemplate = template.Must(template.New("report").Funcs(template.FuncMap{
	"utc":      func(t time.Time) string { return t.UTC().Format("2006-01-02 15:04:05 UTC") },
	"date":     func(t time.Time) string { return t.UTC().Format("2006-01-02 15:04 UTC") },
	"num":      fmtNum,
	"pct":      fmtPct,
	"pct100":   func(x float64) string { return fmtPct(x / 100) },
	"prob":     fmtProb,
	"anchor":   Anchor,
	"join":     strings.Join,
	"add":      func(a, b int) int { return a + b },
	"fdiv":     func(a, b int) float64 { return float64(a) / float64(b) },
	"plot":     func(p Plot, id string) template.HTML { return template.HTML(plotSVG(p, id)) },
	"fid":      func(a string, b int) string { return fmt.Sprintf("s%s-%d", anchorRE.ReplaceAllString(a, "-"), b) },
	"siteid":   func(site string) string { return "site-" + anchorRE.ReplaceAllString(site, "-") },
	"ratio":    fmtRatio,
	"compname": componentName,
	"imgsvg":   svgDataURI,
	"heatmap":  heatmapImg,
	"graph":    graphImg,
	"levelOf":  func(t ReportTable) string { return levelTitle(t.Level) },
	"kv":       keyValues,
	"canDo":    canDo,
	"state":    func(rc *ReviewControls, id string) string { return rc.State[id] },
	"findings": limitFindings,
	"more":     moreFindings,
	"sevs":     func() []rules.Severity { return []rules.Severity{rules.Critical, rules.Major, rules.Minor} },
	"kinds":    proposalKinds,
	"top":      topLevels,
	"member":   memberNames,
	"deptext":  depText,
	"depvar":   func(in cluster.Input, i int) string { return in.Names[i] },
	"values":   check.FormatValues,
	"lastNote": lastNote,
	"css":      func() template.CSS { return template.CSS(reportCSS) },
	"js":       func() template.JS { return template.JS(reportJS) },
	"csp":      ReportCSP,
}).Parse(reportTmpl))

// ReportHTML writes the report for d: a single HTML document with its style, script and
// figures inline. With o.Review set it adds the review page's decision forms. The bytes
// depend only on d and o.
func ReportHTML(w io.Writer, d *ReportData, o ReportOptions) error {
	if d == nil {
		return fmt.Errorf("render: no report data")
	}
	var buf bytes.Buffer
	v := struct {
		*ReportData
		Review *ReviewControls
	}{d, o.Review}
	if err := reportTemplate.Execute(&buf, v); err != nil {
		return fmt.Errorf("rendering the report: %w", err)
	}
	_, err := w.Write(buf.Bytes())
	return err
}

var anchorRE = regexp.MustCompile(`[^A-Za-z0-9_-]+`)

// Anchor returns the HTML id of a rule's card: "rule-" and the rule id with every run of
// characters other than ASCII letters, digits, '_' and '-' replaced by '-'.
func Anchor(ruleID string) string { return "rule-" + anchorRE.ReplaceAllString(ruleID, "-") }

func fmtNum(x float64) string {
	switch {
	case math.IsNaN(x):
		return "–"
	case math.IsInf(x, 1):
		return "∞"
	case x == math.Trunc(x) && math.Abs(x) < 1e12:
		return strconv.FormatFloat(x, 'f', 0, 64)
	case math.Abs(x) >= 100:
		return strconv.FormatFloat(x, 'f', 1, 64)
	}
	return strconv.FormatFloat(x, 'g', 3, 64)
}

// componentName is the column heading of a quality-score component (the section's note
// says that the first two are per subject).
func componentName(c string) string {
	switch c {
	case signals.CompDiscrepancy:
		return "Discrepancies"
	case signals.CompNotEvaluable:
		return "Not evaluable"
	case signals.CompMissing:
		return "Missing"
	case signals.CompSignals:
		return "Signals"
	}
	return c
}

// fmtRatio prints a ratio with two decimals ("–" when undefined).
func fmtRatio(x float64) string {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return "–"
	}
	return strconv.FormatFloat(x, 'f', 2, 64)
}

func fmtPct(x float64) string {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return "–"
	}
	return strconv.FormatFloat(100*x, 'f', 1, 64) + "%"
}

func fmtProb(x float64) string {
	switch {
	case math.IsNaN(x):
		return "–"
	case x < 1e-4:
		return "<0.0001"
	}
	return strconv.FormatFloat(x, 'f', 4, 64)
}

func levelTitle(l string) string {
	switch {
	case l == "visit":
		return "Visit level (one row per subject and visit)"
	case l == "subject":
		return "Subject level (one row per subject)"
	case strings.HasPrefix(l, "record:"):
		return "Record level, " + strings.TrimPrefix(l, "record:") + " (one row per record)"
	}
	return "Table " + l
}

type kv struct{ K, V string }

func keyValues(names, values []string) []kv {
	out := make([]kv, 0, len(values))
	for i, v := range values {
		k := ""
		if i < len(names) {
			k = names[i]
		}
		out = append(out, kv{k, v})
	}
	return out
}

// canDo reports whether action is allowed from the rule's status (the transitions of
// rules.Decide).
func canDo(r *rules.Rule, action string) bool {
	switch action {
	case rules.ActionAccept:
		return r.Status != rules.StatusAccepted
	case rules.ActionReject:
		return r.Status == rules.StatusProposed
	case rules.ActionRetire:
		return r.Status == rules.StatusAccepted
	}
	return false
}

func limitFindings(d *ReportDiscrepancies) []check.Finding {
	fs := d.Result.Findings
	if n := d.maxRows(); len(fs) > n {
		return fs[:n]
	}
	return fs
}

func moreFindings(d *ReportDiscrepancies) int {
	return max(0, len(d.Result.Findings)-d.maxRows())
}

func (d *ReportDiscrepancies) maxRows() int {
	if d.MaxRows > 0 {
		return d.MaxRows
	}
	return 300
}

func proposalKinds(ps []Proposal) []string {
	seen := map[string]bool{}
	var out []string
	for _, p := range ps {
		if !seen[p.Rule.Kind] {
			seen[p.Rule.Kind] = true
			out = append(out, p.Rule.Kind)
		}
	}
	sort.Strings(out)
	return out
}

func topLevels(p dataset.VarProfile) string {
	var parts []string
	for i, f := range p.Top {
		if i == 3 {
			break
		}
		parts = append(parts, fmt.Sprintf("%s (%d)", f.Level, f.Count))
	}
	return strings.Join(parts, ", ")
}

func memberNames(c cluster.Cluster) string {
	var names []string
	for _, m := range c.Members {
		names = append(names, m.Name)
	}
	return strings.Join(names, ", ")
}

func depText(d cluster.Dependency) string {
	return d.Measure + " " + strconv.FormatFloat(d.Strength, 'f', 2, 64)
}

func lastNote(r *rules.Rule) *rules.Event {
	if len(r.History) == 0 {
		return nil
	}
	return &r.History[len(r.History)-1]
}

func svgDataURI(svg []byte) template.URL {
	return template.URL("data:image/svg+xml;base64," + base64.StdEncoding.EncodeToString(svg))
}

// heatmapImg draws the table's ordered heatmap as a data: image. Figures drawn by the
// other SVG writers carry their own style sheets and ids; as images they stay isolated
// from the page and from each other.
func heatmapImg(a *ReportAssoc, title string) (template.URL, error) {
	var buf bytes.Buffer
	if err := HeatmapSVG(&buf, a.In, a.Tree.Leaves(), a.Part, HeatmapOptions{Title: title}); err != nil {
		return "", err
	}
	return svgDataURI(buf.Bytes()), nil
}

func graphImg(a *ReportAssoc, title string) (template.URL, error) {
	if len(a.Part.Clusters) == 0 {
		return "", nil
	}
	var buf bytes.Buffer
	if err := ClusterGraphSVG(&buf, a.In, a.Part, a.Edges, GraphOptions{Title: title}); err != nil {
		return "", err
	}
	return svgDataURI(buf.Bytes()), nil
}
