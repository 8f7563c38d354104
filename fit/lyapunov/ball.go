package lyapunov

import "math"

// BallMax returns an upper bound of p over the ball |z| <= r (Euclidean
// norm, r >= 0): r²·max(lambda_max(Q), 0) for p's degree-2 part z'Qz
// (the Rayleigh quotient's maximum, exact), plus norms[d]·r^d for each
// other degree d (see [DegreeNorms]; |z^b| <= |z|^|b|). For a p with
// only degree-2 terms (a quadratic V) it is the exact maximum; otherwise
// it is a sound bound, tight as r -> 0 where the quadratic part
// dominates. It returns +Inf when the eigenvalues cannot be computed,
// and panics if r is negative or NaN.
func BallMax(p *Poly, r float64) float64 {
	if !(r >= 0) {
		panic("lyapunov: BallMax: negative radius")
	}
	n := p.N
	mx := 0.0
	for d, s := range DegreeNorms(p) {
		if d != 2 {
			mx += s * math.Pow(r, float64(d))
		}
	}
	q := QuadMatrix(p)
	nz := false
	for _, v := range q {
		nz = nz || v != 0
	}
	if !nz {
		return mx
	}
	lam, ok := eigMax(q, n)
	if !ok {
		return math.Inf(1)
	}
	return mx + r*r*math.Max(lam, 0)
}
