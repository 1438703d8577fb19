package assoc

import (
	"cmp"
	"math"
	"slices"

	"gonum.org/v1/gonum/stat/distuv"
)

// KruskalResult is the Kruskal–Wallis test of k groups with its effect size.
type KruskalResult struct {
	H         float64 // tie-corrected Kruskal–Wallis statistic
	DF        int     // k − 1, counting only non-empty groups
	P         float64 // upper-tail χ² p-value of H on DF degrees of freedom
	EpsilonSq float64 // ε² = H/(n − 1), in [0, 1]
	N         int     // observations used
	K         int     // non-empty groups
}

// KruskalWallis returns the Kruskal–Wallis H test of whether x differs
// between the groups coded by g (0-based codes; a negative code or a NaN x
// drops the observation), and the rank effect size ε² = H/(n − 1) of
// Tomczak & Tomczak (2014, Trends Sport Sci. 21:19–25). With mid-ranks over
// all n observations, R_g the rank sum and n_g the size of group g, and t the
// sizes of tie groups (Kruskal & Wallis 1952, JASA 47:583–621):
//
//	H = [12/(n(n+1)) Σ R_g²/n_g − 3(n+1)] / [1 − Σ(t³ − t)/(n³ − n)]
//
// H matches scipy.stats.kruskal and R's kruskal.test. Tie-corrected H is at
// most n − 1 (reached when every group is internally tied and the groups do
// not overlap), so ε² lies in [0, 1] and is the share of rank variance
// between groups, the rank analogue of η²; the engine reports √ε² as the
// strength of a numeric-by-nominal pair so that it is on the scale of a
// correlation.
//
// H, P and EpsilonSq are NaN when fewer than two groups are non-empty or all
// values are tied. KruskalWallis panics with "assoc: length mismatch" if
// len(x) != len(g).
func KruskalWallis(x []float64, g []int) KruskalResult {
	if len(x) != len(g) {
		panic("assoc: length mismatch")
	}
	k := 0
	var idx []int32
	for i := range x {
		if g[i] >= 0 && !math.IsNaN(x[i]) {
			idx = append(idx, int32(i))
			k = max(k, g[i]+1)
		}
	}
	if len(idx) > MaxRows {
		panic("assoc: too many rows")
	}
	slices.SortFunc(idx, func(a, b int32) int { return cmp.Compare(x[a], x[b]) })
	r2 := make([]int64, k)
	cnt := make([]int64, k)
	var ties int64
	for a := 0; a < len(idx); {
		b := a + 1
		for b < len(idx) && x[idx[b]] == x[idx[a]] {
			b++
		}
		m := int64(b - a)
		v := int64(2*a) + m + 1
		for _, i := range idx[a:b] {
			r2[g[i]] += v
			cnt[g[i]]++
		}
		ties += m*m*m - m
		a = b
	}
	return kruskalFromSums(r2, cnt, ties)
}

// kruskalFromSums finishes the Kruskal–Wallis test from per-group sums of
// doubled ranks r2, group sizes cnt and the tie sum Σ(t³ − t).
func kruskalFromSums(r2, cnt []int64, ties int64) KruskalResult {
	nan := math.NaN()
	res := KruskalResult{H: nan, P: nan, EpsilonSq: nan}
	var n int64
	k := 0
	var s float64 // Σ R_g²/n_g with doubled ranks: Σ r2²/(4 n_g)
	for g, c := range cnt {
		if c == 0 {
			continue
		}
		n += c
		k++
		rg := float64(r2[g])
		s += rg * rg / float64(c)
	}
	res.N, res.K = int(n), k
	if k < 2 {
		return res
	}
	res.DF = k - 1
	n3 := n*n*n - n
	if n3-ties <= 0 {
		return res
	}
	fn := float64(n)
	h := (12/(fn*(fn+1))*s/4 - 3*(fn+1)) / (float64(n3-ties) / float64(n3))
	h = math.Max(0, h)
	res.H = h
	res.P = distuv.ChiSquared{K: float64(res.DF)}.Survival(h)
	res.EpsilonSq = math.Min(1, h/(fn-1))
	return res
}
