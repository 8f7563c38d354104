package ingest

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// medianSort is the median as first written: a full sort of v.
func medianSort(v []float64) float64 {
	slices.Sort(v)
	n := len(v)
	if n%2 == 1 {
		return v[n/2]
	}
	return (v[n/2-1] + v[n/2]) / 2
}

// TestSortedWindow: the sliding window's median and median absolute
// deviation equal those of a copy sorted afresh, bit for bit, on random
// windows of odd and even length moving by random steps, with ties
// (values on a coarse grid), signed zeros and both kinds of move (slide
// and re-sort). The reference is the definition of the median (the
// middle order statistic, or the mean of the two middle ones; common
// practice).
func TestSortedWindow(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 0))
	for _, tc := range []struct {
		name string
		gen  func() float64
	}{
		{"gaussian", rng.NormFloat64},
		{"ties", func() float64 { return math.Round(2 * rng.NormFloat64()) }},
		{"zeros", func() float64 { return []float64{0, math.Copysign(0, -1), 1, -1}[rng.IntN(4)] }},
		{"heavy tail", func() float64 { return rng.NormFloat64() / (rng.Float64() + 1e-3) }},
	} {
		t.Run(tc.name, func(t *testing.T) {
			s := make([]float64, 3000)
			for i := range s {
				s[i] = tc.gen()
			}
			var w sortedWindow
			checked := 0
			for trial := 0; trial < 20; trial++ {
				w.reset()
				width := 1 + rng.IntN(2*eventBlock+2) // odd and even lengths
				lo := rng.IntN(100)
				for lo+width <= len(s) {
					w.move(s, lo, lo+width)
					ref := append([]float64(nil), s[lo:lo+width]...)
					med := medianSort(ref)
					for k := range ref {
						ref[k] = math.Abs(ref[k] - med)
					}
					mad := medianSort(ref)
					gotMed := medianSorted(w.v)
					gotMad := w.madSorted(gotMed)
					// the sign of a zero median may differ (the two
					// zeros compare equal in any sort); it never changes
					// |x - med|, so compare magnitudes' bits there
					if math.Float64bits(math.Abs(gotMed)) != math.Float64bits(math.Abs(med)) || math.Float64bits(gotMad) != math.Float64bits(mad) {
						t.Fatalf("window [%d, %d): median %v, MAD %v; sorted copy %v, %v", lo, lo+width, gotMed, gotMad, med, mad)
					}
					if !slices.IsSorted(w.v) || len(w.v) != width {
						t.Fatalf("window [%d, %d) holds %d values, sorted %v", lo, lo+width, len(w.v), slices.IsSorted(w.v))
					}
					checked++
					lo += 1 + rng.IntN(slideMax+8) // slides and re-sorts
				}
			}
			if checked < 100 {
				t.Fatalf("only %d windows checked", checked)
			}
		})
	}
}

// eventCase makes a table of ns states over n rows at 100 Hz from gen,
// which returns the value of state j at sample i.
func eventCase(n, ns int, gen func(i, j int) float64) (*table, *Dataset) {
	tb := &table{t: make([]float64, n), x: make([][]float64, ns), rows: n}
	ds := &Dataset{}
	for i := range tb.t {
		tb.t[i] = float64(i) * 0.01
	}
	for j := range tb.x {
		tb.x[j] = make([]float64, n)
		for i := range tb.x[j] {
			tb.x[j][i] = gen(i, j)
		}
		ds.States = append(ds.States, Column{Name: string(rune('a' + j))})
	}
	return tb, ds
}

