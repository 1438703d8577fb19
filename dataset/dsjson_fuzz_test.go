package dataset

import (
	"bytes"
	"path/filepath"
	"testing"
)

// FuzzReadDatasetJSON: no panics, every error positioned, every table valid,
// and every table WriteDatasetJSON writes reads back with the same shape.
func FuzzReadDatasetJSON(f *testing.F) {
	addSeeds(f, filepath.Join(dsjsonDir, "*json"))
	f.Fuzz(func(t *testing.T, b []byte) {
		tb, err := ReadDatasetJSON("fuzz.json", bytes.NewReader(b), DatasetJSONOptions{})
		if err != nil {
			checkParsed(t, nil, err)
			return
		}
		checkParsed(t, []*Table{tb}, nil)
		var buf bytes.Buffer
		if err := WriteDatasetJSON(&buf, tb, DatasetJSONMeta{CreationDateTime: "2024-01-01T00:00:00"}); err != nil {
			t.Fatalf("WriteDatasetJSON: %v", err)
		}
		back, err := ReadDatasetJSON("back.json", &buf, DatasetJSONOptions{})
		if err != nil {
			t.Fatalf("reading WriteDatasetJSON output: %v\n%s", err, buf.String())
		}
		if back.NRows != tb.NRows || len(back.Cols) != len(tb.Cols) {
			t.Fatalf("round trip: %d rows × %d columns, want %d × %d", back.NRows, len(back.Cols), tb.NRows, len(tb.Cols))
		}
	})
}
