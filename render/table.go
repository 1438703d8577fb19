package render

import (
	"encoding/csv"
	"encoding/json"
	"io"
	"strings"
	"unicode/utf8"
)

// TextTable writes rows as a fixed-width plain-text table with a header and a
// rule line under it. Columns are separated by two spaces; cells wider than
// maxWidth runes are cut with "…". It writes no colour.
func TextTable(w io.Writer, header []string, rows [][]string, maxWidth int) error {
	width := make([]int, len(header))
	cut := func(s string) string {
		if maxWidth > 0 && utf8.RuneCountInString(s) > maxWidth {
			r := []rune(s)
			return string(r[:maxWidth-1]) + "…"
		}
		return s
	}
	for i, h := range header {
		width[i] = utf8.RuneCountInString(h)
	}
	for _, r := range rows {
		for i, c := range r {
			if n := utf8.RuneCountInString(cut(c)); i < len(width) && n > width[i] {
				width[i] = n
			}
		}
	}
	var b strings.Builder
	line := func(cells []string) {
		for i, c := range cells {
			c = cut(c)
			b.WriteString(c)
			if i < len(cells)-1 {
				b.WriteString(strings.Repeat(" ", width[i]-utf8.RuneCountInString(c)+2))
			}
		}
		b.WriteByte('\n')
	}
	line(header)
	rule := make([]string, len(header))
	for i := range rule {
		rule[i] = strings.Repeat("-", width[i])
	}
	line(rule)
	for _, r := range rows {
		line(r)
	}
	_, err := io.WriteString(w, b.String())
	return err
}

// CSV writes a header and rows as RFC 4180 CSV.
func CSV(w io.Writer, header []string, rows [][]string) error {
	cw := csv.NewWriter(w)
	if err := cw.Write(header); err != nil {
		return err
	}
	if err := cw.WriteAll(rows); err != nil {
		return err
	}
	cw.Flush()
	return cw.Error()
}

// JSON writes v as one indented JSON document followed by a newline.
func JSON(w io.Writer, v any) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	enc.SetEscapeHTML(false)
	return enc.Encode(v)
}
