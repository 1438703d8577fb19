package assoc

import (
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"testing"

	"github.com/crossform/crossform/dataset"
)

// naiveGram returns the full gp×gp row-major a·aᵀ of the gp×n row-major a by
// the definition, c[i][j] = Σₖ a[i][k]·a[j][k], one triple loop.
func naiveGram(a []float64, gp, n int) []float64 {
	c := make([]float64, gp*gp)
	for i := 0; i < gp; i++ {
		for j := 0; j < gp; j++ {
			var s float64
			for k := 0; k < n; k++ {
				s += a[i*n+k] * a[j*n+k]
			}
			c[i*gp+j] = s
		}
	}
	return c
}

// gramInput fills a gp×n matrix: "doubled ranks" draws integers in [1, 2n]
// (like the engine's doubled mid-ranks, so every product and sum is an exact
// integer in float64), "normal" draws standard normals.
func gramInput(kind string, gp, n int, seed uint64) []float64 {
	rng := rand.New(rand.NewPCG(seed, 1))
	a := make([]float64, gp*n)
	for i := range a {
		switch kind {
		case "doubled ranks":
			a[i] = float64(1 + rng.IntN(2*n))
		case "normal":
			a[i] = rng.NormFloat64()
		default:
			panic("gramInput: unknown kind " + kind)
		}
	}
	return a
}

// checkUpper compares the upper triangle of got with want: exactly for
// integer input (tol 0), else to tol relative to √(cᵢᵢ·cⱼⱼ), the scale of
// entry (i, j) by Cauchy–Schwarz.
func checkUpper(t *testing.T, what string, got, want []float64, gp int, tol float64) {
	t.Helper()
	bad := 0
	for i := 0; i < gp; i++ {
		for j := i; j < gp; j++ {
			g, w := got[i*gp+j], want[i*gp+j]
			scale := math.Sqrt(want[i*gp+i] * want[j*gp+j])
			if d := math.Abs(g - w); d > tol*scale || math.IsNaN(g) {
				if bad++; bad <= 5 {
					t.Errorf("%s: c[%d][%d] = %.17g, want %.17g (diff %.3g, tol %.3g)", what, i, j, g, w, d, tol*scale)
				}
			}
		}
	}
	if bad > 5 {
		t.Errorf("%s: %d entries differ in all", what, bad)
	}
}

// TestGramSyrkNaive checks the build's gramSyrk (gonum by default, OpenBLAS
// under -tags openblas) against the definition C = A·Aᵀ computed by a triple
// loop (hand-written reference: naiveGram), on sizes that cross gonum's
// 64-row blocks. Integer input must agree exactly; normals to 1e-12.
func TestGramSyrkNaive(t *testing.T) {
	t.Logf("gramSyrk backend: %s", gramBackend)
	for _, tc := range []struct {
		gp, n int
		kind  string
		tol   float64
	}{
		{2, 1, "doubled ranks", 0},
		{3, 7, "doubled ranks", 0},
		{64, 20, "doubled ranks", 0},
		{65, 33, "doubled ranks", 0},
		{130, 101, "doubled ranks", 0},
		{2, 1, "normal", 1e-12},
		{17, 250, "normal", 1e-12},
		{129, 64, "normal", 1e-12},
	} {
		name := fmt.Sprintf("%s/gp=%d/n=%d", tc.kind, tc.gp, tc.n)
		t.Run(name, func(t *testing.T) {
			a := gramInput(tc.kind, tc.gp, tc.n, uint64(tc.gp*1000+tc.n))
			want := naiveGram(a, tc.gp, tc.n)
			for _, w := range []int{1, 3} {
				got := make([]float64, tc.gp*tc.gp)
				gramSyrk(a, got, tc.gp, tc.n, w)
				checkUpper(t, fmt.Sprintf("gramSyrk(workers=%d) [%s]", w, gramBackend), got, want, tc.gp, tc.tol)
			}
		})
	}
}

// TestGramSyrkMatchesGonum checks that the build's gramSyrk agrees with
// gonum's pure-Go path (gramGonum) on doubled ranks from the engine's own
// ranking (exactly) and on normals (to 1e-12), for several worker counts.
// Under -tags openblas this compares OpenBLAS with gonum; in the default
// build both sides are gonum and it checks that the worker count does not
// change the result.
func TestGramSyrkMatchesGonum(t *testing.T) {
	const gp, n = 150, 700
	ranks := make([]float64, gp*n)
	for j := 0; j < gp; j++ {
		c := prepare(dataset.NewFloatColumn("x", dataset.Continuous, splitmixColumn(j, n)), NotSkipped, n, 10)
		for r, v := range c.rank2 {
			ranks[j*n+r] = float64(v)
		}
	}
	for _, tc := range []struct {
		name string
		a    []float64
		tol  float64
	}{
		{"engine doubled ranks", ranks, 0},
		{"normal", gramInput("normal", gp, n, 3), 1e-12},
	} {
		t.Run(tc.name, func(t *testing.T) {
			want := make([]float64, gp*gp)
			gramGonum(tc.a, want, gp, n, 1)
			for _, w := range []int{1, 2, 5} {
				got := make([]float64, gp*gp)
				gramSyrk(tc.a, got, gp, n, w)
				checkUpper(t, fmt.Sprintf("gramSyrk(workers=%d) [%s] vs gonum", w, gramBackend), got, want, gp, tc.tol)
			}
		})
	}
}

