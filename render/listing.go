package render

import (
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"

	"github.com/crossform/crossform/internal/atomicfile"
	"github.com/crossform/crossform/rules"
	"github.com/crossform/crossform/rules/check"
)

// The listing formats of WriteListingFile.
const (
	FormatCSV  = "csv"
	FormatJSON = "json"
	FormatXLSX = "xlsx"
)

// ListingFormats returns the listing formats, default first.
func ListingFormats() []string { return []string{FormatCSV, FormatJSON, FormatXLSX} }

// A Listing is what the listing writers print: the current discrepancies
// and, when the run was compared with a previous listing, the ones no longer
// firing; summaries go into the JSON document and the workbook.
type Listing struct {
	Findings     []check.Finding
	Resolved     []check.Finding
	NotEvaluable []check.Unevaluable
	Rules        []check.RuleSummary
	Sites        []check.SiteSummary
	Classes      *check.ClassCounts // nil when not compared
}

// NewListing returns the listing of res, with the resolved discrepancies
// and class counts when res was compared with a previous listing
// (check.Result.Compare).
func NewListing(res *check.Result) *Listing {
	return &Listing{Findings: res.Findings, Resolved: res.Resolved, NotEvaluable: res.NotEvaluable,
		Rules: res.Rules, Sites: res.Sites, Classes: res.Classes}
}

// sorted returns a sorted copy of fs (the listing order, check.SortFindings).
func sorted(fs []check.Finding) []check.Finding {
	out := slices.Clone(fs)
	check.SortFindings(out)
	return out
}

// rows returns the CSV rows of the current then the resolved findings.
func (l *Listing) rows() [][]string {
	var out [][]string
	for _, fs := range [][]check.Finding{sorted(l.Findings), sorted(l.Resolved)} {
		for i := range fs {
			out = append(out, fs[i].Record())
		}
	}
	return out
}

// WriteListingCSV writes l as CSV: header check.ListingHeader, one row per
// current discrepancy, then one per resolved one (class "resolved"), each
// group in listing order (site, subject, visit, rule id). check.ReadListing
// reads it back.
func WriteListingCSV(w io.Writer, l *Listing) error {
	return CSV(w, check.ListingHeader, l.rows())
}

// The JSON listing document: check.ReadListing reads schema, findings and
// resolved and ignores the rest.
type jsonListing struct {
	Schema       string              `json:"schema"`
	Findings     []check.Finding     `json:"findings"`
	Resolved     []check.Finding     `json:"resolved"`
	Classes      *check.ClassCounts  `json:"classes"`
	NotEvaluable []check.Unevaluable `json:"not_evaluable"`
	Rules        []jsonRule          `json:"rules"`
	Sites        []jsonSite          `json:"sites"`
}

// jsonRule and jsonSite write rates and test figures as null where they
// are undefined (NaN or infinite), which JSON cannot carry.
type jsonRule struct {
	check.RuleSummary
	Rate *float64 `json:"rate"`
}

type jsonSite struct {
	Site        string                 `json:"site"`
	Subjects    int                    `json:"subjects"`
	Records     int                    `json:"records"`
	Evaluations int                    `json:"evaluations"`
	Violations  int                    `json:"violations"`
	Rate        *float64               `json:"rate"`
	PerSubject  *float64               `json:"per_subject"`
	New         int                    `json:"new"`
	Persisting  int                    `json:"persisting"`
	BySeverity  map[rules.Severity]int `json:"by_severity"`
	Tested      bool                   `json:"tested"`
	Reason      string                 `json:"reason,omitempty"`
	OthersRate  *float64               `json:"others_rate"`
	Ratio       *float64               `json:"ratio"`
	P           *float64               `json:"p"`
	Q           *float64               `json:"q"`
	Flagged     bool                   `json:"flagged"`
}

func finite(x float64) *float64 {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return nil
	}
	return &x
}

func jsonRules(rs []check.RuleSummary) []jsonRule {
	out := make([]jsonRule, len(rs))
	for i, r := range rs {
		out[i] = jsonRule{RuleSummary: r, Rate: finite(r.Rate)}
	}
	return out
}

