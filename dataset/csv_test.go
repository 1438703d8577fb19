package dataset

import (
	"errors"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"regexp"
	"strings"
	"testing"
)

// TestReadCSVBadFiles reads each malformed file under testdata/bad and checks
// the one error it must give: the whole message, with file and line.
func TestReadCSVBadFiles(t *testing.T) {
	positioned := regexp.MustCompile(`^testdata/bad/[a-z0-9_]+\.(csv|yaml):[0-9]+`)
	const dir = "testdata/bad/"
	tests := []struct {
		file string
		opts CSVOptions
		vars string // variables file applied to the read
		want string
		is   error // sentinel the error must wrap, if any
	}{
		{file: "ragged.csv", want: dir + "ragged.csv:3: wrong number of fields: 3 fields, header has 2", is: ErrRagged},
		{file: "ragged_after_multiline.csv", // a quoted field spans lines 2–3, so the bad record is on line 4
			want: dir + "ragged_after_multiline.csv:4: wrong number of fields: 4 fields, header has 3", is: ErrRagged},
		{file: "all_ragged.csv", opts: CSVOptions{SkipRagged: true},
			want: dir + "all_ragged.csv:2: no data rows: all 2 rows skipped (3 fields, header has 2)"},
		{file: "unterminated_quote.csv",
			want: dir + `unterminated_quote.csv:3:13: bad quoting: extraneous or missing " in quoted-field (record starts on line 2)`, is: ErrBadQuote},
		{file: "bare_quote.csv", want: dir + `bare_quote.csv:2:10: bad quoting: bare " in non-quoted-field`, is: ErrBadQuote},
		{file: "bad_utf8.csv",
			want: dir + `bad_utf8.csv:2:6: column "CITY": invalid UTF-8 (use --encoding windows-1252 or latin1 if the file is not UTF-8)`, is: ErrBadEncoding},
		{file: "utf16.csv", want: dir + "utf16.csv:1:1: UTF-16 text (save the file as UTF-8)"},
		{file: "nul.csv", want: dir + `nul.csv:2:6: column "AGE": NUL byte in the data (is the file UTF-16 or binary?)`},
		{file: "undefined_cp1252.csv", opts: CSVOptions{Encoding: "windows-1252"},
			want: dir + `undefined_cp1252.csv:2:6: column "NOTE": byte not defined in windows-1252`},
		{file: "empty.csv", want: dir + "empty.csv:1: empty file", is: ErrEmpty},
		{file: "whitespace.csv", want: dir + "whitespace.csv:1: empty file", is: ErrEmpty},
		{file: "header_only.csv", want: dir + "header_only.csv:2: header only, no data rows", is: ErrNoRows},
		{file: "duplicate_column.csv", want: dir + `duplicate_column.csv:1:13: duplicate column name "AGE" (also column 2)`, is: ErrDuplicateColumn},
		{file: "bom_inside.csv", want: dir + `bom_inside.csv:3:6: column "SEX": byte order mark inside the data`, is: ErrBOMInside},
		{file: "long_field.csv", opts: CSVOptions{MaxFieldBytes: 64},
			want: dir + `long_field.csv:2:6: field too long: 100 bytes in column "COMMENT" (limit 64)`, is: ErrFieldTooLong},
		{file: "empty_header_name.csv", want: dir + "empty_header_name.csv:1:9: column 2 has no name"},
		{file: "vars_target.csv", opts: CSVOptions{Keys: []string{"USUBJID", "VISIT"}},
			want: dir + `vars_target.csv: key column "VISIT": unknown variable (columns: USUBJID, AGE)`, is: ErrUnknownVariable},
		{file: "vars_target.csv", opts: CSVOptions{Site: "SITE"},
			want: dir + `vars_target.csv: site column "SITE": unknown variable`, is: ErrUnknownVariable},
		// An option, not the file, is wrong: a plain error naming the file.
		{file: "vars_target.csv", opts: CSVOptions{Encoding: "windows-1251"},
			want: dir + `vars_target.csv: unknown encoding "windows-1251" (want utf-8, windows-1252 or latin1)`},
		// Values against a variables file: the line of the first offending value.
		{file: "level_not_declared.csv", vars: "level_not_declared.yaml",
			want: dir + `level_not_declared.csv:4: variable "AESEV": value "EXTREME" is not one of the declared levels ["MILD" "MODERATE" "SEVERE"]`},
		{file: "not_a_number.csv", vars: "not_a_number.yaml",
			want: dir + `not_a_number.csv:4: variable "WEIGHT": declared continuous but value "heavy" is not a number`},
		{file: "vars_target.csv", vars: "vars_unknown_variable.yaml",
			want: dir + `vars_unknown_variable.yaml:4:3: variable "WEIGTH": unknown variable: no table has it`, is: ErrUnknownVariable},
		// Bad variables files.
		{vars: "vars_unknown_setting.yaml",
			want: dir + `vars_unknown_setting.yaml:4:5: variable "AGE": unknown setting "colour" (want type, levels, unit or label)`},
		{vars: "vars_bad_type.yaml",
			want: dir + `vars_bad_type.yaml:3:11: variable "AGE": unknown type "numeric" (want continuous, ordinal, nominal, binary, date, text or identifier)`},
		{vars: "vars_bad_indent.yaml", want: dir + "vars_bad_indent.yaml:4: did not find expected key"},
		{vars: "vars_unknown_key.yaml", want: dir + `vars_unknown_key.yaml:1:1: unknown key "vars" (want variables)`},
		{vars: "vars_empty.yaml", want: dir + "vars_empty.yaml:1: empty variables file"},
		{vars: "vars_levels_continuous.yaml",
			want: dir + `vars_levels_continuous.yaml:3:5: variable "AGE": levels apply to ordinal, nominal or binary variables, not continuous`},
		{vars: "vars_level_twice.yaml", want: dir + `vars_level_twice.yaml:3:20: variable "AESEV": level "MILD" listed twice`},
	}
	used := map[string]bool{}
	for _, tt := range tests {
		name := tt.file + "+" + tt.vars
		used[tt.file], used[tt.vars] = true, true
		t.Run(name, func(t *testing.T) {
			err := readWithVars(dir, tt.file, tt.vars, tt.opts)
			if err == nil {
				t.Fatalf("read %s succeeded, want error %q", name, tt.want)
			}
			if got := err.Error(); got != tt.want {
				t.Errorf("read %s error\n got %s\nwant %s", name, got, tt.want)
			}
			if tt.is != nil && !errors.Is(err, tt.is) {
				t.Errorf("read %s error %v does not wrap %v", name, err, tt.is)
			}
			var pe *ParseError
			if positioned.MatchString(tt.want) {
				if !errors.As(err, &pe) || pe.Line <= 0 {
					t.Errorf("read %s error %v: want a *ParseError with a line", name, err)
				}
			}
		})
	}
	// Every committed bad file is exercised.
	ents, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range ents {
		if !used[e.Name()] {
			t.Errorf("%s%s has no case in TestReadCSVBadFiles", dir, e.Name())
		}
	}
}

