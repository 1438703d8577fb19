package dataset

import (
	"errors"
	"math"
	"reflect"
	"strings"
	"testing"
)

func TestBitmap(t *testing.T) {
	b := NewBitmap(130)
	for _, i := range []int{0, 63, 64, 129} {
		b.Set(i)
	}
	if b.Count() != 4 || b.Len() != 130 || !b.Get(63) || !b.Get(64) || b.Get(1) || b.Get(130) || b.Get(-1) {
		t.Errorf("bitmap %v count %d", b.Words(), b.Count())
	}
	b.Clear(64)
	if b.Get(64) || b.Count() != 3 {
		t.Errorf("Clear(64): %v", b.Words())
	}
}

func TestTableAddAndLookup(t *testing.T) {
	tbl := NewTable("DM", 2)
	if err := tbl.Add(NewFloatColumn("AGE", Continuous, []float64{30, math.NaN()})); err != nil {
		t.Fatal(err)
	}
	if err := tbl.Add(NewCodeColumn("SEX", Binary, []int32{1, 0}, []string{"F", "M"})); err != nil {
		t.Fatal(err)
	}
	err := tbl.Add(NewFloatColumn("AGE", Continuous, []float64{1, 2}))
	if err == nil || !errors.Is(err, ErrDuplicateColumn) || err.Error() != `column "AGE": duplicate column name` {
		t.Errorf("duplicate Add: %v", err)
	}
	err = tbl.Add(NewFloatColumn("X", Continuous, []float64{1}))
	if err == nil || err.Error() != `column "X" has 1 rows, table "DM" has 2` {
		t.Errorf("short Add: %v", err)
	}
	if tbl.Index("SEX") != 1 || tbl.Index("NONE") != -1 || tbl.Col("NONE") != nil {
		t.Error("Index/Col wrong")
	}
	if !reflect.DeepEqual(tbl.Names(), []string{"AGE", "SEX"}) {
		t.Errorf("Names %q", tbl.Names())
	}
	age, sex := tbl.Col("AGE"), tbl.Col("SEX")
	if age.String(0) != "30" || age.String(1) != "" || !age.Missing(1) || age.NMissing() != 1 || !math.IsNaN(age.Float(1)) {
		t.Error("AGE accessors wrong")
	}
	if sex.String(0) != "M" || sex.Float(0) != 1 {
		t.Error("SEX accessors wrong")
	}
	if _, _, _, ok := age.Date(0); ok {
		t.Error("Date of a float column ok")
	}
	if err := tbl.SetKeys([]string{"SEX"}, "AGE"); err != nil || !tbl.IsKey("SEX") || !tbl.IsKey("AGE") || tbl.IsKey("X") {
		t.Errorf("SetKeys: %v", err)
	}
	if err := tbl.Validate(); err != nil {
		t.Errorf("Validate: %v", err)
	}
}