func jsonSites(ss []check.SiteSummary) []jsonSite {
	out := make([]jsonSite, len(ss))
	for i, s := range ss {
		out[i] = jsonSite{Site: s.Site, Subjects: s.Subjects, Records: s.Records, Evaluations: s.Evaluations,
			Violations: s.Violations, Rate: finite(s.Rate), PerSubject: finite(s.PerSubject), New: s.New, Persisting: s.Persisting,
			BySeverity: s.BySeverity, Tested: s.Test.Tested,
			Reason: s.Test.Reason, OthersRate: finite(s.Test.OthersRate), Ratio: finite(s.Test.Ratio),
			P: finite(s.Test.P), Q: finite(s.Test.Q), Flagged: s.Test.Flagged}
		if out[i].BySeverity == nil {
			out[i].BySeverity = map[rules.Severity]int{}
		}
	}
	return out
}

func nonNil[T any](s []T) []T {
	if s == nil {
		return []T{}
	}
	return s
}

// WriteListingJSON writes l as one JSON document: schema
// (check.ListingSchema), findings, resolved, classes (null when not
// compared), not_evaluable, rules and sites. Undefined rates and p-values
// are null. check.ReadListing reads it back.
func WriteListingJSON(w io.Writer, l *Listing) error {
	return JSON(w, jsonListing{
		Schema: check.ListingSchema, Findings: nonNil(sorted(l.Findings)), Resolved: nonNil(sorted(l.Resolved)),
		Classes: l.Classes, NotEvaluable: nonNil(l.NotEvaluable), Rules: nonNil(jsonRules(l.Rules)), Sites: nonNil(jsonSites(l.Sites)),
	})
}

// WriteListing writes l in format (csv, json or xlsx).
func WriteListing(w io.Writer, format string, l *Listing, o XLSXOptions) error {
	switch format {
	case FormatCSV, "":
		return WriteListingCSV(w, l)
	case FormatJSON:
		return WriteListingJSON(w, l)
	case FormatXLSX:
		return WriteListingXLSX(w, l, o)
	}
	return fmt.Errorf("unknown listing format %q (want %s)", format, strings.Join(ListingFormats(), ", "))
}

// WriteListingFile writes l to path in format, atomically (WriteFileAtomic).
func WriteListingFile(path, format string, l *Listing, o XLSXOptions) error {
	if !slices.Contains(ListingFormats(), format) && format != "" {
		return fmt.Errorf("unknown listing format %q (want %s)", format, strings.Join(ListingFormats(), ", "))
	}
	return atomicfile.Write(path, func(w io.Writer) error { return WriteListing(w, format, l, o) })
}

// ---- summaries ----

// RuleSummaryHeader is the header of the per-rule summary table.
var RuleSummaryHeader = []string{"rule_id", "kind", "level", "severity", "status", "records", "evaluated", "violations", "rate", "not_evaluable", "reason"}

// SiteSummaryHeader is the header of the per-site summary table.
// per_subject is violations per subject; new and persisting count the
// discrepancies by class when compared with a previous listing; ratio is
// the site's rate over the other sites' pooled rate; p and q are the
// screening test's binomial p-value and its Benjamini–Hochberg adjustment;
// flagged is "Y" when q ≤ the chosen level.
var SiteSummaryHeader = []string{"site", "subjects", "records", "evaluations", "violations", "rate", "per_subject",
	"critical", "major", "minor", "new", "persisting", "others_rate", "ratio", "p", "q", "flagged", "note"}

// fnum formats x for CSV: shortest round-trip text, "" when NaN, "Inf"
// when infinite.
func fnum(x float64) string {
	switch {
	case math.IsNaN(x):
		return ""
	case math.IsInf(x, 1):
		return "Inf"
	}
	return strconv.FormatFloat(x, 'g', -1, 64)
}

// tnum formats x for the terminal with prec significant digits.
func tnum(x float64, prec int) string {
	switch {
	case math.IsNaN(x):
		return "-"
	case math.IsInf(x, 1):
		return "Inf"
	}
	return strconv.FormatFloat(x, 'g', prec, 64)
}

// pct formats a rate as a percentage with two decimals, "-" when NaN.
func pct(x float64) string {
	if math.IsNaN(x) {
		return "-"
	}
	return strconv.FormatFloat(100*x, 'f', 2, 64) + "%"
}

