package render

import (
	"archive/zip"
	"bytes"
	"fmt"
	"io"
	"sort"
	"strconv"
	"strings"
	"unicode/utf8"

	"github.com/xuri/excelize/v2"

	"github.com/crossform/crossform/rules"
	"github.com/crossform/crossform/rules/check"
)

// XLSXOptions control WriteListingXLSX.
type XLSXOptions struct {
	// BySite puts one sheet per site instead of one per severity.
	BySite bool
}

// xlsxWidths are the widths, in characters, of the listing columns
// (check.ListingHeader) in the workbook; a column not named is 12 wide.
var xlsxWidths = map[string]float64{
	"site": 8, "subject": 16, "visit": 7, "visit_label": 14, "rule_id": 22, "severity": 9, "kind": 12,
	"rule_status": 10, "level": 11, "domain": 8, "seq": 6, "record_key": 40, "values": 45, "query": 80,
	"detail": 30, "class": 11, "changed": 8, "previous_values": 40, "key": 50,
}

// sheetName makes s a valid, unique sheet name: at most 31 characters, none
// of []:*?/\ (replaced by _), not empty.
func sheetName(s string, used map[string]bool) string {
	s = strings.Map(func(r rune) rune {
		if strings.ContainsRune(`[]:*?/\`, r) {
			return '_'
		}
		return r
	}, s)
	if s == "" {
		s = "(none)"
	}
	trim := func(s string, n int) string {
		for utf8.RuneCountInString(s) > n {
			_, sz := utf8.DecodeLastRuneInString(s)
			s = s[:len(s)-sz]
		}
		return s
	}
	s = trim(s, 31)
	base, name := s, s
	for k := 2; used[strings.ToLower(name)]; k++ {
		suf := "~" + strconv.Itoa(k)
		name = trim(base, 31-len(suf)) + suf
	}
	used[strings.ToLower(name)] = true
	return name
}

// xlsxSheet writes one sheet: a bold header row, frozen, with an autofilter,
// column widths set, rows as text.
func xlsxSheet(f *excelize.File, name string, header []string, widths []float64, rows [][]string, bold int) error {
	if _, err := f.NewSheet(name); err != nil {
		return err
	}
	sw, err := f.NewStreamWriter(name)
	if err != nil {
		return err
	}
	if err := sw.SetPanes(&excelize.Panes{Freeze: true, YSplit: 1, TopLeftCell: "A2", ActivePane: "bottomLeft",
		Selection: []excelize.Selection{{SQRef: "A2", ActiveCell: "A2", Pane: "bottomLeft"}}}); err != nil {
		return err
	}
	for i, wd := range widths {
		if err := sw.SetColWidth(i+1, i+1, wd); err != nil {
			return err
		}
	}
	cells := make([]any, len(header))
	for i, h := range header {
		cells[i] = excelize.Cell{StyleID: bold, Value: h}
	}
	if err := sw.SetRow("A1", cells); err != nil {
		return err
	}
	for r, row := range rows {
		vals := make([]any, len(row))
		for i, v := range row {
			vals[i] = v
		}
		cell, _ := excelize.CoordinatesToCellName(1, r+2)
		if err := sw.SetRow(cell, vals); err != nil {
			return err
		}
	}
	if err := sw.Flush(); err != nil {
		return err
	}
	last, _ := excelize.CoordinatesToCellName(len(header), len(rows)+1)
	return f.AutoFilter(name, "A1:"+last, nil)
}

// WriteListingXLSX writes l as an Excel workbook: one listing sheet per
// severity (critical, major, minor; or per site with o.BySite, sorted), a
// "resolved" sheet when compared with a previous listing, then "rules",
// "sites" and "not evaluable" summary sheets. Every sheet has its header row
// frozen, an autofilter and set column widths; cells are text, as in the CSV
// listing (check.ListingHeader). The workbook's bytes depend only on l.
func WriteListingXLSX(w io.Writer, l *Listing, o XLSXOptions) (err error) {
	f := excelize.NewFile()
	defer func() {
		if cerr := f.Close(); err == nil {
			err = cerr
		}
	}()
	if err := f.SetDocProps(&excelize.DocProperties{Creator: "crossform", Title: "Discrepancy listing",
		Created: "2000-01-01T00:00:00Z", Modified: "2000-01-01T00:00:00Z"}); err != nil {
		return err
	}
	bold, err := f.NewStyle(&excelize.Style{Font: &excelize.Font{Bold: true}})
	if err != nil {
		return err
	}
	used := map[string]bool{}
	widths := make([]float64, len(check.ListingHeader))
	for i, h := range check.ListingHeader {
		widths[i] = xlsxWidths[h]
		if widths[i] == 0 {
			widths[i] = 12
		}
	}
	findings := sorted(l.Findings)
	type group struct {
		name string
		rows [][]string
	}
	var groups []group
	if o.BySite {
		for i := 0; i < len(findings); {
			j := i
			var rows [][]string
			for ; j < len(findings) && findings[j].Site == findings[i].Site; j++ {
				rows = append(rows, findings[j].Record())
			}
			groups = append(groups, group{"site " + findings[i].Site, rows})
			i = j
		}
	} else {
		for _, sev := range []rules.Severity{rules.Critical, rules.Major, rules.Minor} {
			g := group{name: string(sev)}
			for i := range findings {
				if findings[i].Severity == sev {
					g.rows = append(g.rows, findings[i].Record())
				}
			}
			groups = append(groups, g)
		}
		var other [][]string
		for i := range findings {
			if findings[i].Severity.Rank() == 0 {
				other = append(other, findings[i].Record())
			}
		}
		if len(other) > 0 {
			groups = append(groups, group{"other severity", other})
		}
	}
	if len(groups) == 0 {
		groups = append(groups, group{name: "discrepancies"})
	}
	if l.Classes != nil {
		var rows [][]string
		for _, f := range sorted(l.Resolved) {
			rows = append(rows, f.Record())
		}
		groups = append(groups, group{"resolved", rows})
	}
	for _, g := range groups {
		if err := xlsxSheet(f, sheetName(g.name, used), check.ListingHeader, widths, g.rows, bold); err != nil {
			return fmt.Errorf("xlsx: %w", err)
		}
	}
	ruleW := []float64{22, 12, 11, 9, 10, 9, 10, 11, 10, 14, 50}
	if err := xlsxSheet(f, sheetName("rules", used), RuleSummaryHeader, ruleW, ruleRows(l.Rules, fnum), bold); err != nil {
		return fmt.Errorf("xlsx: %w", err)
	}
	siteW := []float64{8, 9, 9, 12, 11, 10, 12, 8, 8, 8, 8, 11, 12, 10, 12, 12, 8, 40}
	if err := xlsxSheet(f, sheetName("sites", used), SiteSummaryHeader, siteW, siteRows(l.Sites, fnum, fnum), bold); err != nil {
		return fmt.Errorf("xlsx: %w", err)
	}
	var ne [][]string
	for _, u := range l.NotEvaluable {
		ne = append(ne, []string{u.RuleID, u.Kind, u.Level, string(u.Severity), u.Reason})
	}
	if err := xlsxSheet(f, sheetName("not evaluable", used), []string{"rule_id", "kind", "level", "severity", "reason"},
		[]float64{22, 12, 11, 9, 80}, ne, bold); err != nil {
		return fmt.Errorf("xlsx: %w", err)
	}
	if err := f.DeleteSheet("Sheet1"); err != nil {
		return fmt.Errorf("xlsx: %w", err)
	}
	f.SetActiveSheet(0)
	var buf bytes.Buffer
	if _, err := f.WriteTo(&buf); err != nil {
		return err
	}
	return sortZip(w, buf.Bytes())
}

// sortZip copies the zip archive b to w with its entries in a fixed order
// ("[Content_Types].xml" first, then by name), compressed bytes unchanged:
// excelize writes the worksheet entries in map order, so without this two
// writes of the same workbook could differ.
func sortZip(w io.Writer, b []byte) error {
	zr, err := zip.NewReader(bytes.NewReader(b), int64(len(b)))
	if err != nil {
		return err
	}
	files := append([]*zip.File(nil), zr.File...)
	const first = "[Content_Types].xml"
	sort.Slice(files, func(i, j int) bool {
		a, b := files[i].Name, files[j].Name
		if (a == first) != (b == first) {
			return a == first
		}
		return a < b
	})
	zw := zip.NewWriter(w)
	for _, f := range files {
		r, err := f.OpenRaw()
		if err != nil {
			return err
		}
		hdr := f.FileHeader
		out, err := zw.CreateRaw(&hdr)
		if err != nil {
			return err
		}
		if _, err := io.Copy(out, r); err != nil {
			return err
		}
	}
	return zw.Close()
}
