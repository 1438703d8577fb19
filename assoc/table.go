package assoc

import (
	"math"

	"gonum.org/v1/gonum/stat/distuv"
)

// Crosstab counts the pairs of codes (x[i], y[i]) into a rows×cols table,
// row-major (counts[a*cols+b] for x = a, y = b). Codes are 0-based; a negative
// code is missing and drops the pair. rows and cols are one more than the
// largest code seen in x and y. Crosstab panics with "assoc: length mismatch"
// if len(x) != len(y). Its results can be passed straight to CramersV or
// SomersD: SomersD(Crosstab(x, y)).
func Crosstab(x, y []int) (counts []float64, rows, cols int) {
	if len(x) != len(y) {
		panic("assoc: length mismatch")
	}
	for i := range x {
		rows = max(rows, x[i]+1)
		cols = max(cols, y[i]+1)
	}
	counts = make([]float64, rows*cols)
	for i := range x {
		if x[i] >= 0 && y[i] >= 0 {
			counts[x[i]*cols+y[i]]++
		}
	}
	return counts, rows, cols
}

func checkTable(counts []float64, rows, cols int) {
	if rows < 0 || cols < 0 || len(counts) != rows*cols {
		panic("assoc: table shape mismatch")
	}
	for _, v := range counts {
		if !(v >= 0) || math.IsInf(v, 0) {
			panic("assoc: negative or non-finite count")
		}
	}
}

// CramersVResult is Cramér's V with the χ² test of independence.
type CramersVResult struct {
	V    float64 // plain Cramér's V in [0, 1]
	VBC  float64 // bias-corrected Cramér's V (Bergsma 2013) in [0, 1]
	Chi2 float64 // Pearson's χ² statistic
	DF   int     // (r−1)(c−1) after dropping empty rows and columns
	P    float64 // upper-tail χ² p-value on DF degrees of freedom
	N    float64 // total count
	R, C int     // non-empty rows and columns
}

// CramersV returns Cramér's V of a rows×cols contingency table given
// row-major (counts[i*cols+j]). Rows and columns with zero total are dropped
// first; r and c count the rest. With Pearson's χ² = Σ(O − E)²/E, E = row
// total × column total / n, and φ² = χ²/n:
//
//	V   = √(φ² / min(r−1, c−1))                             (Cramér 1946, §21.9)
//	Ṽ   = √(φ̃² / min(r̃−1, c̃−1)),  φ̃² = max(0, φ² − (r−1)(c−1)/(n−1)),
//	      r̃ = r − (r−1)²/(n−1),  c̃ = c − (c−1)²/(n−1)         (Bergsma 2013)
//
// (Bergsma W. 2013, A bias-correction for Cramér's V and Tschuprow's T, J.
// Korean Stat. Soc. 42:323–328.) V matches
// scipy.stats.contingency.association(method="cramer") and P matches
// scipy.stats.chi2_contingency(correction=False).
//
// V, VBC, Chi2 and P are NaN when fewer than two rows or two columns are
// non-empty; VBC is also NaN when n < 2. CramersV panics with "assoc: table
// shape mismatch" if len(counts) != rows*cols and with "assoc: negative or
// non-finite count" for such a count.
func CramersV(counts []float64, rows, cols int) CramersVResult {
	checkTable(counts, rows, cols)
	rs := make([]float64, rows)
	cs := make([]float64, cols)
	return cramersV(counts, rows, cols, rs, cs)
}

