package check

import (
	"bufio"
	"bytes"
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"

	"github.com/crossform/crossform/rules"
)

// ListingSchema names the JSON listing layout; it changes when a field's
// meaning does.
const ListingSchema = "crossform.listing/1"

// ListingHeader is the header row of a CSV listing, in column order. The
// values column holds "VAR=value; VAR=value" (FormatValues); changed is "Y"
// or empty.
var ListingHeader = []string{
	"site", "subject", "visit", "visit_label", "rule_id", "severity", "kind", "rule_status",
	"level", "domain", "seq", "record_key", "values", "query", "detail",
	"class", "changed", "previous_values", "key",
}

// A Listing is the JSON listing document.
type Listing struct {
	Schema   string    `json:"schema"`
	Findings []Finding `json:"findings"`
	// Resolved holds the previous listing's discrepancies no longer firing,
	// when the run was compared with one.
	Resolved []Finding `json:"resolved,omitempty"`
}

// Record returns f as a CSV listing row, in ListingHeader order.
func (f *Finding) Record() []string {
	changed := ""
	if f.Changed {
		changed = "Y"
	}
	prev := ""
	if f.Previous != nil {
		prev = FormatValues(f.Vars, f.Previous)
	}
	return []string{
		f.Site, f.Subject, f.Visit, f.VisitLabel, f.RuleID, string(f.Severity), f.Kind, string(f.RuleStatus),
		f.Level, f.Domain, f.Seq, f.RecordKey, FormatValues(f.Vars, f.Values), f.Query, f.Detail,
		string(f.Class), changed, prev, f.Key,
	}
}

// FormatValues writes vars and values as "VAR=value; VAR=value", escaping
// '\' and ';' inside a value with '\'. It panics if the lengths differ.
func FormatValues(vars, values []string) string {
	if len(vars) != len(values) {
		panic("check: FormatValues length mismatch")
	}
	var b strings.Builder
	for i, v := range vars {
		if i > 0 {
			b.WriteString("; ")
		}
		b.WriteString(v)
		b.WriteByte('=')
		for _, r := range values[i] {
			if r == '\\' || r == ';' {
				b.WriteByte('\\')
			}
			b.WriteRune(r)
		}
	}
	return b.String()
}

// ParseValues reads the text FormatValues writes.
func ParseValues(s string) (vars, values []string, err error) {
	if s == "" {
		return []string{}, []string{}, nil
	}
	for len(s) > 0 {
		eq := strings.IndexByte(s, '=')
		if eq <= 0 {
			return nil, nil, fmt.Errorf("want VAR=value at %q", s)
		}
		vars = append(vars, s[:eq])
		s = s[eq+1:]
		var b strings.Builder
		i := 0
		for ; i < len(s); i++ {
			c := s[i]
			if c == '\\' {
				if i+1 == len(s) {
					return nil, nil, errors.New("value ends in a lone backslash")
				}
				i++
				b.WriteByte(s[i])
				continue
			}
			if c == ';' {
				break
			}
			b.WriteByte(c)
		}
		values = append(values, b.String())
		if i == len(s) {
			break
		}
		s = s[i+1:]
		if !strings.HasPrefix(s, " ") {
			return nil, nil, errors.New(`want "; " between values`)
		}
		s = s[1:]
	}
	return vars, values, nil
}

// A ListingError reports a malformed listing. Line is 1-based (0 when
// unknown); Field names the column or JSON field.
type ListingError struct {
	File  string
	Line  int
	Field string
	Err   error
}

func (e *ListingError) Error() string {
	pos := e.File
	if e.Line > 0 {
		pos = fmt.Sprintf("%s:%d", pos, e.Line)
	}
	if e.Field != "" {
		return fmt.Sprintf("%s: field %q: %v", pos, e.Field, e.Err)
	}
	return fmt.Sprintf("%s: %v", pos, e.Err)
}

func (e *ListingError) Unwrap() error { return e.Err }

// ReadListing reads a listing written by this tool (package render), as CSV
// or JSON by its extension (.csv, .json), and returns the discrepancies that
// were firing in it: rows classed resolved are skipped. Every finding is
// checked (key present and beginning with its rule id, known severity,
// values well formed, no key twice); a problem is a *ListingError naming
// the line and field.
func ReadListing(path string) ([]Finding, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	switch strings.ToLower(filepath.Ext(path)) {
	case ".csv":
		return ParseListingCSV(bytes.NewReader(b), path)
	case ".json":
		return ParseListingJSON(b, path)
	}
	return nil, &ListingError{File: path, Err: fmt.Errorf("unknown listing type %q (want .csv or .json)", filepath.Ext(path))}
}

