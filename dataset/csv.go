package dataset

import (
	"bufio"
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"
	"unicode/utf8"

	"golang.org/x/text/encoding/charmap"
)

// DefaultMissing are the tokens read as missing when CSVOptions.Missing is nil:
// the empty field, "NA" and "." (common practice in clinical extracts; SAS
// writes "." for a missing numeric). Values are compared after trimming spaces.
var DefaultMissing = []string{"", "NA", "."}

// CSVOptions control ReadCSV. The zero value detects the delimiter, reads
// UTF-8 (with or without a byte order mark) and uses DefaultMissing.
type CSVOptions struct {
	Delimiter rune     // ',', ';' or '\t'; 0 detects it from the first lines
	Encoding  string   // "", "utf-8", "windows-1252" or "latin1"
	Missing   []string // tokens read as missing; nil means DefaultMissing
	// MaxFieldBytes bounds one field (default 1 MiB); a longer field is an error.
	MaxFieldBytes int
	// SkipRagged skips rows with the wrong number of fields, recording each
	// in Table.Skipped, instead of failing.
	SkipRagged bool
	Keys       []string // key columns; nil picks the SDTM defaults present
	Site       string   // site column; "" picks SITEID when present
	Infer      InferOptions
}

// ReadCSVFile reads the CSV file at path as one table named after the file.
func ReadCSVFile(path string, o CSVOptions) (*Table, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return ReadCSV(path, f, o)
}

