package dataset

import (
	"fmt"
	"math"
	"reflect"
	"strings"
	"testing"
)

// buildColumn types values through a Builder; "" is missing.
func buildColumn(name string, values []string, o InferOptions) (*Column, error) {
	b := NewBuilder(name)
	for _, v := range values {
		b.Append(v, v == "")
	}
	return b.Column(o)
}

func seq(n int, f func(i int) string) []string {
	out := make([]string, n)
	for i := range out {
		out[i] = f(i)
	}
	return out
}

func repeat(n int, v ...string) []string {
	var out []string
	for len(out) < n {
		out = append(out, v...)
	}
	return out[:n]
}

// TestInferRules checks one case per rule documented on Builder.Column, in
// rule order, with the reason recorded in Column.Why.
func TestInferRules(t *testing.T) {
	dates20 := seq(20, func(i int) string { return fmt.Sprintf("2023-05-%02d", i+1) })
	dates19bad1 := append(append([]string(nil), dates20[:19]...), "10MAY2023")
	dates18bad2 := append(repeat(18, dates20[:9]...), "UNK", "2023/05/20")
	tests := []struct {
		rule    string
		name    string
		values  []string
		typ     Type
		storage Storage
		why     string
		levels  []string // for coded storage
		invalid int
	}{
		{"1 identifier name", "USUBJID", []string{"S-1", "S-1", "S-2"}, Identifier, StoreCode, "SDTM identifier variable name", []string{"S-1", "S-2"}, 0},
		{"1 identifier name, numeric --SEQ", "AESEQ", []string{"10", "9", "1"}, Identifier, StoreCode, "SDTM identifier variable name", []string{"1", "9", "10"}, 0},
		{"1 identifier name keeps leading zeros", "SUBJID", []string{"007", "010", "7"}, Identifier, StoreCode, "SDTM identifier variable name", []string{"007", "7", "010"}, 0},
		{"2 date by name, year only", "BRTHDTC", []string{"1961", "1975", ""}, DateTime, StoreDate, "SDTM date variable name (--DTC); 2 of 2 values parse", nil, 0},
		{"2 date by name, invalid kept", "AESTDTC", []string{"2023-05-10", "10MAY2023", "UNK", "2023-05"}, DateTime, StoreDate, "SDTM date variable name (--DTC); 2 of 4 values parse", nil, 2},
		{"4 binary numeric", "FLAG01", []string{"0", "1", "1", "", "0"}, Binary, StoreFloat, "numeric with two distinct values", nil, 0},
		{"4 binary numeric, same value written twice", "DOSE", []string{"1.5", "1.50", "2"}, Binary, StoreFloat, "numeric with two distinct values", nil, 0},
		{"4 ordinal integer scale", "GRADE", []string{"1", "2", "3", "5", "4", "2"}, Ordinal, StoreFloat, "integer scale with 5 levels (≤ 10)", nil, 0},
		{"4 integers, too many levels", "SCORE", seq(30, func(i int) string { return fmt.Sprint(i) }), Continuous, StoreFloat, "numeric with more than 10 distinct values", nil, 0},
		{"4 continuous", "WEIGHT", []string{"70.5", "80", "65.25"}, Continuous, StoreFloat, "numeric with 3 distinct values", nil, 0},
		{"4 large integers are not a scale", "COUNT", []string{"1e12", "2e12", "3e12"}, Continuous, StoreFloat, "numeric with 3 distinct values", nil, 0},
		{"5 date by share, 19 of 20", "VISDATE", dates19bad1, DateTime, StoreDate, "ISO 8601 dates (19 of 20 values parse)", nil, 1},
		{"5 not dates, 18 of 20", "VISDATE", dates18bad2, Nominal, StoreCode, "text with 11 levels", nil, 0},
		{"6 binary text", "AESER", []string{"Y", "N", "", "Y"}, Binary, StoreCode, "text with two distinct values", []string{"N", "Y"}, 0},
		{"7 known order", "AESEV", []string{"SEVERE", "MILD", "MODERATE", "MILD"}, Ordinal, StoreCode,
			"levels of a known ordered vocabulary: MILD < MODERATE < SEVERE", []string{"MILD", "MODERATE", "SEVERE"}, 0},
		{"7 known order, subset", "LBNRIND", []string{"HIGH", "LOW", "NORMAL", "", "HIGH"}, Ordinal, StoreCode,
			"levels of a known ordered vocabulary: LOW < NORMAL < HIGH", []string{"LOW", "NORMAL", "HIGH"}, 0},
		{"8 unique text", "SAMPLEID", seq(20, func(i int) string { return fmt.Sprintf("K%03d", i) }), Identifier, StoreCode, "text unique on every row", nil, 0},
		{"8 unique but too few rows", "SAMPLEID", seq(19, func(i int) string { return fmt.Sprintf("K%03d", i) }), Nominal, StoreCode, "text with 19 levels", nil, 0},
		{"3 free text by name", "AETERM", []string{"HEADACHE", "NAUSEA", "HEADACHE"}, FreeText, StoreCode, "SDTM verbatim text variable name", []string{"HEADACHE", "NAUSEA"}, 0},
		{"9 free text by share", "COMMENT", append(seq(60, func(i int) string { return fmt.Sprintf("note %d", i) }), repeat(40, "none")...), FreeText, StoreCode, "61 distinct values in 100", nil, 0},
		{"10 nominal", "COLOUR", []string{"RED", "GREEN", "BLUE", "RED"}, Nominal, StoreCode, "text with 3 levels", []string{"BLUE", "GREEN", "RED"}, 0},
		{"no values", "EMPTY", []string{"", ""}, Nominal, StoreCode, "no values", []string{}, 0},
		{"one number", "CONST", []string{"3", "3"}, Ordinal, StoreFloat, "integer scale with 1 levels (≤ 10)", nil, 0},
		{"numbers then text", "LBSTRESC", []string{"5.10", "007", "<0.5"}, Nominal, StoreCode, "text with 3 levels", []string{"007", "5.10", "<0.5"}, 0},
	}
	for _, tt := range tests {
		t.Run(tt.rule, func(t *testing.T) {
			c, err := buildColumn(tt.name, tt.values, InferOptions{})
			if err != nil {
				t.Fatal(err)
			}
			if c.Type != tt.typ || c.Storage != tt.storage || c.Why != tt.why {
				t.Errorf("%s: type %v storage %v why %q, want %v %v %q", tt.name, c.Type, c.Storage, c.Why, tt.typ, tt.storage, tt.why)
			}
			if tt.levels != nil && !(len(tt.levels) == 0 && len(c.Levels) == 0) && !reflect.DeepEqual(c.Levels, tt.levels) {
				t.Errorf("%s: levels %q, want %q", tt.name, c.Levels, tt.levels)
			}
			if len(c.Invalid) != tt.invalid {
				t.Errorf("%s: %d invalid values %v, want %d", tt.name, len(c.Invalid), c.Invalid, tt.invalid)
			}
			for i, v := range tt.values {
				if v == "" && !c.Missing(i) {
					t.Errorf("%s: row %d not missing", tt.name, i)
				}
			}
			tbl := NewTable("T", len(tt.values))
			if err := tbl.Add(c); err != nil {
				t.Fatal(err)
			}
			if err := tbl.Validate(); err != nil {
				t.Error(err)
			}
		})
	}
}

