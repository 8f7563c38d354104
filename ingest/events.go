package ingest

import (
	"math"
	"slices"
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
// s_i = d_i - (d_{i-1} + d_{i+1})/2 with d_i = x_i - x_{i-1}: the step
// between two samples less the mean step on either side. Smooth motion
// gives s near h^3 x”'/2 (h the time step); a step of J at i gives J at
// i and -J/2 beside it; white noise of deviation sigma gives deviation
// sqrt(5) sigma (coefficients 3/2, -3/2, 1/2, -1/2). The ends are 0.
func jumpStat(dst, x []float64) []float64 {
	n := len(x)
	dst = slices.Grow(dst[:0], n)[:n]
	clear(dst)
	for i := 2; i < n-1; i++ {
		dst[i] = 1.5*(x[i]-x[i-1]) + 0.5*(x[i-2]-x[i+1])
	}
	return dst
}

// robustScale returns madGauss times the median absolute deviation of v
// about its median, over a strided subsample of at most noiseSubsample
// values. v is not modified.
func robustScale(v []float64) float64 {
	if len(v) == 0 {
		return 0
	}
	step := max(1, len(v)/noiseSubsample)
	w := make([]float64, 0, len(v)/step+1)
	for i := 0; i < len(v); i += step {
		w = append(w, v[i])
	}
	m := median(w)
	for i := range w {
		w[i] = math.Abs(w[i] - m)
	}
	return madGauss * median(w)
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

// noiseOf estimates the noise of every state over a recording's pieces.
func (tb *table) noiseOf(pieces [][][2]int, ns int) []stateNoise {
	out := make([]stateNoise, ns)
	total := 0
	for _, p := range pieces {
		total += pieceLen(p)
	}
	stride := max(1, total/noiseSubsample)
	var all []float64
	for j := range ns {
		all = all[:0]
		q := math.Inf(1)
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, p := range pieces {
			x := pieceValues(tb.x[j], p)
			a, b := minMax(x)
			lo, hi = min(lo, a), max(hi, b)
			for i := 1; i < len(x); i++ {
				if d := math.Abs(x[i] - x[i-1]); d > 0 && d < q {
					q = d
				}
			}
			for i := 2; i < len(x)-1; i += stride {
				all = append(all, 1.5*(x[i]-x[i-1])+0.5*(x[i-2]-x[i+1]))
			}
		}
		out[j] = stateNoise{s: robustScale(all), quant: q, span: hi - lo}
	}
	return out
}

// cut is a place to split a piece: before sample k (a step), or around
// sample k, which is dropped (a spike).
type cut struct {
	k    int
	drop bool
}

// findEvents finds the events of one piece (flat sample indices) for
// every state, appends them to ds.Events, and returns the cuts, sorted.
func (tb *table) findEvents(ds *Dataset, name string, p [][2]int, noise []stateNoise) []cut {
	n := pieceLen(p)
	if n < 5 {
		return nil
	}
	marks := map[int]bool{} // k -> drop
	for j, sn := range noise {
		if math.IsInf(sn.quant, 1) { // constant state
			continue
		}
		x := pieceValues(tb.x[j], p)
		sv := func(i int) float64 { return 1.5*(x[i]-x[i-1]) + 0.5*(x[i-2]-x[i+1]) } // as jumpStat
		base := sn.jumpFloor()
		var win []float64
		// far says whether s_i stands out of the s around it
		far := func(i int) bool {
			if math.Abs(sv(i)) <= base {
				return false
			}
			win = win[:0]
			for k := max(2, i-eventBlock); k < min(n-1, i+eventBlock+1); k++ {
				win = append(win, sv(k))
			}
			med := median(win)
			for k := range win {
				win[k] = math.Abs(win[k] - med)
			}
			return math.Abs(sv(i)-med) > EventSigmas*madGauss*median(win)
		}
		// s around a candidate cluster, for the kind of event; zero
		// outside [2, n-1) as in jumpStat
		s := func(i int) float64 {
			if i < 2 || i >= n-1 {
				return 0
			}
			return sv(i)
		}
		for i := 2; i < n-1; i++ {
			if !far(i) {
				continue
			}
			// a cluster: candidates no more than 2 apart; its largest |s| is the event
			c, end := i, i
			for k := i + 1; k < n-1 && k <= end+2; k++ {
				if far(k) {
					end = k
					if math.Abs(s(k)) > math.Abs(s(c)) {
						c = k
					}
				}
			}
			i = end
			ev := Event{Run: name, State: ds.States[j].Name, Kind: EventStep, Size: s(c), Noise: sn.s / math.Sqrt(5)}
			m := -1 // the spike's sample, or the kink's corner
			switch {
			case c+1 < n-1 && math.Abs(s(c)+s(c+1)) < spikeMatch*math.Abs(s(c)):
				m = c
			case c-1 >= 2 && math.Abs(s(c)+s(c-1)) < spikeMatch*math.Abs(s(c)):
				m = c - 1
			}
			k, at := c, c // the cut (before k), and the sample whose time is reported
			if m >= 1 && m+1 < n {
				kink := false
				if m-1 >= 2 && m+2 < n-1 {
					kink = (s(m+2)-s(m-1))/2/s(m) < kinkOuter
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
				ev.Sigmas = math.Abs(s(c)) / sn.s
			}
			ds.Events = append(ds.Events, ev)
			marks[k] = marks[k] || ev.Kind == EventSpike
		}
	}
	cuts := make([]cut, 0, len(marks))
	for k, drop := range marks {
		cuts = append(cuts, cut{k, drop})
	}
	slices.SortFunc(cuts, func(a, b cut) int { return a.k - b.k })
	return cuts
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
		lim := RestSigmas * sn.floor()
		for i := 0; i < end; i++ {
			if math.Abs(x[i]-bases[j]) > lim {
				end = i
				break
			}
		}
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
