package validate

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"basin.example/ingest"
)

// TestScreenFaults: faults that no pair of samples shows, on circleCert
// (V = |z|², noise ball 0.05, so settle level 0.0025) with noise 0.0002 in
// z. Each case failed before the rule it names: a run resting off the
// equilibrium passed as "nearer than its start" (unsettled), a slow
// growth after a decay passed (rises: its end above its lowest chunk by
// more than the tolerance), a stuck reading passed (stuck), and a short
// piece whose ends lie within the tolerance was flagged unsettled.
func TestScreenFaults(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	noisy := func(r ingest.Run) ingest.Run {
		for j := range r.X {
			for i := range r.X[j] {
				r.X[j][i] += 0.0002 * rng.NormFloat64() * []float64{1, 2}[j]
			}
		}
		return r
	}
	cases := []struct {
		name string
		run  ingest.Run
		tol  float64 // the certificate's tolerance (0: circleCert's)
		want []string
	}{
		// decays from |z| = 0.7 to rest at z0 = 0.3 (V = 0.09, outside the ball)
		{"off-rest", noisy(makeRun("off", 1000, 0.01, func(t float64) (float64, float64) {
			a := 0.6 * math.Exp(-1.5*t)
			return 0.3 + a*math.Cos(3*t), a * math.Sin(3*t)
		})), 0, []string{FlagRises, FlagUnsettled}}, // its approach passed below V = 0.09
		// the same decay to the equilibrium: no flag (a healthy run)
		{"healthy", noisy(makeRun("ok", 1000, 0.01, func(t float64) (float64, float64) {
			a := 0.6 * math.Exp(-1.5*t)
			return a * math.Cos(3*t), a * math.Sin(3*t)
		})), 0, nil},
		// decays, then grows at 0.4/s from 0.02 to 0.33: V's rise per pair
		// (at most 2·0.4·0.11·0.01 = 9e-4) stays below the tolerance 1e-3
		{"grows", noisy(makeRun("grow", 1000, 0.01, func(t float64) (float64, float64) {
			a := 0.6*math.Exp(-1.5*t) + 0.006*math.Exp(0.4*t)
			return a * math.Cos(3*t), a * math.Sin(3*t)
		})), 0, []string{FlagRises, FlagUnsettled}},
		// cut short while still decaying: not unsettled
		{"cut", noisy(makeRun("cut", 150, 0.01, func(t float64) (float64, float64) {
			a := 0.6 * math.Exp(-1.5*t)
			return a * math.Cos(3*t), a * math.Sin(3*t)
		})), 0, nil},
		// 21 samples ringing at |z| = 0.08 (V 0.0064) with a tolerance of
		// 0.01: both ends within the tolerance, too short to show rest
		{"quiet-piece", noisy(makeRun("piece", 21, 0.01, func(t float64) (float64, float64) {
			return 0.08 * math.Cos(3*t), 0.08 * math.Sin(3*t)
		})), 0.01, nil},
	}
	// the healthy run's first reading held from sample 100 (t = 1 s,
	// |z| = 0.13, V = 0.018 above the settle level 0.0025: mid-approach)
	// is stuck, and its end, held off the equilibrium, unsettled; held
	// from sample 600 (t = 6 s, |z| = 7e-5: at rest) it is what a coarse
	// quantised sensor at rest shows, and not flagged
	for _, at := range []int{100, 600} {
		stuck := cases[1].run
		stuck.Name = fmt.Sprintf("stuck-%d", at)
		stuck.X = [][]float64{append([]float64(nil), stuck.X[0]...), stuck.X[1]}
		for i := at; i < len(stuck.T); i++ {
			stuck.X[0][i] = stuck.X[0][at]
		}
		want := []string{FlagUnsettled, FlagStuck}
		if at == 600 {
			want = nil
		}
		cases = append(cases, struct {
			name string
			run  ingest.Run
			tol  float64
			want []string
		}{stuck.Name, stuck, 0, want})
	}
	for _, c := range cases {
		cert := circleCert(false)
		cert.Noise = []float64{0.0002, 0.0004} // the run's own: the tolerance stays
		if c.tol > 0 {
			cert.Tolerance = c.tol
		}
		var rs RunScreen
		NewScreener(cert, nil).Screen(&rs, "f", &c.run)
		var got []string
		for _, f := range rs.Flags {
			got = append(got, f.Kind)
		}
		if !equalStrings(got, c.want) {
			t.Errorf("%s: flags %v (v_start %.3g v_end %.3g); want %v", c.name, got, rs.VStart, rs.VEnd, c.want)
		}
	}
}
