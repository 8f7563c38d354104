package validate

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"
	"time"

	"basin.example/fit"
	"basin.example/fit/poly"
	"basin.example/ingest"
)

// system is a test system with a known character.
type system struct {
	name   string
	source string
	f      ODE
	states []string
	x0     func(rng *rand.Rand) []float64 // a random initial condition
	dur    float64                        // run duration, s
	rate   float64                        // Hz
	runs   int
}

// simulate draws runs of sys with Gaussian measurement noise of standard
// deviation noise times each state's spread.
func simulate(t testing.TB, sys system, noise float64, seed uint64) *ingest.Dataset {
	rng := rand.New(rand.NewPCG(seed, 0))
	ds := &ingest.Dataset{}
	for _, s := range sys.states {
		ds.States = append(ds.States, ingest.Column{Name: s})
	}
	m := int(sys.dur*sys.rate) + 1
	ts := make([]float64, m)
	for i := range ts {
		ts[i] = float64(i) / sys.rate
	}
	n := len(sys.states)
	var all [][]float64
	for r := 0; r < sys.runs; r++ {
		x := make([][]float64, n)
		for j := range x {
			x[j] = make([]float64, m)
		}
		st := Integrate(sys.f, sys.x0(rng), ts, x, &DopriOptions{RelTol: 1e-9, AbsTol: 1e-12})
		if st.Diverged {
			t.Fatalf("%s: truth simulation diverged: %s", sys.name, st.Reason)
		}
		all = append(all, x...)
		ds.Runs = append(ds.Runs, ingest.Run{Name: fmt.Sprintf("%s-%02d", sys.name, r),
			Source: ingest.Source{File: sys.name + ".csv"}, T: append([]float64(nil), ts...), X: x})
	}
	for j := 0; j < n; j++ {
		lo, hi := math.Inf(1), math.Inf(-1)
		for r := range ds.Runs {
			for _, v := range ds.Runs[r].X[j] {
				lo, hi = math.Min(lo, v), math.Max(hi, v)
			}
		}
		for r := range ds.Runs {
			for i := range ds.Runs[r].X[j] {
				ds.Runs[r].X[j][i] += noise * (hi - lo) * rng.NormFloat64()
			}
		}
	}
	return ds
}

func box(rng *rand.Rand, half ...float64) []float64 {
	x := make([]float64, len(half))
	for j, h := range half {
		x[j] = h * (2*rng.Float64() - 1)
	}
	return x
}

