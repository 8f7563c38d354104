package validate

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"

	"basin.example/fit"
)

// Invented 3- and 6-state test systems for the false-certificate trial:
// each has a known truth, confirmed below from its Jacobian at the origin
// (central differences, eigenvalues by gonum's mat.Eigen: an independent
// library), and the certified region, when there is one, is checked
// against the true dynamics by integrating from points sampled inside it.
var (
	// Stable node whose basin is bounded by saddles at x1 = ±1:
	// x1' = -x1 + x1³ has fixed points 0 (stable) and ±1 (unstable)
	// ([Strogatz1994] ch. 2, flows on the line, from memory; each fixed
	// point's stability is the sign of f' there, exact), and x2, x3 are
	// driven by x1 and decay.
	trialSaddle = system{name: "trial-saddle3", source: "x1' = -x1 + x1^3 (saddles at x1 = ±1), x2' = -2x2 + x1 + 0.5x3, x3' = -1.5x3 + x1x2",
		f: func(d []float64, _ float64, x []float64) {
			d[0] = -x[0] + x[0]*x[0]*x[0]
			d[1] = -2*x[1] + x[0] + 0.5*x[2]
			d[2] = -1.5*x[2] + x[0]*x[1]
		},
		states: []string{"a", "b", "c"}, x0: func(r *rand.Rand) []float64 { return box(r, 0.9, 1.4, 1.4) }, dur: 12, rate: 100, runs: 30}
	// Weakly unstable focus: eigenvalues 0.015 ± 2i (the rotation block
	// [[s, -w], [w, s]] has eigenvalues s ± iw; exact), beside a
	// decaying state.
	trialWeakFocus = system{name: "trial-weakfocus3", source: "a' = 0.015a - 2b, b' = 2a + 0.015b, c' = -c + 0.2a: unstable focus",
		f: func(d []float64, _ float64, x []float64) {
			d[0] = 0.015*x[0] - 2*x[1]
			d[1] = 2*x[0] + 0.015*x[1]
			d[2] = -x[2] + 0.2*x[0]
		},
		states: []string{"a", "b", "c"}, x0: func(r *rand.Rand) []float64 { return box(r, 1, 1, 1) }, dur: 30, rate: 50, runs: 30}
	// Saddle with fast stable directions and a slow unstable one
	// (+0.02 1/s): runs fall onto the slow manifold within a second,
	// then creep away.
	trialSlowManifold = system{name: "trial-slowmanifold3", source: "a' = 0.02a + 0.1bc, b' = -4b + a^2, c' = -6c + b: slow unstable direction",
		f: func(d []float64, _ float64, x []float64) {
			d[0] = 0.02*x[0] + 0.1*x[1]*x[2]
			d[1] = -4*x[1] + x[0]*x[0]
			d[2] = -6*x[2] + x[1]
		},
		states: []string{"a", "b", "c"}, x0: func(r *rand.Rand) []float64 { return box(r, 1, 1, 1) }, dur: 20, rate: 100, runs: 30}
	// A stable six-state chain with cross-coupling and cubic damping.
	trialChain = system{name: "trial-chain6", source: "x_i' = -x_i + 0.6x_{i-1} - 0.3x_{i+1} - 0.2x_i^3, x1' += 0.2x6",
		f: func(d []float64, _ float64, x []float64) {
			for i := range 6 {
				l, r := 0.0, 0.0
				if i > 0 {
					l = x[i-1]
				}
				if i < 5 {
					r = x[i+1]
				}
				d[i] = -x[i] + 0.6*l - 0.3*r - 0.2*x[i]*x[i]*x[i]
			}
			d[0] += 0.2 * x[5]
		},
		states: []string{"x1", "x2", "x3", "x4", "x5", "x6"}, x0: func(r *rand.Rand) []float64 { return box(r, 1, 1, 1, 1, 1, 1) }, dur: 15, rate: 100, runs: 40}
)

// jacobianTopReal is the largest real part of the eigenvalues of f's
// Jacobian at the origin: central differences (step 1e-6, error of
// order 1e-12 on these polynomials), eigenvalues by gonum.
func jacobianTopReal(t *testing.T, f ODE, n int) float64 {
	t.Helper()
	const h = 1e-6
	a := mat.NewDense(n, n, nil)
	xp, xm := make([]float64, n), make([]float64, n)
	dp, dm := make([]float64, n), make([]float64, n)
	for j := range n {
		clear(xp)
		clear(xm)
		xp[j], xm[j] = h, -h
		f(dp, 0, xp)
		f(dm, 0, xm)
		for i := range n {
			a.Set(i, j, (dp[i]-dm[i])/(2*h))
		}
	}
	var eig mat.Eigen
	if !eig.Factorize(a, mat.EigenNone) {
		t.Fatal("gonum: eigen decomposition failed")
	}
	top := math.Inf(-1)
	for _, v := range eig.Values(nil) {
		top = math.Max(top, real(v))
	}
	return top
}

