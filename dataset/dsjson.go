package dataset

import (
	"bufio"
	"compress/zlib"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"unicode/utf8"
)

// DatasetJSONOptions control ReadDatasetJSON. The zero value detects the
// form (JSON or NDJSON) and takes keys from the columns' keySequence.
type DatasetJSONOptions struct {
	Keys  []string // key columns; nil takes keySequence, else the SDTM defaults present
	Site  string   // site column; "" picks SITEID when present
	Infer InferOptions
}

// Errors specific to Dataset-JSON, carried by ParseError.Err.
var (
	ErrDatasetJSONv10 = errors.New("Dataset-JSON v1.0 layout (clinicalData/referenceData → itemGroupData): only v1.1 is supported; convert the file to Dataset-JSON v1.1")
	ErrRecords        = errors.New("row count differs from \"records\"")
	ErrJSONType       = errors.New("wrong JSON type")
)

// DatasetJSONTypes are the column dataType values of Dataset-JSON v1.1.
var DatasetJSONTypes = []string{"string", "integer", "decimal", "float", "double", "boolean", "datetime", "date", "time", "URI"}

// dsColumn is one entry of "columns".
type dsColumn struct {
	ItemOID        string `json:"itemOID"`
	Name           string `json:"name"`
	Label          string `json:"label"`
	DataType       string `json:"dataType"`
	TargetDataType string `json:"targetDataType,omitempty"`
	Length         *int   `json:"length,omitempty"`
	DisplayFormat  string `json:"displayFormat,omitempty"`
	KeySequence    *int   `json:"keySequence,omitempty"`
}

// ReadDatasetJSONFile reads the Dataset-JSON file at path: ".json",
// ".ndjson", or ".dsjc" (NDJSON compressed as one zlib stream).
func ReadDatasetJSONFile(path string, o DatasetJSONOptions) (*Table, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return ReadDatasetJSON(path, f, o)
}

// ReadDatasetJSON reads one dataset in CDISC Dataset-JSON v1.1 (CDISC
// Dataset-JSON Specification v1.1, final 2024-12-05) from r, in either form:
// one JSON object whose "rows" hold the data, or NDJSON, a first line holding
// the metadata object and one JSON array per following line. A name ending
// in ".dsjc" is read as NDJSON inside one zlib (RFC 1950) stream. name is
// used in errors and as the table's source.
//
// The reader streams: metadata must come before "rows" (the specification's
// attribute order), and rows are never held as text. Every row is checked
// against "columns": one value per column, of the JSON type the column's
// dataType requires (integer, float, double → number; decimal → string
// holding a number; string, date, datetime, time, URI → string; boolean →
// true/false); null is missing in every column. The row count must equal
// "records". Typing: numeric columns follow the rules of Builder.Column for
// numbers (binary, ordinal integer scale, continuous); date and datetime
// columns are dates (ISO 8601; values that do not parse are kept as
// Column.Invalid); string, time, URI and boolean columns are typed from their
// text by Builder.Column (a time of day has no position on the date axis).
// An empty string "" is a value distinct from null in Dataset-JSON; for
// analysis it is missing like null, and the count of such values is reported
// in Table.Warnings. "label" becomes Column.Label, "displayFormat"
// Column.Format, "keySequence" the table's keys in order. Dataset-JSON v1.0
// files are recognised and rejected with ErrDatasetJSONv10.
//
// Errors are *ParseError values with Row (1-based data row) and Var set for a
// bad value, Offset (byte offset in the JSON text) otherwise.
func ReadDatasetJSON(name string, r io.Reader, o DatasetJSONOptions) (*Table, error) {
	if strings.EqualFold(filepath.Ext(name), ".dsjc") {
		zr, err := zlib.NewReader(r)
		if err != nil {
			return nil, &ParseError{File: name, Err: fmt.Errorf("not a zlib stream (.dsjc): %w", err)}
		}
		defer zr.Close()
		r = zr
	}
	d := &dsReader{name: name, o: o, dec: json.NewDecoder(bufio.NewReaderSize(&utf8Reader{r: r, name: name}, 64<<10))}
	d.dec.UseNumber()
	return d.read()
}

type dsReader struct {
	name string
	o    DatasetJSONOptions
	dec  *json.Decoder

	meta    map[string]any
	cols    []dsColumn
	records int64
	nrows   int

	nums   [][]float64 // per column, numeric columns
	texts  []*Builder  // per column, text columns
	empty  []int       // per column, count of ""
	numCol []bool
}

func (d *dsReader) perr(row int, v string, err error) error {
	return &ParseError{File: d.name, Row: row, Offset: d.dec.InputOffset(), Var: v, Err: err}
}

