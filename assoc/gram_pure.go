//go:build !openblas

package assoc

// gramBackend names the BLAS that gramSyrk uses in this build.
const gramBackend = "gonum (pure Go)"

// gramSyrk sets the upper triangle of c (gp×gp, row-major) to a·aᵀ, where a
// is gp×n row-major: the BLAS dsyrk C = A·Aᵀ (Dongarra et al. 1990, ACM TOMS
// 16:1–17). The default build uses gonum's pure-Go BLAS in blocks shared by
// up to workers goroutines; the openblas build tag swaps in the system's
// OpenBLAS through cgo (gram_openblas.go).
func gramSyrk(a, c []float64, gp, n, workers int) {
	gramGonum(a, c, gp, n, workers)
}