// ParseListingCSV reads a CSV listing; name is used in errors.
func ParseListingCSV(r io.Reader, name string) ([]Finding, error) {
	cr := csv.NewReader(bufio.NewReader(r))
	cr.ReuseRecord = false
	header, err := cr.Read()
	if err == io.EOF {
		return nil, &ListingError{File: name, Line: 1, Err: errors.New("empty file, want a header row")}
	}
	if err != nil {
		return nil, csvErr(name, err)
	}
	if len(header) > 0 {
		header[0] = strings.TrimPrefix(header[0], "\uFEFF")
	}
	col := map[string]int{}
	for i, h := range header {
		if _, dup := col[h]; dup {
			return nil, &ListingError{File: name, Line: 1, Field: h, Err: errors.New("column appears twice")}
		}
		col[h] = i
	}
	for _, req := range []string{"key", "rule_id", "severity", "values"} {
		if _, ok := col[req]; !ok {
			return nil, &ListingError{File: name, Line: 1, Field: req, Err: errors.New("missing column (is this a crossform listing?)")}
		}
	}
	get := func(rec []string, k string) string {
		if i, ok := col[k]; ok {
			return rec[i]
		}
		return ""
	}
	var out []Finding
	seen := map[string]int{}
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, csvErr(name, err)
		}
		line, _ := cr.FieldPos(0)
		f := Finding{
			Site: get(rec, "site"), Subject: get(rec, "subject"), Visit: get(rec, "visit"), VisitLabel: get(rec, "visit_label"),
			RuleID: get(rec, "rule_id"), Severity: rules.Severity(get(rec, "severity")), Kind: get(rec, "kind"),
			RuleStatus: rules.Status(get(rec, "rule_status")), Level: get(rec, "level"), Domain: get(rec, "domain"),
			Seq: get(rec, "seq"), RecordKey: get(rec, "record_key"), Query: get(rec, "query"), Detail: get(rec, "detail"),
			Class: Class(get(rec, "class")), Changed: get(rec, "changed") == "Y", Key: get(rec, "key"), Row: -1,
		}
		if f.Vars, f.Values, err = ParseValues(get(rec, "values")); err != nil {
			return nil, &ListingError{File: name, Line: line, Field: "values", Err: err}
		}
		if p := get(rec, "previous_values"); p != "" {
			if _, f.Previous, err = ParseValues(p); err != nil {
				return nil, &ListingError{File: name, Line: line, Field: "previous_values", Err: err}
			}
		}
		if field, err := validFinding(&f); err != nil {
			return nil, &ListingError{File: name, Line: line, Field: field, Err: err}
		}
		if f.Class == Resolved {
			continue
		}
		if first, dup := seen[f.Key]; dup {
			return nil, &ListingError{File: name, Line: line, Field: "key", Err: fmt.Errorf("key %q already on line %d", f.Key, first)}
		}
		seen[f.Key] = line
		out = append(out, f)
	}
	return out, nil
}

func csvErr(name string, err error) error {
	var pe *csv.ParseError
	if errors.As(err, &pe) {
		return &ListingError{File: name, Line: pe.Line, Err: pe.Err}
	}
	return &ListingError{File: name, Err: err}
}

// validFinding checks a finding read back from a listing and returns the
// offending field.
func validFinding(f *Finding) (string, error) {
	switch {
	case f.RuleID == "":
		return "rule_id", errors.New("empty")
	case f.Key == "":
		return "key", errors.New("empty")
	case !strings.HasPrefix(f.Key, f.RuleID+"|"):
		return "key", fmt.Errorf("%q does not begin with the rule id %q", f.Key, f.RuleID+"|")
	case len(f.Vars) != len(f.Values):
		return "values", fmt.Errorf("%d variables but %d values", len(f.Vars), len(f.Values))
	case f.Previous != nil && len(f.Previous) != len(f.Values):
		return "previous_values", fmt.Errorf("%d values, want %d", len(f.Previous), len(f.Values))
	}
	if _, err := rules.ParseSeverity(string(f.Severity)); err != nil {
		return "severity", err
	}
	switch f.Class {
	case "", New, Persisting, Resolved:
	default:
		return "class", fmt.Errorf("unknown class %q (want new, persisting or resolved)", f.Class)
	}
	return "", nil
}