// jsonErr positions an error from the decoder.
func (d *dsReader) jsonErr(row int, err error) error {
	var se *json.SyntaxError
	var te *json.UnmarshalTypeError
	switch {
	case errors.As(err, &se):
		return &ParseError{File: d.name, Row: row, Offset: se.Offset, Err: fmt.Errorf("invalid JSON: %v", se)}
	case errors.As(err, &te):
		return &ParseError{File: d.name, Row: row, Offset: te.Offset, Err: fmt.Errorf("%w: %v", ErrJSONType, te)}
	case err == io.EOF, errors.Is(err, io.ErrUnexpectedEOF):
		return &ParseError{File: d.name, Row: row, Offset: d.dec.InputOffset(), Err: fmt.Errorf("%w: unexpected end of the JSON text", ErrTruncated)}
	}
	var pe *ParseError
	if errors.As(err, &pe) {
		return err
	}
	return &ParseError{File: d.name, Row: row, Offset: d.dec.InputOffset(), Err: err}
}

func (d *dsReader) read() (*Table, error) {
	tok, err := d.dec.Token()
	if err == io.EOF {
		return nil, &ParseError{File: d.name, Err: ErrEmpty}
	}
	if err != nil {
		return nil, d.jsonErr(0, err)
	}
	if tok != json.Delim('{') {
		return nil, d.perr(0, "", errors.New("want a JSON object (Dataset-JSON metadata) at the start"))
	}
	d.meta = map[string]any{}
	sawRows := false
	for d.dec.More() {
		tok, err := d.dec.Token()
		if err != nil {
			return nil, d.jsonErr(0, err)
		}
		key, _ := tok.(string)
		if _, dup := d.meta[key]; dup {
			return nil, d.perr(0, "", fmt.Errorf("attribute %q given twice", key))
		}
		switch key {
		case "clinicalData", "referenceData":
			return nil, d.perr(0, "", ErrDatasetJSONv10)
		case "columns":
			if err := d.dec.Decode(&d.cols); err != nil {
				return nil, d.jsonErr(0, fmt.Errorf("\"columns\": %w", err))
			}
			d.meta[key] = true
			if err := d.checkColumns(); err != nil {
				return nil, err
			}
		case "rows":
			if d.cols == nil {
				return nil, d.perr(0, "", errors.New("\"rows\" before \"columns\": the metadata must come first (Dataset-JSON v1.1 attribute order)"))
			}
			d.meta[key] = true
			sawRows = true
			if err := d.rows(); err != nil {
				return nil, err
			}
		default:
			var v any
			if err := d.dec.Decode(&v); err != nil {
				return nil, d.jsonErr(0, err)
			}
			d.meta[key] = v
		}
	}
	if _, err := d.dec.Token(); err != nil { // the closing brace
		return nil, d.jsonErr(0, err)
	}
	if err := d.checkMeta(); err != nil {
		return nil, err
	}
	if d.cols == nil {
		return nil, d.perr(0, "", errors.New("no \"columns\" attribute"))
	}
	if !sawRows {
		// NDJSON: one array per remaining line, or metadata only.
		for d.dec.More() {
			if err := d.row(); err != nil {
				return nil, err
			}
		}
	}
	if _, err := d.dec.Token(); err != io.EOF {
		if err != nil {
			return nil, d.jsonErr(0, err)
		}
		return nil, d.perr(0, "", errors.New("data after the Dataset-JSON object"))
	}
	if int64(d.nrows) != d.records {
		return nil, d.perr(0, "", fmt.Errorf("%w: \"records\" is %d, the file has %d rows", ErrRecords, d.records, d.nrows))
	}
	return d.table()
}

// checkMeta checks the required top-level attributes and their types.
func (d *dsReader) checkMeta() error {
	str := func(k string, required bool) (string, error) {
		v, ok := d.meta[k]
		if !ok {
			if required {
				return "", d.perr(0, "", fmt.Errorf("required attribute %q missing", k))
			}
			return "", nil
		}
		s, ok := v.(string)
		if !ok {
			return "", d.perr(0, "", fmt.Errorf("%w: attribute %q must be a string", ErrJSONType, k))
		}
		return s, nil
	}
	ver, err := str("datasetJSONVersion", true)
	if err != nil {
		return err
	}
	if ver != "1.1" && !strings.HasPrefix(ver, "1.1.") {
		if strings.HasPrefix(ver, "1.0") {
			return d.perr(0, "", ErrDatasetJSONv10)
		}
		return d.perr(0, "", fmt.Errorf("datasetJSONVersion %q: only 1.1 is supported", ver))
	}
	for _, k := range []string{"datasetJSONCreationDateTime", "itemGroupOID", "name", "label"} {
		if _, err := str(k, true); err != nil {
			return err
		}
	}
	if n, _ := str("name", true); n == "" {
		return d.perr(0, "", errors.New("empty dataset \"name\""))
	}
	rec, ok := d.meta["records"]
	if !ok {
		return d.perr(0, "", errors.New("required attribute \"records\" missing"))
	}
	num, ok := rec.(json.Number)
	if !ok {
		return d.perr(0, "", fmt.Errorf("%w: \"records\" must be a number", ErrJSONType))
	}
	n, err := strconv.ParseInt(string(num), 10, 64)
	if err != nil || n < 0 {
		return d.perr(0, "", fmt.Errorf("\"records\" %s: want a non-negative integer", num))
	}
	d.records = n
	return nil
}

