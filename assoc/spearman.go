package assoc

import (
	"cmp"
	"math"
	"slices"

	"gonum.org/v1/gonum/stat/distuv"
)

// ConfLevel is the coverage of every confidence interval the package reports.
const ConfLevel = 0.95

// zCrit is the standard normal quantile for a two-sided ConfLevel interval (1.959963984540054).
var zCrit = distuv.UnitNormal.Quantile(1 - (1-ConfLevel)/2)

// SpearmanResult is Spearman's rank correlation with its test and interval.
type SpearmanResult struct {
	Rho    float64 // Spearman's ρ in [−1, 1]; NaN when undefined
	P      float64 // two-sided p-value of ρ = 0 (t approximation, N−2 df)
	Lo, Hi float64 // ConfLevel confidence interval for ρ (Fisher z, Bonett–Wright SE)
	N      int     // complete pairs used
}

// Spearman returns Spearman's rank correlation of x and y over the pairs where
// both are present (pairwise complete: a NaN in either drops the pair). Tied
// values get the average of the ranks they span (mid-ranks), and ρ is
// Pearson's correlation of the ranks (Spearman 1904, Am. J. Psychol.
// 15:72–101; Kendall & Gibbons 1990, Rank Correlation Methods, 5th ed., §3.8).
// It is computed exactly in integers from doubled ranks R = 2·rank:
//
//	ρ = Sxy / √(Sxx·Syy),  Sxy = ΣRxRy − n(n+1)²,  Sxx = (n³ − n − Σ(t³ − t))/3,
//
// summing t over the tie groups of x (likewise y).
//
// P is the two-sided p-value of the t statistic t = ρ√((n−2)/(1−ρ²)) on n−2
// degrees of freedom, as scipy.stats.spearmanr computes it; P is 0 when |ρ| = 1.
// Lo and Hi are tanh(atanh ρ ∓ z·SE) with z the normal quantile for ConfLevel
// and the Bonett–Wright standard error SE = √((1 + ρ²/2)/(n − 3)) (Bonett &
// Wright 2000, Psychometrika 65:23–28), which covers better than 1/√(n−3) for
// rank correlations.
//
// Rho is NaN when fewer than 2 complete pairs remain or either variable is
// constant over them; P is NaN when Rho is or n < 3; Lo and Hi are NaN when
// n < 4. Spearman panics with "assoc: length mismatch" if len(x) != len(y),
// and with "assoc: too many rows" beyond MaxRows complete pairs.
func Spearman(x, y []float64) SpearmanResult {
	if len(x) != len(y) {
		panic("assoc: length mismatch")
	}
	var xs, ys []float64
	for i := range x {
		if !math.IsNaN(x[i]) && !math.IsNaN(y[i]) {
			xs = append(xs, x[i])
			ys = append(ys, y[i])
		}
	}
	n := len(xs)
	if n > MaxRows {
		panic("assoc: too many rows")
	}
	rx, tx := doubledRanks(xs)
	ry, ty := doubledRanks(ys)
	var s int64
	for i := range rx {
		s += int64(rx[i]) * int64(ry[i])
	}
	return spearmanFromSums(int64(n), s, tx, ty)
}

// MaxRows is the largest number of observations the rank kernels accept: with
// doubled ranks the sums stay exact in int64 up to this size.
const MaxRows = 1 << 20

// doubledRanks returns 2·(mid-rank) of each value (an integer: 2k+m+1 for a
// tie group of m values after k smaller ones) and the tie sum Σ(t³ − t).
func doubledRanks(v []float64) ([]int32, int64) {
	idx := make([]int32, len(v))
	for i := range idx {
		idx[i] = int32(i)
	}
	slices.SortFunc(idx, func(a, b int32) int { return cmp.Compare(v[a], v[b]) })
	r := make([]int32, len(v))
	var ties int64
	for a := 0; a < len(idx); {
		b := a + 1
		for b < len(idx) && v[idx[b]] == v[idx[a]] {
			b++
		}
		m := int64(b - a)
		val := int32(2*a) + int32(m) + 1
		for _, i := range idx[a:b] {
			r[i] = val
		}
		ties += m*m*m - m
		a = b
	}
	return r, ties
}

// spearmanFromSums finishes Spearman's ρ from n complete pairs, the sum s of
// products of doubled ranks and the two tie sums Σ(t³ − t).
func spearmanFromSums(n, s, tx, ty int64) SpearmanResult {
	res := SpearmanResult{Rho: math.NaN(), P: math.NaN(), Lo: math.NaN(), Hi: math.NaN(), N: int(n)}
	if n < 2 {
		return res
	}
	sxx := (n*n*n - n - tx) / 3
	syy := (n*n*n - n - ty) / 3
	if sxx <= 0 || syy <= 0 {
		return res
	}
	sxy := s - n*(n+1)*(n+1)
	rho := float64(sxy) / (math.Sqrt(float64(sxx)) * math.Sqrt(float64(syy)))
	rho = math.Max(-1, math.Min(1, rho))
	res.Rho = rho
	res.P, res.Lo, res.Hi = spearmanInference(rho, int(n))
	return res
}

// spearmanInference returns the t-approximation p-value and the Fisher-z
// interval (Bonett–Wright SE) of a rank correlation rho on n pairs.
func spearmanInference(rho float64, n int) (p, lo, hi float64) {
	p, lo, hi = math.NaN(), math.NaN(), math.NaN()
	if n >= 3 {
		if math.Abs(rho) == 1 {
			p = 0
		} else {
			df := float64(n - 2)
			t := rho * math.Sqrt(df/((1-rho)*(1+rho)))
			p = 2 * distuv.StudentsT{Mu: 0, Sigma: 1, Nu: df}.Survival(math.Abs(t))
			p = math.Min(1, p)
		}
	}
	if n >= 4 {
		z := math.Atanh(rho)
		se := math.Sqrt((1 + rho*rho/2) / float64(n-3))
		lo, hi = math.Tanh(z-zCrit*se), math.Tanh(z+zCrit*se)
	}
	return p, lo, hi
}