// splitmix64 is SplitMix64's output function (Steele, Lea & Flood 2014,
// OOPSLA, "Fast splittable pseudorandom number generators"), here a
// stateless hash of k so that bench/gram_numpy.py builds the same matrix.
func splitmix64(k uint64) uint64 {
	z := k*0x9e3779b97f4a7c15 + 0x9e3779b97f4a7c15
	z = (z ^ z>>30) * 0xbf58476d1ce4e5b9
	z = (z ^ z>>27) * 0x94d049bb133111eb
	return z ^ z>>31
}

// splitmixColumn returns column j of the benchmark matrix: n values in
// [0, 1), x[i][j] = (splitmix64(j·n + i) >> 11) · 2⁻⁵³, the same cells as
// bench/gram_numpy.py; with 53-bit values, ties are practically absent.
func splitmixColumn(j, n int) []float64 {
	v := make([]float64, n)
	for i := range v {
		v[i] = float64(splitmix64(uint64(j*n+i))>>11) * 0x1p-53
	}
	return v
}

// gramBenchSizes is the size (5,000 rows × 1,000 complete numeric
// columns) and a small one.
var gramBenchSizes = []struct{ n, p int }{{1000, 200}, {5000, 1000}}

// BenchmarkGramCompleteSyrk times the matrix product alone, the p×p Gram
// matrix of doubled ranks (gramSyrk: gonum, or OpenBLAS under -tags
// openblas), reporting GFLOP/s (a dsyrk costs n·p·(p+1) flops) and the
// process CPU seconds per product (all threads, OpenBLAS's included).
func BenchmarkGramCompleteSyrk(b *testing.B) {
	for _, sz := range gramBenchSizes {
		b.Run(fmt.Sprintf("n=%d/p=%d", sz.n, sz.p), func(b *testing.B) {
			a := make([]float64, sz.p*sz.n)
			for j := 0; j < sz.p; j++ {
				c := prepare(dataset.NewFloatColumn("x", dataset.Continuous, splitmixColumn(j, sz.n)), NotSkipped, sz.n, 10)
				for r, v := range c.rank2 {
					a[j*sz.n+r] = float64(v)
				}
			}
			c := make([]float64, sz.p*sz.p)
			workers := runtime.GOMAXPROCS(0)
			b.ReportAllocs()
			cpu0, cpuOK := processCPU()
			for b.Loop() {
				gramSyrk(a, c, sz.p, sz.n, workers)
			}
			if c[1] == 0 {
				b.Fatal("empty Gram matrix")
			}
			reportGramMetrics(b, cpu0, cpuOK, float64(sz.n)*float64(sz.p)*float64(sz.p+1))
		})
	}
}

// BenchmarkGramCompleteRanked times the whole complete-data Spearman step as
// the engine runs it: rank every column (prepare, in parallel) and take the
// Gram matrix of doubled ranks (gramOfComplete); the counterpart of
// bench/gram_numpy.py's rank-then-r.T @ r.
func BenchmarkGramCompleteRanked(b *testing.B) {
	for _, sz := range gramBenchSizes {
		b.Run(fmt.Sprintf("n=%d/p=%d", sz.n, sz.p), func(b *testing.B) {
			cols := make([]*dataset.Column, sz.p)
			for j := range cols {
				cols[j] = dataset.NewFloatColumn(fmt.Sprintf("x%d", j), dataset.Continuous, splitmixColumn(j, sz.n))
			}
			workers := runtime.GOMAXPROCS(0)
			prep := make([]*col, sz.p)
			b.ReportAllocs()
			cpu0, cpuOK := processCPU()
			for b.Loop() {
				if err := parallel(b.Context(), workers, sz.p, func(j int) {
					prep[j] = prepare(cols[j], NotSkipped, sz.n, 10)
				}); err != nil {
					b.Fatal(err)
				}
				if g, gp := gramOfComplete(prep, sz.n, workers); gp != sz.p || len(g) != gp*gp {
					b.Fatalf("gram of %d columns, want %d", gp, sz.p)
				}
			}
			reportGramMetrics(b, cpu0, cpuOK, float64(sz.n)*float64(sz.p)*float64(sz.p+1))
		})
	}
}

// reportGramMetrics adds GFLOP/s of the product and, where the platform
// reports it, the process CPU seconds per operation since cpu0.
func reportGramMetrics(b *testing.B, cpu0 float64, cpuOK bool, flops float64) {
	b.Helper()
	sec := b.Elapsed().Seconds() / float64(b.N)
	if sec > 0 {
		b.ReportMetric(flops/sec/1e9, "GFLOP/s")
	}
	if cpu1, ok := processCPU(); ok && cpuOK {
		b.ReportMetric((cpu1-cpu0)/float64(b.N), "cpu-s/op")
	}
}

// TestSplitmix64 pins the benchmark matrix's hash to SplitMix64's first two
// outputs from seed 0, 0xe220a8397b1dcdaf and 0x6e789e6aa1b965f4 (the
// reference generator's sequence, from memory; bench/gram_numpy.py prints the
// same two values from its numpy code, so both benchmarks rank one matrix).
func TestSplitmix64(t *testing.T) {
	for k, want := range []uint64{0xe220a8397b1dcdaf, 0x6e789e6aa1b965f4} {
		if got := splitmix64(uint64(k)); got != want {
			t.Errorf("splitmix64(%d) = %#016x, want %#016x", k, got, want)
		}
	}
}