// readWithVars reads dir/file (if any) with the variables file dir/vars (if
// any) applied, and checks the variables against the table.
func readWithVars(dir, file, vars string, o CSVOptions) error {
	if vars != "" {
		v, err := ReadVarsFile(dir + vars)
		if err != nil {
			return err
		}
		o.Infer.Vars = v
	}
	if file == "" {
		return nil
	}
	tbl, err := ReadCSVFile(dir+file, o)
	if err != nil {
		return err
	}
	if err := tbl.Validate(); err != nil {
		return err
	}
	s := &Study{Tables: []*Table{tbl}}
	return s.CheckVars(o.Infer.Vars)
}

func readCSVString(t *testing.T, name, in string, o CSVOptions) *Table {
	t.Helper()
	tbl, err := ReadCSV(name, strings.NewReader(in), o)
	if err != nil {
		t.Fatalf("ReadCSV(%s): %v", name, err)
	}
	if err := tbl.Validate(); err != nil {
		t.Fatalf("ReadCSV(%s): invalid table: %v", name, err)
	}
	return tbl
}

// column returns the display strings of column name.
func column(t *testing.T, tbl *Table, name string) []string {
	t.Helper()
	c := tbl.Col(name)
	if c == nil {
		t.Fatalf("table %s has no column %q (has %q)", tbl.Name, name, tbl.Names())
	}
	out := make([]string, tbl.NRows)
	for i := range out {
		out[i] = c.String(i)
	}
	return out
}

