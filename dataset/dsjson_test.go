package dataset

import (
	"bytes"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

const dsjsonDir = "../testdata/dsjson"

// TestReadDatasetJSON reads testdata/dsjson/ae.json, written by hand in the
// structure of CDISC Dataset-JSON v1.1 (top-level attributes in the
// specification's order, columns, rows), and checks the typing and values;
// the expected values are those written in the file.
func TestReadDatasetJSON(t *testing.T) {
	tb, err := ReadDatasetJSONFile(filepath.Join(dsjsonDir, "ae.json"), DatasetJSONOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if err := tb.Validate(); err != nil {
		t.Fatal(err)
	}
	if tb.Name != "AE" || tb.NRows != 5 {
		t.Fatalf("table %q with %d rows, want AE with 5", tb.Name, tb.NRows)
	}
	if got := strings.Join(tb.Keys, ","); got != "STUDYID,USUBJID,AESEQ" {
		t.Errorf("keys %s, want STUDYID,USUBJID,AESEQ (keySequence 1-3)", got)
	}
	for _, tc := range []struct {
		name  string
		typ   Type
		label string
	}{
		{"STUDYID", Identifier, "Study Identifier"},
		{"AESEQ", Identifier, "Sequence Number"},
		{"AETERM", FreeText, "Reported Term for the Adverse Event"},
		{"AESEV", Ordinal, "Severity/Intensity"},
		{"AESER", Binary, "Serious Event"},
		{"AETOXGR", Ordinal, "Standard Toxicity Grade"},
		{"AEDOSE", Continuous, "Dose at onset (invented)"},
		{"AEWT", Continuous, "Weight at onset (invented)"},
		{"AESTDTC", DateTime, "Start Date/Time of Adverse Event"},
		{"AEENDTC", DateTime, "End Date/Time of Adverse Event"},
	} {
		c := tb.Col(tc.name)
		if c == nil {
			t.Fatalf("no column %s", tc.name)
		}
		if c.Type != tc.typ || c.Label != tc.label {
			t.Errorf("%s: %s %q, want %s %q", tc.name, c.Type, c.Label, tc.typ, tc.label)
		}
	}
	for _, tc := range []struct {
		col  string
		row  int // 1-based
		want string
	}{
		{"AEDOSE", 1, "10.5"}, {"AEDOSE", 2, "0.125"}, {"AEDOSE", 3, ""}, {"AEDOSE", 5, "-10"},
		{"AEWT", 3, "64.5"}, {"AEWT", 4, ""}, {"AETOXGR", 4, ""}, {"AETOXGR", 2, "3"},
		{"AESEV", 4, ""}, {"AESEV", 2, "SEVERE"},
		{"AESTDTC", 1, "2023-05-10T08:30"}, {"AESTDTC", 3, "2023-06"}, {"AESTDTC", 5, "2023"},
		{"AEENDTC", 2, ""}, {"AEENDTC", 5, "2024-02-29"},
	} {
		if got := tb.Col(tc.col).String(tc.row - 1); got != tc.want {
			t.Errorf("%s row %d = %q, want %q", tc.col, tc.row, got, tc.want)
		}
	}
	if got := tb.Col("AEWT").Format; got != "8.2" {
		t.Errorf("AEWT format %q, want 8.2 (displayFormat)", got)
	}
	if got := tb.Col("AESEV").Levels; strings.Join(got, "<") != "MILD<MODERATE<SEVERE" {
		t.Errorf("AESEV levels %q", got)
	}
	if len(tb.Warnings) != 1 || !strings.Contains(tb.Warnings[0], `column "AESEV": 1 empty strings ("") read as missing`) {
		t.Errorf("warnings %q, want one about the empty AESEV", tb.Warnings)
	}
	// The NDJSON form (one row has a CR LF ending) and its zlib form read
	// to the same table.
	for _, f := range []string{"ae.ndjson", "ae.dsjc"} {
		other, err := ReadDatasetJSONFile(filepath.Join(dsjsonDir, f), DatasetJSONOptions{})
		if err != nil {
			t.Fatalf("%s: %v", f, err)
		}
		if err := sameTable(tb, other); err != nil {
			t.Errorf("ae.json vs %s: %v", f, err)
		}
	}
}

// TestReadDatasetJSONErrors damages ae.json and checks the exact message.
func TestReadDatasetJSONErrors(t *testing.T) {
	b, err := os.ReadFile(filepath.Join(dsjsonDir, "ae.json"))
	if err != nil {
		t.Fatal(err)
	}
	src := string(b)
	for _, tc := range []struct {
		name, old, new string
		want           string
		is             error
	}{
		{"short row", `"2023-06", "2023-06-30"]`, `"2023-06"]`,
			`ae.json: row 3: wrong number of fields: 10 values, columns declare 11`, ErrRagged},
		{"long row", `"2023", "2024-02-29"]`, `"2023", "2024-02-29", null]`,
			`ae.json: row 5: wrong number of fields: more than 11 values (one per column)`, ErrRagged},
		{"string for integer", `"XY-101-001", 2,`, `"XY-101-001", "2",`,
			`ae.json: row 2: variable "AESEQ": wrong JSON type: want a JSON number for dataType integer, found "2"`, ErrJSONType},
		{"number for decimal", `"Y", 3, "0.125"`, `"Y", 3, 0.125`,
			`ae.json: row 2: variable "AEDOSE": wrong JSON type: decimal values are JSON strings in Dataset-JSON v1.1, found a number 0.125`, ErrJSONType},
		{"fraction in integer", `"Y", 3,`, `"Y", 3.5,`,
			`ae.json: row 2: variable "AETOXGR": integer value 3.5 has a fraction`, nil},
		{"boolean for string", `"FATIGUE", "", "N"`, `"FATIGUE", true, "N"`,
			`ae.json: row 4: variable "AESEV": wrong JSON type: want a JSON string for dataType string, found a boolean`, ErrJSONType},
		{"array as value", `"FATIGUE", "", "N"`, `"FATIGUE", ["x"], "N"`,
			`ae.json: row 4: variable "AESEV": wrong JSON type: want a JSON string for dataType string, found an array`, ErrJSONType},
		{"decimal not a number", `"10.5"`, `"10,5"`,
			`ae.json: row 1: variable "AEDOSE": decimal value "10,5" is not a number`, nil},
		{"records mismatch", `"records": 5`, `"records": 6`,
			`ae.json: byte 2442: row count differs from "records": "records" is 6, the file has 5 rows`, ErrRecords},
		{"v1.0 version", `"datasetJSONVersion": "1.1.0"`, `"datasetJSONVersion": "1.0.0"`,
			"ae.json: byte 2442: " + ErrDatasetJSONv10.Error(), ErrDatasetJSONv10},
		{"v1.0 layout", `"itemGroupOID": "IG.AE",`, `"clinicalData": {},`,
			"ae.json: byte 401: " + ErrDatasetJSONv10.Error(), ErrDatasetJSONv10},
		{"no name", `"name": "AE",`, ``,
			`ae.json: byte 2429: required attribute "name" missing`, nil},
		{"unknown dataType", `"dataType": "decimal"`, `"dataType": "money"`,
			`ae.json: byte 1911: variable "AEDOSE": unknown dataType "money" (want string, integer, decimal, float, double, boolean, datetime, date, time, URI)`, nil},
		{"duplicate keySequence", `"keySequence": 3}`, `"keySequence": 2}`,
			`ae.json: byte 1913: variable "AESEQ": keySequence 2 also given to "USUBJID"`, nil},
		{"syntax", `"HEADACHE", "MILD"`, `"HEADACHE" "MILD"`,
			`ae.json: row 1: invalid JSON: invalid character '"' after array element`, nil},
		{"truncated", `]
}`, ``, `ae.json: row 5: file truncated: unexpected end of the JSON text`, ErrTruncated},
		{"rows first", `"columns": [`, `"rows": [], "columns": [`,
			`ae.json: byte 481: "rows" before "columns": the metadata must come first (Dataset-JSON v1.1 attribute order)`, nil},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if !strings.Contains(src, tc.old) {
				t.Fatalf("ae.json has no %q", tc.old)
			}
			in := strings.Replace(src, tc.old, tc.new, 1)
			if tc.name == "truncated" {
				in = src[:strings.LastIndex(src, "]")]
			}
			_, err := ReadDatasetJSON("ae.json", strings.NewReader(in), DatasetJSONOptions{})
			var pe *ParseError
			if !errors.As(err, &pe) {
				t.Fatalf("error %v, want a *ParseError", err)
			}
			if err.Error() != tc.want {
				t.Errorf("error\n got %s\nwant %s", err, tc.want)
			}
			if tc.is != nil && !errors.Is(err, tc.is) {
				t.Errorf("error %v, want errors.Is %v", err, tc.is)
			}
		})
	}
}

