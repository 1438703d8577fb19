package dataset

import (
	"bufio"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// writeMixedCSV writes a rows × cols CSV from a seeded generator: 60%
// continuous columns (two decimals), 15% ordinal integers 1–5, 15% nominal
// text (12 levels), 10% binary Y/N, each cell missing with probability 0.1.
// A USUBJID column comes first. It returns the column count by kind.
func writeMixedCSV(path string, rows, cols int, src rand.Source) (map[Type]int, error) {
	r := rand.New(src)
	f, err := os.Create(path)
	if err != nil {
		return nil, err
	}
	w := bufio.NewWriterSize(f, 1<<20)
	kinds := make([]Type, cols)
	count := map[Type]int{}
	w.WriteString("USUBJID")
	for j := range kinds {
		switch u := r.Float64(); {
		case u < 0.60:
			kinds[j] = Continuous
		case u < 0.75:
			kinds[j] = Ordinal
		case u < 0.90:
			kinds[j] = Nominal
		default:
			kinds[j] = Binary
		}
		count[kinds[j]]++
		fmt.Fprintf(w, ",V%04d", j)
	}
	w.WriteByte('\n')
	towns := []string{"ALPHA", "BRAVO", "CHARLIE", "DELTA", "ECHO", "FOXTROT", "GOLF", "HOTEL", "INDIA", "JULIET", "KILO", "LIMA"}
	buf := make([]byte, 0, 32)
	for i := 0; i < rows; i++ {
		fmt.Fprintf(w, "S-%06d", i+1)
		for j := range kinds {
			w.WriteByte(',')
			if r.Float64() < 0.1 {
				continue
			}
			buf = buf[:0]
			switch kinds[j] {
			case Continuous:
				buf = strconv.AppendFloat(buf, 50+15*r.NormFloat64(), 'f', 2, 64)
			case Ordinal:
				buf = strconv.AppendInt(buf, int64(1+r.IntN(5)), 10)
			case Nominal:
				buf = append(buf, towns[r.IntN(len(towns))]...)
			case Binary:
				if r.IntN(2) == 0 {
					buf = append(buf, 'Y')
				} else {
					buf = append(buf, 'N')
				}
			}
			w.Write(buf)
		}
		w.WriteByte('\n')
	}
	if err := w.Flush(); err != nil {
		f.Close()
		return nil, err
	}
	return count, f.Close()
}

// BenchmarkReadCSV loads a 5,000-row × 1,000-column mixed CSV (plus USUBJID),
// about 27 MB. Target: under 3 s and 400 MB peak RSS on 2 cores; measure RSS with
//
//	go test -c -o /tmp/dataset.test ./dataset &&
//	/usr/bin/time -v /tmp/dataset.test -test.run='^$' -test.bench=ReadCSV/5000x1000 -test.benchtime=1x
func BenchmarkReadCSV(b *testing.B) {
	for _, size := range []struct{ rows, cols int }{{1000, 100}, {5000, 1000}} {
		b.Run(fmt.Sprintf("%dx%d", size.rows, size.cols), func(b *testing.B) {
			path := filepath.Join(b.TempDir(), "mixed.csv")
			kinds, err := writeMixedCSV(path, size.rows, size.cols, rand.NewPCG(1, 1))
			if err != nil {
				b.Fatal(err)
			}
			fi, _ := os.Stat(path)
			b.SetBytes(fi.Size())
			b.ReportAllocs()
			cpu0, cpuOK := processCPU()
			for b.Loop() {
				tbl, err := ReadCSVFile(path, CSVOptions{})
				if err != nil {
					b.Fatal(err)
				}
				if tbl.NRows != size.rows || len(tbl.Cols) != size.cols+1 {
					b.Fatalf("read %d×%d, want %d×%d", tbl.NRows, len(tbl.Cols), size.rows, size.cols+1)
				}
				got := map[Type]int{}
				for _, c := range tbl.Cols[1:] {
					got[c.Type]++
				}
				for k, n := range kinds {
					if got[k] != n {
						b.Fatalf("%d %v columns, want %d (%v)", got[k], k, n, got)
					}
				}
			}
			// CPU time per load, which unlike ns/op does not grow when other
			// processes compete for the cores.
			if cpu1, ok := processCPU(); ok && cpuOK {
				b.ReportMetric((cpu1-cpu0)/float64(b.N), "cpu-s/op")
			}
		})
	}
}

// BenchmarkParseISO8601 parses a mix of full and partial SDTM dates.
func BenchmarkParseISO8601(b *testing.B) {
	in := []string{"2003-12-15T13:14:17.123", "2003-12-15", "2003-12", "2003---15", "2003-12-15T-:15", "2003-12-01/2003-12-10"}
	b.ReportAllocs()
	for b.Loop() {
		for _, s := range in {
			if _, err := ParseISO8601(s); err != nil {
				b.Fatal(err)
			}
		}
	}
}

// writeMixedCSVSeed writes the benchmark's mixed CSV with a fixed seed.
func writeMixedCSVSeed(path string, rows, cols int) (map[Type]int, error) {
	return writeMixedCSV(path, rows, cols, rand.NewPCG(1, 1))
}

// processCPU returns the user plus system CPU time of this process in seconds
// from /proc/self/stat (fields 14 and 15, in clock ticks of 1/100 s, the
// USER_HZ of Linux on common architectures; proc(5)); ok is false elsewhere.
func processCPU() (sec float64, ok bool) {
	b, err := os.ReadFile("/proc/self/stat")
	if err != nil {
		return 0, false
	}
	s := string(b)
	i := strings.LastIndexByte(s, ')')
	if i < 0 {
		return 0, false
	}
	f := strings.Fields(s[i+1:]) // f[0] is field 3 (state)
	if len(f) < 13 {
		return 0, false
	}
	ut, err1 := strconv.ParseFloat(f[11], 64)
	st, err2 := strconv.ParseFloat(f[12], 64)
	if err1 != nil || err2 != nil {
		return 0, false
	}
	return (ut + st) / 100, true
}