func TestDetectDelimiter(t *testing.T) {
	tests := []struct {
		name, in string
		want     rune
	}{
		{"comma", "A,B,C\n1,2,3\n", ','},
		{"semicolon with decimal commas", "A;B;C\n1,5;2,25;3\n4;5;6\n", ';'},
		{"tab", "A\tB\n1\t2\n", '\t'},
		{"tab with commas in text", "A\tB\nx, y\t2\nz, w\t3\n", '\t'},
		{"quoted semicolons in a comma file", "A,B\n\"1;2;3\",4\n\"5;6;7\",8\n", ','},
		{"quoted commas in a semicolon file", "A;B\n\"1,2\";3\n\"4,5\";6\n", ';'},
		{"quoted newline", "A;B\n\"x,\ny,z\";1\n2;3\n", ';'},
		{"single column", "USUBJID\nS-1\nS-2\n", ','},
		{"no newline", "A;B;C", ';'},
		{"CRLF", "A;B\r\n1;2\r\n", ';'},
	}
	for _, tt := range tests {
		if got := detectDelimiter([]byte(tt.in)); got != tt.want {
			t.Errorf("detectDelimiter(%s) = %q, want %q", tt.name, got, tt.want)
		}
	}
}

func TestReadCSVFiles(t *testing.T) {
	tests := []struct {
		file  string
		opts  CSVOptions
		col   string
		want  []string
		names []string
	}{
		{file: "vs_semicolon.csv", col: "VSSTRESN", want: []string{"120,5", "118", ""},
			names: []string{"USUBJID", "VISITNUM", "VSTESTCD", "VSSTRESN"}},
		{file: "ae_tab.tsv", col: "AETERM", want: []string{"HEADACHE, MILD", "NAUSEA", "RASH; ARM"},
			names: []string{"USUBJID", "AESEQ", "AETERM", "AESEV"}},
		{file: "ae_multiline.csv", col: "AETERM", want: []string{"HEADACHE\nAFTER \"DOSE\"", "NAUSEA, VOMITING", "RASH"}},
		{file: "bom_utf8.csv", col: "CITY", want: []string{"Montréal", "Köln"}, names: []string{"USUBJID", "CITY"}},
		{file: "latin1.csv", opts: CSVOptions{Encoding: "latin1"}, col: "CITY", want: []string{"Montréal", "Köln"}},
		{file: "cp1252.csv", opts: CSVOptions{Encoding: "windows-1252"}, col: "CITY", want: []string{"Montréal", "Köln"}},
		// 0x80 is the euro sign in windows-1252 (WHATWG Encoding Standard, index windows-1252)
		{file: "cp1252.csv", opts: CSVOptions{Encoding: "Windows-1252"}, col: "PRICE", want: []string{"€5", "€6"}},
		// and U+0080, a C1 control, in ISO 8859-1.
		{file: "cp1252.csv", opts: CSVOptions{Encoding: "iso-8859-1"}, col: "PRICE", want: []string{"\u00805", "\u00806"}},
		{file: "dm.csv", col: "AGE", want: []string{"54", "61", "47", ""}},
	}
	for _, tt := range tests {
		t.Run(tt.file+"/"+tt.col, func(t *testing.T) {
			tbl, err := ReadCSVFile(filepath.Join("testdata/csv", tt.file), tt.opts)
			if err != nil {
				t.Fatal(err)
			}
			if err := tbl.Validate(); err != nil {
				t.Fatal(err)
			}
			if got := column(t, tbl, tt.col); !reflect.DeepEqual(got, tt.want) {
				t.Errorf("%s column %s = %q, want %q", tt.file, tt.col, got, tt.want)
			}
			if tt.names != nil && !reflect.DeepEqual(tbl.Names(), tt.names) {
				t.Errorf("%s names = %q, want %q", tt.file, tbl.Names(), tt.names)
			}
		})
	}
}