// cramersV computes CramersV using rs and cs (length rows and cols) as scratch.
func cramersV(counts []float64, rows, cols int, rs, cs []float64) CramersVResult {
	nan := math.NaN()
	res := CramersVResult{V: nan, VBC: nan, Chi2: nan, P: nan}
	clear(rs)
	clear(cs)
	var n float64
	for i := 0; i < rows; i++ {
		for j, v := range counts[i*cols : (i+1)*cols] {
			rs[i] += v
			cs[j] += v
		}
	}
	r, c := 0, 0
	for _, v := range rs {
		n += v
		if v > 0 {
			r++
		}
	}
	for _, v := range cs {
		if v > 0 {
			c++
		}
	}
	res.N, res.R, res.C = n, r, c
	if r < 2 || c < 2 {
		return res
	}
	var chi2 float64
	for i := 0; i < rows; i++ {
		if rs[i] == 0 {
			continue
		}
		for j, o := range counts[i*cols : (i+1)*cols] {
			if cs[j] == 0 {
				continue
			}
			e := rs[i] * cs[j] / n
			chi2 += (o - e) * (o - e) / e
		}
	}
	res.Chi2 = chi2
	res.DF = (r - 1) * (c - 1)
	res.P = distuv.ChiSquared{K: float64(res.DF)}.Survival(chi2)
	phi2 := chi2 / n
	k := float64(min(r, c) - 1)
	res.V = math.Min(1, math.Sqrt(phi2/k))
	if n > 1 {
		fr, fc := float64(r), float64(c)
		phi2t := math.Max(0, phi2-(fr-1)*(fc-1)/(n-1))
		rt := fr - (fr-1)*(fr-1)/(n-1)
		ct := fc - (fc-1)*(fc-1)/(n-1)
		if d := math.Min(rt-1, ct-1); d > 0 {
			res.VBC = math.Min(1, math.Sqrt(phi2t/d))
		}
	}
	return res
}

// SomersDResult holds Somers' D in both directions of an r×c table with
// ordered rows X and ordered columns Y.
type SomersDResult struct {
	DYX  float64 // d(Y|X): columns dependent, rows independent, in [−1, 1]
	DXY  float64 // d(X|Y): rows dependent
	SEYX float64 // ASE1 of DYX (non-null asymptotic standard error)
	SEXY float64 // ASE1 of DXY
	Z    float64 // test statistic of no association, (P−Q)/(2√(Σn·d² − (P−Q)²/n)); the same for both directions
	P    float64 // two-sided normal p-value of Z
	Conc float64 // concordant pairs (each unordered pair once)
	Disc float64 // discordant pairs
	N    float64 // total count
}

// SomersD returns Somers' D of a rows×cols table given row-major
// (counts[i*cols+j]), rows and columns both in ascending order, in O(rows·cols)
// time from two-dimensional cumulative sums. The standard errors are the
// delta-method ones of Goodman & Kruskal (1972, JASA 67:415–421), in the form
// given by Agresti (Categorical Data Analysis, 2nd ed. 2002) and the SAS PROC
// FREQ documentation (cited from memory; the tests check them against an
// independent pair-by-pair implementation in R). With A_ij the count of cells
// strictly above-left or below-right of (i, j), D_ij the count strictly
// above-right or below-left, P = Σ n_ij A_ij, Q = Σ n_ij D_ij (each pair
// counted twice), d_ij = A_ij − D_ij, w_r = n² − Σ n_i+², w_c = n² − Σ n_+j²:
//
//	d(Y|X) = (P − Q)/w_r,  d(X|Y) = (P − Q)/w_c                 (Somers 1962)
//	ASE1(Y|X) = 2/w_r² · √(Σ n_ij (w_r·d_ij − (P−Q)(n − n_i+))²)
//	ASE1(X|Y) = 2/w_c² · √(Σ n_ij (w_c·d_ij − (P−Q)(n − n_+j))²)
//	Z = (P − Q) / (2√(Σ n_ij d_ij² − (P−Q)²/n))
//
// Z is d divided by its null standard error ASE0 = 2/w·√(Σ n_ij d_ij² −
// (P−Q)²/n), which is the same for both directions; P is its two-sided normal
// p-value erfc(|Z|/√2), as in scipy.stats.somersd and SAS PROC FREQ. DYX equals
// scipy.stats.somersd(table).statistic. Conc and Disc are P/2 and Q/2.
//
// A direction is NaN when every pair is tied on its independent variable (a
// single non-empty row for d(Y|X)); Z and P are NaN when the null variance is
// zero. SomersD panics like CramersV on a malformed table.
func SomersD(counts []float64, rows, cols int) SomersDResult {
	checkTable(counts, rows, cols)
	return somersD(counts, rows, cols, make([]float64, (rows+1)*(cols+1)), make([]float64, rows), make([]float64, cols))
}

