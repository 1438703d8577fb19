package dataset

import (
	"bytes"
	"path/filepath"
	"strings"
	"testing"

	"github.com/crossform/crossform/dataset/demostudy"
)

// TestRoundTripDemoStudy writes every form of the generated demo study as
// CSV, reads it, writes it as Dataset-JSON and XPT (our writers) and reads
// those back: the same tables column by column.
func TestRoundTripDemoStudy(t *testing.T) {
	st, err := demostudy.Generate(demostudy.DefaultConfig())
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	if err := st.WriteCSV(dir); err != nil {
		t.Fatal(err)
	}
	files, _ := filepath.Glob(filepath.Join(dir, "*.csv"))
	n := 0
	for _, f := range files {
		if strings.HasPrefix(filepath.Base(f), "_") {
			continue
		}
		src, err := ReadCSVFile(f, CSVOptions{})
		if err != nil {
			t.Fatal(err)
		}
		var js bytes.Buffer
		if err := WriteDatasetJSON(&js, src, DatasetJSONMeta{CreationDateTime: "2024-01-01T00:00:00"}); err != nil {
			t.Fatal(err)
		}
		back, err := ReadDatasetJSON(src.Name+".json", &js, DatasetJSONOptions{})
		if err != nil {
			t.Fatalf("%s: Dataset-JSON: %v", src.Name, err)
		}
		if err := sameTable(src, back); err != nil {
			t.Errorf("%s: CSV vs Dataset-JSON: %v", src.Name, err)
		}
		var xp bytes.Buffer
		if err := WriteXPT(&xp, src); err != nil {
			t.Fatalf("%s: WriteXPT: %v", src.Name, err)
		}
		xs, err := ReadXPT(src.Name+".xpt", &xp, XPTOptions{})
		if err != nil {
			t.Fatalf("%s: XPT: %v", src.Name, err)
		}
		if err := sameTable(src, xs[0]); err != nil {
			t.Errorf("%s: CSV vs XPT: %v", src.Name, err)
		}
		n++
	}
	if n < 3 {
		t.Fatalf("only %d forms compared", n)
	}
}
