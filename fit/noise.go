package fit

import (
	"math"

	"basin.example/ingest"
)

// runNoiseCap bounds the fourth differences one run's estimate uses
// (evenly strided): the median of 4,096 is within about 2% of the whole
// run's (the relative standard error of a median-based σ is about
// 1.17/√N for Gaussian noise, common practice).
const runNoiseCap = 4096

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
	total := len(x) - 4
	if total <= 0 {
		return 0
	}
	stride := max(1, total/runNoiseCap)
	d := e.buf[:0]
	for i := 0; i+4 < len(x) && len(d) < cap(d); i += stride {
		d = append(d, math.Abs(x[i]-4*x[i+1]+6*x[i+2]-4*x[i+3]+x[i+4]))
	}
	return 1.4826 * medianSelect(d) / math.Sqrt(70)
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