func yes(b bool) string {
	if b {
		return "Y"
	}
	return ""
}

func ruleRows(rs []check.RuleSummary, num func(float64) string) [][]string {
	out := make([][]string, len(rs))
	for i, r := range rs {
		out[i] = []string{r.RuleID, r.Kind, r.Level, string(r.Severity), string(r.Status),
			strconv.Itoa(r.Records), strconv.Itoa(r.Evaluated), strconv.Itoa(r.Violations), num(r.Rate),
			strconv.Itoa(r.NotEvaluable), r.Reason}
	}
	return out
}

func siteRows(ss []check.SiteSummary, rate, num func(float64) string) [][]string {
	out := make([][]string, len(ss))
	for i, s := range ss {
		out[i] = []string{s.Site, strconv.Itoa(s.Subjects), strconv.Itoa(s.Records), strconv.Itoa(s.Evaluations),
			strconv.Itoa(s.Violations), rate(s.Rate), num(s.PerSubject),
			strconv.Itoa(s.BySeverity[rules.Critical]), strconv.Itoa(s.BySeverity[rules.Major]), strconv.Itoa(s.BySeverity[rules.Minor]),
			strconv.Itoa(s.New), strconv.Itoa(s.Persisting), rate(s.Test.OthersRate), num(s.Test.Ratio), num(s.Test.P), num(s.Test.Q), yes(s.Test.Flagged), s.Test.Reason}
	}
	return out
}

// WriteRuleSummaryCSV writes the per-rule summary as CSV (RuleSummaryHeader;
// rate "" when undefined).
func WriteRuleSummaryCSV(w io.Writer, rs []check.RuleSummary) error {
	return CSV(w, RuleSummaryHeader, ruleRows(rs, fnum))
}

// WriteSiteSummaryCSV writes the per-site summary as CSV (SiteSummaryHeader).
func WriteSiteSummaryCSV(w io.Writer, ss []check.SiteSummary) error {
	return CSV(w, SiteSummaryHeader, siteRows(ss, fnum, fnum))
}

// WriteRuleSummaryJSON writes the per-rule summary as a JSON array
// (undefined rates null).
func WriteRuleSummaryJSON(w io.Writer, rs []check.RuleSummary) error {
	return JSON(w, nonNil(jsonRules(rs)))
}

// WriteSiteSummaryJSON writes the per-site summary as a JSON array.
func WriteSiteSummaryJSON(w io.Writer, ss []check.SiteSummary) error {
	return JSON(w, nonNil(jsonSites(ss)))
}

// RuleSummaryText writes the per-rule summary as a fixed-width terminal
// table: rates as percentages, reasons cut at 60 characters.
func RuleSummaryText(w io.Writer, rs []check.RuleSummary) error {
	rows := ruleRows(rs, pct)
	return TextTable(w, RuleSummaryHeader, rows, 60)
}

// SiteSummaryText writes the per-site summary as a fixed-width terminal
// table: rates as percentages, ratio, p and q to 3 significant digits.
func SiteSummaryText(w io.Writer, ss []check.SiteSummary) error {
	return TextTable(w, SiteSummaryHeader, siteRows(ss, pct, func(x float64) string { return tnum(x, 3) }), 60)
}

// NotEvaluableText writes the rules that could not run, one per line, as a
// fixed-width table (rule_id, level, severity, reason); nothing when none.
func NotEvaluableText(w io.Writer, us []check.Unevaluable) error {
	if len(us) == 0 {
		return nil
	}
	rows := make([][]string, len(us))
	for i, u := range us {
		rows[i] = []string{u.RuleID, u.Level, string(u.Severity), u.Reason}
	}
	return TextTable(w, []string{"rule_id", "level", "severity", "reason"}, rows, 0)
}

// ClassText writes the counts of a comparison with a previous listing as
// one line: "new 3, persisting 5 (changed 1), resolved 2".
func ClassText(w io.Writer, c check.ClassCounts) error {
	_, err := fmt.Fprintf(w, "new %d, persisting %d (changed %d), resolved %d\n", c.New, c.Persisting, c.Changed, c.Resolved)
	return err
}
