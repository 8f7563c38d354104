package ingest

import (
	"context"
	"math"
	"slices"
	"sync/atomic"

	"basin.example/internal/order"
	"basin.example/internal/parallel"
)

// Thresholds for events and resting heads (see [Event] and [Head]).
//
// Both compare a statistic with a robust estimate of the run's noise, so
// that they hold whatever the units and the noise level. The noise of a
// state is taken from the jump statistic s (below) of its whole recording:
// 1.4826 times its median absolute deviation is the standard deviation of
// s under Gaussian noise whatever a few events do to it, and s has five
// times the variance of the per-sample noise.
const (
	// EventSigmas is how many noise scales of the jump statistic a jump
	// must exceed to be an event. For Gaussian noise, |s| > 8 sigma has a
	// two-sided tail probability 2(1 - Phi(8)) = 1.2e-15 per sample, so a
	// data set of 10^9 samples times states splits falsely with a chance
	// near 1e-6; 6 sigma (2.0e-9) would already do for Gaussian noise,
	// and the margin is for the heavier tails of real sensor noise. The
	// smallest jump found is then 8 sqrt(5) = 17.9 times the per-sample
	// noise, far below a hammer hit, a relay or a dropped packet.
	EventSigmas = 8
	// RestSigmas is how far, in per-sample noise scales, a state must move
	// from its starting level to end a resting head: the level is the
	// median of the first MinHead samples (standard error near 0.28 of
	// the noise), and |z| > 6 has a tail probability of 2.0e-9 a sample,
	// so a head of 10^5 samples ends early by chance with odds near 2e-4;
	// ending early only trims less.
	RestSigmas = 6
	// MinHead is the fewest samples a resting head must have to be
	// trimmed: fewer are indistinguishable from a run that starts moving.
	MinHead = 20
	// restDrift bounds the difference of the means of a head's two halves,
	// in standard errors: a head that drifts (slow motion, not rest) by
	// more is not trimmed.
	restDrift = 4
	// madGauss turns a median absolute deviation into a Gaussian standard
	// deviation: 1 / Phi^-1(3/4).
	madGauss = 1.482602218505602
	// eventBlock is the half-width of the window for the local noise
	// scale: a jump must also stand EventSigmas local scales from the
	// median of s over the eventBlock samples on either side, so that fast
	// but smooth motion, whose s is large where the motion is, is not
	// taken for jumps.
	eventBlock = 64
	// eventSpan is the smallest event, and the smallest motion that ends
	// a resting head, as a share of the state's span over its recording:
	// a floor for data with no noise (simulations), where the noise scale
	// is rounding error. Real events are a sizeable share of the span.
	eventSpan = 1e-3
	// noiseSubsample caps the values a noise estimate sorts: the MAD of
	// 2^14 values has a relative standard error near 1.166/128 = 0.9 %.
	noiseSubsample = 1 << 14
	// spikeMatch tells a step from a spike or a kink by the jump
	// statistic beside the largest: a step of J at c gives J at c and -J/2
	// on either side; a spike of S at m (one sample off) gives -S/2, 1.5 S,
	// -1.5 S, S/2 at m-1 .. m+2; a kink (the slope changes by K after
	// sample m, as a position does when a hit changes the velocity) gives
	// 0, -K/2, K/2, 0. A neighbour within this share of the opposite of
	// the largest means a spike or a kink.
	spikeMatch = 0.25
	// kinkOuter tells the two apart by the outer pair: (s_{m+2} -
	// s_{m-1})/2 over s_m is 1/3 for a spike and 0 for a kink; the
	// threshold is half way.
	kinkOuter = 1.0 / 6
	// minEventPiece is the fewest samples a piece between two event cuts
	// keeps; shorter ones (a step in one state one sample from a kink in
	// another) are dropped.
	minEventPiece = 3
)

// Event kinds.
const (
	EventStep  = "step"  // the state jumps between two samples and stays
	EventSpike = "spike" // one sample departs and the next comes back; it is dropped
	EventKink  = "kink"  // the slope changes between two steps (a position when a hit changes the velocity)
)

// An Event is a one-sample jump far beyond the noise inside a recording
// (a hammer hit, a relay, a dropped packet). The run is split there, like
// at a gap; a spike's sample is dropped.
type Event struct {
	// Run is the recording's name: the file's base name, or file#value
	// for a --run-col split, without the "~N" suffix of its pieces.
	Run string `json:"run"`
	// Time is the time of the first sample after a step, or of a spike's
	// sample, in seconds as in Run.T.
	Time  float64 `json:"time"`
	State string  `json:"state"`
	Kind  string  `json:"kind"` // EventStep, EventSpike or EventKink
	// Size is the jump in the state's unit: for a step, the change
	// between the two samples less the slope on either side; for a spike,
	// the sample's departure from the mean of its neighbours. For a kink
	// it is the change of slope, in the state's unit per second.
	Size float64 `json:"size"`
	// Noise is the per-sample noise estimate of the state in its
	// recording (the robust scale above over the square root of 5).
	Noise float64 `json:"noise"`
	// Sigmas is how far the jump statistic stood out: its size over its
	// noise scale (at least EventSigmas; +Inf is never written: 0 when
	// the recording has no noise).
	Sigmas float64 `json:"sigmas"`
}

