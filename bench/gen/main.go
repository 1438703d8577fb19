// Command gen writes the seeded synthetic table used by bench/peers.sh: rows ×
// cols variables, 60% continuous (a quarter of them rounded to one decimal,
// so with ties), 15% ordinal (integers 1–5), 15% nominal (3–6 letter
// levels), 10% binary (Y/N), built from five latent factors so that pairs are
// associated, with each cell missing (empty) with probability -missing. A
// second file, PATH.types.csv, lists each variable's intended type so that the
// peer scripts analyse the same numeric and ordinal subset.
//
//	go run ./bench/gen -rows 5000 -cols 1000 -missing 0.1 -seed 1 -out bench/out/data.csv
package main

import (
	"bufio"
	"flag"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"strconv"
)

func main() {
	rows := flag.Int("rows", 5000, "rows")
	cols := flag.Int("cols", 1000, "variables")
	miss := flag.Float64("missing", 0.1, "probability that a cell is missing")
	seed := flag.Uint64("seed", 1, "random seed")
	out := flag.String("out", "bench/out/data.csv", "output CSV")
	flag.Parse()
	if err := run(*rows, *cols, *miss, *seed, *out); err != nil {
		fmt.Fprintln(os.Stderr, "gen:", err)
		os.Exit(2)
	}
}

func run(n, p int, miss float64, seed uint64, out string) error {
	rng := rand.New(rand.NewPCG(seed, 2))
	const nf = 5
	f := make([][]float64, nf)
	for k := range f {
		f[k] = make([]float64, n)
		for i := range f[k] {
			f[k][i] = rng.NormFloat64()
		}
	}
	cells := make([][]string, p)
	types := make([]string, p)
	for j := 0; j < p; j++ {
		k, w := rng.IntN(nf), rng.Float64()*2-1
		v := make([]float64, n)
		for i := range v {
			v[i] = w*f[k][i] + rng.NormFloat64()
		}
		c := make([]string, n)
		frac := float64(j%20) / 20
		for i, x := range v {
			switch {
			case frac < 0.60:
				types[j] = "continuous"
				if j%4 == 0 {
					c[i] = strconv.FormatFloat(math.Round(x*10)/10, 'f', 1, 64)
				} else {
					c[i] = strconv.FormatFloat(50+10*x, 'f', 4, 64)
				}
			case frac < 0.75:
				types[j] = "ordinal"
				c[i] = strconv.Itoa(int(math.Max(1, math.Min(5, math.Round(x+3)))))
			case frac < 0.90:
				types[j] = "nominal"
				L := 3 + j%4
				c[i] = string(rune('A' + int(math.Max(0, math.Min(float64(L-1), math.Floor(x+float64(L)/2))))))
			default:
				types[j] = "binary"
				c[i] = "N"
				if x > 0 {
					c[i] = "Y"
				}
			}
			if rng.Float64() < miss {
				c[i] = ""
			}
		}
		cells[j] = c
	}
	if err := writeCSV(out, n, p, cells); err != nil {
		return err
	}
	tf, err := os.Create(out + ".types.csv")
	if err != nil {
		return err
	}
	tw := bufio.NewWriter(tf)
	fmt.Fprintln(tw, "name,type")
	for j, t := range types {
		fmt.Fprintf(tw, "V%04d,%s\n", j, t)
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	return tf.Close()
}

func writeCSV(path string, n, p int, cells [][]string) error {
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	w := bufio.NewWriterSize(f, 1<<20)
	for j := 0; j < p; j++ {
		if j > 0 {
			w.WriteByte(',')
		}
		fmt.Fprintf(w, "V%04d", j)
	}
	w.WriteByte('\n')
	for i := 0; i < n; i++ {
		for j := 0; j < p; j++ {
			if j > 0 {
				w.WriteByte(',')
			}
			w.WriteString(cells[j][i])
		}
		w.WriteByte('\n')
	}
	if err := w.Flush(); err != nil {
		return err
	}
	return f.Close()
}
