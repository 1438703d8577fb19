package render

import (
	"bytes"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"github.com/xuri/excelize/v2"

	"github.com/crossform/crossform/rules"
	"github.com/crossform/crossform/rules/check"
)

// listingFixture is a small classified listing, deliberately unsorted, with
// a value holding the separators, a missing value, a changed discrepancy, a
// resolved one, an unevaluable rule and a site below the minimum size.
func listingFixture() *Listing {
	f := func(site, subj, visit, rule string, sev rules.Severity, vals ...string) check.Finding {
		rk := "USUBJID=" + subj + ";VISITNUM=" + visit
		return check.Finding{Key: rule + "|" + rk, RuleID: rule, Kind: "order", Severity: sev, RuleStatus: rules.StatusAccepted,
			Level: "visit", Site: site, Subject: subj, Visit: visit, Domain: "VS", RecordKey: rk,
			Vars: []string{"VS.DIABP", "VS.SYSBP"}, Values: vals, Query: "Diastolic BP " + vals[0] + " is above systolic BP " + vals[1] + ".", Row: -1}
	}
	cur := []check.Finding{
		f("02", "S-201", "10", "order-b", rules.Minor, "90", ""),
		f("01", "S-101", "2", "order-a", rules.Critical, "130", "120"),
		f("01", "S-101", "10", "order-a", rules.Critical, `1;2\3`, "120"),
		f("01", "S-102", "1", "order-b", rules.Major, "95", "90"),
	}
	prev := []check.Finding{
		f("01", "S-101", "2", "order-a", rules.Critical, "131", "120"),
		f("01", "S-102", "1", "order-b", rules.Major, "95", "90"),
		f("03", "S-301", "1", "order-a", rules.Critical, "100", "99"),
	}
	res := &check.Result{Findings: cur}
	if _, err := res.Compare(prev, ""); err != nil {
		panic(err)
	}
	l := NewListing(res)
	l.NotEvaluable = []check.Unevaluable{{RuleID: "range-ht", Kind: "group_range", Level: "visit", Severity: rules.Minor, Reason: `variable "HEIGHT" is not in table "VS" (level visit)`}}
	l.Rules = []check.RuleSummary{
		{RuleID: "order-a", Kind: "order", Level: "visit", Severity: rules.Critical, Status: rules.StatusAccepted, Evaluable: true, Records: 40, Evaluated: 38, Violations: 2, NotEvaluable: 2, Rate: 2.0 / 38},
		{RuleID: "order-b", Kind: "order", Level: "visit", Severity: rules.Major, Status: rules.StatusAccepted, Evaluable: true, Records: 40, Evaluated: 40, Violations: 2, Rate: 0.05},
		{RuleID: "range-ht", Kind: "group_range", Level: "visit", Severity: rules.Minor, Status: rules.StatusAccepted, Rate: math.NaN(), Reason: l.NotEvaluable[0].Reason},
	}
	nan := math.NaN()
	l.Sites = []check.SiteSummary{
		{Site: "01", Subjects: 12, Records: 36, Evaluations: 70, Violations: 3, Rate: 3.0 / 70, PerSubject: 0.25, New: 1, Persisting: 2,
			BySeverity: map[rules.Severity]int{rules.Critical: 2, rules.Major: 1},
			Test:       check.SiteTestResult{Site: "01", Tested: true, OthersRate: 1.0 / 8, Ratio: (3.0 / 70) / (1.0 / 8), P: 0.99, Q: 0.99}},
		{Site: "02", Subjects: 2, Records: 4, Evaluations: 8, Violations: 1, Rate: 0.125, PerSubject: 0.5, New: 1, BySeverity: map[rules.Severity]int{rules.Minor: 1},
			Test: check.SiteTestResult{Site: "02", Reason: "fewer subjects than the minimum site size", OthersRate: nan, Ratio: nan, P: nan, Q: nan}},
	}
	return l
}

// listingGolden compares got with testdata/name, or rewrites it under -update.
func listingGolden(t *testing.T, name string, got []byte) {
	t.Helper()
	clusterGolden(t, name, got)
}

