package validate

import (
	"context"
	"math"
	"math/rand/v2"
	"testing"

	"basin.example/fit"
)

// TestRunNoise: runs whose noise is a share (0.5% to 3%) of each run's
// own spread, as with one sensor range per test. The damped linear
// oscillator d²x/dt² + 0.6 dx/dt + 4 x = 0 ([Strogatz1994] §5.1) from starts of
// very different sizes. Each run's estimate must be within 20% of the
// noise it was given (the brief's bound; the median-based estimator's
// standard error on 600 samples is about 5%, common practice), and no
// held-out run of this stable system may be flagged.
func TestRunNoise(t *testing.T) {
	sys := damped
	sys.runs = 20
	sys.x0 = func(r *rand.Rand) []float64 {
		a := 0.1 + 2*r.Float64() // sizes differ twentyfold
		return box(r, a, 2*a)
	}
	ds := simulate(t, sys, 0, 3)
	rng := rand.New(rand.NewPCG(8, 8))
	truth := make([][]float64, len(ds.Runs))
	for r := range ds.Runs {
		share := 0.005 + 0.025*rng.Float64()
		truth[r] = make([]float64, len(ds.States))
		for j, x := range ds.Runs[r].X {
			lo, hi := math.Inf(1), math.Inf(-1)
			for _, v := range x {
				lo, hi = math.Min(lo, v), math.Max(hi, v)
			}
			truth[r][j] = share * (hi - lo)
			for i := range x {
				x[i] += truth[r][j] * rng.NormFloat64()
			}
		}
	}
	worst := 0.0
	for r := range ds.Runs {
		got := fit.RunNoise(&ds.Runs[r])
		for j, g := range got {
			e := math.Abs(g-truth[r][j]) / truth[r][j]
			worst = math.Max(worst, e)
			if !(e <= 0.2) {
				t.Errorf("run %d state %d: noise %.4g, true %.4g", r, j, g, truth[r][j])
			}
		}
	}
	t.Logf("largest relative error of a run's noise estimate: %.3g", worst)

	res, err := Evaluate(context.Background(), ds, &Options{Field: &fit.FieldOptions{Bootstrap: -1}})
	if err != nil {
		t.Fatal(err)
	}
	lo, hi := res.Model.NoiseRange[0][0], res.Model.NoiseRange[0][1]
	if !(hi > 3*lo) {
		t.Errorf("noise range of x %v: want the runs' spread of noise (at least 3x) reported", res.Model.NoiseRange[0])
	}
	for _, r := range res.Runs {
		if r.Flagged {
			t.Errorf("held-out run %s flagged: %+v", r.Run, r.Flags)
		}
	}
	t.Logf("verdict %s: %s", res.Certificate.Verdict, res.Certificate.Reason)
}
