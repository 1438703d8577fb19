package dataset

import (
	"bytes"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// addFiles adds every file matching the patterns as a seed.
func addFiles(f *testing.F, add func([]byte), patterns ...string) {
	n := 0
	for _, p := range patterns {
		files, err := filepath.Glob(p)
		if err != nil {
			f.Fatal(err)
		}
		for _, name := range files {
			b, err := os.ReadFile(name)
			if err != nil {
				f.Fatal(err)
			}
			add(b)
			n++
		}
	}
	if n == 0 {
		f.Fatalf("no seed files match %q", patterns)
	}
}

// fuzzCSVOptions picks reader options from one fuzzed byte.
func fuzzCSVOptions(mode uint8) CSVOptions {
	var o CSVOptions
	switch mode % 3 {
	case 1:
		o.Encoding = "windows-1252"
	case 2:
		o.Encoding = "latin1"
	}
	o.SkipRagged = mode&4 != 0
	if mode&8 != 0 {
		o.MaxFieldBytes = 16
	}
	if mode&16 != 0 {
		o.Missing = []string{"", "ND"}
	}
	if mode&32 != 0 {
		o.Delimiter = ';'
	}
	return o
}

// FuzzReadCSV: no panics; every error is a *ParseError with a line; every
// table validates, has rows, and keeps invalid values missing.
func FuzzReadCSV(f *testing.F) {
	addFiles(f, func(b []byte) {
		f.Add(b, uint8(0))
		f.Add(b, uint8(4|1))
	}, "testdata/csv/*.csv", "testdata/csv/*.tsv", "testdata/bad/*.csv")
	f.Fuzz(func(t *testing.T, b []byte, mode uint8) {
		o := fuzzCSVOptions(mode)
		tbl, err := ReadCSV("fuzz.csv", bytes.NewReader(b), o)
		if err != nil {
			var pe *ParseError
			if !errors.As(err, &pe) || pe.Line <= 0 || pe.File != "fuzz.csv" {
				t.Fatalf("error without a line: %v", err)
			}
			return
		}
		if err := tbl.Validate(); err != nil {
			t.Fatalf("inconsistent table: %v", err)
		}
		if tbl.NRows == 0 || len(tbl.Cols) == 0 {
			t.Fatalf("table with %d rows and %d columns", tbl.NRows, len(tbl.Cols))
		}
		for _, c := range tbl.Cols {
			for _, v := range c.Invalid {
				if !c.Missing(v.Row) {
					t.Fatalf("column %s row %d: invalid value %q not missing", c.Name, v.Row, v.Raw)
				}
			}
		}
	})
}

// FuzzParseISO8601: no panics; errors wrap ErrNotISODate; a success has
// lo < hi and, at its precision, formats to text that parses to the same start
// (and, for a single value, the same interval).
func FuzzParseISO8601(f *testing.F) {
	for _, s := range []string{
		"2003-12-15T13:14:17.123", "2003-12-15T13:14:17", "2003-12-15T13:14", "2003-12-15T13",
		"2003-12-15", "2003-12", "2003", "2003-12-15T-:15", "2003-12-15T13:-:17", "2003---15",
		"--12-15", "-----T07:15", "2003-12-01/2003-12-10", "2024-02-29", "2023-02-29",
		"2003-12-15T13:14+01:00", "2003-12-15T13Z", "20230510", "UNK", "P2Y3M", "0000-01-01", "9999-12-31T23:59:59",
	} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		d, err := ParseISO8601(s)
		if err != nil {
			if !errors.Is(err, ErrNotISODate) {
				t.Fatalf("ParseISO8601(%q) error %v does not wrap ErrNotISODate", s, err)
			}
			return
		}
		if d.IsZero() {
			return
		}
		lo, hi := d.Interval()
		if !(lo < hi) {
			t.Fatalf("ParseISO8601(%q): interval [%v, %v)", s, lo, hi)
		}
		text := FormatDays(lo, d.Prec)
		back, err := ParseISO8601(text)
		if err != nil {
			t.Fatalf("ParseISO8601(%q) → FormatDays %q: %v", s, text, err)
		}
		blo, bhi := back.Interval()
		if blo != lo || back.Prec != d.Prec {
			t.Fatalf("ParseISO8601(%q) → %q → [%v, %v) %v, want start %v %v", s, text, blo, bhi, back.Prec, lo, d.Prec)
		}
		if d.End == nil && bhi != hi {
			t.Fatalf("ParseISO8601(%q) → %q → [%v, %v), want [%v, %v)", s, text, blo, bhi, lo, hi)
		}
		if math.IsNaN(lo) || math.IsInf(hi, 0) {
			t.Fatalf("ParseISO8601(%q): interval [%v, %v)", s, lo, hi)
		}
	})
}

// FuzzParseVars: no panics; every error is a *ParseError with a line; every
// success holds known types and distinct levels.
func FuzzParseVars(f *testing.F) {
	addFiles(f, func(b []byte) { f.Add(b) }, "testdata/csv/*.yaml", "testdata/bad/*.yaml")
	f.Fuzz(func(t *testing.T, b []byte) {
		vars, err := ParseVars("vars.yaml", b)
		if err != nil {
			var pe *ParseError
			if !errors.As(err, &pe) || pe.Line <= 0 || pe.File != "vars.yaml" {
				t.Fatalf("error without a line: %v", err)
			}
			if strings.Contains(err.Error(), "\n") {
				t.Fatalf("multi-line error: %q", err)
			}
			return
		}
		for name, spec := range vars {
			if spec.Type > Identifier {
				t.Fatalf("variable %q: type %v", name, spec.Type)
			}
			seen := map[string]bool{}
			for _, l := range spec.Levels {
				if seen[l] {
					t.Fatalf("variable %q: level %q twice", name, l)
				}
				seen[l] = true
			}
		}
	})
}
