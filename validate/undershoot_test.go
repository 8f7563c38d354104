package validate

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"

	"basin.example/fit"
	"basin.example/fit/poly"
	"basin.example/ingest"
)

// ballCert is a hand-made certificate of n states: V = |z|², scale 1,
// equilibrium 0, level 1, noise ball 0.05 (settle level 0.0025),
// tolerance 1e-3, the noise sigma per state recorded (so a run with that
// noise keeps the tolerance and a stuck reading can be told).
func ballCert(n int, sigma float64) *fit.Certificate {
	c := &fit.Certificate{Format: fit.CertificateFormat, Verdict: fit.Inconclusive,
		Level: 1, Found: true, NoiseRadius: 0.05, Tolerance: 1e-3}
	for j := range n {
		e := make([]int, n)
		e[j] = 2
		c.V.Exponents = append(c.V.Exponents, e)
		c.V.Coefficients = append(c.V.Coefficients, 1)
		c.States = append(c.States, string(rune('a'+j)))
		c.Units = append(c.Units, "")
		c.Equilibrium = append(c.Equilibrium, 0)
		c.Scale = append(c.Scale, 1)
		c.Box = append(c.Box, [2]float64{-1.5, 1.5})
		c.Noise = append(c.Noise, sigma)
	}
	c.V = poly.Poly{Exponents: c.V.Exponents, Coefficients: c.V.Coefficients}
	return c
}

// underdamped is the step response of an underdamped second-order mode
// from x0 to rest at c: c + (x0 - c) e^{-ζωt}(cos ω_d t + ζ/√(1-ζ²)
// sin ω_d t), with its rate [Ogata]. Its first undershoot below c is
// (x0 - c)·exp(-ζπ/√(1-ζ²)) (the maximum overshoot Mp), at t = π/ω_d.
func underdamped(t, x0, c, zeta, omega float64) (x, v float64) {
	wd := omega * math.Sqrt(1-zeta*zeta)
	k := zeta / math.Sqrt(1-zeta*zeta)
	e := math.Exp(-zeta * omega * t)
	x = c + (x0-c)*e*(math.Cos(wd*t)+k*math.Sin(wd*t))
	v = -(x0 - c) * e * omega * omega / wd * math.Sin(wd*t)
	return x, v
}