// checkColumns validates "columns" and prepares the accumulators.
func (d *dsReader) checkColumns() error {
	if len(d.cols) == 0 {
		return d.perr(0, "", errors.New("\"columns\" is empty"))
	}
	seen := map[string]bool{}
	keys := map[int]string{}
	d.nums = make([][]float64, len(d.cols))
	d.texts = make([]*Builder, len(d.cols))
	d.empty = make([]int, len(d.cols))
	d.numCol = make([]bool, len(d.cols))
	for i, c := range d.cols {
		if c.Name == "" {
			return d.perr(0, "", fmt.Errorf("column %d has no name", i+1))
		}
		if seen[c.Name] {
			return d.perr(0, c.Name, ErrDuplicateColumn)
		}
		seen[c.Name] = true
		if c.ItemOID == "" {
			return d.perr(0, c.Name, errors.New("column has no itemOID"))
		}
		known := false
		for _, t := range DatasetJSONTypes {
			known = known || t == c.DataType
		}
		if !known {
			return d.perr(0, c.Name, fmt.Errorf("unknown dataType %q (want %s)", c.DataType, strings.Join(DatasetJSONTypes, ", ")))
		}
		if c.Length != nil && *c.Length < 1 {
			return d.perr(0, c.Name, fmt.Errorf("length %d (want ≥ 1)", *c.Length))
		}
		if c.KeySequence != nil {
			k := *c.KeySequence
			if k < 1 || k > len(d.cols) {
				return d.perr(0, c.Name, fmt.Errorf("keySequence %d (want 1 to %d)", k, len(d.cols)))
			}
			if other, dup := keys[k]; dup {
				return d.perr(0, c.Name, fmt.Errorf("keySequence %d also given to %q", k, other))
			}
			keys[k] = c.Name
		}
		switch c.DataType {
		case "integer", "float", "double", "decimal":
			d.numCol[i] = true
		default:
			d.texts[i] = NewBuilder(c.Name)
		}
	}
	return nil
}

// rows reads the "rows" array of the JSON form.
func (d *dsReader) rows() error {
	tok, err := d.dec.Token()
	if err != nil {
		return d.jsonErr(0, err)
	}
	if tok == nil { // "rows": null
		return nil
	}
	if tok != json.Delim('[') {
		return d.perr(0, "", fmt.Errorf("%w: \"rows\" must be an array of arrays", ErrJSONType))
	}
	for d.dec.More() {
		if err := d.row(); err != nil {
			return err
		}
	}
	if _, err := d.dec.Token(); err != nil {
		return d.jsonErr(d.nrows, err)
	}
	return nil
}

// row reads one row array.
func (d *dsReader) row() error {
	r := d.nrows + 1
	tok, err := d.dec.Token()
	if err != nil {
		return d.jsonErr(r, err)
	}
	if tok != json.Delim('[') {
		return d.perr(r, "", fmt.Errorf("%w: a row must be an array, found %s", ErrJSONType, jsonKind(tok)))
	}
	k := 0
	for ; d.dec.More(); k++ {
		tok, err := d.dec.Token()
		if err != nil {
			return d.jsonErr(r, err)
		}
		if k >= len(d.cols) {
			return d.perr(r, "", fmt.Errorf("%w: more than %d values (one per column)", ErrRagged, len(d.cols)))
		}
		if err := d.value(k, tok); err != nil {
			return d.perr(r, d.cols[k].Name, err)
		}
	}
	if _, err := d.dec.Token(); err != nil {
		return d.jsonErr(r, err)
	}
	if k != len(d.cols) {
		return d.perr(r, "", fmt.Errorf("%w: %d values, columns declare %d", ErrRagged, k, len(d.cols)))
	}
	d.nrows++
	return nil
}

func jsonKind(tok json.Token) string {
	switch v := tok.(type) {
	case nil:
		return "null"
	case bool:
		return "a boolean"
	case json.Number:
		return "a number " + string(v)
	case string:
		return strconv.Quote(v)
	case json.Delim:
		if v == '[' {
			return "an array"
		}
		return "an object"
	}
	return fmt.Sprint(tok)
}