// somersD computes SomersD with cum ((rows+1)·(cols+1)), rs and cs as scratch.
func somersD(t []float64, rows, cols int, cum, rs, cs []float64) SomersDResult {
	nan := math.NaN()
	res := SomersDResult{DYX: nan, DXY: nan, SEYX: nan, SEXY: nan, Z: nan, P: nan}
	// cum[i*w+j] = Σ_{k<i, l<j} n_kl.
	w := cols + 1
	clear(cum[:w])
	clear(rs)
	clear(cs)
	for i := 0; i < rows; i++ {
		row := t[i*cols : (i+1)*cols]
		prev := cum[i*w : (i+1)*w]
		cur := cum[(i+1)*w : (i+2)*w]
		cur[0] = 0
		var run float64
		for j, v := range row {
			run += v
			cur[j+1] = prev[j+1] + run
			cs[j] += v
		}
		rs[i] = run
	}
	n := cum[rows*w+cols]
	res.N = n
	if n == 0 {
		return res
	}
	// First pass: P, Q and Σ n_ij d_ij². With top = row i of cum and bot =
	// row i+1: above-left = top[j]; below-right = n − bot[c] − last[j+1] +
	// bot[j+1]; above-right = top[c] − top[j+1]; below-left = last[j] − bot[j].
	last := cum[rows*w : rows*w+w] // Σ_{k<rows, l<j}: column cumulative totals
	var p, q, s0 float64
	for i := 0; i < rows; i++ {
		top := cum[i*w : i*w+w]         // Σ_{k<i, l<j}
		bot := cum[(i+1)*w : (i+1)*w+w] // Σ_{k≤i, l<j}
		for j, v := range t[i*cols : (i+1)*cols] {
			if v == 0 {
				continue
			}
			ul := top[j]
			lr := n - bot[cols] - last[j+1] + bot[j+1]
			ur := top[cols] - top[j+1]
			ll := last[j] - bot[j]
			a, d := ul+lr, ur+ll
			p += v * a
			q += v * d
			s0 += v * (a - d) * (a - d)
		}
	}
	res.Conc, res.Disc = p/2, q/2
	var wr, wc float64 = n * n, n * n
	for _, v := range rs {
		wr -= v * v
	}
	for _, v := range cs {
		wc -= v * v
	}
	pq := p - q
	// Second pass: the ASE1 sums, which need P − Q.
	var s1r, s1c float64
	for i := 0; i < rows; i++ {
		top := cum[i*w : i*w+w]
		bot := cum[(i+1)*w : (i+1)*w+w]
		cr := pq * (n - rs[i])
		for j, v := range t[i*cols : (i+1)*cols] {
			if v == 0 {
				continue
			}
			dij := top[j] + n - bot[cols] - last[j+1] + bot[j+1] - (top[cols] - top[j+1] + last[j] - bot[j])
			er := wr*dij - cr
			ec := wc*dij - pq*(n-cs[j])
			s1r += v * er * er
			s1c += v * ec * ec
		}
	}
	if wr > 0 {
		res.DYX = pq / wr
		res.SEYX = 2 / (wr * wr) * math.Sqrt(s1r)
	}
	if wc > 0 {
		res.DXY = pq / wc
		res.SEXY = 2 / (wc * wc) * math.Sqrt(s1c)
	}
	if v0 := s0 - pq*pq/n; v0 > 0 {
		res.Z = pq / (2 * math.Sqrt(v0))
		res.P = math.Erfc(math.Abs(res.Z) / math.Sqrt2) // 2·(1 − Φ(|z|)), accurate in the tail
	}
	return res
}
