package rules

import (
	"math"
	"math/rand/v2"
	"slices"
	"sort"
)

// madScale is the consistency constant that makes the median absolute
// deviation estimate the standard deviation of a normal distribution,
// 1/Φ⁻¹(3/4) ≈ 1.4826 (Rousseeuw & Croux 1993, JASA 88:1273–1283, §1).
const madScale = 1.482602218505602

// Median returns the median of x (the mean of the two middle values when
// len(x) is even), NaN for an empty slice. x is not modified.
func Median(x []float64) float64 {
	if len(x) == 0 {
		return math.NaN()
	}
	s := slices.Clone(x)
	return medianInPlace(s)
}

// medianInPlace returns the median of s (no NaN), reordering s.
func medianInPlace(s []float64) float64 {
	n := len(s)
	if n == 0 {
		return math.NaN()
	}
	hi := selectK(s, n/2)
	if n%2 == 1 {
		return hi
	}
	// After selectK, s[:n/2] holds the n/2 smallest values.
	lo := s[0]
	for _, v := range s[1 : n/2] {
		if v > lo {
			lo = v
		}
	}
	return (lo + hi) / 2
}

// selectK reorders s so that s[k] is the value of rank k (0-based) in
// ascending order, smaller values before it and larger after (Hoare's
// selection, median-of-three pivot), and returns s[k].
func selectK(s []float64, k int) float64 {
	lo, hi := 0, len(s)-1
	for hi > lo {
		if hi-lo < 16 {
			sort.Float64s(s[lo : hi+1])
			return s[k]
		}
		mid := lo + (hi-lo)/2
		if s[mid] < s[lo] {
			s[mid], s[lo] = s[lo], s[mid]
		}
		if s[hi] < s[lo] {
			s[hi], s[lo] = s[lo], s[hi]
		}
		if s[hi] < s[mid] {
			s[hi], s[mid] = s[mid], s[hi]
		}
		pivot := s[mid]
		i, j := lo, hi
		for i <= j {
			for s[i] < pivot {
				i++
			}
			for s[j] > pivot {
				j--
			}
			if i <= j {
				s[i], s[j] = s[j], s[i]
				i++
				j--
			}
		}
		switch {
		case k <= j:
			hi = j
		case k >= i:
			lo = i
		default:
			return s[k]
		}
	}
	return s[k]
}

// MAD returns the median absolute deviation from the median of x, scaled by
// 1.4826 to estimate a normal standard deviation (Rousseeuw & Croux 1993).
// It returns NaN for an empty slice.
func MAD(x []float64) float64 {
	if len(x) == 0 {
		return math.NaN()
	}
	m := Median(x)
	d := make([]float64, len(x))
	for i, v := range x {
		d[i] = math.Abs(v - m)
	}
	return madScale * medianInPlace(d)
}

// Quantile returns the p-quantile of sorted (ascending, no NaN) by linear
// interpolation between order statistics, R's default type 7 (Hyndman & Fan
// 1996, Am. Stat. 50:361–365): h = (n−1)p, x[⌊h⌋] + (h−⌊h⌋)(x[⌊h⌋+1] − x[⌊h⌋]).
// It returns NaN for an empty slice.
func Quantile(sorted []float64, p float64) float64 {
	n := len(sorted)
	if n == 0 {
		return math.NaN()
	}
	h := float64(n-1) * p
	lo := int(math.Floor(h))
	if lo >= n-1 {
		return sorted[n-1]
	}
	if lo < 0 {
		return sorted[0]
	}
	return sorted[lo] + (h-float64(lo))*(sorted[lo+1]-sorted[lo])
}

// TheilSen returns the Theil–Sen line of y on x: the slope is the median of
// the slopes (y_j − y_i)/(x_j − x_i) over all pairs i < j with x_i ≠ x_j
// (Theil 1950, Indag. Math. 12:85–91; Sen 1968, JASA 63:1379–1389), the
// intercept the median of y − slope·x, as scipy.stats.theilslopes computes
// them with method="joint". (The other common intercept, median(y) −
// slope·median(x), moves with a few wild y values; the joint one does not,
// and band limits are centred on it.) It returns NaNs when every x is
// equal. TheilSen panics if len(x) != len(y).
func TheilSen(x, y []float64) (slope, intercept float64) {
	if len(x) != len(y) {
		panic("rules: length mismatch")
	}
	n := len(x)
	slopes := make([]float64, 0, n*(n-1)/2)
	for i := 0; i < n; i++ {
		for j := i + 1; j < n; j++ {
			if dx := x[j] - x[i]; dx != 0 {
				slopes = append(slopes, (y[j]-y[i])/dx)
			}
		}
	}
	return finishTheilSen(x, y, slopes)
}

