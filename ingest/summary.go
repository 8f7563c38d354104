package ingest

import (
	"math"
	"slices"
	"time"

	"basin.example/internal/order"
)

// Settling thresholds for [Summarise] (see [RunSummary.Settled]).
const (
	// TailFraction is the share of a run, at its end, whose median is
	// the run's settle point; the settle tests look at twice as much,
	// the run's last tenth, and the drift test at its last three tenths.
	TailFraction = 0.05
	// SettleSpread is the largest span (max - min) of every state over a
	// run's last tenth (about its fitted trend, when the trend is not
	// real), relative to the state's span over the whole run, that
	// passes for settled whatever the noise: a run that comes to rest
	// from a large excursion may keep a small wobble.
	SettleSpread = 0.1
	// minTail is the fewest tail samples a settle judgement uses: runs
	// of fewer than 81 samples are not judged.
	minTail = 5
	// settleAlpha is the chance, per state, that the trend test calls
	// white Gaussian noise about a constant a trend (its level).
	settleAlpha = 1e-3
	// DriftFloor is the share of a state's span over the run that a
	// trend may move the state across the run's last tenth and still
	// count as rest, however significant: on noise-free logs the end of
	// an exponential decay is a significant trend, and at rest.
	DriftFloor = 0.01
	// trendSigmas is how many residual standard deviations a significant
	// trend must move the state across the last tenth to count: a
	// smaller one is invisible beside the noise, and a trend of about one
	// standard deviation is what noise slightly correlated from sample to
	// sample, or a few runs of many, show by chance. The drift
	// exp(-i/2000) over 2,000 samples, which moves the state 3, 2, 1.5
	// and 1.2 noise standard deviations across the tenth at 2, 3, 4 and
	// 5% noise, is refused in 100, 97, 50 and 9% of 300 seeded runs.
	trendSigmas = 1.5
	// wobbleSigmas is how many noise standard deviations the robust
	// spread of the last tenth (about its trend) may reach before the
	// run counts as still moving: white noise gives about 1, noise
	// correlated from sample to sample (a filtered sensor, AR(1) with
	// coefficient 0.8) about 2.8.
	wobbleSigmas = 3
)

// Summary is what [Summarise] finds in a data set.
type Summary struct {
	Runs   []RunSummary
	States []ColumnSummary // one per Dataset.States
	Inputs []ColumnSummary // one per Dataset.Inputs, ranges over every run
	Total  RunSummary      // over every run; Total.Name is empty
	// SettledRuns counts runs that settled. RestPoints are the clusters
	// of their settle points (see [RestPoints]), the one most runs settle
	// on first; Settle is its point (nil if no run settled): with one rest
	// point, the median over settled runs of their settle points.
	SettledRuns int
	Settle      []float64
	RestPoints  []RestPoint
	Files       int
	Missing     int // samples dropped for missing cells
}

// RunSummary describes one run (or, in Summary.Total, all of them).
type RunSummary struct {
	Name  string
	File  string
	Line  int
	Split string
	Epoch time.Time // zero unless the time column held date-times
	// Samples is the number of samples; Start and Duration are in
	// seconds (Duration: last time minus first; for Total, the sum).
	Samples         int
	Start, Duration float64
	// RateHz is 1 / the median time step; 0 with fewer than 2 samples.
	RateHz float64
	// Jitter is the interquartile range of the time steps divided by
	// their median (0 for perfectly even sampling).
	Jitter float64
	Gaps   int
	// Min and Max are per state, over the run.
	Min, Max []float64
	// Settled says whether the run comes to rest, judged against its
	// noise rather than its span: for every state, over the run's last
	// tenth (twice TailFraction; a run of fewer than 81 samples is not
	// judged), a fitted quadratic trend is either not significant (F
	// test of regression at level 1e-3) or moves the state by at most
	// DriftFloor of its span over the run or 1.5 noise standard
	// deviations, what is left about the trend either spans at most
	// SettleSpread of the run's span or spreads no wider than 3 times
	// the noise (estimated from the run's fourth differences), and the
	// means of its last three tenths do not drift one way by more than
	// their standard errors allow and one noise standard deviation.
	// Runs still ringing within SettleSpread of their span settle too,
	// unless a trend there is an approach still in progress. White
	// noise about a constant passes at any level, and so does a rest
	// with one outlier; a drift, a ramp, a decay or a ringing still in
	// progress beyond the noise does not. Settle holds, per state, the
	// median over the last TailFraction; nil when not settled.
	Settled bool
	Settle  []float64
}

