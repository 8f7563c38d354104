package fit

import (
	"context"
	"math"
	"testing"
)

// TestCertifyNonRise: at a non-hyperbolic linearisation (a centre) the
// non-rise path must find the conserved energy, mark the certificate
// NonRise with no positive margin, and keep the region inside the data;
// the same oscillator with damping takes the strict path with a positive
// margin.
func TestCertifyNonRise(t *testing.T) {
	heavy(t)
	eq := []float64{0, 0}
	sys := func(name string, eqs []Equation, f func(dst, x []float64)) *certSystem {
		return &certSystem{name: name, states: []string{"x", "y"}, eqs: eqs, f: f, eq: eq}
	}
	cases := []struct {
		name   string
		sys    *certSystem
		deg    int
		energy func(x, y float64) float64 // conserved (nil: damped)
	}{
		// Harmonic oscillator x' = y, y' = -w² x, w = 2: the energy w²x² + y²
		// is conserved (any mechanics text, e.g. [Strogatz1994] Nonlinear Dynamics
		// and Chaos, 1994, §5.1; exact).
		{"centre", sys("centre", []Equation{
			{State: "x", Exponents: [][]int{{0, 1}}, Coefficients: []float64{1}},
			{State: "y", Exponents: [][]int{{1, 0}}, Coefficients: []float64{-4}},
		}, func(d, x []float64) { d[0] = x[1]; d[1] = -4 * x[0] }), 2,
			func(x, y float64) float64 { return 4*x*x + y*y }},
		// Undamped hardening Duffing x' = y, y' = -x - 0.5x³: E = y²/2 + x²/2
		// + x⁴/8 is conserved ([GuckenheimerHolmes1983] with delta = 0, alpha = 1,
		// beta = 0.5; computed there).
		{"duffing", sys("duffing", []Equation{
			{State: "x", Exponents: [][]int{{0, 1}}, Coefficients: []float64{1}},
			{State: "y", Exponents: [][]int{{1, 0}, {3, 0}}, Coefficients: []float64{-1, -0.5}},
		}, func(d, x []float64) { d[0] = x[1]; d[1] = -x[0] - 0.5*x[0]*x[0]*x[0] }), 4,
			func(x, y float64) float64 { return y*y/2 + x*x/2 + x*x*x*x/8 }},
		// The harmonic oscillator with damping 0.6: a stable focus (same
		// texts), strict path.
		{"damped", sys("damped", []Equation{
			{State: "x", Exponents: [][]int{{0, 1}}, Coefficients: []float64{1}},
			{State: "y", Exponents: [][]int{{1, 0}, {0, 1}}, Coefficients: []float64{-4, -0.6}},
		}, func(d, x []float64) { d[0] = x[1]; d[1] = -4*x[0] - 0.6*x[1] }), 2, nil},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			// 60 runs from random starts, RK4 at 0.01 s, every 5th step
			// kept, 10 s, no noise: the orbits of a lossless system are
			// dense enough rings to leave no gap in the envelope.
			ds := certRuns(c.sys, [][2]float64{{-1, 1}, {-1, 1}}, 60, 0.01, 1000, 5, 0, 7, true)
			cert, err := Certify(context.Background(), c.sys.model([]float64{1, 1}), ds, &CertifyOptions{Degree: c.deg})
			if err != nil {
				t.Fatal(err)
			}
			t.Logf("%s: found %v non-rise %v margin %.3g share %.3f: %s", c.name, cert.Found, cert.NonRise, cert.Margin, cert.Region.EnvelopeShare, cert.Reason)
			if !cert.Found || cert.Contradicted || cert.Verdict != Inconclusive {
				t.Fatalf("found %v contradicted %v verdict %s", cert.Found, cert.Contradicted, cert.Verdict)
			}
			if c.energy == nil {
				if cert.NonRise || !(cert.Margin > 0) {
					t.Errorf("damped: non-rise %v margin %g, want the strict path", cert.NonRise, cert.Margin)
				}
				return
			}
			if !cert.NonRise || cert.Margin > 0 {
				t.Errorf("non-rise %v margin %g, want NonRise and margin <= 0", cert.NonRise, cert.Margin)
			}
			if cert.Region.EnvelopeShare < 0.3 {
				t.Errorf("share %.3g: the energy's level sets fill the data's rings", cert.Region.EnvelopeShare)
			}
			// V must be the conserved energy up to scale: V/E constant
			// over the data. Tolerance 1e-3 relative: the LP's optimum is
			// the energy exactly (V-dot = 0 is the only V with margin 0),
			// reached to the solver's tolerance.
			comp := cert.V.Compile(2)
			lo, hi := math.Inf(1), math.Inf(-1)
			for _, r := range ds.Runs {
				for i := range r.T {
					x, y := r.X[0][i], r.X[1][i]
					if x*x+y*y < 0.01 {
						continue
					}
					q := comp.Eval([]float64{x, y}) / c.energy(x, y)
					lo, hi = math.Min(lo, q), math.Max(hi, q)
				}
			}
			if !(hi-lo <= 1e-3*hi) {
				t.Errorf("V/E ranges over [%.6g, %.6g]: V is not the conserved energy", lo, hi)
			}
		})
	}
}