var (
	// Linear oscillator x'' + c x' + k x = 0 (any dynamics text, e.g.
	// [Strogatz1994] §5.1; common
	// practice): damped c = 0.6 is a stable focus, c = 0 a centre whose
	// energy is conserved.
	damped = system{name: "damped", source: "linear oscillator, c = 0.6, k = 4 ([Strogatz1994] §5.1, from memory)",
		f:      func(d []float64, _ float64, x []float64) { d[0] = x[1]; d[1] = -4*x[0] - 0.6*x[1] },
		states: []string{"x", "v"}, x0: func(r *rand.Rand) []float64 { return box(r, 1, 2) }, dur: 12, rate: 50, runs: 12}
	lossless = system{name: "lossless", source: "linear oscillator, c = 0, k = 4: a centre ([Strogatz1994] §5.2, from memory)",
		f:      func(d []float64, _ float64, x []float64) { d[0] = x[1]; d[1] = -4 * x[0] },
		states: []string{"x", "v"}, x0: func(r *rand.Rand) []float64 { return box(r, 1, 2) }, dur: 12, rate: 50, runs: 12}
	// Damped pendulum x'' = -a sin x - b x', a = 4, b = 0.8 (Khalil,
	// Nonlinear Systems, 3rd ed., 2002, §4.1; [Khalil2002]).
	pendulum = system{name: "pendulum", source: "damped pendulum a = 4, b = 0.8 ([Khalil2002] §4.1)",
		f:      func(d []float64, _ float64, x []float64) { d[0] = x[1]; d[1] = -4*math.Sin(x[0]) - 0.8*x[1] },
		states: []string{"theta", "omega"}, x0: func(r *rand.Rand) []float64 { return box(r, 1.2, 1.5) }, dur: 12, rate: 50, runs: 12}
	// Van der Pol, mu = 1: a limit cycle around an unstable focus (van der
	// Pol 1926; [Strogatz1994] §7.5).
	vanderpol = system{name: "vanderpol", source: "Van der Pol mu = 1, limit cycle around an unstable focus ([Strogatz1994] §7.5)",
		f:      func(d []float64, _ float64, x []float64) { d[0] = x[1]; d[1] = (1-x[0]*x[0])*x[1] - x[0] },
		states: []string{"x", "y"}, x0: func(r *rand.Rand) []float64 { return box(r, 2.5, 2.5) }, dur: 12, rate: 50, runs: 12}
	// Van der Pol in reverse time, mu = 1: a stable focus whose region of
	// attraction is the inside of the cycle ([Khalil2002] §8.2;
	// [Khalil2002]).
	vdpReverse = system{name: "vdp-reverse", source: "Van der Pol mu = 1 in reverse time (Khalil 2002 §8.2, [Khalil2002])",
		f:      func(d []float64, _ float64, x []float64) { d[0] = -x[1]; d[1] = x[0] + (x[0]*x[0]-1)*x[1] },
		states: []string{"x", "y"}, x0: func(r *rand.Rand) []float64 { return box(r, 1, 1) }, dur: 12, rate: 50, runs: 12}
	// Lorenz sigma = 10, rho = 28, beta = 8/3: a chaotic attractor; the
	// origin is a saddle (Lorenz, J. Atmos. Sci. 20:130-141, 1963).
	lorenz = system{name: "lorenz", source: "Lorenz 1963, sigma 10, rho 28, beta 8/3",
		f: func(d []float64, _ float64, x []float64) {
			d[0] = 10 * (x[1] - x[0])
			d[1] = x[0]*(28-x[2]) - x[1]
			d[2] = x[0]*x[1] - 8.0/3*x[2]
		},
		states: []string{"x", "y", "z"}, x0: func(r *rand.Rand) []float64 { v := box(r, 10, 10, 10); v[2] += 25; return v },
		dur: 5, rate: 200, runs: 10}
	// Weakly anti-damped oscillator x'' = +0.05 x' - x: an unstable focus,
	// eigenvalues 0.025 ± 0.9997i, energy growing about e^(0.05 t) (any
	// dynamics text, e.g. [Strogatz1994] §5.2 and §6.5, from memory). 60 s
	// runs: the energy grows some 20-fold, far beyond the noise.
	antidamped = system{name: "antidamped", source: "anti-damped oscillator x'' = 0.05 x' - x, unstable focus ([Strogatz1994] §5.2, from memory)",
		f:      func(d []float64, _ float64, x []float64) { d[0] = x[1]; d[1] = -x[0] + 0.05*x[1] },
		states: []string{"x", "v"}, x0: func(r *rand.Rand) []float64 { return box(r, 0.3, 0.3) }, dur: 60, rate: 20, runs: 12}
	// Saddle x' = x, y' = -2y ([Strogatz1994] §5.1 example; exact).
	saddle = system{name: "saddle", source: "linear saddle x' = x, y' = -2y ([Strogatz1994] §5.1)",
		f:      func(d []float64, _ float64, x []float64) { d[0] = x[0]; d[1] = -2 * x[1] },
		states: []string{"x", "y"}, x0: func(r *rand.Rand) []float64 { return box(r, 0.2, 2) }, dur: 2.5, rate: 200, runs: 16}
)

