package validate

import (
	"context"
	"fmt"
	"math"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"

	"basin.example/fit"
	"basin.example/ingest"
)

// TestDecideLateGrowth: held-out runs whose V first falls fast (a
// transient dying as e^(-4t)) and then grows slowly as e^(2gt), V(t) =
// 0.2025 (1 + 3e^(-4t)) e^(2gt) along a rotation. Over a whole run the
// fall dominates the least-squares slope of log V (a positive decay
// rate), so only the later half shows the growth: there d/dt log V =
// 2g - 12e^(-4t)/(1 + 3e^(-4t)), within 5.5e-4 of 2g for t >= 2.5 s
// (exact). Growth must leave the verdict inconclusive; the same runs
// without it (g = 0: the late rate is the transient's, just above 0)
// stay certified stable.
func TestDecideLateGrowth(t *testing.T) {
	marginal := [][2]float64{{0, 2}, {0, -2}}
	for _, tc := range []struct {
		name     string
		g        float64 // late growth rate of the amplitude, 1/s
		verdict  fit.Verdict
		strength fit.Strength
	}{
		{"falls then grows", 0.02, fit.Inconclusive, fit.NoClaim},
		{"falls then holds", 0, fit.Certified, fit.Stable},
	} {
		t.Run(tc.name, func(t *testing.T) {
			c := circleCert(false)
			c.NonRise = true
			ds := &ingest.Dataset{States: []ingest.Column{{Name: "a"}, {Name: "b"}}}
			for i := 0; i < 4; i++ {
				ph := float64(i)
				ds.Runs = append(ds.Runs, makeRun(fmt.Sprintf("r%d", i), 501, 0.01, func(t float64) (float64, float64) {
					a := 0.45 * math.Sqrt(1+3*math.Exp(-4*t)) * math.Exp(tc.g*t)
					return a * math.Cos(2*t+ph), a * math.Sin(2*t+ph)
				}))
			}
			o := &Options{Tolerance: 0.2}
			val, runs, err := Check(context.Background(), c, ds, o)
			if err != nil {
				t.Fatal(err)
			}
			for _, r := range runs {
				if !(r.DecaySamples > 0 && r.DecayRate > 0) {
					t.Fatalf("run %s: whole-run decay rate %g on %d samples, want above 0 (the transient's fall)", r.Run, r.DecayRate, r.DecaySamples)
				}
				if !r.lateOK || !scalar.EqualWithinAbs(r.lateRate, -2*tc.g, 6e-4) {
					t.Fatalf("run %s: late decay rate %g (known %v), want %g within 6e-4", r.Run, r.lateRate, r.lateOK, -2*tc.g)
				}
			}
			Decide(c, val, runs, marginal, o)
			if c.Verdict != tc.verdict || c.Strength != tc.strength {
				t.Errorf("%s/%s: %s; want %s/%s", c.Verdict, c.Strength, c.Reason, tc.verdict, tc.strength)
			}
			t.Logf("%s/%s: %s", c.Verdict, c.Strength, c.Reason)
		})
	}
}