// A Head is a resting start (a pre-trigger baseline) trimmed from a
// recording: the states held their level, within the noise, until the
// first motion.
type Head struct {
	Run      string  `json:"run"`      // the recording's name, as in Event.Run
	Samples  int     `json:"samples"`  // samples trimmed
	Duration float64 `json:"duration"` // seconds from the first sample to the first kept
}

// jumpStat stores in dst[i], for 2 <= i < len(x)-1, the jump statistic
// of [jumpAt] at sample i of x, sampled at times t. The ends are 0.
func jumpStat(dst, x, t []float64) []float64 {
	n := len(x)
	dst = slices.Grow(dst[:0], n)[:n]
	clear(dst)
	for i := 2; i < n-1; i++ {
		dst[i] = jumpAt(x[i-2], x[i-1], x[i], x[i+1], t[i-2], t[i-1], t[i], t[i+1])
	}
	return dst
}

// jumpAt is the jump statistic s at sample 2 of the four samples x0..x3
// taken at times t0..t3: the step x2 - x1 less the step that the mean of
// the slopes on either side predicts for its duration,
//
//	s = d2 - (a d1 + b d3)/2,  d_k = x_k - x_{k-1},  a = h2/h1,  b = h2/h3
//
// (h_k = t_k - t_{k-1}), scaled by sqrt(5/v), v = (1+b/2)^2 + (1+a/2)^2 +
// (a^2+b^2)/4 the variance of s under white noise of unit deviation, so
// that white noise of deviation sigma gives s the deviation sqrt(5) sigma
// on any clock. On an even clock (a = b = 1) it is the plain
// d2 - (d1+d3)/2 = 3/2 (x2-x1) + 1/2 (x0-x3): smooth motion gives s near
// h^3 x3/2 (x3 the third derivative), and a step of J at 2 gives J there
// and -J/2 beside it. On an uneven clock, motion at a constant slope
// gives 0 and a constant curvature x2 gives h2 (h1-h3) x2/2, where the
// index-based statistic gave the slope times the step's departure from
// its neighbours' mean: on a logger whose clock jitters by 30 % the fast
// start of a run looked like a jump.
//
// Steps that agree within a relative [evenStepTol] count as equal.
func jumpAt(x0, x1, x2, x3, t0, t1, t2, t3 float64) float64 {
	c := clockCoef(t0, t1, t2, t3)
	return c.jump(x0, x1, x2, x3)
}

// evenStepTol is the relative difference below which three time steps
// count as equal for the jump statistic. Times logged as i·dt, or read
// from decimal text, give steps that differ in their last bits (0.03 -
// 0.02 is 0.009999999999999998); taken as uneven they would cost every
// sample two divisions and a square root for a change of the statistic
// near 1e-16 of a step. At 1e-9 the plain formula's error is at most a
// billionth of the step's slope term, far below any logged noise, and a
// clock that jitters at all (even by a microsecond in a millisecond) is
// still uneven.
const evenStepTol = 1e-9

// evenSteps reports whether the steps h1, h2, h3 are equal within
// evenStepTol of h2.
func evenSteps(h1, h2, h3 float64) bool {
	tol := evenStepTol * h2
	return math.Abs(h1-h2) <= tol && math.Abs(h3-h2) <= tol
}

// jumpCoef is the part of [jumpAt] that depends on the clock only, for
// one sample: jump gives jumpAt's value from the four values, without the
// divisions and square root for each state.
type jumpCoef struct {
	even     bool
	a, b, sc float64
}

// clockCoef returns the coefficients of the sample at t2 of the samples
// at times t0 .. t3.
func clockCoef(t0, t1, t2, t3 float64) jumpCoef {
	return stepCoef(t1-t0, t2-t1, t3-t2)
}

// stepCoef is [clockCoef] from the three time steps h1, h2, h3.
func stepCoef(h1, h2, h3 float64) jumpCoef {
	if evenSteps(h1, h2, h3) {
		return jumpCoef{even: true}
	}
	a, b := h2/h1, h2/h3
	v := (1+b/2)*(1+b/2) + (1+a/2)*(1+a/2) + (a*a+b*b)/4
	return jumpCoef{a: a, b: b, sc: math.Sqrt(5 / v)}
}

