package assoc

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"testing"

	"github.com/crossform/crossform/dataset"
)

// BenchmarkAllPairs runs the engine on seeded synthetic tables (60%
// continuous, 15% ordinal, 15% nominal, 10% binary; 10% of cells missing,
// or none) up to the size, 5,000 rows × 1,000 variables.
func BenchmarkAllPairs(b *testing.B) {
	for _, sz := range []struct {
		n, p int
		miss float64
	}{{500, 100, 0.1}, {2000, 300, 0.1}, {5000, 300, 0.1}, {5000, 1000, 0.1}, {5000, 1000, 0}} {
		b.Run(fmt.Sprintf("n=%d/p=%d/miss=%g", sz.n, sz.p, sz.miss), func(b *testing.B) {
			if testing.Short() && sz.n*sz.p > 1_000_000 {
				b.Skip("large size skipped in -short mode")
			}
			tbl := synthTable(sz.n, sz.p, sz.miss, 1)
			b.ReportAllocs()
			for b.Loop() {
				if _, err := AllPairs(context.Background(), tbl, Options{}); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

func BenchmarkSpearman(b *testing.B) {
	for _, n := range []int{100, 10_000} {
		b.Run(fmt.Sprintf("n=%d", n), func(b *testing.B) {
			rng := rand.New(rand.NewPCG(1, 1))
			x, y := make([]float64, n), make([]float64, n)
			for i := range x {
				x[i], y[i] = rng.NormFloat64(), rng.NormFloat64()
			}
			b.ReportAllocs()
			for b.Loop() {
				if r := Spearman(x, y); math.IsNaN(r.Rho) {
					b.Fatal("NaN")
				}
			}
		})
	}
}

func BenchmarkSomersD(b *testing.B) {
	for _, k := range []int{5, 100} {
		b.Run(fmt.Sprintf("%dx%d", k, k), func(b *testing.B) {
			rng := rand.New(rand.NewPCG(1, 1))
			t := make([]float64, k*k)
			for i := range t {
				t[i] = float64(rng.IntN(20))
			}
			b.ReportAllocs()
			for b.Loop() {
				if r := SomersD(t, k, k); math.IsNaN(r.DYX) {
					b.Fatal("NaN")
				}
			}
		})
	}
}

// BenchmarkGramComplete times the complete-data Spearman path alone: ranks of
// p numeric columns without missing values and one rank Gram matrix
// (gramSyrk: gonum's pure-Go BLAS, or OpenBLAS under -tags openblas), as numpy
// would do with a BLAS dsyrk.
func BenchmarkGramComplete(b *testing.B) {
	for _, sz := range []struct{ n, p int }{{2000, 150}, {5000, 750}} {
		b.Run(fmt.Sprintf("n=%d/p=%d", sz.n, sz.p), func(b *testing.B) {
			rng := rand.New(rand.NewPCG(1, 1))
			prep := make([]*col, sz.p)
			for j := range prep {
				v := make([]float64, sz.n)
				for i := range v {
					v[i] = rng.NormFloat64()
				}
				prep[j] = prepare(dataset.NewFloatColumn("x", dataset.Continuous, v), NotSkipped, sz.n, 10)
			}
			b.ReportAllocs()
			for b.Loop() {
				if g, gp := gramOfComplete(prep, sz.n, runtime.GOMAXPROCS(0)); gp != sz.p || len(g) != gp*gp {
					b.Fatalf("gram of %d columns, want %d", gp, sz.p)
				}
			}
		})
	}
}
