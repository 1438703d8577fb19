package assoc

import "math"

// PhiResult is the φ coefficient of a 2×2 table with its χ² test.
type PhiResult struct {
	Phi  float64 // signed φ in [−1, 1]; positive when the "yes" cells go together
	Chi2 float64 // Pearson's χ² = n·φ², 1 degree of freedom, no continuity correction
	P    float64 // upper-tail χ² p-value
	N    float64 // total count
}

// Phi returns the φ coefficient of the 2×2 table [[n00, n01], [n10, n11]]
// (first index the first variable, 0 = no, 1 = yes):
//
//	φ = (n11·n00 − n10·n01) / √(n1+ · n0+ · n+1 · n+0)
//
// (Yule 1912, J. R. Stat. Soc. 75:579–652; Agresti 2002, Categorical Data
// Analysis, 2nd ed.). |φ| is Cramér's V of the table and n·φ² its Pearson χ²
// (as scipy.stats.chi2_contingency(correction=False)). Phi, Chi2 and P are
// NaN when a margin is zero. Phi panics with "assoc: negative or non-finite
// count" for such a count.
func Phi(n00, n01, n10, n11 float64) PhiResult {
	for _, v := range [...]float64{n00, n01, n10, n11} {
		if !(v >= 0) || math.IsInf(v, 0) {
			panic("assoc: negative or non-finite count")
		}
	}
	return phi(n00, n01, n10, n11)
}

// phi is Phi without the argument checks. The p-value uses the identity
// P(χ²₁ > x) = P(|Z| > √x) = erfc(√(x/2)), cheaper than the incomplete gamma
// function, which matters when every pair of a wide table gets one.
func phi(n00, n01, n10, n11 float64) PhiResult {
	n := n00 + n01 + n10 + n11
	res := PhiResult{Phi: math.NaN(), Chi2: math.NaN(), P: math.NaN(), N: n}
	d := (n10 + n11) * (n00 + n01) * (n01 + n11) * (n00 + n10)
	if d == 0 {
		return res
	}
	f := (n11*n00 - n10*n01) / math.Sqrt(d)
	f = math.Max(-1, math.Min(1, f))
	res.Phi = f
	res.Chi2 = n * f * f
	res.P = math.Erfc(math.Sqrt(res.Chi2 / 2))
	return res
}

// MissingPhi returns the φ coefficient between the missingness of two
// variables: missX[i] and missY[i] say whether row i is missing in each.
// φ > 0 means the two tend to be missing on the same rows (a skipped form or
// visit). It is Phi of the 2×2 count table of the indicators, NaN when either
// variable is never or always missing. MissingPhi panics with "assoc: length
// mismatch" if the lengths differ.
func MissingPhi(missX, missY []bool) PhiResult {
	if len(missX) != len(missY) {
		panic("assoc: length mismatch")
	}
	var c [4]float64
	for i := range missX {
		c[b2i(missX[i])*2+b2i(missY[i])]++
	}
	return Phi(c[0], c[1], c[2], c[3])
}

func b2i(b bool) int {
	if b {
		return 1
	}
	return 0
}
