package assoc

import (
	"cmp"
	"math"
	"slices"
)

// BenjaminiHochberg returns the Benjamini–Hochberg q-values (adjusted
// p-values controlling the false discovery rate) of p: with the m non-NaN
// p-values sorted ascending, p_(1) ≤ … ≤ p_(m),
//
//	q_(i) = min over j ≥ i of min(1, m·p_(j)/j)
//
// (Benjamini & Hochberg 1995, J. R. Stat. Soc. B 57:289–300; the step-up form
// of R's p.adjust(method = "BH")). NaN p-values get NaN q-values and do not
// count in m. Equal p-values get equal q-values. The result is written to dst
// when it has length len(p) (dst may be p itself), else to a new slice.
func BenjaminiHochberg(p, dst []float64) []float64 {
	if len(dst) != len(p) {
		dst = make([]float64, len(p))
	}
	idx := make([]int, 0, len(p))
	for i, v := range p {
		if !math.IsNaN(v) {
			idx = append(idx, i)
		}
	}
	// Stable order by p then index keeps the result independent of sort details.
	slices.SortFunc(idx, func(a, b int) int {
		if c := cmp.Compare(p[a], p[b]); c != 0 {
			return c
		}
		return cmp.Compare(a, b)
	})
	m := float64(len(idx))
	q := make([]float64, len(idx))
	run := 1.0
	for k := len(idx) - 1; k >= 0; k-- {
		run = math.Min(run, m/float64(k+1)*p[idx[k]]) // R's order: (m/i)·p
		q[k] = run
	}
	for i, v := range p {
		if math.IsNaN(v) {
			dst[i] = math.NaN()
		}
	}
	for k, i := range idx {
		dst[i] = q[k]
	}
	return dst
}