// value stores the value tok of column k.
func (d *dsReader) value(k int, tok json.Token) error {
	c := d.cols[k]
	if d.numCol[k] {
		var s string
		switch v := tok.(type) {
		case nil:
			d.nums[k] = append(d.nums[k], math.NaN())
			return nil
		case json.Number:
			if c.DataType == "decimal" {
				return fmt.Errorf("%w: decimal values are JSON strings in Dataset-JSON v1.1, found %s", ErrJSONType, jsonKind(tok))
			}
			s = string(v)
		case string:
			if c.DataType != "decimal" {
				return fmt.Errorf("%w: want a JSON number for dataType %s, found %s", ErrJSONType, c.DataType, jsonKind(tok))
			}
			s = v
		default:
			return fmt.Errorf("%w: want a JSON number for dataType %s, found %s", ErrJSONType, c.DataType, jsonKind(tok))
		}
		f, err := parseNumber(s)
		if err != nil || strings.TrimSpace(s) != s {
			return fmt.Errorf("%s value %q is not a number", c.DataType, s)
		}
		if c.DataType == "integer" && f != math.Trunc(f) {
			return fmt.Errorf("integer value %s has a fraction", s)
		}
		d.nums[k] = append(d.nums[k], f)
		return nil
	}
	b := d.texts[k]
	switch v := tok.(type) {
	case nil:
		b.Append("", true)
	case string:
		if c.DataType == "boolean" {
			return fmt.Errorf("%w: want true or false for dataType boolean, found %s", ErrJSONType, jsonKind(tok))
		}
		if v == "" {
			d.empty[k]++
			b.Append("", true)
			return nil
		}
		if !utf8.ValidString(v) {
			return ErrBadEncoding
		}
		b.Append(v, false)
	case bool:
		if c.DataType != "boolean" {
			return fmt.Errorf("%w: want a JSON string for dataType %s, found %s", ErrJSONType, c.DataType, jsonKind(tok))
		}
		b.Append(strconv.FormatBool(v), false)
	default:
		want := "a JSON string"
		if c.DataType == "boolean" {
			want = "true or false"
		}
		return fmt.Errorf("%w: want %s for dataType %s, found %s", ErrJSONType, want, c.DataType, jsonKind(tok))
	}
	return nil
}

// table types the columns.
func (d *dsReader) table() (*Table, error) {
	name, _ := d.meta["name"].(string)
	t := NewTable(strings.ToUpper(name), d.nrows)
	t.Source = d.name
	keys := make([]string, len(d.cols))
	nkeys := 0
	for i, dc := range d.cols {
		o := d.o.Infer
		if (dc.DataType == "date" || dc.DataType == "datetime") && o.Vars[dc.Name].Type == TypeUnknown {
			vars := make(map[string]VarSpec, len(o.Vars)+1)
			for k, v := range o.Vars {
				vars[k] = v
			}
			spec := vars[dc.Name]
			spec.Type, spec.Source = DateTime, "Dataset-JSON dataType "+dc.DataType
			vars[dc.Name] = spec
			o.Vars = vars
		}
		var c *Column
		var err error
		if d.numCol[i] {
			v := d.nums[i]
			if v == nil {
				v = []float64{}
			}
			c, err = numericColumn(dc.Name, v, o)
		} else {
			c, err = d.texts[i].Column(o)
		}
		if err != nil {
			return nil, columnErr(d.name, dc.Name, err)
		}
		if c.Label == "" {
			c.Label = dc.Label
		}
		c.Format = dc.DisplayFormat
		c.Prov = Provenance{Domain: t.Name, Source: dc.Name, File: d.name}
		if err := t.Add(c); err != nil {
			return nil, &ParseError{File: d.name, Var: dc.Name, Err: err}
		}
		if d.empty[i] > 0 {
			t.Warnings = append(t.Warnings, fmt.Sprintf("%s: column %q: %d empty strings (\"\") read as missing, like null", d.name, dc.Name, d.empty[i]))
		}
		if dc.KeySequence != nil {
			keys[*dc.KeySequence-1] = dc.Name
			nkeys++
		}
	}
	ks := d.o.Keys
	if ks == nil && nkeys > 0 {
		for _, k := range keys[:nkeys] {
			if k == "" {
				return nil, &ParseError{File: d.name, Err: fmt.Errorf("keySequence values are not 1 to %d without gaps", nkeys)}
			}
			ks = append(ks, k)
		}
	}
	if err := t.SetKeys(ks, d.o.Site); err != nil {
		return nil, &ParseError{File: d.name, Err: err}
	}
	return t, nil
}