func TestListingWriters(t *testing.T) {
	l := listingFixture()
	tests := []struct {
		golden string
		write  func(*bytes.Buffer) error
	}{
		{"listing_csv.golden", func(b *bytes.Buffer) error { return WriteListingCSV(b, l) }},
		{"listing_json.golden", func(b *bytes.Buffer) error { return WriteListingJSON(b, l) }},
		{"listing_rules_csv.golden", func(b *bytes.Buffer) error { return WriteRuleSummaryCSV(b, l.Rules) }},
		{"listing_rules_json.golden", func(b *bytes.Buffer) error { return WriteRuleSummaryJSON(b, l.Rules) }},
		{"listing_sites_csv.golden", func(b *bytes.Buffer) error { return WriteSiteSummaryCSV(b, l.Sites) }},
		{"listing_sites_json.golden", func(b *bytes.Buffer) error { return WriteSiteSummaryJSON(b, l.Sites) }},
		{"listing_text.golden", func(b *bytes.Buffer) error {
			for _, f := range []func() error{
				func() error { return RuleSummaryText(b, l.Rules) },
				func() error { b.WriteString("\n"); return SiteSummaryText(b, l.Sites) },
				func() error { b.WriteString("\n"); return NotEvaluableText(b, l.NotEvaluable) },
				func() error { b.WriteString("\n"); return ClassText(b, *l.Classes) },
			} {
				if err := f(); err != nil {
					return err
				}
			}
			return nil
		}},
	}
	for _, tc := range tests {
		t.Run(tc.golden, func(t *testing.T) {
			var b bytes.Buffer
			if err := tc.write(&b); err != nil {
				t.Fatal(err)
			}
			listingGolden(t, tc.golden, b.Bytes())
		})
	}
}

// TestListingReadBack: what the CSV and JSON writers produce, check.ReadListing
// reads back as the current findings (resolved rows skipped), in listing order.
func TestListingReadBack(t *testing.T) {
	l := listingFixture()
	want := sorted(l.Findings)
	dir := t.TempDir()
	for _, format := range []string{FormatCSV, FormatJSON} {
		path := filepath.Join(dir, "listing."+format)
		if err := WriteListingFile(path, format, l, XLSXOptions{}); err != nil {
			t.Fatal(err)
		}
		got, err := check.ReadListing(path)
		if err != nil {
			t.Fatalf("%s: %v", format, err)
		}
		if !reflect.DeepEqual(got, want) {
			t.Errorf("%s read back:\n got %+v\nwant %+v", format, got, want)
		}
	}
	if err := WriteListingFile(filepath.Join(dir, "x"), "pdf", l, XLSXOptions{}); err == nil || !strings.Contains(err.Error(), `unknown listing format "pdf"`) {
		t.Errorf("format pdf: err = %v", err)
	}
	ents, _ := os.ReadDir(dir)
	if len(ents) != 2 {
		t.Errorf("%d files in the output folder, want 2 (no temporaries)", len(ents))
	}
}

// xlsxDump describes a workbook as text: per sheet its name, frozen pane,
// column widths and cell rows.
func xlsxDump(t *testing.T, b []byte) []byte {
	t.Helper()
	f, err := excelize.OpenReader(bytes.NewReader(b))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	var out bytes.Buffer
	for _, s := range f.GetSheetList() {
		p, err := f.GetPanes(s)
		if err != nil {
			t.Fatal(err)
		}
		fmt.Fprintf(&out, "== sheet %q: freeze=%v ysplit=%d topleft=%s\n", s, p.Freeze, p.YSplit, p.TopLeftCell)
		rows, err := f.GetRows(s)
		if err != nil {
			t.Fatal(err)
		}
		var widths []string
		if len(rows) > 0 {
			for i := range rows[0] {
				col, _ := excelize.ColumnNumberToName(i + 1)
				w, _ := f.GetColWidth(s, col)
				widths = append(widths, fmt.Sprint(w))
			}
		}
		fmt.Fprintf(&out, "widths %s\n", strings.Join(widths, " "))
		for _, r := range rows {
			fmt.Fprintf(&out, "%q\n", r)
		}
	}
	return out.Bytes()
}

func TestListingXLSX(t *testing.T) {
	l := listingFixture()
	for _, tc := range []struct {
		golden string
		o      XLSXOptions
	}{{"listing_xlsx.golden", XLSXOptions{}}, {"listing_xlsx_bysite.golden", XLSXOptions{BySite: true}}} {
		t.Run(tc.golden, func(t *testing.T) {
			var a, b bytes.Buffer
			if err := WriteListingXLSX(&a, l, tc.o); err != nil {
				t.Fatal(err)
			}
			if err := WriteListingXLSX(&b, l, tc.o); err != nil {
				t.Fatal(err)
			}
			if !bytes.Equal(a.Bytes(), b.Bytes()) {
				t.Error("two writes of the same listing differ")
			}
			listingGolden(t, tc.golden, xlsxDump(t, a.Bytes()))
		})
	}
}

func TestSheetName(t *testing.T) {
	used := map[string]bool{}
	for _, tc := range []struct{ in, want string }{
		{"site 01/02", "site 01_02"},
		{"", "(none)"},
		{strings.Repeat("x", 40), strings.Repeat("x", 31)},
		{strings.Repeat("x", 35), strings.Repeat("x", 29) + "~2"},
		{"Site 01_02", "Site 01_02~2"},
	} {
		if got := sheetName(tc.in, used); got != tc.want {
			t.Errorf("sheetName(%q) = %q, want %q", tc.in, got, tc.want)
		}
	}
}