// TestValidate breaks a valid table in each way Validate checks.
func TestValidate(t *testing.T) {
	mk := func() *Table {
		tbl := NewTable("T", 2)
		d, _ := ParseISO8601("2023-05-10")
		for _, c := range []*Column{
			NewFloatColumn("F", Continuous, []float64{1, math.NaN()}),
			NewCodeColumn("C", Nominal, []int32{0, -1}, []string{"a"}),
			NewDateColumn("D", []Date{d, {}}),
		} {
			if err := tbl.Add(c); err != nil {
				t.Fatal(err)
			}
		}
		return tbl
	}
	if err := mk().Validate(); err != nil {
		t.Fatalf("valid table: %v", err)
	}
	tests := []struct {
		name   string
		mutate func(*Table)
		want   string
	}{
		{"NaN not marked", func(x *Table) { x.Col("F").Floats[0] = math.NaN() }, `column "F" row 0: missing mark disagrees with value`},
		{"code out of range", func(x *Table) { x.Col("C").Codes[0] = 1 }, `column "C" row 0: bad code 1`},
		{"missing code unmarked", func(x *Table) { x.Col("C").SetMissingBits(NewBitmap(2)) }, `column "C" row 1: bad code -1`},
		{"empty date interval", func(x *Table) { x.Col("D").DateHi[0] = x.Col("D").DateLo[0] }, `column "D" row 0: bad date interval`},
		{"short column", func(x *Table) { x.Col("F").Floats = x.Col("F").Floats[:1] }, `column "F": 1 rows, want 2`},
		{"short bitmap", func(x *Table) { x.Col("F").SetMissingBits(NewBitmap(1)) }, `column "F": missing bitmap too short`},
		{"no storage", func(x *Table) { x.Col("F").Storage = 0 }, `column "F": 0 rows, want 2`},
		{"duplicate", func(x *Table) { x.Cols = append(x.Cols, x.Cols[0]) }, `column "F": duplicate column name`},
		{"key missing", func(x *Table) { x.Keys = []string{"USUBJID"} }, `key column "USUBJID" not in table`},
		{"site missing", func(x *Table) { x.Site = "SITEID" }, `site column "SITEID" not in table`},
	}
	for _, tt := range tests {
		tbl := mk()
		tt.mutate(tbl)
		err := tbl.Validate()
		if err == nil || !strings.Contains(err.Error(), tt.want) {
			t.Errorf("%s: Validate() = %v, want %q", tt.name, err, tt.want)
		}
	}
}

func TestDistinct(t *testing.T) {
	got := Distinct([]float64{3, math.NaN(), 1, 3, 2, 1})
	if !reflect.DeepEqual(got, []float64{1, 2, 3}) {
		t.Errorf("Distinct = %v", got)
	}
	if got := Distinct(nil); len(got) != 0 {
		t.Errorf("Distinct(nil) = %v", got)
	}
}

func TestParseErrorFormat(t *testing.T) {
	cause := errors.New("boom")
	tests := []struct {
		e    ParseError
		want string
	}{
		{ParseError{File: "a.csv", Line: 3, Column: 7, Err: cause}, "a.csv:3:7: boom"},
		{ParseError{File: "a.csv", Line: 3, Err: cause}, "a.csv:3: boom"},
		{ParseError{File: "a.csv", Line: 3, Var: "AGE", Err: cause}, `a.csv:3: variable "AGE": boom`},
		{ParseError{File: "a.xpt", Record: 5, Offset: 400, Err: cause}, "a.xpt: record 5 (byte 400): boom"},
		{ParseError{File: "a.json", Row: 2, Err: cause}, "a.json: row 2: boom"},
		{ParseError{File: "a.xpt", Offset: 9, Err: cause}, "a.xpt: byte 9: boom"},
		{ParseError{Err: cause}, "<input>: boom"},
	}
	for _, tt := range tests {
		if got := tt.e.Error(); got != tt.want {
			t.Errorf("Error() = %q, want %q", got, tt.want)
		}
		if !errors.Is(&tt.e, cause) {
			t.Errorf("%q does not unwrap to its cause", tt.want)
		}
	}
}

// TestDateFloat: a date column's numeric view is the day of a full date and
// NaN for partial dates and windows (hand-derived day numbers, see isodate_test.go).
func TestDateFloat(t *testing.T) {
	var ds []Date
	for _, s := range []string{"2023-05-10", "2023-05-10T12", "2023-05", "2023-05-01/2023-05-09", "2023-05-10/2023-05-10T18", ""} {
		d, err := ParseISO8601(s)
		if err != nil {
			t.Fatal(err)
		}
		ds = append(ds, d)
	}
	c := NewDateColumn("D", ds)
	want := []float64{d20230510, d20230510 + 0.5, math.NaN(), math.NaN(), d20230510, math.NaN()}
	for i, w := range want {
		if got := c.Float(i); !(got == w || math.IsNaN(got) && math.IsNaN(w)) {
			t.Errorf("Float(%d) = %v, want %v", i, got, w)
		}
	}
	if !c.Missing(5) || c.NMissing() != 1 {
		t.Errorf("missing: %v", c.MissingBits().Words())
	}
}
