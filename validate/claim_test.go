package validate

import (
	"context"
	"math"
	"testing"

	"basin.example/fit"
	"basin.example/ingest"
)

// TestStableClaim: a certificate of strength stable claims that V does
// not rise and runs stay inside, not that they settle, so screening
// against it flags no run unsettled or slow; the same run against the
// same certificate of strength asymptotic is flagged both, and the
// held-out check still judges settling whatever the certificate claims
// (it decides the strength).
//
// The run is an undamped harmonic oscillator in circleCert's z, z =
// 0.6 (cos 2t, sin 2t): its energy, V = |z|² = 0.36, is conserved
// [Ogata] (from memory), so V never rises and the run never settles;
// its decay rate is 0 against a recorded slow bound of 0.5 1/s.
func TestStableClaim(t *testing.T) {
	run := makeRun("lossless", 1000, 0.01, func(t float64) (float64, float64) { return 0.6 * math.Cos(2*t), 0.6 * math.Sin(2*t) })
	flags := func(r *RunScreen) map[string]bool {
		k := map[string]bool{}
		for _, f := range r.Flags {
			k[f.Kind] = true
		}
		return k
	}
	for _, c := range []struct {
		strength        fit.Strength
		unsettled, slow bool
	}{
		{fit.Asymptotic, true, true},
		{fit.Stable, false, false},
		{fit.NoClaim, true, true},
	} {
		t.Run(string(c.strength), func(t *testing.T) {
			cert := circleCert(false)
			cert.Verdict, cert.Strength = fit.Certified, c.strength
			cert.Validation = &fit.Validation{Decay: &fit.Decay{Runs: 5, LowerBound: 0.5}}
			var r RunScreen
			NewScreener(cert, nil).Screen(&r, "f", &run)
			k := flags(&r)
			if k[FlagUnsettled] != c.unsettled || k[FlagSlow] != c.slow || k[FlagRises] || k[FlagLeaves] {
				t.Errorf("screen: flags %+v; want unsettled %v, slow %v, no rises or leaves", r.Flags, c.unsettled, c.slow)
			}
			if r.Settled || r.Flagged != c.unsettled {
				t.Errorf("screen: settled %v, flagged %v; want false, %v", r.Settled, r.Flagged, c.unsettled)
			}
			if ru := NewScreener(cert, nil).Rules(); ru.NoSettle == c.unsettled || (ru.SlowBound > 0) != c.slow {
				t.Errorf("rules: NoSettle %v, SlowBound %g; want %v, bound %v", ru.NoSettle, ru.SlowBound, !c.unsettled, c.slow)
			}
			ds := &ingest.Dataset{States: []ingest.Column{{Name: "a"}, {Name: "b"}}, Runs: []ingest.Run{run}}
			val, runs, err := Check(context.Background(), cert, ds, nil)
			if err != nil {
				t.Fatal(err)
			}
			if !flags(&runs[0])[FlagUnsettled] || val.Settled != 0 || val.EnteredRuns != 1 {
				t.Errorf("check: flags %+v, %d of %d entered settled; want unsettled, 0 of 1", runs[0].Flags, val.Settled, val.EnteredRuns)
			}
		})
	}
}