// TestFindEventsSlidingEqualsSorted: the event pass with a sliding window
// finds the same events and cuts, bit for bit, as the pass that sorts a
// copy of the window at every candidate, on noise with steps, spikes and
// kinks, on fast smooth motion (where most samples are candidates), on
// quantised values (ties), on values near the float64 limit (an infinite
// jump statistic) and on a piece of two row ranges.
func TestFindEventsSlidingEqualsSorted(t *testing.T) {
	rng := rand.New(rand.NewPCG(12, 0))
	const n = 4000
	for _, tc := range []struct {
		name       string
		pieces     [][][2]int
		candidates int // at least this many candidate samples (|s| above the floor)
		gen        func(i, j int) float64
	}{
		{"steps spikes kinks", nil, 6, func(i, j int) float64 {
			v := 0.01 * rng.NormFloat64()
			if i > 1000 {
				v += 5 // a step
			}
			if i == 2000+j {
				v -= 3 // a spike
			}
			if i > 3000 {
				v += 0.2 * float64(i-3000) // a kink
			}
			return v
		}},
		// quiet, then fast smooth motion over 30 % of the run: the
		// recording's noise scale is the quiet part's, and nearly every
		// sample of the motion is a candidate
		{"fast smooth motion", nil, 1000, func(i, j int) float64 {
			v := 1e-3 * rng.NormFloat64()
			if i >= 1500 && i < 2700 {
				v += 100 * math.Sin(0.4*float64(i)*float64(j+1))
			}
			return v
		}},
		{"chirp", nil, 300, func(i, j int) float64 {
			return 10*math.Sin(1e-4*float64(i)*float64(i)) + 1e-4*rng.NormFloat64()
		}},
		{"quantised motion", nil, 500, func(i, j int) float64 {
			v := rng.NormFloat64()
			if i >= 2000 && i < 3000 {
				v += 500 * math.Sin(0.5*float64(i))
			}
			return math.Round(v)
		}},
		{"near the limit", nil, 10, func(i, j int) float64 {
			if i%97 == 3 {
				return -1.5e308
			}
			return 1e306 * rng.Float64()
		}},
		{"two ranges", [][][2]int{{{0, 1500}, {1700, n}}}, 500, func(i, j int) float64 {
			v := 0.01*rng.NormFloat64() + float64(i/900)
			if i%1000 < 300 {
				v += 3 * math.Sin(0.9*float64(i))
			}
			return v
		}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			tb, ds := eventCase(n, 3, tc.gen)
			pieces := tc.pieces
			if pieces == nil {
				pieces = [][][2]int{{{0, 1800}}, {{1800, n}}}
			}
			noise, err := tb.noiseOf(pieces, 3)
			if err != nil {
				t.Fatal(err)
			}
			ref := &Dataset{States: ds.States}
			sc := new(eventScratch)
			events, cand := 0, 0
			for _, p := range pieces {
				for j, sn := range noise {
					for _, v := range jumpStat(nil, pieceValues(tb.x[j], p), pieceValues(tb.t, p)) {
						if !(math.Abs(v) <= sn.jumpFloor()) {
							cand++
						}
					}
				}
				want := tb.findEventsSorted(ref, "r", p, noise)
				got, err := tb.findEvents(ds, "r", p, noise, sc)
				if err != nil {
					t.Fatal(err)
				}
				if len(want) != len(got) || (len(want) > 0 && !slices.Equal(want, got)) {
					t.Fatalf("cuts %v, want %v", got, want)
				}
				events += len(want)
			}
			if len(ds.Events) != len(ref.Events) {
				t.Fatalf("%d events, want %d", len(ds.Events), len(ref.Events))
			}
			for k, e := range ds.Events {
				w := ref.Events[k]
				if e.State != w.State || e.Kind != w.Kind || math.Float64bits(e.Time) != math.Float64bits(w.Time) ||
					math.Float64bits(e.Size) != math.Float64bits(w.Size) || math.Float64bits(e.Sigmas) != math.Float64bits(w.Sigmas) {
					t.Fatalf("event %d: %+v, want %+v", k, e, w)
				}
			}
			if cand < tc.candidates {
				t.Errorf("%d candidate samples, want at least %d: the case does not try the window", cand, tc.candidates)
			}
			t.Logf("%d candidates, %d cuts, %d events", cand, events, len(ds.Events))
		})
	}
}