// ParseListingJSON reads a JSON listing (a Listing document); name is used
// in errors, which give the line where the offending finding begins.
func ParseListingJSON(b []byte, name string) ([]Finding, error) {
	lineAt := func(off int64) int { return bytes.Count(b[:min(int(off), len(b))], []byte("\n")) + 1 }
	jerr := func(off int64, field string, err error) error {
		var se *json.SyntaxError
		var te *json.UnmarshalTypeError
		switch {
		case errors.As(err, &se):
			off = se.Offset
		case errors.As(err, &te):
			// te.Offset counts from the start of the value decoded, so the
			// caller's offset (the element's start) is the better line.
			if te.Field != "" {
				field = te.Field
			}
		}
		return &ListingError{File: name, Line: lineAt(off), Field: field, Err: err}
	}
	dec := json.NewDecoder(bytes.NewReader(b))
	tok, err := dec.Token()
	if err != nil {
		return nil, jerr(dec.InputOffset(), "", err)
	}
	if d, ok := tok.(json.Delim); !ok || d != '{' {
		return nil, &ListingError{File: name, Line: 1, Err: errors.New("want a JSON object with schema and findings")}
	}
	var out []Finding
	var schema string
	seen := map[string]int{}
	sawFindings := false
	for dec.More() {
		off := dec.InputOffset()
		tok, err := dec.Token()
		if err != nil {
			return nil, jerr(off, "", err)
		}
		key, _ := tok.(string)
		switch key {
		case "schema":
			if err := dec.Decode(&schema); err != nil {
				return nil, jerr(dec.InputOffset(), "schema", err)
			}
			if schema != ListingSchema {
				return nil, &ListingError{File: name, Line: lineAt(off), Field: "schema", Err: fmt.Errorf("%q, want %q", schema, ListingSchema)}
			}
		case "findings", "resolved":
			sawFindings = sawFindings || key == "findings"
			if tok, err := dec.Token(); err != nil {
				return nil, jerr(dec.InputOffset(), key, err)
			} else if d, ok := tok.(json.Delim); !ok || d != '[' {
				return nil, &ListingError{File: name, Line: lineAt(dec.InputOffset()), Field: key, Err: errors.New("want an array")}
			}
			for dec.More() {
				// Skip whitespace so the line is the element's own.
				start := dec.InputOffset()
				for start < int64(len(b)) && strings.ContainsRune(" \t\r\n,", rune(b[start])) {
					start++
				}
				var f Finding
				if err := dec.Decode(&f); err != nil {
					return nil, jerr(start, key, err)
				}
				f.Row = -1
				if f.Vars == nil {
					f.Vars = []string{}
				}
				if f.Values == nil {
					f.Values = []string{}
				}
				if field, err := validFinding(&f); err != nil {
					return nil, &ListingError{File: name, Line: lineAt(start), Field: field, Err: err}
				}
				if key == "resolved" || f.Class == Resolved {
					continue
				}
				if first, dup := seen[f.Key]; dup {
					return nil, &ListingError{File: name, Line: lineAt(start), Field: "key", Err: fmt.Errorf("key %q already on line %d", f.Key, first)}
				}
				seen[f.Key] = lineAt(start)
				out = append(out, f)
			}
			if _, err := dec.Token(); err != nil {
				return nil, jerr(dec.InputOffset(), key, err)
			}
		default:
			var skip json.RawMessage
			if err := dec.Decode(&skip); err != nil {
				return nil, jerr(dec.InputOffset(), key, err)
			}
		}
	}
	if _, err := dec.Token(); err != nil {
		return nil, jerr(dec.InputOffset(), "", err)
	}
	if schema == "" {
		return nil, &ListingError{File: name, Line: 1, Field: "schema", Err: fmt.Errorf("missing (want %q)", ListingSchema)}
	}
	if !sawFindings {
		return nil, &ListingError{File: name, Line: 1, Field: "findings", Err: errors.New("missing")}
	}
	return out, nil
}
