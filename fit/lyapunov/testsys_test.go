package lyapunov

import (
	"context"
	"math/rand/v2"
	"testing"
)

// testSystem is an exact polynomial model written in z (equilibrium at 0,
// unit scale), for the search's own tests.
type testSystem struct {
	n      int
	f      []*Poly
	others [][]float64
}

func (s *testSystem) field(dst, z []float64) []float64 {
	for j, p := range s.f {
		dst[j] = p.Eval(z)
	}
	return dst
}

// system returns the search's view of s with measurement noise sigma
// per state (exact field: no residual spread).
func (s *testSystem) system(sigma float64) *System {
	n := s.n
	sys := &System{N: n, Field: s.field, Poly: s.f, Jacobian: make([]float64, n*n), Noise: make([]float64, n), Others: s.others}
	zero := make([]float64, n)
	for i, p := range s.f {
		for j := 0; j < n; j++ {
			sys.Jacobian[i*n+j] = Deriv(p, j).Eval(zero)
		}
		sys.Terms = append(sys.Terms, p.E...)
	}
	for j := range sys.Noise {
		sys.Noise[j] = sigma
	}
	return sys
}

// vdpReverseZ is Van der Pol in reverse time, mu = 1: z1' = -z2,
// z2' = z1 + (z1²-1)z2 (Khalil, Nonlinear Systems, 3rd ed., §8.2;
// [Khalil2002]).
func vdpReverseZ() *testSystem {
	return &testSystem{n: 2, f: []*Poly{
		NewPoly(2, [][]int{{0, 1}}, []float64{-1}),
		NewPoly(2, [][]int{{1, 0}, {0, 1}, {2, 1}}, []float64{1, -1, 1}),
	}}
}

// chainZ is the stable chain of n states z_i' = -z_i - 0.2 z_i³ + 0.5 z_{i+1}.
func chainZ(n int) *testSystem {
	s := &testSystem{n: n}
	for i := 0; i < n; i++ {
		e1, e3 := make([]int, n), make([]int, n)
		e1[i], e3[i] = 1, 3
		exps, coef := [][]int{e1, e3}, []float64{-1, -0.2}
		if i+1 < n {
			en := make([]int, n)
			en[i+1] = 1
			exps, coef = append(exps, en), append(coef, 0.5)
		}
		s.f = append(s.f, NewPoly(n, exps, coef))
	}
	return s
}

// runs integrates s with classical RK4 at step h from random starts in
// box, keeping every every-th state of the runs that end within 0.05 of
// the equilibrium (runs that grow past 50 are dropped), with Gaussian
// measurement noise of standard deviation noise.
func (s *testSystem) runs(box [][2]float64, runs int, h float64, steps, every int, noise float64, seed uint64) *Data {
	rng := rand.New(rand.NewPCG(seed, 0))
	n := s.n
	d := &Data{}
	x0 := make([]float64, n)
	x, y := make([]float64, n), make([]float64, n)
	k := [4][]float64{make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)}
	for tries := 0; len(d.Runs) < runs && tries < 100*runs; tries++ {
		for j := range x0 {
			x0[j] = box[j][0] + rng.Float64()*(box[j][1]-box[j][0])
		}
		copy(x, x0)
		var ts []float64
		var xs [][]float64
		ok := true
		for st := 0; st <= steps && ok; st++ {
			if st%every == 0 {
				ts = append(ts, float64(st)*h)
				xs = append(xs, append([]float64(nil), x...))
			}
			s.field(k[0], x)
			for q, w := range []float64{h / 2, h / 2, h} {
				for j := range y {
					y[j] = x[j] + w*k[q][j]
				}
				s.field(k[q+1], y)
			}
			r := 0.0
			for j := range x {
				x[j] += h / 6 * (k[0][j] + 2*k[1][j] + 2*k[2][j] + k[3][j])
				r += x[j] * x[j]
			}
			ok = r <= 50*50
		}
		end := xs[len(xs)-1]
		e := 0.0
		for _, v := range end {
			e += v * v
		}
		if !ok || e > 0.05*0.05 {
			continue
		}
		z := make([]float64, len(ts)*n)
		for j := 0; j < n; j++ {
			for i := range ts {
				z[i*n+j] = xs[i][j] + noise*rng.NormFloat64()
			}
		}
		d.Z = append(d.Z, z...)
		d.Runs = append(d.Runs, Run{Name: "run" + string(rune('A'+len(d.Runs)%26)) + string(rune('0'+len(d.Runs)/26)), T: ts})
	}
	return d
}

// vdpDataZ is the Van der Pol data set of the tests: 100 runs started in
// the box [-2.2, 2.2] × [-3, 3], 0.005 s steps, every tenth kept.
func vdpDataZ() *Data {
	return vdpReverseZ().runs([][2]float64{{-2.2, 2.2}, {-3, 3}}, 100, 0.005, 3000, 10, 0, 1)
}

// mustChecker builds the checker of s on d with the default options of
// degree deg.
func mustChecker(tb testing.TB, s *testSystem, d *Data, sigma float64, deg int) *checker {
	tb.Helper()
	o := (&Options{Degree: deg}).Defaults()
	ck, err := newChecker(context.Background(), d, s.system(sigma), o, false)
	if err != nil {
		tb.Fatal(err)
	}
	return ck
}
