package dataset

import (
	"bytes"
	"fmt"
	"math"
	"path/filepath"
	"testing"
)

// sameTable compares two tables column by column: names, order, type,
// storage, missing marks and values (floats bit for bit, levels as text,
// dates by interval and precision), special missing codes and keys.
func sameTable(a, b *Table) error {
	if a.NRows != b.NRows {
		return fmt.Errorf("%d rows, other has %d", a.NRows, b.NRows)
	}
	if len(a.Cols) != len(b.Cols) {
		return fmt.Errorf("columns %v, other has %v", a.Names(), b.Names())
	}
	if fmt.Sprint(a.Keys) != fmt.Sprint(b.Keys) {
		return fmt.Errorf("keys %v, other has %v", a.Keys, b.Keys)
	}
	for j, x := range a.Cols {
		y := b.Cols[j]
		if x.Name != y.Name || x.Type != y.Type || x.Storage != y.Storage {
			return fmt.Errorf("column %d: %s %s storage %d, other has %s %s storage %d (%s / %s)",
				j+1, x.Name, x.Type, x.Storage, y.Name, y.Type, y.Storage, x.Why, y.Why)
		}
		for i := 0; i < a.NRows; i++ {
			if x.Missing(i) != y.Missing(i) {
				return fmt.Errorf("%s row %d: missing %v, other %v", x.Name, i+1, x.Missing(i), y.Missing(i))
			}
			if x.Special[i] != y.Special[i] {
				return fmt.Errorf("%s row %d: special missing %q, other %q", x.Name, i+1, x.Special[i], y.Special[i])
			}
			if x.Missing(i) {
				continue
			}
			switch x.Storage {
			case StoreFloat:
				if math.Float64bits(x.Floats[i]) != math.Float64bits(y.Floats[i]) {
					return fmt.Errorf("%s row %d: %v, other %v", x.Name, i+1, x.Floats[i], y.Floats[i])
				}
			case StoreCode:
				if x.String(i) != y.String(i) {
					return fmt.Errorf("%s row %d: %q, other %q", x.Name, i+1, x.String(i), y.String(i))
				}
			case StoreDate:
				if x.DateLo[i] != y.DateLo[i] || x.DateHi[i] != y.DateHi[i] || x.DatePrec[i] != y.DatePrec[i] {
					return fmt.Errorf("%s row %d: %s [%v, %v), other %s [%v, %v)", x.Name, i+1,
						x.String(i), x.DateLo[i], x.DateHi[i], y.String(i), y.DateLo[i], y.DateHi[i])
				}
			}
		}
		if x.Storage == StoreCode && fmt.Sprint(x.Levels) != fmt.Sprint(y.Levels) && x.Type == Ordinal {
			return fmt.Errorf("%s: ordinal levels %q, other %q", x.Name, x.Levels, y.Levels)
		}
	}
	return nil
}

// TestRoundTrip reads testdata/xpt/roundtrip.csv, writes it as Dataset-JSON
// and NDJSON (our writer) and XPT (our writer), reads them back, and reads
// the same CSV as written by R haven's write_xpt (testdata/xpt/roundtrip.xpt,
// make_fixtures.R part 5): every form gives the same table column by column.
func TestRoundTrip(t *testing.T) {
	// roundtrip.csv: a small SDTM-like AE table covering every storage:
	// identifiers, a binary flag, an ordinal vocabulary, an integer scale,
	// continuous values, ISO dates (full and partial) and missing values.
	src, err := ReadCSVFile(filepath.Join(xptDir, "roundtrip.csv"), CSVOptions{})
	if err != nil {
		t.Fatal(err)
	}
	src.Name = "AE"
	var js bytes.Buffer
	if err := WriteDatasetJSON(&js, src, DatasetJSONMeta{CreationDateTime: "2024-01-01T00:00:00"}); err != nil {
		t.Fatal(err)
	}
	fromJSON, err := ReadDatasetJSON("ae.json", &js, DatasetJSONOptions{})
	if err != nil {
		t.Fatalf("ReadDatasetJSON: %v\n%s", err, js.String())
	}
	if err := sameTable(src, fromJSON); err != nil {
		t.Errorf("CSV vs Dataset-JSON: %v", err)
	}
	var nd bytes.Buffer
	if err := WriteDatasetJSON(&nd, src, DatasetJSONMeta{CreationDateTime: "2024-01-01T00:00:00", NDJSON: true}); err != nil {
		t.Fatal(err)
	}
	fromND, err := ReadDatasetJSON("ae.ndjson", &nd, DatasetJSONOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if err := sameTable(src, fromND); err != nil {
		t.Errorf("CSV vs Dataset-JSON NDJSON: %v", err)
	}
	var xp bytes.Buffer
	if err := WriteXPT(&xp, src); err != nil {
		t.Fatal(err)
	}
	fromXPT, err := ReadXPT("ae.xpt", &xp, XPTOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if err := sameTable(src, fromXPT[0]); err != nil {
		t.Errorf("CSV vs XPT (WriteXPT): %v", err)
	}
	// The same rows written by R haven 2.5.1 (make_fixtures.R, part 5).
	haven, err := ReadXPTFile(filepath.Join(xptDir, "roundtrip.xpt"), XPTOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if err := sameTable(src, haven[0]); err != nil {
		t.Errorf("CSV vs XPT (haven write_xpt): %v", err)
	}
}