// jump is the jump statistic of the values x0 .. x3 on c's clock.
func (c *jumpCoef) jump(x0, x1, x2, x3 float64) float64 {
	if c.even {
		return 1.5*(x2-x1) + 0.5*(x0-x3)
	}
	s := (x2 - x1) - 0.5*(c.a*(x1-x0)+c.b*(x3-x2))
	return s * c.sc
}

// stepSize is the size of a step at sample i of x, sampled at t, whose
// jump statistic is s: s itself on an even clock, else s unscaled (see
// [jumpAt]), so that a step of J gives J on any clock.
func stepSize(s float64, x, t []float64, i int) float64 {
	h1, h2, h3 := t[i-1]-t[i-2], t[i]-t[i-1], t[i+1]-t[i]
	if evenSteps(h1, h2, h3) {
		return s
	}
	a, b := h2/h1, h2/h3
	return (x[i] - x[i-1]) - 0.5*(a*(x[i-1]-x[i-2])+b*(x[i+1]-x[i]))
}

// robustScale returns madGauss times the median absolute deviation of v
// about its median, over a strided subsample of at most noiseSubsample
// values. v is not modified.
//
// Both medians are [median]'s (a NaN ranks below every number), taken by
// selection ([selectMedian]) rather than a sort: order statistics, so
// the same float64 values whatever the method.
func robustScale(v []float64) float64 {
	if len(v) == 0 {
		return 0
	}
	step := max(1, len(v)/noiseSubsample)
	w := make([]float64, 0, len(v)/step+1)
	for i := 0; i < len(v); i += step {
		w = append(w, v[i])
	}
	m := selectMedian(w)
	for i := range w {
		w[i] = math.Abs(w[i] - m)
	}
	return madGauss * selectMedian(w)
}

// selectMedian returns [median] of v, reordering v, by [order.Select]
// (Hoare's FIND) instead of a sort: with k NaN, which the sort puts
// first, the median of the sorted v[k:n-k], NaN when that is empty. The
// value is median's to the bit (the same order statistics, averaged the
// same way: [order.Median] on the middle one or two), but for the sign of
// a zero: -0 and +0 compare equal, and neither the sort nor the
// selection orders them. robustScale does not see that sign: its
// deviations are absolute values, and |v - 0| is the same for either
// zero.
func selectMedian(v []float64) float64 {
	k := 0
	for _, x := range v {
		if x != x {
			k++
		}
	}
	m := len(v) - 2*k
	if m <= 0 {
		return math.NaN()
	}
	lo, hi := k+(m-1)/2, k+m/2
	order.Select(v, lo, hi)
	return order.Median(v[lo : hi+1])
}

// stateNoise is what event and head detection know about one state of a
// recording.
type stateNoise struct {
	s     float64 // robust scale of the jump statistic
	quant float64 // the smallest nonzero step between samples (the resolution); +Inf if none
	span  float64 // max - min over the recording
}

// floor is the per-sample noise scale used for rest: the jump
// statistic's scale over sqrt(5), and at least the resolution and
// eventSpan of the span.
func (sn stateNoise) floor() float64 { return max(sn.s/math.Sqrt(5), sn.quant, eventSpan*sn.span) }

// jumpFloor is the smallest |s| that can be an event.
func (sn stateNoise) jumpFloor() float64 {
	return max(EventSigmas*sn.s, EventSigmas*sn.quant, eventSpan*sn.span)
}

// noiseOf estimates the noise of every state over a recording's pieces,
// the states on the workers of [parallel.For]. The error is a recovered
// panic's.
func (tb *table) noiseOf(pieces [][][2]int, ns int) ([]stateNoise, error) {
	out := make([]stateNoise, ns)
	total := 0
	for _, p := range pieces {
		total += pieceLen(p)
	}
	stride := max(1, total/noiseSubsample)
	scr := tb.scratchOf()
	w := min(parallel.Workers(0), ns)
	for len(scr.noise) < w {
		scr.noise = append(scr.noise, new(noiseScratch))
	}
	var next atomic.Int32
	err := parallel.For(context.Background(), ns, w, func() *noiseScratch {
		return scr.noise[next.Add(1)-1]
	}, func(_ context.Context, j int, buf *noiseScratch) error {
		all := buf.all[:0]
		q := math.Inf(1)
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, p := range pieces {
			x, t := pieceValues(tb.x[j], p), pieceValues(tb.t, p)
			var a, b float64
			a, b, q = spanStep(x, q)
			lo, hi = min(lo, a), max(hi, b)
			for i := 2; i < len(x)-1; i += stride {
				all = append(all, jumpAt(x[i-2], x[i-1], x[i], x[i+1], t[i-2], t[i-1], t[i], t[i+1]))
			}
		}
		var sc float64
		buf.all = all
		buf.sel, sc = scaleOf(buf.sel, all)
		out[j] = stateNoise{s: sc, quant: q, span: hi - lo}
		return nil
	})
	if err != nil {
		return nil, err
	}
	return out, nil
}