// TheilSenSampled is TheilSen over at most maxPairs pairs: when n(n−1)/2
// exceeds maxPairs, pairs are drawn at random (with replacement) from src,
// which gives the median slope to within sampling error (the proposer uses it
// for large tables; the result depends only on the data and the source).
func TheilSenSampled(x, y []float64, maxPairs int, src rand.Source) (slope, intercept float64) {
	if len(x) != len(y) {
		panic("rules: length mismatch")
	}
	n := len(x)
	if n < 2 || n*(n-1)/2 <= maxPairs {
		return TheilSen(x, y)
	}
	r := rand.New(src)
	slopes := make([]float64, 0, maxPairs)
	for k := 0; k < 4*maxPairs && len(slopes) < maxPairs; k++ {
		i, j := r.IntN(n), r.IntN(n)
		if dx := x[j] - x[i]; dx != 0 {
			slopes = append(slopes, (y[j]-y[i])/dx)
		}
	}
	return finishTheilSen(x, y, slopes)
}

func finishTheilSen(x, y, slopes []float64) (float64, float64) {
	if len(slopes) == 0 {
		return math.NaN(), math.NaN()
	}
	s := medianInPlace(slopes)
	res := make([]float64, len(x))
	for i := range x {
		res[i] = y[i] - s*x[i]
	}
	return s, medianInPlace(res)
}

// ranks returns the mid-ranks (1-based, ties averaged) of the non-NaN values
// of x, NaN where x is NaN.
func ranks(x []float64) []float64 {
	idx := make([]int, 0, len(x))
	for i, v := range x {
		if !math.IsNaN(v) {
			idx = append(idx, i)
		}
	}
	sort.Slice(idx, func(a, b int) bool { return x[idx[a]] < x[idx[b]] })
	out := make([]float64, len(x))
	for i := range out {
		out[i] = math.NaN()
	}
	for i := 0; i < len(idx); {
		j := i
		for j+1 < len(idx) && x[idx[j+1]] == x[idx[i]] {
			j++
		}
		r := float64(i+j)/2 + 1
		for k := i; k <= j; k++ {
			out[idx[k]] = r
		}
		i = j + 1
	}
	return out
}

// rankCorr returns the Pearson correlation of two rank vectors over rows where
// both are present, and the number of such rows. It is the proposer's
// screening statistic (Spearman's rho when nothing is missing).
func rankCorr(a, b []float64) (float64, int) {
	var n int
	var sa, sb float64
	for i := range a {
		if !math.IsNaN(a[i]) && !math.IsNaN(b[i]) {
			n++
			sa += a[i]
			sb += b[i]
		}
	}
	if n < 3 {
		return math.NaN(), n
	}
	ma, mb := sa/float64(n), sb/float64(n)
	var sab, saa, sbb float64
	for i := range a {
		if !math.IsNaN(a[i]) && !math.IsNaN(b[i]) {
			da, db := a[i]-ma, b[i]-mb
			sab += da * db
			saa += da * da
			sbb += db * db
		}
	}
	if saa == 0 || sbb == 0 {
		return math.NaN(), n
	}
	return sab / math.Sqrt(saa*sbb), n
}

// niceIn returns the number in (lo, hi] with the fewest significant digits
// (a round number such as 2500 between 2495 and 2523), the one nearest the
// middle among equally short ones; hi when lo ≥ hi.
func niceIn(lo, hi float64) float64 {
	if !(lo < hi) {
		return hi
	}
	mid := (lo + hi) / 2
	for digits := 1; digits <= 15; digits++ {
		// Step = 10^(e − digits + 1) where e is the exponent of the larger magnitude.
		m := math.Max(math.Abs(lo), math.Abs(hi))
		if m == 0 {
			return 0
		}
		e := math.Floor(math.Log10(m))
		step := math.Pow(10, e-float64(digits)+1)
		c := math.Round(mid/step) * step
		best, found := 0.0, false
		for _, cand := range []float64{c, c - step, c + step} {
			if cand > lo && cand <= hi && (!found || math.Abs(cand-mid) < math.Abs(best-mid)) {
				best, found = cand, true
			}
		}
		if found {
			return best
		}
	}
	return hi
}

// sigRound rounds x to d significant digits.
func sigRound(x float64, d int) float64 {
	if x == 0 || math.IsNaN(x) || math.IsInf(x, 0) {
		return x
	}
	e := math.Floor(math.Log10(math.Abs(x)))
	p := math.Pow(10, float64(d-1)-e)
	return math.Round(x*p) / p
}
