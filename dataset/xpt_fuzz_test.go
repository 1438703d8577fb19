package dataset

import (
	"bytes"
	"errors"
	"os"
	"path/filepath"
	"testing"
)

// addSeeds adds every file matching pattern under testdata as a seed.
func addSeeds(f *testing.F, pattern string) {
	files, err := filepath.Glob(pattern)
	if err != nil || len(files) == 0 {
		f.Fatalf("no seeds for %s (%v)", pattern, err)
	}
	for _, p := range files {
		b, err := os.ReadFile(p)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b)
	}
}

// checkParsed fails unless err is a positioned *ParseError or the tables
// validate.
func checkParsed(t *testing.T, tables []*Table, err error) {
	t.Helper()
	if err != nil {
		var pe *ParseError
		if !errors.As(err, &pe) {
			t.Fatalf("error without position: %v", err)
		}
		if pe.File == "" {
			t.Fatalf("error without file: %v", err)
		}
		return
	}
	for _, tb := range tables {
		if err := tb.Validate(); err != nil {
			t.Fatalf("inconsistent table %s: %v", tb.Name, err)
		}
	}
}

// FuzzReadXPT: no panics, every error positioned, every table valid, and
// what WriteXPT can write reads back with the same shape.
func FuzzReadXPT(f *testing.F) {
	addSeeds(f, filepath.Join(xptDir, "*.xpt"))
	f.Fuzz(func(t *testing.T, b []byte) {
		ts, err := ReadXPT("fuzz.xpt", bytes.NewReader(b), XPTOptions{})
		checkParsed(t, ts, err)
		for _, tb := range ts {
			var buf bytes.Buffer
			if WriteXPT(&buf, tb) != nil {
				continue // e.g. a value below the IBM range
			}
			back, err := ReadXPT("back.xpt", &buf, XPTOptions{})
			if err != nil {
				t.Fatalf("reading WriteXPT output: %v", err)
			}
			if back[0].NRows > tb.NRows || len(back[0].Cols) != len(tb.Cols) {
				t.Fatalf("round trip: %d rows × %d columns, want %d × %d", back[0].NRows, len(back[0].Cols), tb.NRows, len(tb.Cols))
			}
		}
	})
}
