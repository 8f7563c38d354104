package lyapunov

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"
)

func TestLyapunovReference(t *testing.T) {
	for _, tc := range []struct {
		name string
		n    int
		a, p []float64
	}{
		// [Khalil2002] ch. 4 (confirmed in math.stackexchange q. 4604793,
		// which follows Khalil). Exact rationals.
		{"khalil", 2, []float64{0, 1, -1, -1}, []float64{1.5, 0.5, 0.5, 1}},
		// Van der Pol in reverse time, linearised ([Khalil2002], from
		// Khalil §8.2; exact).
		{"vdp-reverse", 2, []float64{0, -1, 1, -1}, []float64{1.5, -0.5, -0.5, 1}},
		// [Ogata]-style textbook example, from memory, verified exactly.
		{"ogata", 2, []float64{0, 1, -2, -3}, []float64{1.25, 0.25, 0.25, 0.25}},
		{"diag", 2, []float64{-1, 0, 0, -2}, []float64{0.5, 0, 0, 0.25}},
		// Companion matrix with poles -1, -2, -3; P computed here with
		// exact rationals (the equation of [Khalil2002] ch. 4).
		{"companion3", 3, []float64{0, 1, 0, 0, 0, 1, -6, -11, -6}, []float64{
			109.0 / 60, 23.0 / 20, 1.0 / 12, 23.0 / 20, 241.0 / 120, 3.0 / 20, 1.0 / 12, 3.0 / 20, 13.0 / 120}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			q := eye(tc.n)
			p, err := Solve(tc.a, q, tc.n)
			if err != nil {
				t.Fatal(err)
			}
			// The references are exact rationals; 1e-12 allows for the
			// LU solve's rounding on these well-conditioned systems.
			for i := range p {
				if !scalar.EqualWithinAbs(p[i], tc.p[i], 1e-12) {
					t.Fatalf("P = %v, want %v", p, tc.p)
				}
			}
		})
	}
}

func TestLyapunovRandomStable(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 0))
	for trial := 0; trial < 40; trial++ {
		n := 2 + trial%5
		a := randomStable(rng, n)
		q := eye(n)
		p, err := Solve(a, q, n)
		if err != nil {
			t.Fatal(err)
		}
		// Residual A'P + PA + Q, relative to |A||P|: the LU solve of a
		// system with condition ~1e3 leaves ~1e-13.
		am, pm := mat.NewDense(n, n, a), mat.NewDense(n, n, p)
		var r, t1 mat.Dense
		r.Mul(am.T(), pm)
		t1.Mul(pm, am)
		r.Add(&r, &t1)
		r.Add(&r, mat.NewDense(n, n, q))
		if res := mat.Norm(&r, math.Inf(1)) / (1 + mat.Norm(am, math.Inf(1))*mat.Norm(pm, math.Inf(1))); res > 1e-10 {
			t.Errorf("n=%d: relative residual %g", n, res)
		}
		// Independent check through gonum's eigen-decomposition: with
		// A = W diag(l) W^-1, P = W^-H [ (W^H Q W)_ij / -(conj(l_i)+l_j) ] W^-1
		// (the standard diagonalised solution of the Lyapunov equation).
		var eig mat.Eigen
		if !eig.Factorize(am, mat.EigenRight) {
			t.Fatal("eigen failed")
		}
		l := eig.Values(nil)
		var w mat.CDense
		eig.VectorsTo(&w)
		pe := lyapByEigen(l, &w, n)
		for i := range p {
			if !scalar.EqualWithinAbs(p[i], pe[i], 1e-8*(1+math.Abs(p[i]))) {
				t.Fatalf("n=%d: P[%d] = %g, eigen route %g", n, i, p[i], pe[i])
			}
		}
		// P must be positive definite for a stable A and Q = I
		// (Lyapunov's theorem).
		if ev := symEigen(p, n); ev[0] <= 0 {
			t.Errorf("P not positive definite: %v", ev)
		}
	}
}

func TestLyapunovSingular(t *testing.T) {
	// Eigenvalues ±i sum to zero: no unique solution.
	if _, err := Solve([]float64{0, 1, -1, 0}, eye(2), 2); err == nil {
		t.Fatal("want an error for a centre")
	}
}

// lyapByEigen solves A'P + PA = -I through A = W L W^-1 (complex).
func lyapByEigen(l []complex128, w *mat.CDense, n int) []float64 {
	// Invert W by Gauss-Jordan in complex arithmetic (n is small).
	inv := make([]complex128, n*n)
	aug := make([]complex128, n*n)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			aug[i*n+j] = w.At(i, j)
		}
		inv[i*n+i] = 1
	}
	for c := 0; c < n; c++ {
		piv := c
		for r := c + 1; r < n; r++ {
			if cabs(aug[r*n+c]) > cabs(aug[piv*n+c]) {
				piv = r
			}
		}
		for j := 0; j < n; j++ {
			aug[c*n+j], aug[piv*n+j] = aug[piv*n+j], aug[c*n+j]
			inv[c*n+j], inv[piv*n+j] = inv[piv*n+j], inv[c*n+j]
		}
		d := aug[c*n+c]
		for j := 0; j < n; j++ {
			aug[c*n+j] /= d
			inv[c*n+j] /= d
		}
		for r := 0; r < n; r++ {
			if r == c {
				continue
			}
			f := aug[r*n+c]
			for j := 0; j < n; j++ {
				aug[r*n+j] -= f * aug[c*n+j]
				inv[r*n+j] -= f * inv[c*n+j]
			}
		}
	}
	// With V = W^-1 (rows are left eigenvectors), A' = V' L V'^-1...
	// Write P = V^H X V; then L^H X + X L = -(W^H W) ... using
	// A'P + PA = -I with A = W L V: V^H L^H W^H P + P W L V = -I.
	// Set X = W^H P W: L^H X + X L = -W^H W, so X_ij = -(W^H W)_ij/(conj(l_i)+l_j),
	// and P = V^H X V.
	whw := make([]complex128, n*n)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			var s complex128
			for k := 0; k < n; k++ {
				s += conj(w.At(k, i)) * w.At(k, j)
			}
			whw[i*n+j] = -s / (conj(l[i]) + l[j])
		}
	}
	p := make([]float64, n*n)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			var s complex128
			for a := 0; a < n; a++ {
				for b := 0; b < n; b++ {
					s += conj(inv[a*n+i]) * whw[a*n+b] * inv[b*n+j]
				}
			}
			p[i*n+j] = real(s)
		}
	}
	return p
}

func cabs(c complex128) float64    { return math.Hypot(real(c), imag(c)) }
func conj(c complex128) complex128 { return complex(real(c), -imag(c)) }

// randomStable returns a random n×n matrix shifted so that its spectral
// abscissa is at most -0.1.
func randomStable(rng *rand.Rand, n int) []float64 {
	a := make([]float64, n*n)
	for i := range a {
		a[i] = rng.NormFloat64()
	}
	var eig mat.Eigen
	eig.Factorize(mat.NewDense(n, n, a), mat.EigenNone)
	mx := math.Inf(-1)
	for _, v := range eig.Values(nil) {
		mx = math.Max(mx, real(v))
	}
	shift := mx + 0.1 + rng.Float64()
	for i := 0; i < n; i++ {
		a[i*n+i] -= shift
	}
	return a
}