// TestWriteDatasetJSON writes ae.json's table and reads it back; the output
// is compared with a golden file (go test ./dataset -run WriteDatasetJSON -update).
func TestWriteDatasetJSON(t *testing.T) {
	tb, err := ReadDatasetJSONFile(filepath.Join(dsjsonDir, "ae.json"), DatasetJSONOptions{})
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	meta := DatasetJSONMeta{CreationDateTime: "2024-03-01T10:15:00", Label: "Adverse Events", StudyOID: "XY-101",
		SourceSystem: "crossform", SourceSystemVer: "test"}
	if err := WriteDatasetJSON(&buf, tb, meta); err != nil {
		t.Fatal(err)
	}
	back, err := ReadDatasetJSON("out.json", bytes.NewReader(buf.Bytes()), DatasetJSONOptions{})
	if err != nil {
		t.Fatalf("reading back: %v\n%s", err, buf.String())
	}
	if err := sameTable(tb, back); err != nil {
		t.Error(err)
	}
	golden(t, filepath.Join(dsjsonDir, "ae_written.golden"), buf.Bytes())
}

// TestOpenRegistersFormats: Open reads each submission format by extension.
func TestOpenRegistersFormats(t *testing.T) {
	for _, tc := range []struct {
		path  string
		table string
		rows  int
	}{
		{filepath.Join(dsjsonDir, "ae.json"), "AE", 5},
		{filepath.Join(dsjsonDir, "ae.ndjson"), "AE", 5},
		{filepath.Join(dsjsonDir, "ae.dsjc"), "AE", 5},
		{filepath.Join(xptDir, "two.xpt"), "VS", 4},
	} {
		s, err := Open(tc.path, Options{})
		if err != nil {
			t.Fatalf("Open(%s): %v", tc.path, err)
		}
		if tb := s.Table(tc.table); tb == nil || tb.NRows != tc.rows {
			t.Errorf("Open(%s): table %s = %v, want %d rows", tc.path, tc.table, tb, tc.rows)
		}
	}
}