// Systems unstable or marginal in a way the record barely shows, in three
// to six states (each a false certificate if certified).
var (
	// A centre with cubic anti-damping x'' = -x + 0.02 x'³, driving a
	// fast stable state w' = -w + 0.2 x: the energy x² + x'² grows (its
	// rate 0.04 x'⁴ >= 0), slowly enough near the origin that a fitted
	// field drops the cubic term and sees a centre, while w's early
	// decay hides the rise from a decay rate taken over whole runs
	// (Lyapunov's indirect method says nothing at a centre: [Khalil2002]
	// §4.3, from memory; the energy's derivative is exact).
	cubicAntidamped = system{name: "cubic-antidamped", source: "x'' = -x + 0.02 x'^3 with w' = -w + 0.2 x: a centre whose energy grows",
		f: func(d []float64, _ float64, x []float64) {
			d[0] = x[1]
			d[1] = -x[0] + 0.02*x[1]*x[1]*x[1]
			d[2] = -x[2] + 0.2*x[0]
		},
		states: []string{"x", "v", "w"}, x0: func(r *rand.Rand) []float64 { return box(r, 0.6, 0.6, 1) }, dur: 15, rate: 50, runs: 30}
	// A damped oscillator and a decoupled state growing as e^(0.005 t)
	// from small starts (|y| <= 0.05): unstable in that direction only,
	// by 6% over a run (exact).
	growingState = system{name: "growing-state", source: "x'' = -4x - 0.6x', y' = 0.005 y: unstable in y only",
		f:      func(d []float64, _ float64, x []float64) { d[0] = x[1]; d[1] = -4*x[0] - 0.6*x[1]; d[2] = 0.005 * x[2] },
		states: []string{"x", "v", "y"}, x0: func(r *rand.Rand) []float64 { return box(r, 1, 2, 0.05) }, dur: 12, rate: 50, runs: 30}
	// Two masses (unit masses, springs k = (2pi)² to ground and between
	// them) with modal damping ratio -0.002: both modes grow, at 0.0078
	// and 0.0203 1/s (modal analysis, e.g. [Strogatz1994] §5; exact).
	twoMassNeg = system{name: "two-mass-negative", source: "two-mass rig, damping ratio -0.002 (growing modes)",
		f: func(d []float64, _ float64, x []float64) {
			const k = 4 * math.Pi * math.Pi
			// C = Phi diag(2 zeta w) Phi' for K = [[2k, -k], [-k, k]]
			w1, w2 := math.Sqrt(k*(3-math.Sqrt(5))/2), math.Sqrt(k*(3+math.Sqrt(5))/2)
			c1, c2 := -0.004*w1, -0.004*w2
			// eigenvectors of [[2, -1], [-1, 1]]: (1, phi) and (phi, -1), phi = golden ratio
			phi := (1 + math.Sqrt(5)) / 2
			a := 1 / (1 + phi*phi)
			c11 := a * (c1 + c2*phi*phi)
			c12 := a * (c1*phi - c2*phi)
			c22 := a * (c1*phi*phi + c2)
			d[0], d[1] = x[2], x[3]
			d[2] = -2*k*x[0] + k*x[1] - c11*x[2] - c12*x[3]
			d[3] = k*x[0] - k*x[1] - c12*x[2] - c22*x[3]
		},
		states: []string{"x1", "x2", "v1", "v2"}, x0: func(r *rand.Rand) []float64 { return box(r, 0.02, 0.02, 0.1, 0.1) }, dur: 20, rate: 100, runs: 24}
	// Three masses in a chain (K = tridiag(-1, 2, -1), C = 0.05 K) with
	// the last damper negative (C33 = -0.08): one mode grows at 0.0079
	// 1/s (its eigenvalues, computed with NumPy: 0.0079 ± 0.767i).
	chainNeg = system{name: "chain-negative", source: "3-mass chain, last damper negative (one mode grows at 0.0079 1/s)",
		f: func(d []float64, _ float64, x []float64) {
			q, v := x[:3], x[3:]
			d[0], d[1], d[2] = v[0], v[1], v[2]
			d[3] = -(2*q[0] - q[1]) - 0.05*(2*v[0]-v[1])
			d[4] = -(-q[0] + 2*q[1] - q[2]) - 0.05*(-v[0]+2*v[1]-v[2])
			d[5] = -(-q[1] + 2*q[2]) - (-0.05*v[1] - 0.08*v[2])
		},
		states: []string{"q1", "q2", "q3", "v1", "v2", "v3"}, x0: func(r *rand.Rand) []float64 { return box(r, 0.5, 0.5, 0.5, 0.5, 0.5, 0.5) }, dur: 15, rate: 50, runs: 40}
)