// spanStep returns the least and the greatest of x (not empty), as Go's
// min and max give them (-0 below +0; NaN when any value is NaN), and
// the smaller of q (> 0) and the smallest nonzero |x[i] - x[i-1]|: the
// span and the resolution of a state in one pass.
//
// It makes two lanes (even and odd i) of independent minima, and takes
// them on integers: the key of [orderKey] orders float64 values as
// min and max do, and the bits of a nonnegative float64 less one order
// its nonzero values with 0 wrapped above everything (and NaN above
// +Inf, so never below q), so each step is an integer compare and move,
// not the several instructions Go's float min takes for its NaN and
// signed-zero rules. Every statistic is a minimum or a maximum, which no
// order of the lanes changes, so the values are those of the plain loop
// (spanStepPlain in a test file) to the bit.
func spanStep(x []float64, q float64) (lo, hi, qmin float64) {
	l0 := orderKey(x[0])
	l1, h0, h1 := l0, l0, l0
	q0 := math.Float64bits(q) - 1
	q1 := q0
	i := 1
	for ; i+2 <= len(x); i += 2 {
		w := x[i-1 : i+2 : i+2]
		p, v0, v1 := w[0], w[1], w[2]
		k0, k1 := orderKey(v0), orderKey(v1)
		l0, h0 = min(l0, k0), max(h0, k0)
		l1, h1 = min(l1, k1), max(h1, k1)
		q0 = min(q0, math.Float64bits(math.Abs(v0-p))-1)
		q1 = min(q1, math.Float64bits(math.Abs(v1-v0))-1)
	}
	if i < len(x) {
		v := x[i]
		k := orderKey(v)
		l0, h0 = min(l0, k), max(h0, k)
		q0 = min(q0, math.Float64bits(math.Abs(v-x[i-1]))-1)
	}
	lo, hi = keyValue(min(l0, l1)), keyValue(max(h0, h1))
	if lo != lo || hi != hi {
		// a NaN sorts to one end by its sign bit; min and max give NaN
		lo, hi = math.NaN(), math.NaN()
	}
	return lo, hi, math.Float64frombits(min(q0, q1) + 1)
}

// orderKey maps x to an integer that orders as x does under Go's min and
// max for numbers (-0 below +0): the bits of a positive x, and those of
// a negative x with all but the sign flipped. NaN maps beyond ±Inf by
// its sign.
func orderKey(x float64) int64 {
	b := math.Float64bits(x)
	return int64(b ^ uint64(int64(b)>>63)>>1)
}

// keyValue is the float64 whose [orderKey] is k.
func keyValue(k int64) float64 {
	return math.Float64frombits(uint64(k) ^ uint64(k>>63)>>1)
}

// cut is a place to split a piece: before sample k (a step), or around
// sample k, which is dropped (a spike).
type cut struct {
	k    int
	drop bool
}

// findEvents finds the events of one piece (flat sample indices) for
// every state, appends them to ds.Events (in the order of the states),
// and returns the cuts, sorted.
//
// A sample i is a candidate when |s_i| exceeds the state's jump floor;
// a candidate is an event sample ("far") when it also stands EventSigmas
// local scales from the median of s over the window [i-eventBlock,
// i+eventBlock] (clipped to [2, n-1)), the local scale being madGauss
// times the window's median absolute deviation. The window is kept
// sorted as it moves from candidate to candidate (see [sortedWindow]), so
// a run of candidates costs a few insertions each, not a sort.
//
// The states are done on the workers of [parallel.For], each with its own
// scratch; with two or more states the part of s that depends on the
// clock only is computed once for all of them (see [clockCoefs]). The
// error is a recovered panic's.
func (tb *table) findEvents(ds *Dataset, name string, p [][2]int, noise []stateNoise, sc *eventScratch) ([]cut, error) {
	n := pieceLen(p)
	if n < 5 {
		return nil, nil
	}
	if sc == nil {
		sc = new(eventScratch)
	}
	t := pieceValues(tb.t, p)
	var live []int // the states that are not constant
	for j, sn := range noise {
		if !math.IsInf(sn.quant, 1) {
			live = append(live, j)
		}
	}
	var co *clockCoefs
	if len(live) >= 2 {
		sc.clock.set(t)
		co = &sc.clock
	}
	w := min(parallel.Workers(0), len(live))
	for len(sc.per) < w {
		sc.per = append(sc.per, new(stateScratch))
	}
	found := make([]stateEvents, len(live))
	var next atomic.Int32
	err := parallel.For(context.Background(), len(live), w, func() *stateScratch {
		return sc.per[next.Add(1)-1]
	}, func(_ context.Context, k int, ss *stateScratch) error {
		j := live[k]
		found[k] = tb.stateEvents(ds.States[j].Name, name, p, pieceValues(tb.x[j], p), t, co, noise[j], ss)
		return nil
	})
	if err != nil {
		return nil, err
	}
	var cuts []cut
	for _, f := range found {
		ds.Events = append(ds.Events, f.events...)
		cuts = append(cuts, f.cuts...)
	}
	return mergeCuts(cuts), nil
}

