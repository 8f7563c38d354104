package lp

import (
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/floats/scalar"
)

// TestTop checks the linear-time selection of the most violated rows
// against a full sort (common practice: a reference by sorting).
func TestTop(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 0))
	for _, m := range []int{1, 2, 7, 100, 5000} {
		for _, levels := range []int{3, 1 << 30} { // many ties, or few
			ev := &evaluator{viol: make([]float64, m)}
			var cand []int
			for i := range ev.viol {
				ev.viol[i] = float64(rng.IntN(levels))
				if rng.IntN(4) > 0 {
					cand = append(cand, i)
				}
			}
			if len(cand) == 0 {
				continue
			}
			for _, k := range []int{1, len(cand) / 3, len(cand)} {
				if k == 0 {
					continue
				}
				want := slices.Clone(cand)
				slices.SortStableFunc(want, func(a, b int) int { // descending violation, then index
					switch {
					case ev.viol[a] > ev.viol[b]:
						return -1
					case ev.viol[a] < ev.viol[b]:
						return 1
					}
					return a - b
				})
				want = want[:k]
				slices.Sort(want)
				got := ev.top(slices.Clone(cand), k)
				if !slices.Equal(got, want) {
					t.Fatalf("m=%d levels=%d k=%d: top differs from sort", m, levels, k)
				}
			}
		}
	}
}

// TestSyrkT checks the normal-matrix kernel against gonum's Dsyrk (an
// independent general-purpose library) on odd and even shapes; both sum
// the same products in different orders, so they agree to rounding.
func TestSyrkT(t *testing.T) {
	rng := rand.New(rand.NewPCG(2, 0))
	for _, sz := range [][2]int{{1, 1}, {2, 3}, {3, 7}, {5, 10}, {8, 33}, {13, 100}, {31, 257}} {
		n, k := sz[0], sz[1]
		a := make([]float64, k*n) // k x n rows
		at := make([]float64, n*k)
		for l := 0; l < k; l++ {
			for i := 0; i < n; i++ {
				a[l*n+i] = rng.NormFloat64()
				at[i*k+l] = a[l*n+i]
			}
		}
		want := make([]float64, n*n)
		blas64.Syrk(blas.Trans, 1, blas64.General{Rows: k, Cols: n, Stride: n, Data: a}, 0,
			blas64.Symmetric{N: n, Stride: n, Uplo: blas.Upper, Data: want})
		got := make([]float64, n*n)
		syrkT(got, at, n, k)
		for i := 0; i < n; i++ {
			for j := i; j < n; j++ {
				// k products of unit normals: rounding ~ k * 1e-16 * sqrt(k).
				if !scalar.EqualWithinAbs(got[i*n+j], want[i*n+j], 1e-12*float64(k)) {
					t.Fatalf("n=%d k=%d: c[%d][%d] = %g, Dsyrk %g", n, k, i, j, got[i*n+j], want[i*n+j])
				}
			}
		}
	}
}
