package fit

import (
	"fmt"
	"math"
	"strings"

	"basin.example/ingest"
)

// Noise correlated over many samples.
//
// The noise figures (noiseStd) and the derivative windows (chooseWindow)
// take the measurement noise to be white: each sample's error
// independent of the next. A sensor behind a filter, logged much faster
// than its noise changes, breaks that: neighbouring samples share most of
// their error, the fourth differences of lag 1 see only the little that
// changes from sample to sample, so the noise is underestimated, the
// smoothing windows are chosen narrow, and the derivatives take the
// noise's slow wander for motion. The fit then explains little, and the
// lack-of-fit check reads the wander as a model that lacks something.
//
// correlatedNoise measures it with fourth differences at growing lags L
// (x[i] - 4x[i+L] + 6x[i+2L] - 4x[i+3L] + x[i+4L]): for white noise
// their spread is 70σ² at every lag; for noise correlated over about ℓ
// samples it grows with L until L passes ℓ, then stays at the noise's
// whole variance; a smooth signal adds (L·dt)⁴ times its fourth
// derivative, whose growth speeds up from one doubling of the lag to
// the next, towards sixteenfold once it dominates, while the noise's
// slows. So the lags are walked up while the robust spread grows by at
// most noiseLagStep per doubling and no faster than at the doubling
// before, and the noise counts as correlated when the spread has grown
// noiseCorrRatio-fold by then.

const (
	// noiseCorrRatio is the growth of the fourth differences' spread
	// (lag L over lag 1) from which the noise counts as correlated: at
	// 1.7 (noise filtered at a fifth of the sample rate) the fits still
	// recover the field; at 3.7 (a twenty-fifth) they do not.
	noiseCorrRatio = 2.5
	// noiseLagStep bounds the growth of the spread from lag L to 2L that
	// correlated noise gives (at most √2 for noise with an exponential
	// autocorrelation, from the closed form in TestCorrelatedNoiseAR1);
	// beyond it the signal has taken over and the walk stops.
	noiseLagStep = 1.6
	// noiseAccel bounds the growth of one doubling over the last one's:
	// the noise's growth slows from √2 to 1 as the lag passes its
	// correlation length, a signal's speeds up (towards 16), so growth
	// that speeds up by more than the spread's sampling error (a few
	// percent on thousands of differences) is the signal's.
	noiseAccel = 1.1
	// noiseMaxLag is the longest lag tried.
	noiseMaxLag = 1024
)

// NoiseCorrelation reports a state whose measurement noise is correlated
// over many samples (see [Model.CorrelatedNoise]).
type NoiseCorrelation struct {
	State string `json:"state"`
	// Samples is the lag, in samples, over which the noise's spread
	// stops growing: about the noise's correlation length.
	Samples int `json:"samples"`
	// Ratio is the noise's spread at that lag over its sample-to-sample
	// spread: how far the white-noise figure underestimates it.
	Ratio float64 `json:"ratio"`
	// Block is the averaging suggested: blocks of this many samples.
	Block int `json:"block"`
}

// correlatedNoise returns, for one state's runs, the lag at which the
// spread of the fourth differences stops growing and its ratio to the
// spread at lag 1 (see the comment above); ratio 1 and lag 1 when the
// spread does not grow. At most about limit differences are used per
// lag.
func correlatedNoise(runs [][]float64, limit int) (lag int, ratio float64) {
	s1 := lagNoise(runs, 1, limit)
	if !(s1 > 0) {
		return 1, 1
	}
	lags, spreads := []int{1}, []float64{s1}
	best, step := s1, math.Sqrt2 // the last doubling's growth
	for L := 2; L <= noiseMaxLag; L *= 2 {
		s := lagNoise(runs, L, limit)
		if !(s > 0) {
			break
		}
		g := s / spreads[len(spreads)-1]
		if g > noiseLagStep || g > noiseAccel*max(step, 1) {
			break // the signal's growth, not the noise's
		}
		lags, spreads, step = append(lags, L), append(spreads, s), g
		best = max(best, s)
	}
	// the shortest lag at which the spread is within a tenth of its top
	for k, s := range spreads {
		if s >= 0.9*best {
			return lags[k], best / s1
		}
	}
	return 1, 1
}

// lagNoise is the robust spread of the fourth differences of lag L over
// the runs, 1.4826·median|Δ⁴_L x|/√70 (the white-noise σ at lag 1, as
// noiseStd), or 0 when no run is long enough.
func lagNoise(runs [][]float64, L, limit int) float64 {
	total := 0
	for _, x := range runs {
		total += max(0, len(x)-4*L)
	}
	if total == 0 {
		return 0
	}
	stride := max(1, total/limit)
	d := make([]float64, 0, min(total, limit+len(runs)))
	for _, x := range runs {
		for i := 0; i+4*L < len(x); i += stride {
			d = append(d, math.Abs(x[i]-4*x[i+L]+6*x[i+2*L]-4*x[i+3*L]+x[i+4*L]))
		}
	}
	if len(d) < 50 {
		return 0
	}
	return 1.4826 * medianSelect(d) / math.Sqrt(70)
}

// noiseCorrWords is the warning for a state whose noise is correlated:
// what it does to the fit and what to do, with the averaging's rate when
// the runs' step dt (seconds) is known.
func noiseCorrWords(nc NoiseCorrelation, dt float64) string {
	rate := ""
	if dt > 0 {
		rate = fmt.Sprintf(", to %.3g Hz", 1/(dt*float64(nc.Block)))
	}
	return fmt.Sprintf("the noise of %s is correlated over about %d samples (%.2g times what sample-to-sample differences show: logged faster than the noise changes, as behind a sensor's filter), so the derivatives and noise figures here take it for motion; average the runs in blocks of about %d samples%s (ingest.Options.Average %d), and fit again",
		nc.State, nc.Samples, nc.Ratio, nc.Block, rate, nc.Block)
}

// correlatedAdvice is the sentence the lack-of-fit reason adds when some
// state's noise is correlated: the misfit may be the noise's.
func (m *Model) correlatedAdvice() string {
	if len(m.CorrelatedNoise) == 0 {
		return ""
	}
	var names []string
	for _, nc := range m.CorrelatedNoise {
		names = append(names, fmt.Sprintf("%s over about %d samples", nc.State, nc.Samples))
	}
	return fmt.Sprintf(" The noise is correlated (%s), which this check reads as misfit: average the runs in blocks of about %d samples first (ingest.Options.Average %d).",
		strings.Join(names, ", "), m.CorrelatedNoise[0].Block, m.CorrelatedNoise[0].Block)
}

// meanStep is the runs' mean time step (seconds), 0 when no run has two
// samples.
func meanStep(runs []*ingest.Run) float64 {
	span, steps := 0.0, 0
	for i := range runs {
		if t := runs[i].T; len(t) >= 2 {
			span += t[len(t)-1] - t[0]
			steps += len(t) - 1
		}
	}
	if steps == 0 {
		return 0
	}
	return span / float64(steps)
}
