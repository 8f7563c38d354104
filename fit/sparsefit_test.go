package fit

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"
)

// TestSolveRidgeQR checks solver.solve, the ridge solve of the threshold
// path, against an independent algorithm: the ridge estimate
// (X'X + lam I)^-1 X'y [HoerlKennard1970] is the ordinary least-squares
// solution of X stacked on sqrt(lam) I against y stacked on zeros
// (common practice; [HoerlKennard1970], from memory), which gonum solves
// by QR without forming X'X [gonum]. solve gets X'X and X'y of the active
// columns only, so inactive columns must not matter and must come back
// zero. The Gaussian designs here (3p rows, p columns) have condition
// numbers of a few, so the normal equations lose at most cond^2 ulps:
// 1e-10 relative is far above rounding and far below any wrong sign.
func TestSolveRidgeQR(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 0))
	for _, tc := range []struct {
		name string
		p    int
		lam  float64
	}{
		{"p=1 no ridge", 1, 0}, {"p=4 jitter", 4, refitJitter}, {"p=10 ridge 1e-3", 10, 1e-3},
		{"p=10 ridge 0.5", 10, 0.5}, {"p=28 ridge 2", 28, 2}, {"p=84 ridge 1e-2", 84, 1e-2},
	} {
		t.Run(tc.name, func(t *testing.T) {
			p, n := tc.p, 3*tc.p
			x := mat.NewDense(n, p, nil)
			y := mat.NewVecDense(n, nil)
			for i := 0; i < n; i++ {
				for j := 0; j < p; j++ {
					x.Set(i, j, rng.NormFloat64())
				}
				y.SetVec(i, rng.NormFloat64())
			}
			var g mat.Dense
			g.Mul(x.T(), x)
			var b mat.VecDense
			b.MulVec(x.T(), y)
			s := newSolver(p)
			var act []int
			for k := range s.act {
				s.act[k] = p < 4 || rng.IntN(3) != 0
				if s.act[k] {
					act = append(act, k)
				}
			}
			got := make([]float64, p)
			for k := range got {
				got[k] = math.NaN() // solve must overwrite every entry
			}
			if !s.solve(got, g.RawMatrix().Data, b.RawVector().Data, tc.lam) {
				t.Fatal("solve reports a positive definite system as singular")
			}
			m := len(act)
			aug := mat.NewDense(n+m, m, nil)
			rhs := mat.NewVecDense(n+m, nil)
			for i := 0; i < n; i++ {
				for c, k := range act {
					aug.Set(i, c, x.At(i, k))
				}
				rhs.SetVec(i, y.AtVec(i))
			}
			for c := range act {
				aug.Set(n+c, c, math.Sqrt(tc.lam))
			}
			var ref mat.VecDense
			if err := ref.SolveVec(aug, rhs); err != nil {
				t.Fatal(err)
			}
			want := make([]float64, p)
			for c, k := range act {
				want[k] = ref.AtVec(c)
			}
			if !floats.EqualApprox(got, want, 1e-10) {
				t.Errorf("solve = %.6g\nQR of the stacked system = %.6g", got, want)
			}
		})
	}
}

// TestSolveNotDefinite: an indefinite system is reported, with zeros in
// dst, never a factor of garbage.
func TestSolveNotDefinite(t *testing.T) {
	s := newSolver(2)
	s.act[0], s.act[1] = true, true
	g := []float64{1, 2, 2, 1} // eigenvalues 3 and -1
	dst := []float64{7, 7}
	if s.solve(dst, g, []float64{1, 1}, 0) {
		t.Fatalf("solve accepted an indefinite matrix: %v", dst)
	}
	if dst[0] != 0 || dst[1] != 0 {
		t.Errorf("dst = %v after a failed solve, want zeros", dst)
	}
}

func BenchmarkSolve(b *testing.B) {
	for _, p := range []int{6, 10, 20, 56, 84} {
		b.Run(fmt.Sprintf("p=%d", p), func(b *testing.B) {
			rng := rand.New(rand.NewPCG(4, 0))
			g := make([]float64, p*p)
			for i := 0; i < p; i++ {
				g[i*p+i] = float64(p)
				for j := 0; j < i; j++ {
					v := rng.Float64()
					g[i*p+j], g[j*p+i] = v, v
				}
			}
			rhs := make([]float64, p)
			for i := range rhs {
				rhs[i] = rng.NormFloat64()
			}
			s := newSolver(p)
			for k := range s.act {
				s.act[k] = true
			}
			x := make([]float64, p)
			b.ReportAllocs()
			for b.Loop() {
				if !s.solve(x, g, rhs, 1e-3) {
					b.Fatal("not positive definite")
				}
			}
			b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(p*p*p)*3, "ns/flop")
		})
	}
}