// ReadCSV reads one CSV table from r; name is used in errors and as the
// table's source. The first record is the header; column names and values are
// trimmed of surrounding spaces. Blank lines are skipped (recorded in
// Table.Skipped when they hold only spaces). Errors caused by the input are
// *ParseError values with the 1-based line and byte column: of the offending
// byte for quoting errors, of the field's first byte for a bad field, 0 for a
// whole record (the columns count bytes after decoding from windows-1252 or
// latin1). A bad option (an unknown encoding) is a plain error naming the file.
func ReadCSV(name string, r io.Reader, o CSVOptions) (*Table, error) {
	perr := func(line, col int, err error) error {
		return &ParseError{File: name, Line: line, Column: col, Err: err}
	}
	if o.MaxFieldBytes <= 0 {
		o.MaxFieldBytes = 1 << 20
	}
	missing := o.Missing
	if missing == nil {
		missing = DefaultMissing
	}
	isMissing := make(map[string]bool, len(missing))
	for _, m := range missing {
		isMissing[strings.TrimSpace(m)] = true
	}
	enc := ""
	switch strings.ToLower(o.Encoding) {
	case "", "utf-8", "utf8":
	case "windows-1252", "cp1252":
		r, enc = charmap.Windows1252.NewDecoder().Reader(r), "windows-1252"
	case "latin1", "iso-8859-1":
		r, enc = charmap.ISO8859_1.NewDecoder().Reader(r), "latin1"
	default:
		return nil, fmt.Errorf("%s: unknown encoding %q (want utf-8, windows-1252 or latin1)", name, o.Encoding)
	}
	br := bufio.NewReaderSize(r, 64<<10)
	head, err := br.Peek(64 << 10)
	if err != nil && err != io.EOF && err != bufio.ErrBufferFull {
		return nil, fmt.Errorf("reading %s: %w", name, err)
	}
	whole := err == io.EOF // head holds the whole input
	if bytes.HasPrefix(head, []byte("\xEF\xBB\xBF")) {
		br.Discard(3)
		head = head[3:]
	}
	if enc == "" && (bytes.HasPrefix(head, []byte("\xFF\xFE")) || bytes.HasPrefix(head, []byte("\xFE\xFF"))) {
		return nil, perr(1, 1, errUTF16)
	}
	if whole && len(bytes.TrimSpace(head)) == 0 {
		return nil, perr(1, 0, ErrEmpty)
	}
	delim := o.Delimiter
	if delim == 0 {
		delim = detectDelimiter(head)
	}
	cr := csv.NewReader(br)
	cr.Comma = delim
	cr.ReuseRecord = true
	cr.FieldsPerRecord = -1
	header, err := cr.Read()
	if err != nil {
		return nil, csvErr(name, err)
	}
	cols := make([]*Builder, len(header))
	seen := map[string]int{}
	for i, h := range header {
		_, c := cr.FieldPos(i)
		if len(h) > o.MaxFieldBytes {
			return nil, perr(1, c, fmt.Errorf("%w: %d bytes in the name of column %d (limit %d)", ErrFieldTooLong, len(h), i+1, o.MaxFieldBytes))
		}
		if err := checkText(h, enc); err != nil {
			return nil, perr(1, c, err)
		}
		h = strings.TrimSpace(h)
		if h == "" {
			return nil, perr(1, c, fmt.Errorf("column %d has no name", i+1))
		}
		if j, dup := seen[h]; dup {
			return nil, perr(1, c, fmt.Errorf("%w %q (also column %d)", ErrDuplicateColumn, h, j+1))
		}
		seen[h] = i
		cols[i] = NewBuilder(h)
	}
	var skipped []Skip
	var lines []int32 // line of each row, for errors found when typing
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, csvErr(name, err)
		}
		line, _ := cr.FieldPos(0)
		if len(rec) != len(cols) {
			if len(rec) == 1 && strings.TrimSpace(rec[0]) == "" {
				skipped = append(skipped, Skip{File: name, Line: line, Reason: "blank row"})
				continue
			}
			if o.SkipRagged {
				skipped = append(skipped, Skip{File: name, Line: line,
					Reason: fmt.Sprintf("%d fields, header has %d", len(rec), len(cols))})
				continue
			}
			return nil, perr(line, 0, fmt.Errorf("%w: %d fields, header has %d", ErrRagged, len(rec), len(cols)))
		}
		for i, v := range rec {
			if len(v) > o.MaxFieldBytes {
				l, c := cr.FieldPos(i)
				return nil, perr(l, c, fmt.Errorf("%w: %d bytes in column %q (limit %d)", ErrFieldTooLong, len(v), cols[i].Name, o.MaxFieldBytes))
			}
			if err := checkText(v, enc); err != nil {
				l, c := cr.FieldPos(i)
				return nil, perr(l, c, fmt.Errorf("column %q: %w", cols[i].Name, err))
			}
			t := strings.TrimSpace(v)
			cols[i].Append(t, isMissing[t])
		}
		lines = append(lines, int32(min(line, math.MaxInt32)))
	}
	n := len(lines)
	if n == 0 {
		if len(skipped) > 0 {
			return nil, perr(skipped[0].Line, 0, fmt.Errorf("no data rows: all %d rows skipped (%s)", len(skipped), skipped[0].Reason))
		}
		return nil, perr(2, 0, ErrNoRows)
	}
	t := NewTable(tableName(name), n)
	t.Source = name
	t.Skipped = skipped
	for i, b := range cols {
		c, err := b.Column(o.Infer)
		if err != nil {
			var re *rowError
			if errors.As(err, &re) && re.row >= 0 && re.row < n {
				return nil, perr(int(lines[re.row]), 0, re.err)
			}
			return nil, &ParseError{File: name, Err: err}
		}
		cols[i] = nil // let the builder's buffers go
		c.Prov = Provenance{Domain: t.Name, Source: c.Name, File: name}
		if err := t.Add(c); err != nil {
			return nil, &ParseError{File: name, Err: err}
		}
	}
	if err := t.SetKeys(o.Keys, o.Site); err != nil {
		return nil, &ParseError{File: name, Err: err}
	}
	return t, nil
}