// ColumnSummary gives a state's unit and range over all runs.
type ColumnSummary struct {
	Column
	Min, Max float64
	// NoiseLag and NoiseRatio, for a state, are [CorrelatedNoise]'s over
	// its runs: the noise counts as correlated over about NoiseLag
	// samples when NoiseRatio is at least [CorrelatedRatio]. Zero for an
	// input.
	NoiseLag   int
	NoiseRatio float64
}

// Summarise describes ds: per run and in total, samples, timing, gaps,
// ranges and where the runs settle. It does not modify ds.
func Summarise(ds *Dataset) *Summary {
	s := &Summary{Missing: ds.Missing}
	ns := len(ds.States)
	s.Total = RunSummary{Min: fill(ns, math.Inf(1)), Max: fill(ns, math.Inf(-1)), Gaps: ds.Gaps}
	files := map[string]bool{}
	var allDt []float64
	var names []string
	var pts [][]float64 // settle points of the settled runs
	for i := range ds.Runs {
		r := &ds.Runs[i]
		files[r.Source.File] = true
		rs := RunSummary{Name: r.Name, File: r.Source.File, Line: r.Source.Line, Split: r.Split, Epoch: r.Epoch,
			Samples: r.Len(), Gaps: r.Gaps, Min: make([]float64, ns), Max: make([]float64, ns)}
		if n := r.Len(); n > 0 {
			rs.Start = r.T[0]
			rs.Duration = r.T[n-1] - r.T[0]
			dt := make([]float64, n-1)
			for k := 1; k < n; k++ {
				dt[k-1] = r.T[k] - r.T[k-1]
			}
			allDt = append(allDt, dt...)
			rs.RateHz, rs.Jitter = rateJitter(dt)
			for j := range ns {
				rs.Min[j], rs.Max[j] = minMax(r.X[j])
				s.Total.Min[j] = min(s.Total.Min[j], rs.Min[j])
				s.Total.Max[j] = max(s.Total.Max[j], rs.Max[j])
			}
			rs.Settled, rs.Settle = settle(r, rs.Min, rs.Max)
			if rs.Settled {
				s.SettledRuns++
				names = append(names, r.Name)
				pts = append(pts, rs.Settle)
			}
		}
		s.Total.Samples += rs.Samples
		s.Total.Duration += rs.Duration
		s.Runs = append(s.Runs, rs)
	}
	s.Total.RateHz, s.Total.Jitter = rateJitter(allDt)
	if s.Total.Samples == 0 {
		s.Total.Min, s.Total.Max = make([]float64, ns), make([]float64, ns)
	}
	span := make([]float64, ns)
	for j := range ns {
		span[j] = s.Total.Max[j] - s.Total.Min[j]
	}
	s.RestPoints = clusterRest(names, pts, span)
	if len(s.RestPoints) > 0 {
		s.Settle = s.RestPoints[0].Point
	}
	for j, c := range ds.States {
		cs := ColumnSummary{Column: c, Min: s.Total.Min[j], Max: s.Total.Max[j]}
		cols := make([][]float64, len(ds.Runs))
		for i := range ds.Runs {
			cols[i] = ds.Runs[i].X[j]
		}
		cs.NoiseLag, cs.NoiseRatio = CorrelatedNoise(cols, summaryNoiseCap)
		s.States = append(s.States, cs)
	}
	for k, c := range ds.Inputs {
		cs := ColumnSummary{Column: c, Min: math.Inf(1), Max: math.Inf(-1)}
		for i := range ds.Runs {
			if u := ds.Runs[i].U[k]; len(u) > 0 {
				lo, hi := minMax(u)
				cs.Min, cs.Max = min(cs.Min, lo), max(cs.Max, hi)
			}
		}
		if cs.Min > cs.Max { // no samples
			cs.Min, cs.Max = 0, 0
		}
		s.Inputs = append(s.Inputs, cs)
	}
	s.Files = len(files)
	return s
}

// summaryNoiseCap bounds the differences per lag [CorrelatedNoise] takes
// for a summary.
const summaryNoiseCap = 1 << 14

func fill(n int, v float64) []float64 {
	s := make([]float64, n)
	for i := range s {
		s[i] = v
	}
	return s
}

func minMax(v []float64) (lo, hi float64) {
	lo, hi = v[0], v[0]
	for _, x := range v[1:] {
		lo, hi = min(lo, x), max(hi, x)
	}
	return lo, hi
}