// stateEvents is what [findEvents] finds for one state.
type stateEvents struct {
	events []Event
	cuts   []cut
}

// stateEvents finds the events of one state (named state) over a piece p
// of the run run, its values x at times t; co, when not nil, holds the
// clock's part of the jump statistic.
func (tb *table) stateEvents(state, run string, p [][2]int, x, t []float64, co *clockCoefs, sn stateNoise, ss *stateScratch) stateEvents {
	n := len(x)
	var s []float64
	var finite bool
	if co != nil {
		s, finite = co.jumpStat(ss.s, x)
	} else {
		s, finite = jumpStatFinite(ss.s, x, t)
	}
	ss.s = s
	base := sn.jumpFloor()
	// the event samples, in increasing order
	far := ss.far[:0]
	ss.win.reset()
	for i := 2; i < n-1; i++ {
		if !(math.Abs(s[i]) <= base) && ss.win.stands(s, i, n, finite) {
			far = append(far, i)
		}
	}
	ss.far = far
	var out stateEvents
	// clusters: event samples no more than 2 apart; the largest |s| of
	// each is its event
	for a := 0; a < len(far); {
		c, end := far[a], far[a]
		b := a + 1
		for ; b < len(far) && far[b] <= end+2; b++ {
			end = far[b]
			if math.Abs(s[end]) > math.Abs(s[c]) {
				c = end
			}
		}
		a = b
		ev := Event{Run: run, State: state, Kind: EventStep, Size: stepSize(s[c], x, t, c), Noise: sn.s / math.Sqrt(5)}
		m := -1 // the spike's sample, or the kink's corner
		switch {
		case c+1 < n-1 && math.Abs(s[c]+s[c+1]) < spikeMatch*math.Abs(s[c]):
			m = c
		case c-1 >= 2 && math.Abs(s[c]+s[c-1]) < spikeMatch*math.Abs(s[c]):
			m = c - 1
		}
		k, at := c, c // the cut (before k), and the sample whose time is reported
		if m >= 1 && m+1 < n {
			kink := false
			if m-1 >= 2 && m+2 < n-1 {
				kink = (s[m+2]-s[m-1])/2/s[m] < kinkOuter
			}
			if kink {
				h := tb.t[pieceRow(p, m+1)] - tb.t[pieceRow(p, m)]
				ev.Kind, ev.Size, k, at = EventKink, (x[m+1]-2*x[m]+x[m-1])/h, m+1, m
			} else {
				ev.Kind, ev.Size, k, at = EventSpike, x[m]-(x[m-1]+x[m+1])/2, m, m
			}
		}
		ev.Time = tb.t[pieceRow(p, at)]
		if sn.s > 0 {
			ev.Sigmas = math.Abs(s[c]) / sn.s
		}
		out.events = append(out.events, ev)
		out.cuts = append(out.cuts, cut{k, ev.Kind == EventSpike})
	}
	return out
}

// mergeCuts sorts cuts by sample and makes one of the cuts at the same
// sample, a drop if any of them is.
func mergeCuts(cuts []cut) []cut {
	slices.SortFunc(cuts, func(a, b cut) int { return a.k - b.k })
	out := cuts[:0]
	for _, c := range cuts {
		if n := len(out); n > 0 && out[n-1].k == c.k {
			out[n-1].drop = out[n-1].drop || c.drop
			continue
		}
		out = append(out, c)
	}
	return out
}

// eventScratch holds the buffers of the event pass, reused across the
// pieces of a recording: the clock's coefficients and one state's
// buffers per worker.
type eventScratch struct {
	clock clockCoefs
	per   []*stateScratch
}

// stateScratch holds one worker's buffers of the event pass.
type stateScratch struct {
	s   []float64 // the jump statistic of one state over a piece
	far []int     // its event samples
	win sortedWindow
}

// clockCoefs holds, for every sample i of a piece, the part of [jumpAt]
// that depends on the clock only: a[i] = h2/h1, b[i] = h2/h3 and sc[i] =
// sqrt(5/v), or sc[i] = -1 where the three steps are equal (jumpAt's even
// case; sc is never negative otherwise); even says that every sample is
// of the even case. [clockCoefs.jumpStat] then gives jumpAt's values, to
// the bit (the same operations in the same order), without its
// divisions and square root for every state.
type clockCoefs struct {
	a, b, sc []float64
	even     bool
}

