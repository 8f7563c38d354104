package validate

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
)

// TestSettleMargin: screen's unsettled and the held-out check's settling
// from entry follow one rule, with the margin below every earlier chunk
// min(settle, ¼·√(tail·settle)). On circleCert (V = |z|², settle level
// 0.0025, tolerance 1e-3, the runs' own noise recorded so the tolerance
// stays unless a case widens it), invented thermal-loop runs of 1000
// samples at 100 Hz:
//   - a slow healthy decay, V = V0 e^{-0.35t} ending at 4 times the settle
//     level: its end lies below its last chunk by 0.0019, less than the
//     settle level (the full margin flagged it unsettled, and made the
//     held-out check call it unsettled: on the 6-state chain of
//     TestCertifyDimensions 19 of 80 runs, on the 4-state one 2 of 60,
//     costing both their asymptotic strength), more than ¼√(tail·settle)
//     = 0.00125: on its way;
//   - runs at rest off the equilibrium, V there 1.5 to 40 times the settle
//     level (and a noisy run whose widened settle level is 9 times the
//     certificate's, at rest at 4 times that): unsettled, from start and
//     from entry;
//   - a decay to the equilibrium: settled.
//
// The outside check: the slow decay's tail mean against the geometric
// series V0 e^{-λ t_a} (1 - r^w)/(w(1 - r)), r = e^{-λ dt}, the mean of
// the sampled exponential over the tail window (common practice), within
// five standard deviations of the noise's share of a 50-sample mean.
func TestSettleMargin(t *testing.T) {
	const m, dt, lam = 1000, 0.01, 0.35
	settle := 0.05 * 0.05
	tailV := 4 * settle
	// V(9.75 s), the tail window's middle, at 4 settle levels
	v0 := tailV * math.Exp(lam*9.75)
	slow := func(t float64) (float64, float64) {
		a := math.Sqrt(v0) * math.Exp(-lam*t/2)
		return a * math.Cos(2*t), a * math.Sin(2*t)
	}
	offRest := func(k float64) func(t float64) (float64, float64) {
		c := math.Sqrt(k * settle)
		return func(t float64) (float64, float64) {
			a := 0.5 * math.Exp(-1.5*t)
			return c + a*math.Cos(3*t), a * math.Sin(3*t)
		}
	}
	home := func(t float64) (float64, float64) {
		a := 0.6 * math.Exp(-1.5*t)
		return a * math.Cos(3*t), a * math.Sin(3*t)
	}
	type tc struct {
		name    string
		f       func(t float64) (float64, float64)
		noise   float64 // in z; the certificate records 2e-4
		settled bool
	}
	cases := []tc{
		{"slow decay to 4 settle levels", slow, 2e-4, true},
		{"decay to the equilibrium", home, 2e-4, true},
		// a noisy run: own noise 3 times the certificate's widens the
		// tolerance 3 times and the settle level 9 times (0.0225); at rest
		// at V = 0.09, 4 times that
		{"noisy, at rest off the equilibrium at 4 widened levels", offRest(36), 6e-4, false},
	}
	for _, k := range []float64{1.5, 4, 15, 40} {
		cases = append(cases, tc{fmt.Sprintf("at rest off the equilibrium, V %g settle levels", k), offRest(k), 2e-4, false})
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			rng := rand.New(rand.NewPCG(9, uint64(1e6*c.noise)))
			r := makeRun(c.name, m, dt, c.f)
			for i := range r.T {
				r.X[0][i] += c.noise * rng.NormFloat64()
				r.X[1][i] += 2 * c.noise * rng.NormFloat64() // scale 2
			}
			cert := circleCert(false)
			cert.Noise = []float64{2e-4, 4e-4}
			s := NewScreener(cert, nil)
			var rs RunScreen
			s.Screen(&rs, "f", &r)
			if c.noise > 2e-4 && !(s.tol > 2*s.baseTol) {
				t.Fatalf("tolerance %.3g not widened by the run's noise (base %.3g)", s.tol, s.baseTol)
			}
			if !rs.EverInside || !rs.longAfter {
				t.Fatalf("entered %v, long after entry %v: the held-out check does not judge it", rs.EverInside, rs.longAfter)
			}
			if rs.Settled != c.settled || hasFlag(&rs, FlagUnsettled) == c.settled {
				t.Errorf("settled %v (flags %v), want %v; v_start %.4g v_end %.4g", rs.Settled, rs.Flags, c.settled, rs.VStart, rs.VEnd)
			}
			if rs.settledEntry != c.settled {
				t.Errorf("settled from entry %v, want %v (V at entry %.4g, v_end %.4g)", rs.settledEntry, c.settled, rs.vEnter, rs.VEnd)
			}
			if c.settled && rs.Flagged {
				t.Errorf("healthy run flagged: %v", rs.Flags)
			}
			if c.name != cases[0].name {
				return
			}
			// the slow decay: its tail mean against the geometric series,
			// and its gap to the last chunk between the two margins
			w := tailMax
			ta := float64(m-w) * dt
			q := math.Exp(-lam * dt)
			want := v0 * math.Exp(-lam*ta) * (1 - math.Pow(q, float64(w))) / (float64(w) * (1 - q))
			// the noise's share of a tail mean: 2 z·n per sample, |z| =
			// 0.1, σ 2e-4 in a and 4e-4 in b (in z 2e-4 each), over w samples
			sd := 2 * math.Sqrt(tailV) * 2e-4 / math.Sqrt(float64(w))
			if !scalar.EqualWithinAbs(rs.VEnd, want, 5*sd+2*2*2e-4*2e-4) {
				t.Errorf("tail mean %.6g, geometric series %.6g (5 sd %.2g)", rs.VEnd, want, 5*sd)
			}
			last := want / math.Pow(q, float64(w)) // the chunk before, noise-free
			gap := last - want
			if !(gap < settle && 16*gap*gap > want*settle) {
				t.Errorf("gap to the last chunk %.4g not between ¼√(tail·settle) %.4g and the settle level %.4g: the margin is not exercised", gap, math.Sqrt(want*settle)/4, settle)
			}
			t.Logf("slow decay: tail %.4g (series %.4g), gap to the last chunk %.4g, margins %.4g (new) and %.4g (settle level)", rs.VEnd, want, gap, math.Sqrt(want*settle)/4, settle)
		})
	}
}