// rateJitter returns 1/median(dt) and IQR(dt)/median(dt); dt is reordered.
func rateJitter(dt []float64) (rate, jitter float64) {
	if len(dt) == 0 {
		return 0, 0
	}
	slices.Sort(dt)
	// Quantile at 1/2 rather than Median: the same definition, rounded as
	// the rate always was (a+(b-a)/2 and (a+b)/2 can differ in the last bit).
	med := order.Quantile(dt, 0.5)
	if med <= 0 {
		return 0, 0
	}
	return 1 / med, (order.Quantile(dt, 0.75) - order.Quantile(dt, 0.25)) / med
}

// Settles judges whether run r comes to rest, by the rule
// RunSummary.Settled describes, and returns its settle point (per state,
// the median over the last TailFraction) when it does. Summarise and the
// fitted model's count of settled runs use this one rule.
func Settles(r *Run) (bool, []float64) {
	if r.Len() == 0 {
		return false, nil
	}
	lo, hi := make([]float64, len(r.X)), make([]float64, len(r.X))
	for j, x := range r.X {
		lo[j], hi[j] = minMax(x)
	}
	return settle(r, lo, hi)
}

// settle judges whether run r, whose states range over [lo, hi], comes
// to rest (see settleScratch.rests) and returns its settle point when it does.
func settle(r *Run, lo, hi []float64) (bool, []float64) {
	n := r.Len()
	k := int(math.Ceil(TailFraction * float64(n)))
	if k < minTail {
		// too short to judge: its last minTail samples would be more than
		// TailFraction of it (a 36-sample run still diverging passed a
		// 5-sample tail check and made up a rest point)
		return false, nil
	}
	var sc settleScratch
	for j, x := range r.X {
		if !sc.rests(r.T, x, k, hi[j]-lo[j]) {
			return false, nil
		}
	}
	pt := make([]float64, len(r.X))
	tail := make([]float64, k)
	for j, x := range r.X {
		copy(tail, x[n-k:])
		pt[j] = median(tail)
	}
	return true, pt
}

// settleScratch holds the buffers of one settle judgement.
type settleScratch struct {
	buf []float64
}

// quadFit is a least-squares quadratic in orthogonal polynomials over a
// window: fitted(t) = mean + b1 p1(t) + b2 p2(t) with p1 = t - tc and
// p2 = p1² - g p1 - h orthogonal to 1 and p1 over the window's times.
type quadFit struct {
	tc, g, h     float64
	mean, b1, b2 float64
	ssTot, ssReg float64
	s11, s22     float64 // sums of p1² and p2²
	lo, hi       float64 // the window's first and last time
}

// fitQuad fits x at t (len >= 3, times not all equal).
func fitQuad(t, x []float64) quadFit {
	m := float64(len(t))
	var q quadFit
	q.lo, q.hi = t[0], t[len(t)-1]
	for i := range t {
		q.tc += t[i]
		q.mean += x[i]
	}
	q.tc /= m
	q.mean /= m
	// p2 = p1² - g p1 - h: h = mean(p1²) makes it orthogonal to 1, and
	// g = sum(p1³)/sum(p1²) (after h) orthogonal to p1
	var s2, s3 float64
	for i := range t {
		p := t[i] - q.tc
		s2 += p * p
		s3 += p * p * p
	}
	q.h = s2 / m
	if s2 > 0 {
		q.g = s3 / s2
	}
	var sx1, sx2 float64
	for i := range t {
		p1 := t[i] - q.tc
		p2 := p1*p1 - q.g*p1 - q.h
		d := x[i] - q.mean
		q.ssTot += d * d
		q.s11 += p1 * p1
		q.s22 += p2 * p2
		sx1 += p1 * d
		sx2 += p2 * d
	}
	if q.s11 > 0 {
		q.b1 = sx1 / q.s11
	}
	if q.s22 > 0 {
		q.b2 = sx2 / q.s22
	}
	q.ssReg = q.b1*sx1 + q.b2*sx2
	return q
}

// at returns the fitted value at time t.
func (q *quadFit) at(t float64) float64 {
	p1 := t - q.tc
	return q.mean + q.b1*p1 + q.b2*(p1*p1-q.g*p1-q.h)
}

