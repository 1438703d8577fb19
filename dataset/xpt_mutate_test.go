package dataset

import (
	"bytes"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"
)

// TestReadersMutated runs each reader on seeded random mutations of its
// fixtures (bytes flipped, spans deleted or duplicated): a quick, always-run
// complement to the fuzz targets with the same checks (no panic, positioned
// errors, valid tables).
func TestReadersMutated(t *testing.T) {
	r := rand.New(rand.NewPCG(7, 7))
	mutate := func(b []byte) []byte {
		b = bytes.Clone(b)
		for k := r.IntN(4) + 1; k > 0 && len(b) > 0; k-- {
			i := r.IntN(len(b))
			switch r.IntN(4) {
			case 0:
				b[i] = byte(r.IntN(256))
			case 1:
				b[i] ^= 1 << r.IntN(8)
			case 2:
				j := min(len(b), i+r.IntN(200))
				b = append(b[:i:i], b[j:]...)
			default:
				j := min(len(b), i+r.IntN(200))
				b = append(b[:j:j], append(bytes.Clone(b[i:j]), b[j:]...)...)
			}
		}
		return b
	}
	seeds := func(pattern string) [][]byte {
		files, _ := filepath.Glob(pattern)
		var out [][]byte
		for _, f := range files {
			b, err := os.ReadFile(f)
			if err != nil {
				t.Fatal(err)
			}
			out = append(out, b)
		}
		if len(out) == 0 {
			t.Fatalf("no files %s", pattern)
		}
		return out
	}
	xs, js, ds := seeds(filepath.Join(xptDir, "*.xpt")), seeds(filepath.Join(dsjsonDir, "*json")), seeds(filepath.Join(defineDir, "*", "*.xml"))
	for n := 0; n < 400; n++ {
		b := mutate(xs[n%len(xs)])
		ts, err := ReadXPT("m.xpt", bytes.NewReader(b), XPTOptions{})
		checkParsed(t, ts, err)
		b = mutate(js[n%len(js)])
		tb, err := ReadDatasetJSON("m.json", bytes.NewReader(b), DatasetJSONOptions{})
		if err == nil {
			checkParsed(t, []*Table{tb}, nil)
		} else {
			checkParsed(t, nil, err)
		}
		b = mutate(ds[n%len(ds)])
		if d, err := ReadDefine("m.xml", bytes.NewReader(b)); err != nil {
			checkParsed(t, nil, err)
		} else {
			for _, x := range d.Datasets {
				d.VarSpecs(x.Name)
			}
		}
	}
}
