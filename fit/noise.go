package fit

import (
	"basin.example/ingest"
)

// runNoiseCap bounds the fourth differences one run's estimate uses
// (evenly strided; see [ingest.NoiseDiffs]).
const runNoiseCap = ingest.NoiseDiffs

// RunNoiseSamples is the most fourth differences [RunNoise] uses per
// state: every stride-th from the first, stride = max(1, (m-4)/4096) for
// a run of m samples.
const RunNoiseSamples = runNoiseCap + 1

// RunNoise returns the measurement noise (standard deviation) of each
// state of run, in the states' units: 1.4826·median|Δ⁴x|/√70 over the
// run's own fourth differences (white noise gives Δ⁴ a variance of 70σ²;
// a smooth, densely sampled signal adds little). A run shorter than five
// samples gives zeros. Runs whose noise is a share of their own spread
// (one sensor range per test) differ by it, and each run's tolerances
// should follow its own figure rather than one pooled over runs.
func RunNoise(run *ingest.Run) []float64 {
	var e NoiseEstimator
	return e.RunTo(make([]float64, len(run.X)), run)
}

// A NoiseEstimator computes [RunNoise] into caller storage, reusing its
// scratch space: after the first run it does not allocate. The zero value
// is ready to use; it is not safe for concurrent use.
type NoiseEstimator struct {
	buf []float64
}

// RunTo stores in dst the noise estimate of each state of run and
// returns dst. It panics if dst does not have one entry per state.
func (e *NoiseEstimator) RunTo(dst []float64, run *ingest.Run) []float64 {
	if len(dst) != len(run.X) {
		panic("fit: RunTo: dst length differs from the run's states")
	}
	if cap(e.buf) < runNoiseCap+1 {
		e.buf = make([]float64, 0, runNoiseCap+1)
	}
	for j, x := range run.X {
		dst[j] = e.state(x)
	}
	return dst
}

func (e *NoiseEstimator) state(x []float64) float64 {
	var sd float64
	sd, e.buf = ingest.FourthDiffNoise(e.buf, x)
	return sd
}

// noiseUpper is the quantile of the per-run noise estimates that
// Model.Noise may not fall below.
const noiseUpper = 0.9

// noiseRange returns, per state, the lowest and highest per-run noise
// estimate over runs, and the noiseUpper quantile of them.
func noiseRange(runs []*ingest.Run, n int) ([][2]float64, []float64) {
	out := make([][2]float64, n)
	upper := make([]float64, n)
	per := make([][]float64, n)
	var e NoiseEstimator
	v := make([]float64, n)
	for _, r := range runs {
		if r.Len() < minWindow {
			continue
		}
		e.RunTo(v, r)
		for j, s := range v {
			per[j] = append(per[j], s)
		}
	}
	for j, p := range per {
		if len(p) == 0 {
			continue
		}
		upper[j] = quantile(p, noiseUpper) // sorts p
		out[j] = [2]float64{p[0], p[len(p)-1]}
	}
	return out, upper
}
