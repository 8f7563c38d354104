package lyapunov

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
)

// TestBallMax checks the largest value of p on the ball |z| <= r against
// values known outside the code: for a quadratic z'Pz it is r²·lambda_max(P)
// (Rayleigh–Ritz [HornJohnson2013]), with the eigenvalues of the 2×2
// symmetric [[a, b], [b, d]] in closed form, (a+d)/2 ± sqrt(((a-d)/2)² + b²)
// (the roots of the characteristic polynomial; common practice). For a
// polynomial with higher terms the bound must hold over a dense grid of
// the ball (it is an upper bound) and stay within the term-wise slack.
func TestBallMax(t *testing.T) {
	closed := func(a, b, d float64) float64 {
		return (a+d)/2 + math.Sqrt((a-d)*(a-d)/4+b*b)
	}
	for _, tc := range []struct {
		name string
		p    *Poly
		r    float64
		want float64 // exact maximum; NaN: only the grid bound applies
		tol  float64 // relative: rounding of the eigen solver (1e-12)
	}{
		// [[2, 1], [1, 2]]: eigenvalues 1 and 3.
		{"2x2 eigen 1,3", NewPoly(2, [][]int{{2, 0}, {1, 1}, {0, 2}}, []float64{2, 2, 2}), 0.5, 0.25 * closed(2, 1, 2), 1e-12},
		// [[1, 0.3], [0.3, 0.2]]
		{"2x2 skewed", NewPoly(2, [][]int{{2, 0}, {1, 1}, {0, 2}}, []float64{1, 0.6, 0.2}), 0.03, 0.03 * 0.03 * closed(1, 0.3, 0.2), 1e-12},
		// diagonal: the largest entry
		{"diagonal 3-state", NewPoly(3, [][]int{{2, 0, 0}, {0, 2, 0}, {0, 0, 2}}, []float64{0.1, 0.7, 0.2}), 2, 4 * 0.7, 1e-12},
		// indefinite: the maximum on the ball is at z = 0 or along the
		// positive eigenvector; lambda_max = 1 here.
		{"indefinite", NewPoly(2, [][]int{{2, 0}, {0, 2}}, []float64{1, -1}), 1, 1, 1e-12},
		// affine: 3 + z1 + z2 on |z| <= 2 peaks at 3 + 2·sqrt(2), along
		// (1, 1) (Cauchy–Schwarz; exact).
		{"affine", NewPoly(2, [][]int{{0, 0}, {1, 0}, {0, 1}}, []float64{3, 1, 1}), 2, 3 + 2*math.Sqrt2, 1e-12},
		{"quartic", NewPoly(2, [][]int{{2, 0}, {1, 1}, {0, 2}, {4, 0}, {2, 2}, {0, 3}}, []float64{1, 0.4, 0.5, 3, -2, 1}), 0.2, math.NaN(), 0},
	} {
		t.Run(tc.name, func(t *testing.T) {
			got := BallMax(tc.p, tc.r)
			if !math.IsNaN(tc.want) && !scalar.EqualWithinRel(got, tc.want, tc.tol) {
				t.Errorf("BallMax = %.15g, want %.15g", got, tc.want)
			}
			// Grid over the ball (polar, 2 states) or the sphere's axes:
			// no point may exceed the bound.
			seen, pts := 0.0, 0
			z := make([]float64, tc.p.N)
			for i := 0; i <= 40; i++ {
				for k := 0; k < 720; k++ {
					rho := tc.r * float64(i) / 40
					a := 2 * math.Pi * float64(k) / 720
					for j := range z {
						z[j] = 0
					}
					z[0], z[1] = rho*math.Cos(a), rho*math.Sin(a)
					v := tc.p.Eval(z)
					seen = math.Max(seen, v)
					pts++
					if !(v <= got*(1+1e-12)) {
						t.Fatalf("p(%v) = %.15g above the bound %.15g", z, v, got)
					}
				}
			}
			if pts == 0 || !(seen > 0) {
				t.Fatalf("grid saw %d points, largest %g", pts, seen)
			}
			if math.IsNaN(tc.want) {
				// The bound exceeds the quadratic part's maximum by at most
				// the higher terms' bound, and the true maximum falls short
				// of it by at most as much: got - seen <= 2·sum |c| r^d.
				higher := 0.0
				for k, e := range tc.p.E {
					if d := e[0] + e[1]; d > 2 {
						higher += math.Abs(tc.p.C[k]) * math.Pow(tc.r, float64(d))
					}
				}
				if !(higher > 0) || !(got-seen <= 2*higher*(1+1e-9)) {
					t.Errorf("bound %.15g, grid %.15g: slack beyond 2·%.3g", got, seen, higher)
				}
			}
			if !math.IsNaN(tc.want) && tc.p.N == 2 && !scalar.EqualWithinRel(seen, tc.want, 1e-4) {
				// The grid (0.5° steps) reaches the maximum within
				// 1-cos(0.25°) ~ 1e-5 relative.
				t.Errorf("grid maximum %.15g, want %.15g", seen, tc.want)
			}
		})
	}
}