// travel returns max - min of the fitted curve over the window.
func (q *quadFit) travel() float64 {
	a, b := q.at(q.lo), q.at(q.hi)
	lo, hi := min(a, b), max(a, b)
	if q.b2 != 0 {
		// the vertex: d/dt (b1 p1 + b2 (p1² - g p1)) = 0 at p1 = g/2 - b1/(2 b2)
		if tv := q.tc + q.g/2 - q.b1/(2*q.b2); tv > q.lo && tv < q.hi {
			v := q.at(tv)
			lo, hi = min(lo, v), max(hi, v)
		}
	}
	return hi - lo
}

// trend fits a quadratic to x at t (see rests), leaves its residuals in
// sc.buf[:len(x)] and reports whether its trend is real: significant by
// the F test, deflated for correlated noise, and moving the state across
// the window by more than DriftFloor of span and trendSigmas residual
// standard deviations.
func (sc *settleScratch) trend(t, x []float64, span float64) (quadFit, bool) {
	m := len(x)
	q := fitQuad(t, x)
	sc.buf = slices.Grow(sc.buf[:0], m)
	res := sc.buf[:m]
	var s0, s1 float64
	for i := range x {
		res[i] = x[i] - q.at(t[i])
		s0 += res[i] * res[i]
		if i > 0 {
			s1 += res[i] * res[i-1]
		}
	}
	// noise correlated from sample to sample (AR(1) with coefficient
	// phi) carries fewer independent samples, m (1-phi)/(1+phi), and
	// inflates F by about (1+phi)/(1-phi): deflate it by the residuals'
	// lag-1 autocorrelation (white noise gives about 0)
	phi := 0.0
	if s0 > 0 {
		phi = min(max(s1/s0, 0), 0.99)
	}
	df := float64(m - 3)
	if !(q.ssReg > 0 && q.ssReg/2*(1-phi)/(1+phi) > fQuantile2(settleAlpha, df)*s0/df) {
		return q, false
	}
	d := q.travel()
	return q, d > DriftFloor*span && d > trendSigmas*math.Sqrt(s0/df)
}

// driftZ is the two-sided 1 - 1e-3 point of the standard normal
// distribution, 3.2905 (AbramowitzStegun1964, table 26.1; checked against
// gonum's distuv): the level of the test of drifts.
const driftZ = 3.2905267314919255

// drifts reports whether x, three windows of m samples, drifts one way
// across them: the windows' means rise (or fall) from each to the next,
// and the last differs from the first by more than driftZ standard
// errors (each window's variance over m, inflated by (1+phi)/(1-phi) for
// its lag-1 autocorrelation phi, the two added), by more than DriftFloor
// of span, and by more than trendSigmas of the windows' pooled standard
// deviation: the comparison of means of two windows with their standard
// errors (Welch's, the variances unpooled), for a drift too slow to show
// within one. A ringing about the point turns between the windows.
func drifts(x []float64, m int, span float64) bool {
	var mu, v [3]float64
	for w := range 3 {
		mu[w], v[w] = meanVarAR(x[w*m : (w+1)*m])
	}
	if !((mu[1]-mu[0])*(mu[2]-mu[1]) > 0) {
		return false
	}
	d := math.Abs(mu[2] - mu[0])
	se := math.Sqrt(v[0]/float64(m) + v[2]/float64(m))
	sd := math.Sqrt((v[0] + v[2]) / 2)
	return d > driftZ*se && d > DriftFloor*span && d > sd
}

// meanVarAR returns the mean of x and its variance inflated by
// (1+phi)/(1-phi), phi the lag-1 autocorrelation (clamped to [0, 0.99]),
// so that variance/len(x) is the variance of the mean under AR(1) noise.
// The variance of a ringing or a trend inside x counts as noise, which
// only makes a drift harder to show.
func meanVarAR(x []float64) (float64, float64) {
	m := float64(len(x))
	mu := 0.0
	for _, v := range x {
		mu += v
	}
	mu /= m
	var s0, s1 float64
	for i, v := range x {
		d := v - mu
		s0 += d * d
		if i > 0 {
			s1 += d * (x[i-1] - mu)
		}
	}
	phi := 0.0
	if s0 > 0 {
		phi = min(max(s1/s0, 0), 0.99)
	}
	return mu, s0 / (m - 1) * (1 + phi) / (1 - phi)
}

// fQuantile2 returns the 1-alpha quantile of the F distribution with 2
// and nu degrees of freedom, whose upper tail has the closed form
// P(F > f) = (1 + 2f/nu)^(-nu/2).
func fQuantile2(alpha, nu float64) float64 {
	return nu / 2 * (math.Pow(alpha, -2/nu) - 1)
}