// set computes the coefficients of the clock t. Each step is taken once
// and slid along (h1, h2, h3 of sample i are h2, h3 and the next step of
// sample i-1): the same differences of the same times as [clockCoef]'s.
// The samples up to the first uneven one store nothing until it is
// found, so that an even clock stores nothing at all.
func (c *clockCoefs) set(t []float64) {
	n := len(t)
	c.a = slices.Grow(c.a[:0], n)[:n]
	c.b = slices.Grow(c.b[:0], n)[:n]
	c.sc = slices.Grow(c.sc[:0], n)[:n]
	c.even = true
	if n < 4 {
		return
	}
	h1, h2 := t[1]-t[0], t[2]-t[1]
	i := 2
	for ; i < n-1; i++ {
		h3 := t[i+1] - t[i]
		if !evenSteps(h1, h2, h3) {
			break
		}
		h1, h2 = h2, h3
	}
	if i == n-1 {
		return
	}
	c.even = false
	for k := 2; k < i; k++ {
		c.sc[k] = -1
	}
	for ; i < n-1; i++ {
		h3 := t[i+1] - t[i]
		if evenSteps(h1, h2, h3) { // stepCoef's first test, inlined
			c.sc[i] = -1
		} else {
			k := stepCoef(h1, h2, h3)
			c.a[i], c.b[i], c.sc[i] = k.a, k.b, k.sc
		}
		h1, h2 = h2, h3
	}
}

// jumpStat is [jumpStatFinite] of x on the clock of c. On an even clock
// (c.even) it takes four samples a step, with four sums for the finite
// test (x - x is 0 for a finite x and NaN otherwise), so that no chain
// of additions paces the loop; elsewhere two.
func (c *clockCoefs) jumpStat(dst, x []float64) ([]float64, bool) {
	n := len(x)
	dst = slices.Grow(dst[:0], n)[:n]
	if n < 4 {
		clear(dst)
		return dst, true
	}
	dst[0], dst[1], dst[n-1] = 0, 0, 0
	var a0, a1, a2, a3 float64
	i := 2
	if c.even {
		for ; i+4 <= n-1; i += 4 {
			w := x[i-2 : i+5 : i+5]
			d := dst[i : i+4 : i+4]
			v0 := 1.5*(w[2]-w[1]) + 0.5*(w[0]-w[3])
			v1 := 1.5*(w[3]-w[2]) + 0.5*(w[1]-w[4])
			v2 := 1.5*(w[4]-w[3]) + 0.5*(w[2]-w[5])
			v3 := 1.5*(w[5]-w[4]) + 0.5*(w[3]-w[6])
			d[0], d[1], d[2], d[3] = v0, v1, v2, v3
			a0 += v0 - v0
			a1 += v1 - v1
			a2 += v2 - v2
			a3 += v3 - v3
		}
		for ; i < n-1; i++ {
			v := 1.5*(x[i]-x[i-1]) + 0.5*(x[i-2]-x[i+1])
			dst[i] = v
			a0 += v - v
		}
		return dst, a0+a1+a2+a3 == 0
	}
	ca, cb, cs := c.a[:n], c.b[:n], c.sc[:n]
	at := func(i int) float64 {
		x0, x1, x2, x3 := x[i-2], x[i-1], x[i], x[i+1]
		if cs[i] < 0 {
			return 1.5*(x2-x1) + 0.5*(x0-x3)
		}
		return ((x2 - x1) - 0.5*(ca[i]*(x1-x0)+cb[i]*(x3-x2))) * cs[i]
	}
	for ; i+2 <= n-1; i += 2 {
		v0, v1 := at(i), at(i+1)
		dst[i], dst[i+1] = v0, v1
		a0 += v0 - v0
		a1 += v1 - v1
	}
	if i < n-1 {
		v := at(i)
		dst[i] = v
		a0 += v - v
	}
	return dst, a0+a1 == 0
}

// jumpStatFinite is jumpStat, and reports whether every value is finite
// (values near the float64 limit can make s infinite or NaN).
func jumpStatFinite(dst, x, t []float64) ([]float64, bool) {
	n := len(x)
	dst = slices.Grow(dst[:0], n)[:n]
	if n < 4 {
		clear(dst)
		return dst, true
	}
	dst[0], dst[1], dst[n-1] = 0, 0, 0
	acc := 0.0
	for i := 2; i < n-1; i++ {
		v := jumpAt(x[i-2], x[i-1], x[i], x[i+1], t[i-2], t[i-1], t[i], t[i+1])
		dst[i] = v
		acc += v - v // NaN once any v is NaN or infinite
	}
	return dst, acc == 0
}