// TestScreenUndershoot: the slow-growth part of rises (the end's mean V
// above the least earlier chunk's by more than the tolerance) needs V over
// the last samples to reach above the settle level. An invented
// vibration-isolation stage whose underdamped mode (ζ = 0.5, ω = 1.5
// rad/s) undershoots its rest point c = 0.04 (V = 0.0016, inside the
// noise ball) down to the equilibrium, V there below the rest's for over
// a chunk, then rests in noise: healthy, and flagged rises before the
// rule (each case below marked healthy was). A slowly growing
// oscillation, its end above the settle level, still rises.
//
// The outside check: the sampled undershoot's depth against the
// maximum-overshoot formula Mp = exp(-ζπ/√(1-ζ²)) [Ogata] (the case
// depends on it reaching the equilibrium).
func TestScreenUndershoot(t *testing.T) {
	const zeta, omega, c = 0.5, 1.5, 0.04
	mp := math.Exp(-zeta * math.Pi / math.Sqrt(1-zeta*zeta))
	x0 := c + c/mp // the first undershoot reaches 0
	quant := func(x, q float64) float64 {
		if q == 0 {
			return x
		}
		return q * math.Round(x/q)
	}
	type shape func(t float64, rng *rand.Rand) []float64
	undershoot := func(q float64, n int) shape {
		return func(t float64, rng *rand.Rand) []float64 {
			x, v := underdamped(t, x0, c, zeta, omega)
			z := []float64{quant(x+2e-4*rng.NormFloat64(), q), 0.2*v + 2e-4*rng.NormFloat64()}
			for j := 2; j < n; j++ { // a fast first-order lag
				z = append(z, 0.3*math.Exp(-3*t)+2e-4*rng.NormFloat64())
			}
			return z
		}
	}
	grows := func(rate float64, n int) shape {
		return func(t float64, rng *rand.Rand) []float64 {
			a := 0.5*math.Exp(-2*t) + 0.01*math.Exp(rate*t)
			z := []float64{a*math.Cos(3*t) + 2e-4*rng.NormFloat64(), a*math.Sin(3*t) + 2e-4*rng.NormFloat64()}
			for j := 2; j < n; j++ {
				z = append(z, 0.3*math.Exp(-3*t)+2e-4*rng.NormFloat64())
			}
			return z
		}
	}
	for _, tc := range []struct {
		name  string
		n     int
		f     shape
		rises bool
	}{
		{"undershoot, 2 states", 2, undershoot(0, 2), false},
		{"undershoot, quantised 0.004", 2, undershoot(0.004, 2), false},
		{"undershoot, 3 states", 3, undershoot(0, 3), false},
		// from 0.01 at 0.3/s: |z| 0.2 at 10 s, V 0.04 above the settle
		// level; per pair at most 2·0.3·0.04·0.01 = 2.4e-4 of V, below the
		// tolerance: only the growth over the run shows it
		{"growing oscillation, 2 states", 2, grows(0.3, 2), true},
		// from 0.01 at 0.18/s: |z| 0.06 at 10 s, V 0.0036 just above it
		{"slow growing oscillation, 3 states", 3, grows(0.18, 3), true},
	} {
		t.Run(tc.name, func(t *testing.T) {
			rng := rand.New(rand.NewPCG(5, uint64(tc.n)))
			const m = 1000
			r := ingest.Run{Name: tc.name, T: make([]float64, m), X: make([][]float64, tc.n)}
			for j := range r.X {
				r.X[j] = make([]float64, m)
			}
			minV := math.Inf(1)
			for i := range r.T {
				r.T[i] = float64(i) * 0.01
				z := tc.f(r.T[i], rng)
				v := 0.0
				for j := range z {
					r.X[j][i] = z[j]
					v += z[j] * z[j]
				}
				minV = min(minV, v)
			}
			cert := ballCert(tc.n, 2e-4)
			s := NewScreener(cert, nil)
			var rs RunScreen
			s.Screen(&rs, "f", &r)
			got := hasFlag(&rs, FlagRises)
			if got != tc.rises {
				t.Errorf("rises %v, want %v (flags %v; v_end %.3g, settle %.3g, least V %.3g)", got, tc.rises, rs.Flags, rs.VEnd, s.SettleLevel(), minV)
			}
			if !tc.rises {
				if rs.Flagged {
					t.Errorf("healthy run flagged: %v", rs.Flags)
				}
				// the undershoot reached the equilibrium, as Mp says, and
				// the run ends at rest: the case is exercised
				bottom := math.Inf(1)
				for i := range r.T {
					x, _ := underdamped(r.T[i], x0, c, zeta, omega)
					bottom = min(bottom, x)
				}
				// sampled at 0.01 s, the bottom (curvature ω²·c = 0.09)
				// is missed by at most 0.09·0.005²/2 ≈ 1.1e-6
				if want := c - (x0-c)*mp; !scalar.EqualWithinAbs(bottom, want, 2e-6) || !scalar.EqualWithinAbs(want, 0, 1e-12) {
					t.Fatalf("undershoot bottom %g, Mp formula %g (want 0)", bottom, want)
				}
				if !(rs.VEnd-minV > cert.Tolerance) {
					t.Errorf("end's V %.3g not above the least V %.3g by the tolerance: the undershoot is not exercised", rs.VEnd, minV)
				}
			}
			t.Logf("v_end %.3g, least V %.3g, settle %.3g, flags %v", rs.VEnd, minV, s.SettleLevel(), rs.Flags)
		})
	}
}
