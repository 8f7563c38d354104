package gram

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/floats/scalar"
)

// TestAddRows checks AddRows (the assembly tiles where the machine has
// them, and the plain-Go remainder) against gonum's Dsyrk, an independent
// general-purpose library, on shapes with and without a remainder, a row
// stride wider than the matrix and a non-zero c to add to. Both sum the
// same products in different orders: they agree to rounding, relative
// 1e-12 of the sum of |products|.
func TestAddRows(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 0))
	for _, sz := range [][3]int{{1, 1, 1}, {3, 5, 4}, {8, 1, 8}, {8, 40, 8}, {13, 100, 16}, {90, 512, 96}, {96, 37, 96}, {205, 300, 205}} {
		n, k, lda := sz[0], sz[1], sz[2]
		a := make([]float64, k*lda)
		for i := range a {
			a[i] = rng.NormFloat64()
		}
		c0 := make([]float64, n*n)
		for i := range c0 {
			c0[i] = rng.NormFloat64()
		}
		want := append([]float64(nil), c0...)
		blas64.Syrk(blas.Trans, 1, blas64.General{Rows: k, Cols: n, Stride: lda, Data: a}, 1,
			blas64.Symmetric{N: n, Stride: n, Uplo: blas.Upper, Data: want})
		got := append([]float64(nil), c0...)
		AddRows(got, a, n, k, lda)
		for i := 0; i < n; i++ {
			for j := i; j < n; j++ {
				mag := 1.0
				for l := 0; l < k; l++ {
					mag += math.Abs(a[l*lda+i] * a[l*lda+j])
				}
				if !scalar.EqualWithinAbs(got[i*n+j], want[i*n+j], 1e-12*mag) {
					t.Fatalf("n=%d k=%d lda=%d: c[%d][%d] = %.17g, Dsyrk %.17g", n, k, lda, i, j, got[i*n+j], want[i*n+j])
				}
			}
			for j := 0; j < i-8; j++ {
				if got[i*n+j] != c0[i*n+j] {
					t.Fatalf("n=%d: c[%d][%d] below the diagonal changed", n, i, j)
				}
			}
		}
	}
	t.Logf("assembly kernel: %v", useFMA)
}
