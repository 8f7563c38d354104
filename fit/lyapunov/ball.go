package lyapunov

import "math"

// BallMax returns an upper bound of p over the ball |z| <= r (Euclidean
// norm, r >= 0), the sum of the maxima of its parts of each degree: the
// constant; |q|·r for the linear part q'z; r²·max(lambda_max(Q), 0) for
// the degree-2 part z'Qz (the Rayleigh quotient's maximum); and
// norms[d]·r^d for each degree d above 2 (see [DegreeNorms]; |z^b| <=
// |z|^|b|). For a p of degree at most 2 without a linear part (a
// quadratic V) it is the exact maximum; otherwise it is a sound bound,
// tight as r -> 0 where the lowest degree dominates. It returns +Inf when
// the eigenvalues cannot be computed, and panics if r is negative or NaN.
func BallMax(p *Poly, r float64) float64 {
	if !(r >= 0) {
		panic("lyapunov: BallMax: negative radius")
	}
	n := p.N
	mx := 0.0
	q := make([]float64, n)
	for k, e := range p.E {
		d := 0
		for _, v := range e {
			d += v
		}
		switch {
		case d == 0:
			mx += p.C[k]
		case d == 1:
			for j, v := range e {
				q[j] += float64(v) * p.C[k]
			}
		case d > 2:
			mx += math.Abs(p.C[k]) * math.Pow(r, float64(d))
		}
	}
	mx += math.Sqrt(norm2(q)) * r
	quad := QuadMatrix(p)
	nz := false
	for _, v := range quad {
		nz = nz || v != 0
	}
	if !nz {
		return mx
	}
	lam, ok := eigMax(quad, n)
	if !ok {
		return math.Inf(1)
	}
	return mx + r*r*math.Max(lam, 0)
}