// losslessLogged is the lossless oscillator logged at 24 amplitudes
// spread evenly from near 0 to 1 (one a run, random phase), so that the
// orbits, which never approach the equilibrium, still cover the plane
// around it without a gap. Its energy 4x² + v² is conserved (same
// source as lossless).
func losslessLogged() system {
	sys := lossless
	sys.name, sys.runs = "lossless-logged", 24
	sys.source = "linear oscillator, c = 0, k = 4, 24 amplitudes ([Strogatz1994] §5.2, from memory)"
	k := 0
	sys.x0 = func(r *rand.Rand) []float64 {
		k++
		a, ph := (float64(k)-0.5*r.Float64())/float64(sys.runs), 2*math.Pi*r.Float64()
		return []float64{a * math.Cos(ph), 2 * a * math.Sin(ph)}
	}
	return sys
}

// duffingLogged is the undamped hardening Duffing oscillator x” = -4x -
// 2x³, logged like losslessLogged; its energy v²/2 + 2x² + x⁴/2 is
// conserved ([GuckenheimerHolmes1983] with delta = 0), quartic, so V needs degree
// 4.
func duffingLogged() system {
	sys := losslessLogged()
	sys.name = "duffing-logged"
	sys.source = "undamped Duffing x'' = -4x - 2x^3, 24 amplitudes ([GuckenheimerHolmes1983], delta = 0)"
	sys.f = func(d []float64, _ float64, x []float64) { d[0] = x[1]; d[1] = -4*x[0] - 2*x[0]*x[0]*x[0] }
	return sys
}

// evalOpts keeps the tests fast: no bootstrap refits.
func evalOpts() *Options {
	return &Options{Folds: 4, Seed: 1, Field: &fit.FieldOptions{Bootstrap: -1}}
}

