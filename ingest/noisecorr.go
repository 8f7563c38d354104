package ingest

import "math"

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
// CorrelatedNoise measures it with fourth differences at growing lags L
// (x[i] - 4x[i+L] + 6x[i+2L] - 4x[i+3L] + x[i+4L]): for white noise
// their spread is 70σ² at every lag; for noise correlated over about ℓ
// samples it grows with L until L passes ℓ, then stays at the noise's
// whole variance; a smooth signal adds (L·dt)⁴ times its fourth
// derivative, whose growth speeds up from one doubling of the lag to
// the next, towards sixteenfold once it dominates, while the noise's
// slows. So the lags are walked up while the robust spread grows by at
// most noiseLagStep per doubling and no faster than at the doubling
// before, and the noise counts as correlated when the spread has grown
// CorrelatedRatio-fold by then.

const (
	// CorrelatedRatio is the growth of the fourth differences' spread
	// (lag L over lag 1) from which the noise counts as correlated: at
	// 1.7 (noise filtered at a fifth of the sample rate) the fits still
	// recover the field; at 3.7 (a twenty-fifth) they do not.
	CorrelatedRatio = 2.5
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

// CorrelatedNoise returns, for one state's runs, the lag at which the
// spread of the fourth differences stops growing and its ratio to the
// spread at lag 1 (see the comment above); ratio 1 and lag 1 when the
// spread does not grow. At most about limit differences are used per
// lag.
func CorrelatedNoise(runs [][]float64, limit int) (lag int, ratio float64) {
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
	return 1.4826 * selectMedian(d) / math.Sqrt(70)
}
