package dataset

import (
	"errors"
	"reflect"
	"strings"
	"testing"
)

func TestReadVarsFile(t *testing.T) {
	const file = "testdata/csv/vars.yaml"
	got, err := ReadVarsFile(file)
	if err != nil {
		t.Fatal(err)
	}
	want := map[string]VarSpec{
		"AGE":     {Type: Continuous, Unit: "years", Label: "Age at informed consent", Source: file + ":3", file: file, line: 3, col: 3},
		"AESEV":   {Type: Ordinal, Levels: []string{"MILD", "MODERATE", "SEVERE"}, Source: file + ":7", file: file, line: 7, col: 3},
		"ARM":     {Type: Nominal, Levels: []string{"PLACEBO", "ACTIVE 10 MG"}, Source: file + ":10", file: file, line: 10, col: 3},
		"SEX":     {Type: Binary, Levels: []string{"F", "M"}, Source: file + ":13", file: file, line: 13, col: 3},
		"BRTHDTC": {Type: DateTime, Source: file + ":16", file: file, line: 16, col: 3},
	}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("ReadVarsFile(%s) =\n%+v\nwant\n%+v", file, got, want)
	}

	// Applied to dm.csv: every variable but AESEV exists.
	tbl, err := ReadCSVFile("testdata/csv/dm.csv", CSVOptions{Infer: InferOptions{Vars: got}})
	if err != nil {
		t.Fatal(err)
	}
	age := tbl.Col("AGE")
	if age.Type != Continuous || age.Unit != "years" || age.Label != "Age at informed consent" || age.Why != "set by "+file+":3" {
		t.Errorf("AGE: %v %q %q %q", age.Type, age.Unit, age.Label, age.Why)
	}
	arm := tbl.Col("ARM")
	if arm.Type != Nominal || !reflect.DeepEqual(arm.Levels, []string{"PLACEBO", "ACTIVE 10 MG"}) || !reflect.DeepEqual(arm.Codes, []int32{0, 1, 1, 0}) {
		t.Errorf("ARM: %v %q %v", arm.Type, arm.Levels, arm.Codes)
	}
	sex := tbl.Col("SEX")
	if sex.Type != Binary || !reflect.DeepEqual(sex.Codes, []int32{0, 1, 0, 1}) {
		t.Errorf("SEX: %v %v", sex.Type, sex.Codes)
	}
	if c := tbl.Col("BRTHDTC"); c.Type != DateTime || c.String(1) != "1962-03" || !c.Missing(3) {
		t.Errorf("BRTHDTC: %v %q", c.Type, c.String(1))
	}
	err = (&Study{Tables: []*Table{tbl}}).CheckVars(got)
	wantErr := file + `:7:3: variable "AESEV": unknown variable: no table has it`
	if err == nil || err.Error() != wantErr || !errors.Is(err, ErrUnknownVariable) {
		t.Errorf("CheckVars error %v, want %s", err, wantErr)
	}
	delete(got, "AESEV")
	if err := (&Study{Tables: []*Table{tbl}}).CheckVars(got); err != nil {
		t.Errorf("CheckVars: %v", err)
	}
}

func TestCheckVarsSeveral(t *testing.T) {
	vars, err := ParseVars("v.yaml", []byte("variables:\n  ZZ:\n    type: binary\n  AGE:\n    unit: years\n  AA:\n    type: nominal\n"))
	if err != nil {
		t.Fatal(err)
	}
	tbl := readCSVString(t, "dm.csv", "AGE\n1\n2\n", CSVOptions{})
	err = (&Study{Tables: []*Table{tbl}}).CheckVars(vars)
	want := `v.yaml:2:3: variable "ZZ": unknown variable: no table has it; also unknown: "AA"`
	if err == nil || err.Error() != want {
		t.Errorf("CheckVars error %v, want %s", err, want)
	}
	// Overrides from elsewhere (no file) name their source.
	err = (&Study{Tables: []*Table{tbl}}).CheckVars(map[string]VarSpec{"X": {Source: "define.xml"}})
	want = `variable "X" (define.xml): unknown variable: no table has it`
	if err == nil || err.Error() != want {
		t.Errorf("CheckVars error %v, want %s", err, want)
	}
}

func TestParseVarsErrors(t *testing.T) {
	tests := []struct{ in, want string }{
		{"variables:\n  AGE:\n    type: [a]\n", "v.yaml:3:11: variable \"AGE\": type must be a plain value"},
		{"variables:\n  AGE:\n    unit: {a: b}\n", "v.yaml:3:11: variable \"AGE\": unit must be a plain value"},
		{"variables:\n  AGE:\n    levels: a\n", "v.yaml:3:13: variable \"AGE\": levels must be a list"},
		{"variables:\n  AGE:\n    levels: [[a]]\n", "v.yaml:3:14: variable \"AGE\": a level must be a plain value"},
		{"variables:\n  AGE: continuous\n", "v.yaml:2:8: variable \"AGE\": want a mapping of settings"},
		{"variables:\n  AGE: {}\n  AGE: {}\n", "v.yaml:3:3: variable \"AGE\" listed twice"},
		{"- a\n", "v.yaml:1:1: want a mapping with a \"variables\" key"},
		{"variables: 3\n", "v.yaml:1:1: want \"variables\": a mapping from variable name to settings"},
		{"variables:\n  A: b: c\n", "v.yaml:2: mapping values are not allowed in this context"},
		{"variables:\n  A: '\n", "v.yaml:2: found unexpected end of stream"},
		{"variables:\n  A:\n\x01\n", "v.yaml:3: control characters are not allowed"},
		{"# only a comment\n", "v.yaml:1: empty variables file"},
	}
	for _, tt := range tests {
		_, err := ParseVars("v.yaml", []byte(tt.in))
		if err == nil || err.Error() != tt.want {
			t.Errorf("ParseVars(%q) error\n got %v\nwant %s", tt.in, err, tt.want)
		}
		var pe *ParseError
		if !errors.As(err, &pe) || pe.Line <= 0 || strings.Contains(err.Error(), "\n") {
			t.Errorf("ParseVars(%q): want a one-line *ParseError with a line, got %#v", tt.in, err)
		}
	}
	// Levels alone make an ordinal.
	v, err := ParseVars("v.yaml", []byte("variables:\n  PAIN:\n    levels: [NONE, SOME, A LOT]\n"))
	if err != nil || v["PAIN"].Type != Ordinal {
		t.Errorf("levels without type: %+v, %v, want ordinal", v, err)
	}
}