// TestNoFalseCertificates: unstable and oscillating systems are never
// certified, with or without noise; stable ones with enough data are.
func TestNoFalseCertificates(t *testing.T) {
	heavy(t)
	if testing.Short() {
		t.Skip("fits fields and certificates")
	}
	type tc struct {
		sys      func() system // fresh each case (losslessLogged counts runs)
		noise    float64
		certify  bool // must be certified (asymptotic)
		stableOK bool // certified with strength stable is allowed, asymptotic never
		stable   bool // must be certified with strength stable
		vdeg     int  // V degree; 0 means the default
	}
	is := func(s system) func() system { return func() system { return s } }
	// The lossless oscillator from random starts leaves a hole around the
	// equilibrium (its orbits never approach it), so it may come out
	// inconclusive; logged at evenly spread amplitudes it must be
	// certified stable (the non-rise path of fit.Certify), never
	// asymptotic. At noise 0.005 an outer run may leave the region within
	// the tolerance (inconclusive), so stable is only allowed there.
	cases := []tc{
		{is(damped), 0, true, false, false, 0}, {is(damped), 0.002, true, false, false, 0},
		{is(pendulum), 0.002, true, false, false, 0},
		{is(vdpReverse), 0.002, true, false, false, 0},
		{is(lossless), 0, false, true, false, 0}, {is(lossless), 0.002, false, true, false, 0},
		{losslessLogged, 0, false, true, true, 0}, {losslessLogged, 0.002, false, true, true, 0},
		{losslessLogged, 0.005, false, true, false, 0},
		{duffingLogged, 0.002, false, true, true, 4},
		{is(vanderpol), 0, false, false, false, 0}, {is(vanderpol), 0.005, false, false, false, 0},
		{is(lorenz), 0, false, false, false, 0}, {is(lorenz), 0.005, false, false, false, 0},
		{is(saddle), 0, false, false, false, 0}, {is(saddle), 0.005, false, false, false, 0},
		{is(antidamped), 0, false, false, false, 0}, {is(antidamped), 0.002, false, false, false, 0},
		{is(antidamped), 0.005, false, false, false, 0},
		{is(cubicAntidamped), 0.003, false, false, false, 0},
		{is(growingState), 0.005, false, false, false, 0},
		{is(twoMassNeg), 0.01, false, false, false, 0},
		{is(chainNeg), 0.005, false, false, false, 0},
	}
	for _, c := range cases {
		sys := c.sys()
		t.Run(fmt.Sprintf("%s/noise=%g", sys.name, c.noise), func(t *testing.T) {
			ds := simulate(t, sys, c.noise, 3)
			start := time.Now()
			o := evalOpts()
			if c.vdeg > 0 {
				o.Certify = &fit.CertifyOptions{Degree: c.vdeg}
			}
			res, err := Evaluate(context.Background(), ds, o)
			if err != nil {
				t.Fatalf("%s: %v", sys.source, err)
			}
			cert := res.Certificate
			v := cert.Validation
			t.Logf("%s: %s/%s (%.1fs): %s | share %.3g, held-out runs %d (inside %d, settled %d), decrease %.4f over %d pairs, invariance %.3g, eps %.3g (N %d, tau %.3gs, d %d), deriv err %.3g, traj err %.3g, departs %.3gs",
				sys.source, cert.Verdict, cert.Strength, time.Since(start).Seconds(), cert.Reason,
				cert.Region.EnvelopeShare, v.HeldoutRuns, v.StartInside, v.Settled, v.DecreaseFraction, v.Pairs, v.InvarianceFraction,
				v.ViolationBound, v.ScenarioSamples, v.Decorrelation, v.DecisionVars, v.DerivativeError, v.TrajectoryError, v.DepartureTime)
			switch {
			case c.certify && (cert.Verdict != fit.Certified || cert.Strength != fit.Asymptotic):
				t.Errorf("%s: want certified/asymptotic, got %s/%s: %s", sys.source, cert.Verdict, cert.Strength, cert.Reason)
			case !c.certify && cert.Verdict == fit.Certified && (!c.stableOK || cert.Strength != fit.Stable):
				t.Errorf("%s: FALSE CERTIFICATE %s/%s: %s", sys.source, cert.Verdict, cert.Strength, cert.Reason)
			case c.stable && (cert.Verdict != fit.Certified || cert.Strength != fit.Stable || !cert.NonRise):
				t.Errorf("%s: want certified/stable (non-rise), got %s/%s non-rise %v: %s", sys.source, cert.Verdict, cert.Strength, cert.NonRise, cert.Reason)
			}
			if !c.certify && !c.stableOK {
				// Nor may any one fold certify it: with one fold only
				// (OneFold) that fold's verdict is the verdict.
				for k, fv := range res.FoldVerdicts {
					if fv == fit.Certified {
						t.Errorf("%s: FALSE CERTIFICATE in fold %d of %d (folds %v)", sys.source, k, len(res.FoldVerdicts), res.FoldVerdicts)
					}
				}
			}
			if cert.Caveat != fit.Caveat || !cert.Empirical || cert.Reason == "" {
				t.Errorf("caveat/empirical/reason missing: %+v", cert)
			}
		})
	}
}

// energyCert is a certificate with the oscillator's energy V = k x^2 +
// v^2 (conserved for c = 0, falling at rate 2c v^2 for c > 0; Strogatz
// 1994 §5.1/§6.5, exact), level 4, unit scale, margin as given.
func energyCert(margin float64) *fit.Certificate {
	return &fit.Certificate{Format: fit.CertificateFormat, Verdict: fit.Inconclusive, Found: true,
		States: []string{"x", "v"}, Units: []string{"", ""}, Equilibrium: []float64{0, 0}, Scale: []float64{1, 1},
		V: poly.Poly{Exponents: [][]int{{2, 0}, {0, 2}}, Coefficients: []float64{4, 1}}, Level: 6,
		NoiseRadius: 0.02, Tolerance: 2e-3, Margin: margin}
}