// TestInferValues checks the stored values of a few typed columns.
func TestInferValues(t *testing.T) {
	c, err := buildColumn("AESTDTC", []string{"2023-05-10", "10MAY2023", "", "2023-05"}, InferOptions{})
	if err != nil {
		t.Fatal(err)
	}
	want := []InvalidValue{{Row: 1, Raw: "10MAY2023", Err: c.Invalid[0].Err}}
	if !reflect.DeepEqual(c.Invalid, want) || c.Invalid[0].Err.Error() != `not an ISO 8601 date: "10MAY2023" (want YYYY-MM-DD)` {
		t.Errorf("Invalid = %+v", c.Invalid)
	}
	if got := []string{c.String(0), c.String(1), c.String(2), c.String(3)}; !reflect.DeepEqual(got, []string{"2023-05-10", "", "", "2023-05"}) {
		t.Errorf("dates = %q", got)
	}
	if lo, hi, p, ok := c.Date(3); !ok || lo != d20230501 || hi != d20230601 || p != PrecMonth {
		t.Errorf("Date(3) = %v %v %v %v, want [%v, %v) month", lo, hi, p, ok, float64(d20230501), float64(d20230601))
	}
	if f := c.Float(3); !math.IsNaN(f) {
		t.Errorf("Float of a partial date = %v, want NaN", f)
	}
	if f := c.Float(0); f != d20230510 {
		t.Errorf("Float(2023-05-10) = %v, want %v", f, float64(d20230510))
	}

	g, err := buildColumn("GRADE", []string{"3", "", "1", "2"}, InferOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(g.Floats[:1], []float64{3}) || !math.IsNaN(g.Floats[1]) || g.Floats[2] != 1 {
		t.Errorf("GRADE floats = %v", g.Floats)
	}
	s, err := buildColumn("AESEV", []string{"SEVERE", "", "MILD", "MODERATE"}, InferOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(s.Codes, []int32{2, -1, 0, 1}) {
		t.Errorf("AESEV codes = %v, want [2 -1 0 1] in MILD < MODERATE < SEVERE", s.Codes)
	}
}

// TestInferOptions: the thresholds of InferOptions move the rules.
func TestInferOptions(t *testing.T) {
	vals := seq(12, func(i int) string { return fmt.Sprint(i) })
	c, _ := buildColumn("SCORE", vals, InferOptions{OrdinalMaxLevels: 12})
	if c.Type != Ordinal {
		t.Errorf("12 integer levels with OrdinalMaxLevels 12: %v (%s), want ordinal", c.Type, c.Why)
	}
	ids := seq(5, func(i int) string { return fmt.Sprintf("K%d", i) })
	c, _ = buildColumn("KIT", ids, InferOptions{IdentifierMinRows: 5})
	if c.Type != Identifier {
		t.Errorf("unique text with IdentifierMinRows 5: %v, want identifier", c.Type)
	}
	half := append(append([]string(nil), seq(8, func(i int) string { return fmt.Sprintf("2023-05-%02d", i+1) })...), "x", "y")
	c, _ = buildColumn("D", half, InferOptions{DateShare: 0.8})
	if c.Type != DateTime || len(c.Invalid) != 2 {
		t.Errorf("8 of 10 dates with DateShare 0.8: %v, %d invalid, want date, 2", c.Type, len(c.Invalid))
	}
}

// TestInferOverrides checks VarSpec overrides and the errors they can raise.
func TestInferOverrides(t *testing.T) {
	vars := func(name string, s VarSpec) InferOptions {
		return InferOptions{Vars: map[string]VarSpec{name: s}}
	}
	tests := []struct {
		name    string
		col     string
		values  []string
		spec    VarSpec
		typ     Type
		storage Storage
		levels  []string
		codes   []int32
	}{
		{"type", "AGE", []string{"30", "31", "30"}, VarSpec{Type: Continuous, Source: "vars.yaml:3"}, Continuous, StoreFloat, nil, nil},
		{"levels make an ordinal", "PAIN", []string{"SOME", "NONE", "A LOT"}, VarSpec{Type: Ordinal, Levels: []string{"NONE", "SOME", "A LOT"}},
			Ordinal, StoreCode, []string{"NONE", "SOME", "A LOT"}, []int32{1, 0, 2}},
		{"numeric levels in declared order", "TOXGR", []string{"1", "3", "2"}, VarSpec{Type: Ordinal, Levels: []string{"1", "2", "3", "4", "5"}},
			Ordinal, StoreCode, []string{"1", "2", "3", "4", "5"}, []int32{0, 2, 1}},
		{"nominal allowed levels", "ARM", []string{"B", "A"}, VarSpec{Type: Nominal, Levels: []string{"A", "B", "C"}},
			Nominal, StoreCode, []string{"A", "B", "C"}, []int32{1, 0}},
		{"declared identifier on numbers", "SITE", []string{"01", "2"}, VarSpec{Type: Identifier}, Identifier, StoreCode, []string{"01", "2"}, []int32{0, 1}},
		{"declared text", "NOTE", []string{"a", "b"}, VarSpec{Type: FreeText}, FreeText, StoreCode, []string{"a", "b"}, []int32{0, 1}},
		{"declared date on numbers", "YEAR", []string{"2003", "2004"}, VarSpec{Type: DateTime}, DateTime, StoreDate, nil, nil},
		{"declared ordinal, known vocabulary", "SEV", []string{"MILD", "SEVERE"}, VarSpec{Type: Ordinal}, Ordinal, StoreCode,
			[]string{"MILD", "MODERATE", "SEVERE"}, []int32{0, 2}},
		{"declared binary text", "SEX", []string{"M", "F"}, VarSpec{Type: Binary}, Binary, StoreCode, []string{"F", "M"}, []int32{1, 0}},
		{"unit and label only", "WT", []string{"70.5", "71"}, VarSpec{Unit: "kg", Label: "Weight"}, Binary, StoreFloat, nil, nil},
	}
	for _, tt := range tests {
		c, err := buildColumn(tt.col, tt.values, vars(tt.col, tt.spec))
		if err != nil {
			t.Errorf("%s: %v", tt.name, err)
			continue
		}
		if c.Type != tt.typ || c.Storage != tt.storage {
			t.Errorf("%s: %v %v (%s), want %v %v", tt.name, c.Type, c.Storage, c.Why, tt.typ, tt.storage)
		}
		if tt.levels != nil && (!reflect.DeepEqual(c.Levels, tt.levels) || !reflect.DeepEqual(c.Codes, tt.codes)) {
			t.Errorf("%s: levels %q codes %v, want %q %v", tt.name, c.Levels, c.Codes, tt.levels, tt.codes)
		}
		if tt.spec.Type != TypeUnknown && c.Why != "set by "+orDefault(tt.spec.Source, "override") {
			t.Errorf("%s: why %q", tt.name, c.Why)
		}
		if c.Unit != tt.spec.Unit || c.Label != tt.spec.Label {
			t.Errorf("%s: unit %q label %q, want %q %q", tt.name, c.Unit, c.Label, tt.spec.Unit, tt.spec.Label)
		}
	}

	bad := []struct {
		name   string
		col    string
		values []string
		spec   VarSpec
		want   string
		row    int
	}{
		{"value not in levels", "AESEV", []string{"MILD", "", "EXTREME"}, VarSpec{Type: Ordinal, Levels: []string{"MILD", "MODERATE", "SEVERE"}},
			`variable "AESEV": value "EXTREME" is not one of the declared levels ["MILD" "MODERATE" "SEVERE"]`, 2},
		{"number not in levels", "TOXGR", []string{"1", "6"}, VarSpec{Type: Ordinal, Levels: []string{"1", "2", "3", "4", "5"}},
			`variable "TOXGR": value "6" is not one of the declared levels ["1" "2" "3" "4" "5"]`, 1},
		{"not a number", "WEIGHT", []string{"70", "", "heavy"}, VarSpec{Type: Continuous},
			`variable "WEIGHT": declared continuous but value "heavy" is not a number`, 2},
		{"binary with three values", "FLAG", []string{"Y", "N", "N", "U"}, VarSpec{Type: Binary},
			`variable "FLAG": declared binary but has more than two distinct values`, 3},
		{"numeric binary with three values", "FLAG", []string{"0", "1", "", "2"}, VarSpec{Type: Binary},
			`variable "FLAG": declared binary but has more than two distinct values`, 3},
		{"ordinal text without levels", "PAIN", []string{"SOME", "NONE"}, VarSpec{Type: Ordinal},
			`variable "PAIN": declared ordinal but its levels are not numbers or a known order; list them in order under levels`, 0},
	}
	for _, tt := range bad {
		_, err := buildColumn(tt.col, tt.values, vars(tt.col, tt.spec))
		if err == nil || err.Error() != tt.want {
			t.Errorf("%s: error %v, want %s", tt.name, err, tt.want)
			continue
		}
		if re, ok := err.(*rowError); !ok || re.row != tt.row {
			t.Errorf("%s: error %#v, want row %d", tt.name, err, tt.row)
		}
	}
}

// TestBuilderLiteral: a Builder made as a literal in dictionary mode (as the
// XPT reader makes one) types like one fed through Append.
func TestBuilderLiteral(t *testing.T) {
	values := []string{"2", "", "10", "2", "1"}
	a, err := buildColumn("X", values, InferOptions{})
	if err != nil {
		t.Fatal(err)
	}
	// "1.5" and "1.50" are one number: binary, as in numeric mode.
	lit := &Builder{Name: "DOSE", lev: []string{"1.5", "1.50", "2"}, codes: []int32{0, 1, 2}}
	if c, err := lit.Column(InferOptions{}); err != nil || c.Type != Binary || c.Floats[1] != 1.5 {
		t.Errorf("literal DOSE: %v, %v", c, err)
	}
	b := &Builder{Name: "X", lev: []string{"2", "10", "1"}, codes: []int32{0, -1, 1, 0, 2}}
	c, err := b.Column(InferOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if a.Type != c.Type || a.Why != c.Why || a.Storage != c.Storage {
		t.Fatalf("literal %v %q %v, appended %v %q %v", c.Type, c.Why, c.Storage, a.Type, a.Why, a.Storage)
	}
	for i := range values {
		if a.String(i) != c.String(i) {
			t.Errorf("row %d: %q vs %q", i, a.String(i), c.String(i))
		}
	}
}

func TestParseType(t *testing.T) {
	for ty := Continuous; ty <= Identifier; ty++ {
		got, err := ParseType(ty.String())
		if err != nil || got != ty {
			t.Errorf("ParseType(%q) = %v, %v", ty.String(), got, err)
		}
	}
	for in, want := range map[string]Type{"datetime": DateTime, "freetext": FreeText, "free_text": FreeText, "id": Identifier} {
		if got, err := ParseType(in); err != nil || got != want {
			t.Errorf("ParseType(%q) = %v, %v, want %v", in, got, err, want)
		}
	}
	if _, err := ParseType("unknown"); err == nil {
		t.Error("ParseType(unknown) succeeded")
	}
	if !Continuous.Analysable() || FreeText.Analysable() || Identifier.Analysable() {
		t.Error("Analysable wrong")
	}
}

func TestParseNumber(t *testing.T) {
	for _, s := range []string{"1", "-1.5", "+2", ".5", "1.", "1e3", "1E-3", " 7 "} {
		if _, err := parseNumber(s); err != nil {
			t.Errorf("parseNumber(%q): %v", s, err)
		}
	}
	for _, s := range []string{"", "NaN", "Inf", "-inf", "0x1p3", "1_000", "1e400", "1,5", "--1", "e", "."} {
		if v, err := parseNumber(s); err == nil {
			t.Errorf("parseNumber(%q) = %v, want error", s, v)
		}
	}
	if strings.Contains("x", "y") {
		t.Fatal()
	}
}
