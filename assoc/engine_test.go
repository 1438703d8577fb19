package assoc

import (
	"context"
	"errors"
	"math"
	"testing"

	"github.com/crossform/crossform/dataset"
)

// columnCodes returns the variable's values as 0-based codes of its distinct
// values in ascending order, −1 where missing: the categories the engine uses.
func columnCodes(c *dataset.Column, n int) []int {
	vals := make([]float64, n)
	for i := range vals {
		vals[i] = c.Float(i)
	}
	d := dataset.Distinct(vals)
	out := make([]int, n)
	for i, v := range vals {
		out[i] = -1
		for k, x := range d {
			if x == v {
				out[i] = k
			}
		}
	}
	return out
}

func columnFloats(c *dataset.Column, n int) []float64 {
	v := make([]float64, n)
	for i := range v {
		v[i] = c.Float(i)
	}
	return v
}

// TestAllPairsMatchesKernels checks every pair of the engine against the
// plain-slice kernels on the pair's complete rows: the engine's shortcuts
// (shared ranks, bitmap re-ranking, Gram matrix, walked tables) must give the
// same numbers as ranking each pair from scratch.
func TestAllPairsMatchesKernels(t *testing.T) {
	for _, tc := range []struct {
		name string
		miss float64 // −1: structured patterns (patternTable)
	}{{"no missing", 0}, {"10% missing", 0.1}, {"60% missing", 0.6}, {"shared and nested patterns", -1}} {
		t.Run(tc.name, func(t *testing.T) {
			n, p := 150, 40
			tbl := synthTable(n, p, tc.miss, 7)
			if tc.miss < 0 {
				tbl = patternTable(n, p, 7)
			}
			m, err := AllPairs(context.Background(), tbl, Options{MinPairs: 5})
			if err != nil {
				t.Fatal(err)
			}
			if len(m.Pairs) != p*(p-1)/2 {
				t.Fatalf("got %d pairs, want %d", len(m.Pairs), p*(p-1)/2)
			}
			seen := map[Measure]int{}
			for k := range m.Pairs {
				pr := &m.Pairs[k]
				cx, cy := tbl.Cols[pr.I], tbl.Cols[pr.J]
				if pr.Skip != NotSkipped {
					continue
				}
				seen[pr.Measure]++
				var want, want2 float64
				switch pr.Measure {
				case MeasureSpearman:
					r := Spearman(columnFloats(cx, n), columnFloats(cy, n))
					want, want2 = r.Rho, r.P
					if r.N != int(pr.N) {
						t.Errorf("%s: n = %d, want %d", m.Describe(pr), pr.N, r.N)
					}
					if pr.Lo != r.Lo || pr.Hi != r.Hi {
						t.Errorf("%s: CI [%g, %g], want [%g, %g]", m.Describe(pr), pr.Lo, pr.Hi, r.Lo, r.Hi)
					}
				case MeasureSomersD:
					r := SomersD(Crosstab(columnCodes(cx, n), columnCodes(cy, n)))
					want, want2 = r.DYX, r.P
					if !near(pr.Estimate2, r.DXY, 1e-12) || !near(pr.SE, r.SEYX, 1e-12) || !near(pr.SE2, r.SEXY, 1e-12) {
						t.Errorf("%s: d(I|J) %g SE %g %g, want %g SE %g %g", m.Describe(pr), pr.Estimate2, pr.SE, pr.SE2, r.DXY, r.SEYX, r.SEXY)
					}
				case MeasureCramersV:
					r := CramersV(Crosstab(columnCodes(cx, n), columnCodes(cy, n)))
					want, want2 = r.V, r.P
					if !near(pr.Estimate2, r.VBC, 1e-12) {
						t.Errorf("%s: Ṽ %g, want %g", m.Describe(pr), pr.Estimate2, r.VBC)
					}
				case MeasureKruskal:
					x, g := cx, cy
					if m.Kinds[pr.I] == KindNominal {
						x, g = cy, cx
					}
					r := KruskalWallis(columnFloats(x, n), columnCodes(g, n))
					want, want2 = r.EpsilonSq, r.P
				}
				if !near(pr.Estimate, want, 1e-12) || !near(pr.P, want2, 1e-9) {
					t.Errorf("%s: estimate %.15g p %.15g, want %.15g p %.15g", m.Describe(pr), pr.Estimate, pr.P, want, want2)
				}
			}
			t.Logf("pairs by measure: %v", seen)
			for _, ms := range []Measure{MeasureSpearman, MeasureSomersD, MeasureCramersV, MeasureKruskal} {
				if seen[ms] == 0 {
					t.Errorf("no pair measured by %s", ms)
				}
			}
		})
	}
}

func near(a, b, tol float64) bool {
	if math.IsNaN(a) || math.IsNaN(b) {
		return math.IsNaN(a) && math.IsNaN(b)
	}
	return math.Abs(a-b) <= tol*math.Max(1, math.Abs(b))
}

// TestAllPairsDeterministic checks that the matrix is bit-identical for any
// number of workers.
func TestAllPairsDeterministic(t *testing.T) {
	tbl := synthTable(300, 60, 0.1, 3)
	ref, err := AllPairs(context.Background(), tbl, Options{Workers: 1})
	if err != nil {
		t.Fatal(err)
	}
	for _, w := range []int{2, 3, 8} {
		m, err := AllPairs(context.Background(), tbl, Options{Workers: w})
		if err != nil {
			t.Fatal(err)
		}
		for k := range ref.Pairs {
			a, b := ref.Pairs[k], m.Pairs[k]
			if math.Float64bits(a.Estimate) != math.Float64bits(b.Estimate) || math.Float64bits(a.P) != math.Float64bits(b.P) ||
				math.Float64bits(a.Q) != math.Float64bits(b.Q) || math.Float64bits(a.MissPhi) != math.Float64bits(b.MissPhi) {
				t.Fatalf("workers=%d: pair %d differs: %+v vs %+v", w, k, b, a)
			}
		}
	}
}

func TestAllPairsCancel(t *testing.T) {
	tbl := synthTable(200, 50, 0.1, 1)
	ctx, cancel := context.WithCancel(context.Background())
	calls := 0
	_, err := AllPairs(ctx, tbl, Options{Workers: 2, Progress: func(done, total int) {
		calls++
		cancel()
	}})
	if !errors.Is(err, context.Canceled) {
		t.Fatalf("AllPairs after cancel: err = %v, want context.Canceled", err)
	}
	if calls == 0 {
		t.Fatal("progress never called")
	}
}

func TestAllPairsProgress(t *testing.T) {
	tbl := synthTable(100, 50, 0.1, 1)
	last, total := 0, 0
	m, err := AllPairs(context.Background(), tbl, Options{Progress: func(d, tot int) {
		if d < last {
			t.Errorf("progress went back from %d to %d", last, d)
		}
		last, total = d, tot
	}})
	if err != nil {
		t.Fatal(err)
	}
	if last != len(m.Pairs) || total != len(m.Pairs) {
		t.Errorf("final progress %d/%d, want %d/%d", last, total, len(m.Pairs), len(m.Pairs))
	}
}