// TestCertifyNonRiseGrowingData: a centre model (x' = y, y' = -x) on
// runs of the anti-damped x” = 0.05 x' - x, whose energy x² + y² grows
// along every pair (at 0.1 y², [Strogatz1994] §5.2, from memory): the
// model says V is conserved, the recorded pairs say it rises far beyond
// the (noiseless) tolerance, so the non-rise path must not certify a
// region beyond the noise ball.
func TestCertifyNonRiseGrowingData(t *testing.T) {
	grow := &certSystem{name: "grow", states: []string{"x", "y"}, eq: []float64{0, 0},
		eqs: []Equation{
			{State: "x", Exponents: [][]int{{0, 1}}, Coefficients: []float64{1}},
			{State: "y", Exponents: [][]int{{1, 0}}, Coefficients: []float64{-1}},
		},
		f: func(d, x []float64) { d[0] = x[1]; d[1] = -x[0] + 0.05*x[1] }}
	ds := certRuns(grow, [][2]float64{{-0.5, 0.5}, {-0.5, 0.5}}, 40, 0.01, 3000, 5, 0, 7, true)
	c, err := Certify(context.Background(), grow.model([]float64{1, 1}), ds, nil)
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("found %v non-rise %v share %.4g: %s", c.Found, c.NonRise, c.Region.EnvelopeShare, c.Reason)
	if c.Found && c.Region.EnvelopeShare > 0.01 {
		t.Errorf("a region of %.3g of the envelope certified on growing runs", c.Region.EnvelopeShare)
	}
}

// BenchmarkCertifyNonRise: the strict path (damped oscillator x” = -4x -
// 0.6x') beside the non-rise path (the same without damping, a centre),
// same size: 60 runs x 201 samples x 2 states, exact models, V degree 2.
// Compare certify-s across the two in one run.
func BenchmarkCertifyNonRise(b *testing.B) {
	for _, c := range []struct {
		name string
		damp float64
	}{{"strict-damped", 0.6}, {"nonrise-centre", 0}} {
		eqs := []Equation{
			{State: "x", Exponents: [][]int{{0, 1}}, Coefficients: []float64{1}},
			{State: "y", Exponents: [][]int{{1, 0}, {0, 1}}, Coefficients: []float64{-4, -c.damp}},
		}
		damp := c.damp
		sys := &certSystem{name: c.name, states: []string{"x", "y"}, eqs: eqs, eq: []float64{0, 0},
			f: func(d, x []float64) { d[0] = x[1]; d[1] = -4*x[0] - damp*x[1] }}
		ds := certRuns(sys, [][2]float64{{-1, 1}, {-1, 1}}, 60, 0.01, 1000, 5, 0, 7, true)
		m := sys.model([]float64{1, 1})
		b.Run(c.name, func(b *testing.B) {
			b.SetBytes(int64(ds.Samples() * 3 * 8))
			var cert *Certificate
			for b.Loop() {
				var err error
				if cert, err = Certify(context.Background(), m, ds, nil); err != nil {
					b.Fatal(err)
				}
			}
			per := b.Elapsed().Seconds() / float64(b.N)
			b.ReportMetric(per, "certify-s")
			b.ReportMetric(float64(ds.Samples())/per, "samples/s")
			b.ReportMetric(float64(cert.Region.Solves), "lp-solves")
			b.ReportMetric(cert.Region.EnvelopeShare, "env-share")
		})
	}
}