// SetKeys sets the table's key and site columns. With keys nil it picks the
// SDTM defaults present: USUBJID, then VISITNUM, then the domain's --SEQ;
// with site "" it picks SITEID when present. Named columns must exist.
func (t *Table) SetKeys(keys []string, site string) error {
	if keys == nil {
		for _, k := range []string{"USUBJID", "VISITNUM"} {
			if t.Col(k) != nil {
				keys = append(keys, k)
			}
		}
		for _, c := range t.Cols {
			if len(c.Name) == 5 && strings.HasSuffix(c.Name, "SEQ") {
				keys = append(keys, c.Name)
				break
			}
		}
	}
	for _, k := range keys {
		if t.Col(k) == nil {
			names := t.Names()
			more := ""
			if len(names) > 12 {
				more = fmt.Sprintf(" and %d more", len(names)-12)
				names = names[:12]
			}
			return fmt.Errorf("key column %q: %w (columns: %s%s)", k, ErrUnknownVariable, strings.Join(names, ", "), more)
		}
	}
	if site == "" && t.Col("SITEID") != nil {
		site = "SITEID"
	}
	if site != "" && t.Col(site) == nil {
		return fmt.Errorf("site column %q: %w", site, ErrUnknownVariable)
	}
	t.Keys, t.Site = keys, site
	return nil
}

// tableName returns the upper-case file stem: "dm.csv" → "DM".
func tableName(path string) string {
	b := filepath.Base(path)
	return strings.ToUpper(strings.TrimSuffix(b, filepath.Ext(b)))
}

var (
	errUTF16     = errors.New("UTF-16 text (save the file as UTF-8)")
	errNUL       = errors.New("NUL byte in the data (is the file UTF-16 or binary?)")
	errUndefined = errors.New("byte not defined in windows-1252")
)

// checkText checks one field: valid UTF-8 when read as UTF-8 (enc ""), no
// byte order mark, no NUL byte, and no byte that the encoding leaves
// undefined (decoded to U+FFFD).
func checkText(s string, enc string) error {
	if enc == "" && !utf8.ValidString(s) {
		return ErrBadEncoding
	}
	if strings.IndexByte(s, 0) >= 0 {
		return errNUL
	}
	if strings.Contains(s, "\uFEFF") {
		return ErrBOMInside
	}
	if enc == "windows-1252" && strings.ContainsRune(s, utf8.RuneError) {
		return errUndefined
	}
	return nil
}

// csvErr turns an encoding/csv error into a ParseError.
func csvErr(name string, err error) error {
	var ce *csv.ParseError
	if errors.As(err, &ce) {
		cause := ce.Err
		if errors.Is(cause, csv.ErrQuote) || errors.Is(cause, csv.ErrBareQuote) {
			cause = fmt.Errorf("%w: %v", ErrBadQuote, ce.Err)
		}
		if ce.StartLine > 0 && ce.StartLine != ce.Line {
			cause = fmt.Errorf("%w (record starts on line %d)", cause, ce.StartLine)
		}
		return &ParseError{File: name, Line: ce.Line, Column: ce.Column, Err: cause}
	}
	return fmt.Errorf("reading %s: %w", name, err)
}

// detectDelimiter picks ',', ';' or '\t': the candidate that appears, outside
// quotes, the same non-zero number of times on the most of the first lines
// (ties go to the larger count, then to the order comma, semicolon, tab).
func detectDelimiter(head []byte) rune {
	cands := []rune{',', ';', '\t'}
	var lines [][]int // per line, count per candidate
	inQ := false
	cur := make([]int, len(cands))
	for _, b := range head {
		switch {
		case b == '"':
			inQ = !inQ
		case b == '\n' && !inQ:
			lines = append(lines, cur)
			cur = make([]int, len(cands))
		case !inQ:
			for k, c := range cands {
				if rune(b) == c {
					cur[k]++
				}
			}
		}
		if len(lines) >= 20 {
			break
		}
	}
	if len(lines) == 0 {
		lines = append(lines, cur)
	}
	best, bestScore, bestCount := ',', -1, -1
	for k, c := range cands {
		first := lines[0][k]
		if first == 0 {
			continue
		}
		score := 0
		for _, l := range lines {
			if l[k] == first {
				score++
			}
		}
		if score > bestScore || score == bestScore && first > bestCount {
			best, bestScore, bestCount = c, score, first
		}
	}
	return best
}