// slideMax is the longest forward move of a [sortedWindow] made by
// removing and inserting values one at a time; a longer one sorts the
// window afresh (129 values sort in about the time of 16 single moves).
const slideMax = 16

// A sortedWindow keeps the values v[lo:hi] of a slice in ascending order
// while the window [lo, hi) moves forward. Its median and median absolute
// deviation are those of the same multiset of values that a copy and a
// sort give, so they are equal bit for bit: equal float64 values have
// equal bits, except the two zeros, and a value leaving the window is
// matched by its bits.
type sortedWindow struct {
	lo, hi int
	v      []float64 // v[lo:hi] of the slice, sorted
	dev    []float64 // scratch: absolute deviations from the median, sorted
}

// reset forgets the window (a new slice follows).
func (w *sortedWindow) reset() { w.lo, w.hi, w.v = 0, 0, w.v[:0] }

// stands reports whether s[i] is more than EventSigmas local scales from
// the median of s over its window, the window of sample i in a piece of
// n samples. finite says that every value of s is finite; otherwise the
// window is copied and sorted, as NaN has no place in a sorted order.
func (w *sortedWindow) stands(s []float64, i, n int, finite bool) bool {
	lo, hi := max(2, i-eventBlock), min(n-1, i+eventBlock+1)
	if !finite {
		w.reset()
		win := append(w.dev[:0], s[lo:hi]...)
		med := median(win)
		for k := range win {
			win[k] = math.Abs(win[k] - med)
		}
		w.dev = win
		return math.Abs(s[i]-med) > EventSigmas*madGauss*median(win)
	}
	w.move(s, lo, hi)
	med := medianSorted(w.v)
	return math.Abs(s[i]-med) > EventSigmas*madGauss*w.madSorted(med)
}

// move makes the window [lo, hi) of s, with lo and hi not before the
// window's present bounds.
func (w *sortedWindow) move(s []float64, lo, hi int) {
	if len(w.v) == 0 || lo < w.lo || hi < w.hi || lo >= w.hi || lo-w.lo > slideMax || hi-w.hi > slideMax {
		w.v = append(w.v[:0], s[lo:hi]...)
		slices.Sort(w.v)
		w.lo, w.hi = lo, hi
		return
	}
	for k := w.lo; k < lo; k++ {
		w.remove(s[k])
	}
	for k := w.hi; k < hi; k++ {
		w.insert(s[k])
	}
	w.lo, w.hi = lo, hi
}

// remove takes one value with the bits of x out of the window.
func (w *sortedWindow) remove(x float64) {
	i, _ := slices.BinarySearch(w.v, x)
	for math.Float64bits(w.v[i]) != math.Float64bits(x) {
		i++ // among equal values: the two zeros
	}
	w.v = slices.Delete(w.v, i, i+1)
}

// insert puts x into the window, in order.
func (w *sortedWindow) insert(x float64) {
	i, _ := slices.BinarySearch(w.v, x)
	w.v = slices.Insert(w.v, i, x)
}

// madSorted returns the median of |v - med| over the window's values,
// the median absolute deviation when med is their median.
func (w *sortedWindow) madSorted(med float64) float64 { return madOfSorted(w.v, med) }

// madOfSorted returns the median of |v[i] - med| over v, sorted ascending
// and free of NaN, with med finite. The deviations of the values below
// med (v[:b], read from b-1 down) rise as the values fall, and those of
// the others (v[b:]) rise with them: two sorted runs, whose order
// statistics [kthOfTwo] finds by bisection, with no sort and no copy.
func madOfSorted(v []float64, med float64) float64 {
	b, _ := slices.BinarySearch(v, med)
	n := len(v)
	if n%2 == 1 {
		return kthOfTwo(v, b, med, n/2)
	}
	return (kthOfTwo(v, b, med, n/2-1) + kthOfTwo(v, b, med, n/2)) / 2
}

// kthOfTwo returns the k-th smallest (from 0) of |v[i] - med| over v,
// sorted ascending, with v[:b] below med and v[b:] not: the merge of the
// runs L[t] = |v[b-1-t] - med| and R[t] = |v[b+t] - med|. It bisects on
// the number i of L among the k+1 smallest; the answer is then the larger
// of L[i-1] and R[k-i]. The value is that of the k-th element of the
// sorted deviations, whichever way ties are split.
func kthOfTwo(v []float64, b int, med float64, k int) float64 {
	nl, nr := b, len(v)-b
	lo, hi := max(0, k+1-nr), min(k+1, nl)
	for lo < hi {
		i := (lo + hi) / 2 // i < nl, and j = k+1-i > k+1-hi >= 0 so R[j-1] exists
		if math.Abs(v[b-1-i]-med) < math.Abs(v[b+k-i]-med) {
			lo = i + 1 // L[i] < R[k-i]: L[i] is among the k+1 smallest
		} else {
			hi = i
		}
	}
	i, j := lo, k+1-lo
	switch {
	case i == 0:
		return math.Abs(v[b+j-1] - med)
	case j == 0:
		return math.Abs(v[b-i] - med)
	}
	return max(math.Abs(v[b-i]-med), math.Abs(v[b+j-1]-med))
}