// rests reports whether one state of a run, sampled at times t
// (strictly increasing) with values x, comes to rest, judged over its
// last 2k samples (its last tenth, k the TailFraction tail) and the two
// tenths before; span is the state's range over the run and n >= 6k. It
// is the per-state test behind [RunSummary.Settled].
//
// A least-squares quadratic a + b t + c t² is fitted to the last tenth.
// Its trend is real when the F statistic of the fit against a constant,
// (SS_reg/2) / (SS_res/(m-3)), deflated for noise correlated from sample
// to sample, exceeds the 1 - settleAlpha quantile of F(2, m-3) (the
// test of significance of regression; the one-slope case is the t test
// of b against its standard error sqrt(MS_res/S_tt), whose square is
// F(1, m-2)), and the fitted curve moves across the window by more than
// DriftFloor of span and more than trendSigmas residual standard
// deviations (a smaller trend is invisible beside the noise). The state rests
// when either
//
//   - it rests within its noise: no real trend, the residuals about the
//     curve span at most SettleSpread of span or spread, robustly
//     (1.4826 times their median absolute deviation), within
//     wobbleSigmas times the noise (1.4826 median|Δ⁴x| / √70 over the
//     run, which a smooth signal hardly touches), and the last three
//     tenths do not drift one way (see drifts: a drift too slow to
//     stand out within one tenth shows across three); or
//   - it rests within its excursion: its last tenth spans at most
//     SettleSpread of span (a ringing that has died down to a few
//     percent of the run's range), and a real trend is not an approach
//     still in progress. An approach is a trend in the same direction
//     over the two tenths before (fitted the same way; a ringing about
//     the point turns within three tenths unless it is slow beside the
//     run) whose geometric extrapolation, d r / (1 - r) with d the last
//     tenth's change and r its ratio to the one before (exact for an
//     exponential approach), goes on beyond SettleSpread of span, or
//     which does not slow down (r >= 1: a ramp).
//
// White Gaussian noise about a constant rests at any level; a single
// outlier cannot fail the F test (its leverage bounds the share of SS_reg
// it can take) nor the medians, so a rest with one spike rests. A drift
// or a decay still in progress fails once its change over the tenth
// stands above the noise; a ringing beyond SettleSpread and the noise
// fails, and so does a slow oscillation beyond it, unless its crest sits
// in the last tenth: seen from there, a slow crest spanning less than
// SettleSpread is at rest within its excursion (in about one case in
// ten at 1% noise, for a crest at the middle of the tenth).
func (sc *settleScratch) rests(t, x []float64, k int, span float64) bool {
	n := len(x)
	m := 2 * k
	tw, xw := t[n-m:], x[n-m:]
	q, trend := sc.trend(tw, xw, span)
	if !trend {
		// the residuals' range and robust spread against the noise
		res := sc.buf[:m]
		rlo, rhi := minMax(res)
		quiet := rhi-rlo <= SettleSpread*span
		if !quiet {
			med := median(res)
			for i := range res {
				res[i] = math.Abs(res[i] - med)
			}
			quiet = madGauss*median(res) <= wobbleSigmas*sc.noise(x)
		}
		// a drift too slow to stand out of the noise within a tenth
		// shows over three
		if long := drifts(x[n-3*m:], m, span); quiet && !long {
			return true
		} else if long {
			trend = true
		}
	}
	if lo, hi := minMax(xw); !(hi-lo <= SettleSpread*span) {
		return false
	}
	if !trend {
		return true
	}
	// an approach still in progress: the same way over the two tenths
	// before (a ringing about the point turns within three tenths)
	change := func(lo, hi int) float64 {
		p := fitQuad(t[lo:hi], x[lo:hi])
		return p.at(p.hi) - p.at(p.lo)
	}
	d2 := q.at(q.hi) - q.at(q.lo)
	d1 := change(n-2*m, n-m)
	if !(d1*d2 > 0) || !(change(n-3*m, n-2*m)*d2 > 0) {
		return true // it turned: an oscillation about the point
	}
	r := d2 / d1
	if r >= 1 {
		return false
	}
	return math.Abs(d2*r/(1-r)) <= SettleSpread*span
}

// noise estimates the standard deviation of white noise on x
// ([FourthDiffNoise]).
func (sc *settleScratch) noise(x []float64) float64 {
	var sd float64
	sd, sc.buf = FourthDiffNoise(sc.buf, x)
	return sd
}