// TestReadCSVLinesAfterMultiline checks that errors after quoted fields with
// embedded newlines name the right line, for the reader and for typing.
func TestReadCSVLinesAfterMultiline(t *testing.T) {
	in := "USUBJID,NOTE,WEIGHT\n" + // line 1
		"S-1,\"two\nlines\",70\n" + // lines 2–3
		"S-2,\"three\n\nlines\",71\n" + // lines 4–6
		"S-3,one,heavy\n" // line 7
	o := CSVOptions{Infer: InferOptions{Vars: map[string]VarSpec{"WEIGHT": {Type: Continuous}}}}
	_, err := ReadCSV("w.csv", strings.NewReader(in), o)
	want := `w.csv:7: variable "WEIGHT": declared continuous but value "heavy" is not a number`
	if err == nil || err.Error() != want {
		t.Errorf("ReadCSV error = %v, want %s", err, want)
	}
	_, err = ReadCSV("w.csv", strings.NewReader(in+"S-4,x\"y,1\n"), CSVOptions{})
	want = `w.csv:8:6: bad quoting: bare " in non-quoted-field`
	if err == nil || err.Error() != want {
		t.Errorf("ReadCSV error = %v, want %s", err, want)
	}
}

func TestReadCSVMissingTokens(t *testing.T) {
	const file = "testdata/csv/missing_tokens.csv" // values ND, 5.1, NA, ., ""
	tests := []struct {
		name    string
		missing []string
		want    []bool // LBSTRESN missing per row
		typ     Type
	}{
		{"default (empty, NA, .)", nil, []bool{false, false, true, true, true}, Binary},               // ND and 5.1: two text values
		{"with ND", []string{"", "NA", ".", "ND"}, []bool{true, false, true, true, true}, Continuous}, // one value, not an integer
		{"empty only", []string{""}, []bool{false, false, false, false, true}, Nominal},
		{"none, not even empty", []string{}, []bool{false, false, false, false, false}, Nominal},
	}
	for _, tt := range tests {
		tbl, err := ReadCSVFile(file, CSVOptions{Missing: tt.missing})
		if err != nil {
			t.Fatalf("%s: %v", tt.name, err)
		}
		c := tbl.Col("LBSTRESN")
		got := make([]bool, tbl.NRows)
		for i := range got {
			got[i] = c.Missing(i)
		}
		if !reflect.DeepEqual(got, tt.want) {
			t.Errorf("%s: missing = %v, want %v", tt.name, got, tt.want)
		}
		if c.Type != tt.typ {
			t.Errorf("%s: type %v (%s), want %v", tt.name, c.Type, c.Why, tt.typ)
		}
	}
}

func TestReadCSVSkipRagged(t *testing.T) {
	in := "USUBJID,AGE\nS-1,30\nS-2,31,x\n   \nS-3\nS-4,33\n"
	if _, err := ReadCSV("r.csv", strings.NewReader(in), CSVOptions{}); err == nil ||
		err.Error() != "r.csv:3: wrong number of fields: 3 fields, header has 2" {
		t.Errorf("without SkipRagged: error %v", err)
	}
	tbl := readCSVString(t, "r.csv", in, CSVOptions{SkipRagged: true})
	want := []Skip{
		{File: "r.csv", Line: 3, Reason: "3 fields, header has 2"},
		{File: "r.csv", Line: 4, Reason: "blank row"},
		{File: "r.csv", Line: 5, Reason: "1 fields, header has 2"},
	}
	if !reflect.DeepEqual(tbl.Skipped, want) {
		t.Errorf("Skipped = %+v, want %+v", tbl.Skipped, want)
	}
	if got := column(t, tbl, "AGE"); !reflect.DeepEqual(got, []string{"30", "33"}) {
		t.Errorf("AGE = %q, want [30 33]", got)
	}
}

