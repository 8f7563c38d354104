package fit

import (
	"gonum.org/v1/gonum/mat"

	"basin.example/fit/lyapunov"
)

// ErrLyapunov is returned by [Lyapunov] when A'P + PA = -Q has no unique
// solution: two eigenvalues of A sum to zero (to working precision). It
// is [lyapunov.ErrSingular].
var ErrLyapunov = lyapunov.ErrSingular

// Lyapunov solves the continuous Lyapunov equation A'P + PA = -Q for P,
// with A and Q n×n, row-major in a and q; it is [lyapunov.Solve] (see
// there for the method, the panics and the errors).
func Lyapunov(a, q []float64, n int) ([]float64, error) {
	return lyapunov.Solve(a, q, n)
}

// symEigen returns the eigenvalues of the symmetric n×n matrix s
// (row-major), ascending.
func symEigen(s []float64, n int) []float64 {
	var es mat.EigenSym
	if !es.Factorize(mat.NewSymDense(n, append([]float64(nil), s...)), false) {
		return nil
	}
	return es.Values(nil)
}

// eye returns the n×n identity, row-major.
func eye(n int) []float64 {
	q := make([]float64, n*n)
	for i := 0; i < n; i++ {
		q[i*n+i] = 1
	}
	return q
}
