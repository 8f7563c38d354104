package gram

import (
	"math/rand/v2"
	"runtime"
	"sync"
	"testing"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
)

// benchGram forms the Gram matrix of rows x cols random rows in blocks of
// 512 rows, the blocks split over the cores, as the field fit does with
// its library rows; kernel gets one block (row-major, 512 x cols) and the
// worker's cols x cols scratch.
func benchGram(b *testing.B, rows, cols int, kernel func(c, blk, at []float64, k int)) {
	const block = 512
	rng := rand.New(rand.NewPCG(1, 0))
	a := make([]float64, block*cols) // one block, reused: the kernel's speed, not the memory's
	for i := range a {
		a[i] = rng.NormFloat64()
	}
	W := runtime.GOMAXPROCS(0)
	b.SetBytes(int64(rows * cols * 8))
	for b.Loop() {
		var wg sync.WaitGroup
		for w := 0; w < W; w++ {
			wg.Add(1)
			go func(w int) {
				defer wg.Done()
				c := make([]float64, cols*cols)
				at := make([]float64, block*cols)
				for r := w * block; r < rows; r += W * block {
					kernel(c, a[:min(block, rows-r)*cols], at, min(block, rows-r))
				}
			}(w)
		}
		wg.Wait()
	}
	b.ReportMetric(b.Elapsed().Seconds()/float64(b.N), "s/gram")
}

// BenchmarkGram compares AddRows and gonum's
// Dsyrk on the field fit's normal equations: 1e6 rows of the degree-3
// library in 6 states (84 terms) and 6 targets, 90 columns. The anchor,
// OpenBLAS on the same shape, is measured outside the repository.
func BenchmarkGram(b *testing.B) {
	const rows, cols = 1000000, 90
	b.Run("rows", func(b *testing.B) {
		benchGram(b, rows, cols, func(c, blk, at []float64, k int) {
			AddRows(c, blk, cols, k, cols)
		})
	})
	b.Run("rows-padded96", func(b *testing.B) { // the fit pads its rows to a multiple of 8
		benchGram(b, rows, 96, func(c, blk, at []float64, k int) {
			AddRows(c, blk, 96, k, 96)
		})
	})
	b.Run("gonum", func(b *testing.B) {
		benchGram(b, rows, cols, func(c, blk, at []float64, k int) {
			blas64.Syrk(blas.Trans, 1, blas64.General{Rows: k, Cols: cols, Stride: cols, Data: blk}, 0,
				blas64.Symmetric{Uplo: blas.Upper, N: cols, Stride: cols, Data: c})
		})
	})
}