func TestReadCSVKeys(t *testing.T) {
	const in = "STUDYID,USUBJID,SITEID,VISITNUM,VSSEQ,VSSTRESN\nX,S-1,01,1,1,120\nX,S-1,01,2,2,118\nX,S-2,02,1,1,131\n"
	tests := []struct {
		name string
		keys []string
		site string
		want []string
		ws   string
	}{
		{"SDTM defaults", nil, "", []string{"USUBJID", "VISITNUM", "VSSEQ"}, "SITEID"},
		{"explicit", []string{"USUBJID", "VSSEQ"}, "STUDYID", []string{"USUBJID", "VSSEQ"}, "STUDYID"},
		{"no keys", []string{}, "", []string{}, "SITEID"},
	}
	for _, tt := range tests {
		tbl := readCSVString(t, "vs.csv", in, CSVOptions{Keys: tt.keys, Site: tt.site})
		if !reflect.DeepEqual(tbl.Keys, tt.want) || tbl.Site != tt.ws {
			t.Errorf("%s: Keys %q Site %q, want %q %q", tt.name, tbl.Keys, tbl.Site, tt.want, tt.ws)
		}
		if tbl.Name != "VS" {
			t.Errorf("table name %q, want VS", tbl.Name)
		}
	}
	tbl := readCSVString(t, "vs.csv", in, CSVOptions{})
	if got := tbl.RowKey(1); !reflect.DeepEqual(got, []string{"S-1", "2", "2"}) {
		t.Errorf("RowKey(1) = %q", got)
	}
	if got := tbl.SiteOf(2); got != "02" {
		t.Errorf("SiteOf(2) = %q, want 02", got)
	}
	// Without SDTM names there are no default keys.
	plain := readCSVString(t, "plain.csv", "ID,X\n1,2\n3,4\n", CSVOptions{})
	if len(plain.Keys) != 0 || plain.Site != "" {
		t.Errorf("plain keys %q site %q, want none", plain.Keys, plain.Site)
	}
	_, err := ReadCSV("vs.csv", strings.NewReader(in), CSVOptions{Keys: []string{"SUBJID"}})
	want := `vs.csv: key column "SUBJID": unknown variable (columns: STUDYID, USUBJID, SITEID, VISITNUM, VSSEQ, VSSTRESN)`
	if err == nil || err.Error() != want || !errors.Is(err, ErrUnknownVariable) {
		t.Errorf("unknown key: error %v, want %s", err, want)
	}
}

// TestReadCSVTrimAndBlankLines: values and names are trimmed; empty lines are
// skipped by encoding/csv without a trace, lines of spaces recorded.
func TestReadCSVTrimAndBlankLines(t *testing.T) {
	tbl := readCSVString(t, "t.csv", " A , B \n\n 1 , x \n\n2,y\n", CSVOptions{})
	if !reflect.DeepEqual(tbl.Names(), []string{"A", "B"}) {
		t.Errorf("names %q", tbl.Names())
	}
	if got := column(t, tbl, "B"); !reflect.DeepEqual(got, []string{"x", "y"}) {
		t.Errorf("B = %q", got)
	}
	if tbl.Col("A").Floats[0] != 1 {
		t.Errorf("A[0] = %v, want 1", tbl.Col("A").Floats[0])
	}
}

// TestReadCSVLarge: a file larger than the 64 KiB head read from a file and
// from a plain reader gives the same table, typed as generated.
func TestReadCSVLarge(t *testing.T) {
	path := filepath.Join(t.TempDir(), "mixed.csv")
	if _, err := writeMixedCSVSeed(path, 500, 40); err != nil { // ~100 KB: more than the 64 KiB head
		t.Fatal(err)
	}
	a, err := ReadCSVFile(path, CSVOptions{})
	if err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	c, err := ReadCSV(path, onlyReader{strings.NewReader(string(b))}, CSVOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if err := a.Validate(); err != nil {
		t.Fatal(err)
	}
	for j, col := range a.Cols {
		other := c.Cols[j]
		if col.Name != other.Name || col.Type != other.Type || col.Why != other.Why {
			t.Fatalf("column %d: %s %v %q vs %s %v %q", j, col.Name, col.Type, col.Why, other.Name, other.Type, other.Why)
		}
		for i := 0; i < a.NRows; i++ {
			if col.String(i) != other.String(i) {
				t.Fatalf("column %s row %d: %q vs %q", col.Name, i, col.String(i), other.String(i))
			}
		}
	}
	// The generator's kinds come out as typed (rule 3 and rules 5, 9 of Builder.Column).
	for _, col := range a.Cols[1:] {
		if col.NMissing() == 0 || col.NMissing() == a.NRows {
			t.Errorf("column %s: %d missing of %d, want some", col.Name, col.NMissing(), a.NRows)
		}
		if col.Type == Continuous && col.Storage == StoreFloat {
			if !math.IsNaN(col.Floats[firstMissing(col)]) {
				t.Errorf("column %s: missing value not NaN", col.Name)
			}
		}
	}
}

func firstMissing(c *Column) int {
	for i := 0; i < c.Len(); i++ {
		if c.Missing(i) {
			return i
		}
	}
	return 0
}

type onlyReader struct{ r *strings.Reader }

func (o onlyReader) Read(p []byte) (int, error) { return o.r.Read(p) }