// findEventsSorted is findEvents as first written, with a copy and a
// full sort of the window for every candidate sample: the reference the
// sliding-window version must agree with bit for bit.
func (tb *table) findEventsSorted(ds *Dataset, name string, p [][2]int, noise []stateNoise) []cut {
	n := pieceLen(p)
	if n < 5 {
		return nil
	}
	marks := map[int]bool{} // k -> drop
	for j, sn := range noise {
		if math.IsInf(sn.quant, 1) { // constant state
			continue
		}
		x, tp := pieceValues(tb.x[j], p), pieceValues(tb.t, p)
		sv := func(i int) float64 { return jumpAt(x[i-2], x[i-1], x[i], x[i+1], tp[i-2], tp[i-1], tp[i], tp[i+1]) }
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
			med := medianSort(win)
			for k := range win {
				win[k] = math.Abs(win[k] - med)
			}
			return math.Abs(sv(i)-med) > EventSigmas*madGauss*medianSort(win)
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
			ev := Event{Run: name, State: ds.States[j].Name, Kind: EventStep, Size: stepSize(s(c), x, tp, c), Noise: sn.s / math.Sqrt(5)}
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

// TestJumpStatFinite: the fused pass stores what jumpStat stores.
func TestJumpStatFinite(t *testing.T) {
	rng := rand.New(rand.NewPCG(13, 0))
	for n := range 12 {
		x := make([]float64, n)
		for i := range x {
			x[i] = rng.NormFloat64()
		}
		tm := evenClock(n)
		if n%2 == 1 { // and an uneven clock
			for i := range tm {
				tm[i] += 0.3 * rng.Float64()
			}
		}
		got, finite := jumpStatFinite(nil, x, tm)
		if want := jumpStat(nil, x, tm); !slices.Equal(got, want) || !finite {
			t.Errorf("n=%d: %v (finite %v), want %v", n, got, finite, want)
		}
		if n >= 4 {
			x[n/2] = math.Inf(1)
			if _, finite := jumpStatFinite(nil, x, tm); finite {
				t.Errorf("n=%d: an infinite sample gave a finite statistic", n)
			}
		}
	}
}

// TestClockCoefs: the jump statistic from the clock's coefficients,
// computed once for all states, is jumpAt's to the bit (the same
// operations in the same order), with the same finiteness, on an even
// clock, a clock of decimal steps (0.01 is not a binary fraction, so the
// steps differ in their last bits), a jittered clock, a clock even in
// stretches, and values near the float64 limit.
func TestClockCoefs(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 5))
	const n = 3000
	clocks := map[string][]float64{"even": evenClock(n)}
	dec, jit, part := make([]float64, n), make([]float64, n), make([]float64, n)
	for i := range n {
		dec[i] = float64(i) * 0.01
		jit[i] = float64(i) + 0.3*rng.Float64()
		part[i] = float64(i)
		if (i/200)%2 == 1 {
			part[i] = float64(i) + 0.25*rng.Float64()
		}
	}
	clocks["decimal"], clocks["jittered"], clocks["in stretches"] = dec, jit, part
	var co clockCoefs
	for name, tm := range clocks {
		for _, huge := range []bool{false, true} {
			x := make([]float64, n)
			for i := range x {
				x[i] = rng.NormFloat64()
				if huge && i%500 == 7 {
					x[i] = math.Copysign(math.MaxFloat64, x[i])
				}
			}
			for _, m := range []int{0, 3, 4, 5, n} { // pieces of every small length, and the whole
				co.set(tm[:m])
				got, gf := co.jumpStat(nil, x[:m])
				want, wf := jumpStatFinite(nil, x[:m], tm[:m])
				if gf != wf || len(got) != len(want) {
					t.Fatalf("%s (huge %v), %d samples: finite %v, %d values; want %v, %d", name, huge, m, gf, len(got), wf, len(want))
				}
				for i := range want {
					if math.Float64bits(got[i]) != math.Float64bits(want[i]) && !(math.IsNaN(got[i]) && math.IsNaN(want[i])) {
						t.Fatalf("%s (huge %v), %d samples: s[%d] = %v, jumpAt %v", name, huge, m, i, got[i], want[i])
					}
				}
				if m == n && huge == wf {
					t.Errorf("%s: huge values %v, finite statistic %v", name, huge, wf)
				}
			}
		}
	}
}
