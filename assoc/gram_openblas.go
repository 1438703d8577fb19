//go:build openblas && cgo

package assoc

// The include paths are Debian's (libopenblas-dev, pthread variant) and the
// one other distributions use; -lopenblas links the libopenblas.so that the
// system selects.

/*
#cgo CFLAGS: -I/usr/include/x86_64-linux-gnu/openblas-pthread -I/usr/include/aarch64-linux-gnu/openblas-pthread -I/usr/include/openblas
#cgo LDFLAGS: -lopenblas
#include <cblas.h>
*/
import "C"

import (
	"fmt"
	"math"
	"unsafe"
)

// gramBackend names the BLAS that gramSyrk uses in this build.
const gramBackend = "OpenBLAS (cgo)"

// gramSyrk sets the upper triangle of c (gp×gp, row-major) to a·aᵀ, where a
// is gp×n row-major: the BLAS dsyrk C = A·Aᵀ (Dongarra et al. 1990, ACM TOMS
// 16:1–17), here one cblas_dsyrk call into the system's OpenBLAS. workers is
// not used: OpenBLAS runs its own thread pool, sized by OPENBLAS_NUM_THREADS
// (default: every core). The engine passes integer-valued doubled ranks whose
// products and sums stay below 2⁵³, so the result is exact and equal to the
// pure-Go build's whatever order OpenBLAS sums in. gramSyrk panics if gp or n
// do not fit the 32-bit integers of the BLAS interface.
func gramSyrk(a, c []float64, gp, n, workers int) {
	if gp == 0 {
		return
	}
	if n == 0 {
		clear(c[:gp*gp])
		return
	}
	if gp > math.MaxInt32 || n > math.MaxInt32 {
		panic(fmt.Sprintf("assoc: Gram matrix of %d×%d too large for a 32-bit BLAS", gp, n))
	}
	_ = a[gp*n-1]
	_ = c[gp*gp-1]
	// a and c hold no Go pointers, so passing them to C is allowed; the call
	// does not keep them.
	C.cblas_dsyrk(C.CblasRowMajor, C.CblasUpper, C.CblasNoTrans,
		C.blasint(gp), C.blasint(n),
		1, (*C.double)(unsafe.Pointer(&a[0])), C.blasint(n),
		0, (*C.double)(unsafe.Pointer(&c[0])), C.blasint(gp))
}