// TestStrengthEnergy: with the exact energy as V, the lossless
// oscillator is certified only as stable (V conserved, runs never
// settle) and the damped one as asymptotic. Eigenvalues are the exact
// ones: ±2i, and -0.3 ± 1.977i.
func TestStrengthEnergy(t *testing.T) {
	lossless := lossless
	lossless.x0 = func(r *rand.Rand) []float64 { return box(r, 0.9, 1.8) }
	damped := damped
	damped.x0 = lossless.x0
	for _, c := range []struct {
		sys    system
		eig    [][2]float64
		margin float64
		want   fit.Strength
	}{
		{lossless, [][2]float64{{0, 2}, {0, -2}}, 0, fit.Stable},
		{damped, [][2]float64{{-0.3, 1.977}, {-0.3, -1.977}}, 0.1, fit.Asymptotic},
	} {
		// Tolerance 5 sigma of a V difference (common practice, as in
		// fit.CertifyOptions.Kappa): sigma_dV = sqrt(2)|grad V| sigma_x with
		// |grad V| <= 9.8 on {V <= 6} and sigma_x <= 1e-4 * 3.6 gives
		// 2.5e-2; noiseless, 1e-6 covers the 1e-9 integration error.
		for _, nc := range []struct{ noise, tol float64 }{{0, 1e-6}, {1e-4, 2.5e-2}} {
			noise := nc.noise
			ds := simulate(t, c.sys, noise, 5)
			cert := energyCert(c.margin)
			cert.Tolerance = nc.tol
			val, runs, err := Check(context.Background(), cert, ds, nil)
			if err != nil {
				t.Fatal(err)
			}
			Decide(cert, val, runs, c.eig, nil)
			if cert.Verdict != fit.Certified || cert.Strength != c.want {
				t.Errorf("%s noise %g: %s/%s (%s), want certified/%s", c.sys.name, noise, cert.Verdict, cert.Strength, cert.Reason, c.want)
			}
		}
	}
}

// TestStableNeedsNoDrift: the stable strength asks V not to drift up
// along the runs that start inside. With V = x² + v², the energy of x” =
// -x (conserved) and of x” = 0.05 x' - x (growing about e^(0.05 t);
// [Strogatz1994] §5.2, from memory), a per-pair tolerance of 0.05 (as
// from noisy data: amplitudes start below 0.43 and grow at most e^1.5-fold
// in 60 s, so V < 4 and the rise per 0.05 s pair, 0.1 v² dt, stays below
// 0.02 and every pair passes) and a level the runs never reach, only the
// drift over each run tells them apart.
func TestStableNeedsNoDrift(t *testing.T) {
	centre := system{name: "centre", f: func(d []float64, _ float64, x []float64) { d[0] = x[1]; d[1] = -x[0] },
		states: []string{"x", "v"}, x0: func(r *rand.Rand) []float64 { return box(r, 0.3, 0.3) }, dur: 60, rate: 20, runs: 6}
	grow := antidamped
	grow.runs = 6
	for _, c := range []struct {
		sys  system
		want fit.Verdict
	}{{centre, fit.Certified}, {grow, fit.Inconclusive}} {
		ds := simulate(t, c.sys, 0, 9)
		cert := &fit.Certificate{Format: fit.CertificateFormat, Verdict: fit.Inconclusive, Found: true, NonRise: true,
			States: []string{"x", "v"}, Units: []string{"", ""}, Equilibrium: []float64{0, 0}, Scale: []float64{1, 1},
			V: poly.Poly{Exponents: [][]int{{2, 0}, {0, 2}}, Coefficients: []float64{1, 1}}, Level: 40,
			NoiseRadius: 0.02, Tolerance: 0.05}
		val, runs, err := Check(context.Background(), cert, ds, nil)
		if err != nil {
			t.Fatal(err)
		}
		Decide(cert, val, runs, [][2]float64{{0, 1}, {0, -1}}, nil)
		t.Logf("%s: %s/%s: %s (decrease %.4f, invariance %.3g)", c.sys.name, cert.Verdict, cert.Strength, cert.Reason, val.DecreaseFraction, val.InvarianceFraction)
		if cert.Verdict != c.want || (c.want == fit.Certified && cert.Strength != fit.Stable) {
			t.Errorf("%s: %s/%s, want %s (stable if certified)", c.sys.name, cert.Verdict, cert.Strength, c.want)
		}
		if val.DecreaseFraction < 0.99 {
			t.Errorf("%s: decrease fraction %.4f: the test needs every pair to pass", c.sys.name, val.DecreaseFraction)
		}
	}
}
