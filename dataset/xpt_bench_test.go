package dataset

import (
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"testing"
)

// benchXPTTable returns a rows × cols table from a seeded generator: half
// continuous numerics (10% missing, some special missing .A), half 8-byte
// character variables of 20 levels (10% empty).
func benchXPTTable(rows, cols int, src rand.Source) *Table {
	r := rand.New(src)
	t := NewTable("BENCH", rows)
	for j := 0; j < cols; j++ {
		name := fmt.Sprintf("V%04d", j)
		if j%2 == 0 {
			v := make([]float64, rows)
			special := map[int]byte{}
			for i := range v {
				switch u := r.Float64(); {
				case u < 0.1:
					v[i] = math.NaN()
					if u < 0.01 {
						special[i] = 'A'
					}
				default:
					v[i] = math.Round(r.NormFloat64()*1e4) / 100
				}
			}
			c := NewFloatColumn(name, Continuous, v)
			c.Special = special
			t.Add(c)
			continue
		}
		levels := make([]string, 20)
		for k := range levels {
			levels[k] = fmt.Sprintf("LEV%05d", k*37+j)
		}
		codes := make([]int32, rows)
		for i := range codes {
			codes[i] = int32(r.IntN(20))
			if r.Float64() < 0.1 {
				codes[i] = -1
			}
		}
		t.Add(NewCodeColumn(name, Nominal, codes, levels))
	}
	return t
}

// BenchmarkReadXPT reads a generated transport file of 125,000 rows × 100
// variables (50 numeric, 50 character of 8 bytes: 100 MB). Decoded columns
// take 50 × 125,000 × 8 B (floats) + 50 × 125,000 × 4 B (codes) = 75 MB.
//
//	go test ./dataset -run='^$' -bench=ReadXPT -benchtime=5x
func BenchmarkReadXPT(b *testing.B) {
	const rows, cols = 125_000, 100
	path := filepath.Join(b.TempDir(), "bench.xpt")
	f, err := os.Create(path)
	if err != nil {
		b.Fatal(err)
	}
	if err := WriteXPT(f, benchXPTTable(rows, cols, rand.NewPCG(1, 1))); err != nil {
		b.Fatal(err)
	}
	if err := f.Close(); err != nil {
		b.Fatal(err)
	}
	fi, err := os.Stat(path)
	if err != nil {
		b.Fatal(err)
	}
	runtime.GC()
	b.SetBytes(fi.Size())
	b.ReportAllocs()
	for b.Loop() {
		ts, err := ReadXPTFile(path, XPTOptions{})
		if err != nil {
			b.Fatal(err)
		}
		if ts[0].NRows != rows || len(ts[0].Cols) != cols {
			b.Fatalf("%d × %d", ts[0].NRows, len(ts[0].Cols))
		}
	}
}