// splitAt cuts piece p at the cuts and returns the pieces left, in order,
// and the number of samples dropped.
func splitAt(p [][2]int, cuts []cut) (out [][][2]int, dropped int) {
	if len(cuts) == 0 {
		return [][][2]int{p}, 0
	}
	n := pieceLen(p)
	start := 0
	keep := func(a, b int) {
		switch {
		case b-a >= minEventPiece:
			out = append(out, subPiece(p, a, b))
		case b > a:
			dropped += b - a
		}
	}
	for _, c := range cuts {
		keep(start, c.k)
		start = max(start, c.k)
		if c.drop {
			start = max(start, c.k+1)
			dropped++
		}
	}
	keep(start, n)
	return out, dropped
}

// restingHead returns how many samples at the start of piece p are a
// resting head: at least MinHead samples over which every state stays
// within RestSigmas noise scales of its starting level and does not
// drift, ended by a motion. 0 means none.
func (tb *table) restingHead(p [][2]int, noise []stateNoise) int {
	n := pieceLen(p)
	if n < 2*MinHead {
		return 0
	}
	end := n
	xs := make([][]float64, len(noise))
	bases := make([]float64, len(noise))
	head := make([]float64, MinHead)
	for j, sn := range noise {
		x := pieceValues(tb.x[j], p)
		xs[j] = x
		copy(head, x[:MinHead])
		bases[j] = median(head)
		end = firstBeyond(x[:end], bases[j], RestSigmas*sn.floor())
	}
	if end < MinHead || end == n {
		return 0 // too short to be rest, or no motion at all
	}
	h := end / 2
	for j, sn := range noise {
		m1, m2 := mean(xs[j][:h]), mean(xs[j][h:end])
		se := sn.floor() * math.Sqrt(1/float64(h)+1/float64(end-h))
		if math.Abs(m2-m1) > restDrift*se {
			return 0
		}
	}
	return end
}

// firstBeyond returns the first i with |x[i] - base| > lim, or len(x)
// when there is none. It tests four values a step, so that the loop's
// own count and test are paid once for four, and each as d > lim || d <
// -lim (d = x[i] - base; the same test, NaN failing both, as negation is
// exact); the block that holds a hit is searched again by the plain
// test, so the index is the plain loop's.
func firstBeyond(x []float64, base, lim float64) int {
	i, nlim := 0, -lim
	for ; i+4 <= len(x); i += 4 {
		w := x[i : i+4 : i+4]
		d0, d1, d2, d3 := w[0]-base, w[1]-base, w[2]-base, w[3]-base
		if d0 > lim || d0 < nlim || d1 > lim || d1 < nlim || d2 > lim || d2 < nlim || d3 > lim || d3 < nlim {
			break
		}
	}
	for ; i < len(x); i++ {
		if math.Abs(x[i]-base) > lim {
			return i
		}
	}
	return len(x)
}

func mean(v []float64) float64 {
	s := 0.0
	for _, x := range v {
		s += x
	}
	return s / float64(len(v))
}

// pieceLen is the number of rows in a piece.
func pieceLen(p [][2]int) int {
	n := 0
	for _, rg := range p {
		n += rg[1] - rg[0]
	}
	return n
}

// pieceRow returns the table row of a piece's k-th sample.
func pieceRow(p [][2]int, k int) int {
	for _, rg := range p {
		if k < rg[1]-rg[0] {
			return rg[0] + k
		}
		k -= rg[1] - rg[0]
	}
	panic("ingest: sample index outside the piece")
}

// subPiece returns the rows [ka, kb) of a piece, as row ranges.
func subPiece(p [][2]int, ka, kb int) [][2]int {
	var out [][2]int
	off := 0
	for _, rg := range p {
		n := rg[1] - rg[0]
		a, b := max(ka-off, 0), min(kb-off, n)
		if a < b {
			out = append(out, [2]int{rg[0] + a, rg[0] + b})
		}
		off += n
	}
	return out
}

// pieceValues returns a column's values over a piece: a subslice for a
// contiguous piece, a copy otherwise.
func pieceValues(src []float64, p [][2]int) []float64 {
	if len(p) == 1 {
		return src[p[0][0]:p[0][1]]
	}
	return gather(src, p)
}