// regionConverges samples up to n points of cert's region (uniform in its
// box, kept where V <= level) and integrates the true field f from each
// for dur seconds; it returns how many end within tol of the origin and
// how many were sampled.
func regionConverges(f ODE, cert *fit.Certificate, n int, dur, tol float64) (ok, tried int) {
	rng := rand.New(rand.NewPCG(11, 0))
	k := len(cert.Box)
	x, z := make([]float64, k), make([]float64, k)
	times := []float64{0, dur}
	dst := make([][]float64, k)
	for j := range dst {
		dst[j] = make([]float64, 2)
	}
	for draws := 0; tried < n && draws < 1000*n; draws++ {
		for j, b := range cert.Box {
			x[j] = b[0] + (b[1]-b[0])*rng.Float64()
		}
		if !cert.Inside(x, cert.V.Eval(cert.Z(z, x))) {
			continue
		}
		tried++
		st := Integrate(f, x, times, dst, &DopriOptions{RelTol: 1e-8, AbsTol: 1e-10, MaxNorm: 1e3})
		r := 0.0
		for j := range dst {
			r = math.Hypot(r, dst[j][1])
		}
		if !st.Diverged && r <= tol {
			ok++
		}
	}
	return ok, tried
}

// TestTrialSoundness: the trial's invented rigs. Unstable ones are
// certified by no fold; stable ones are certified, and every sampled point
// of the region converges under the true dynamics.
func TestTrialSoundness(t *testing.T) {
	heavy(t)
	if testing.Short() {
		t.Skip("fits fields and certificates")
	}
	cases := []struct {
		sys     system
		noise   float64
		stable  bool    // the truth: the origin is asymptotically stable
		topReal float64 // the largest real part of the Jacobian's eigenvalues (exact, see each system)
	}{
		{trialSaddle, 0.005, true, -1},
		{trialWeakFocus, 0.01, false, 0.015},
		{trialSlowManifold, 0.005, false, 0.02},
		{trialChain, 0.004, true, math.NaN()},
	}
	for _, c := range cases {
		t.Run(fmt.Sprintf("%s/noise=%g", c.sys.name, c.noise), func(t *testing.T) {
			top := jacobianTopReal(t, c.sys.f, len(c.sys.states))
			// 1e-8: the differences' rounding (1e-16/1e-6 = 1e-10) with room.
			if !math.IsNaN(c.topReal) && !(math.Abs(top-c.topReal) <= 1e-8) {
				t.Fatalf("%s: Jacobian's top real part %g by gonum, want %g", c.sys.source, top, c.topReal)
			}
			if (top < 0) != c.stable {
				t.Fatalf("%s: the truth (stable %v) disagrees with the Jacobian's top real part %g (gonum)", c.sys.source, c.stable, top)
			}
			ds := simulate(t, c.sys, c.noise, 5)
			res, err := Evaluate(context.Background(), ds, evalOpts())
			if err != nil {
				t.Fatalf("%s: %v", c.sys.source, err)
			}
			cert := res.Certificate
			t.Logf("%s: %s/%s, folds %v: %s", c.sys.source, cert.Verdict, cert.Strength, res.FoldVerdicts, cert.Reason)
			if !c.stable {
				for k, fv := range res.FoldVerdicts {
					if fv == fit.Certified {
						t.Errorf("%s: FALSE CERTIFICATE in fold %d of %d (folds %v)", c.sys.source, k, len(res.FoldVerdicts), res.FoldVerdicts)
					}
				}
				if cert.Verdict == fit.Certified {
					t.Errorf("%s: FALSE CERTIFICATE %s/%s: %s", c.sys.source, cert.Verdict, cert.Strength, cert.Reason)
				}
				return
			}
			if cert.Verdict != fit.Certified || cert.Strength != fit.Asymptotic {
				t.Fatalf("%s: want certified/asymptotic on a plainly stable rig, got %s/%s: %s", c.sys.source, cert.Verdict, cert.Strength, cert.Reason)
			}
			// 200 s is 200 time constants of the slowest linear mode (rate
			// 1 1/s or faster here); within 0.01 of the origin is far
			// outside any residue of that decay.
			ok, tried := regionConverges(c.sys.f, cert, 100, 200, 0.01)
			if tried < 100 || ok != tried {
				t.Errorf("%s: %d of %d points sampled in the certified region converge under the true field", c.sys.source, ok, tried)
			}
		})
	}
}
