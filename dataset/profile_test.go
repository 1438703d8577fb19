package dataset

import (
	"reflect"
	"testing"
)

// TestProfile checks the whole profile of a small table; every value is
// hand-derived from the rows below.
func TestProfile(t *testing.T) {
	const in = "USUBJID,AGE,SEX,AESEV,RFSTDTC,GRADE\n" +
		"S1,30.5,F,MILD,2023-05-10,1\n" +
		"S2,40,M,SEVERE,2023-05,2\n" +
		"S3,,F,MODERATE,2023-06-01,2\n" +
		"S4,51.5,F,MILD,,3\n"
	tbl := readCSVString(t, "ae.csv", in, CSVOptions{})
	tbl.Col("AGE").Unit = "years"
	tbl.Col("AGE").Label = "Age"
	got := Profile(tbl)
	want := []VarProfile{
		{Table: "AE", Name: "USUBJID", Type: "identifier", Why: "SDTM identifier variable name", N: 4, Rows: 4, Distinct: 4,
			Top: []LevelFreq{{"S1", 1}, {"S2", 1}, {"S3", 1}, {"S4", 1}}},
		// median of 30.5, 40, 51.5 is 40; no Top for a continuous variable
		{Table: "AE", Name: "AGE", Label: "Age", Type: "continuous", Why: "numeric with 3 distinct values", N: 3, Missing: 1, Rows: 4, Distinct: 3,
			Min: "30.5", Median: "40", Max: "51.5", Unit: "years"},
		// nominal/binary: no order, so no min, median or max
		{Table: "AE", Name: "SEX", Type: "binary", Why: "text with two distinct values", N: 4, Rows: 4, Distinct: 2,
			Top: []LevelFreq{{"F", 3}, {"M", 1}}},
		// ordinal: lower median of MILD, MILD, MODERATE, SEVERE is MILD
		{Table: "AE", Name: "AESEV", Type: "ordinal", Why: "levels of a known ordered vocabulary: MILD < MODERATE < SEVERE", N: 4, Rows: 4, Distinct: 3,
			Min: "MILD", Median: "MILD", Max: "SEVERE", Top: []LevelFreq{{"MILD", 2}, {"MODERATE", 1}, {"SEVERE", 1}}},
		// dates sorted by earliest day: 2023-05 (from 05-01), 2023-05-10, 2023-06-01
		{Table: "AE", Name: "RFSTDTC", Type: "date", Why: "SDTM date variable name (--DTC); 3 of 3 values parse", N: 3, Missing: 1, Rows: 4, Distinct: 3,
			Min: "2023-05", Median: "2023-05-10", Max: "2023-06-01"},
		// numeric ordinal: median (2+2)/2; Top by count, ties in ascending value
		{Table: "AE", Name: "GRADE", Type: "ordinal", Why: "integer scale with 3 levels (≤ 10)", N: 4, Rows: 4, Distinct: 3,
			Min: "1", Median: "2", Max: "3", Top: []LevelFreq{{"2", 2}, {"1", 1}, {"3", 1}}},
	}
	if len(got) != len(want) {
		t.Fatalf("Profile: %d variables, want %d", len(got), len(want))
	}
	for i := range want {
		if !reflect.DeepEqual(got[i], want[i]) {
			t.Errorf("Profile %s:\n got %+v\nwant %+v", want[i].Name, got[i], want[i])
		}
	}
	if p := got[1].MissingPct(); p != 25 {
		t.Errorf("AGE MissingPct = %v, want 25", p)
	}
	if p := (VarProfile{}).MissingPct(); p != 0 {
		t.Errorf("empty MissingPct = %v, want 0", p)
	}
}

// TestProfileInvalidAndTop: invalid dates are counted; Top keeps five levels.
func TestProfileInvalidAndTop(t *testing.T) {
	in := "AESTDTC,COLOUR\n2023-05-10,A\nUNK,B\n2023-05-10,C\n2023-05-11,D\n2023-05-11,E\n2023-05-12,F\n2023-05-12,F\n"
	tbl := readCSVString(t, "x.csv", in, CSVOptions{})
	got := Profile(tbl)
	if got[0].Invalid != 1 || got[0].Missing != 1 || got[0].Distinct != 3 || got[0].Median != "2023-05-11" {
		t.Errorf("AESTDTC profile %+v, want 1 invalid, 1 missing, 3 distinct, median 2023-05-11", got[0])
	}
	wantTop := []LevelFreq{{"F", 2}, {"A", 1}, {"B", 1}, {"C", 1}, {"D", 1}}
	if got[1].Type != "nominal" || !reflect.DeepEqual(got[1].Top, wantTop) || got[1].Distinct != 6 {
		t.Errorf("COLOUR profile %+v, want top %v", got[1], wantTop)
	}
}
