package lyapunov

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// ErrSingular is returned by [Solve] when A'P + PA = -Q has no unique
// solution: two eigenvalues of A sum to zero (to working precision).
var ErrSingular = errors.New("lyapunov equation is singular (eigenvalues of A sum to zero)")

// Solve solves the continuous Lyapunov equation
//
//	A'P + PA = -Q
//
// for P, with A and Q n×n, row-major in a and q. It uses the Kronecker
// form (I⊗A' + A'⊗I) vec(P) = -vec(Q), an n²×n² dense LU solve, which is
// exact enough and cheap for the state counts basin handles (n ≤ 8). The
// result is symmetrised. For a stable A and a positive definite Q, P is
// positive definite. It panics if len(a) or len(q) is not n*n; a singular
// system returns an error wrapping [ErrSingular] and mat.Condition.
func Solve(a, q []float64, n int) ([]float64, error) {
	if n < 1 || len(a) != n*n || len(q) != n*n {
		panic("lyapunov: Solve: length mismatch")
	}
	nn := n * n
	k := mat.NewDense(nn, nn, nil)
	// vec is row-major: index i*n+j is P_ij. (A'P)_ij = sum_l A_li P_lj;
	// (PA)_ij = sum_l P_il A_lj.
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			r := i*n + j
			for l := 0; l < n; l++ {
				k.Set(r, l*n+j, k.At(r, l*n+j)+a[l*n+i])
				k.Set(r, i*n+l, k.At(r, i*n+l)+a[l*n+j])
			}
		}
	}
	rhs := mat.NewVecDense(nn, nil)
	for i := range q {
		rhs.SetVec(i, -q[i])
	}
	var lu mat.LU
	lu.Factorize(k)
	var x mat.VecDense
	if err := lu.SolveVecTo(&x, false, rhs); err != nil {
		var c mat.Condition
		if errors.As(err, &c) && float64(c) < lyapCondMax {
			// ill-conditioned but usable
		} else {
			return nil, fmt.Errorf("%w: %v", ErrSingular, err)
		}
	}
	p := make([]float64, nn)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			p[i*n+j] = 0.5 * (x.AtVec(i*n+j) + x.AtVec(j*n+i))
		}
	}
	for _, v := range p {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, ErrSingular
		}
	}
	return p, nil
}

// lyapCondMax is the condition number of the Kronecker system above which
// the Lyapunov solution is refused (about 1/sqrt(machine epsilon)·1e4:
// below it the relative error of P stays under ~1e-4, enough for a start).
const lyapCondMax = 1e12

// eye returns the n×n identity, row-major.
func eye(n int) []float64 {
	q := make([]float64, n*n)
	for i := 0; i < n; i++ {
		q[i*n+i] = 1
	}
	return q
}
