package ingest

import (
	"math"
	"slices"
	"time"

	"basin.example/internal/order"
)

// Settling thresholds for [Summarise].
const (
	// TailFraction is the share of a run, at its end, that is examined
	// for settling.
	TailFraction = 0.05
	// SettleSpread is the largest span (max - min) of every state over a
	// run's tail, relative to the state's span over the whole run, for
	// the run to count as settled. A run that only wanders in noise has a
	// tail span close to its whole span and does not count.
	SettleSpread = 0.1
	// minTail is the fewest tail samples a settle judgement uses.
	minTail = 5
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
	// Settled says whether every state's span over the last
	// TailFraction of the run (at least 5 samples: a shorter run is
	// not judged) is at most
	// SettleSpread times its span over the run. Settle holds, per state,
	// the median over that tail; nil when not settled.
	Settled bool
	Settle  []float64
}

// ColumnSummary gives a state's unit and range over all runs.
type ColumnSummary struct {
	Column
	Min, Max float64
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
		s.States = append(s.States, ColumnSummary{Column: c, Min: s.Total.Min[j], Max: s.Total.Max[j]})
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

func settle(r *Run, lo, hi []float64) (bool, []float64) {
	n := r.Len()
	k := int(math.Ceil(TailFraction * float64(n)))
	if k < minTail {
		// too short to judge: its last minTail samples would be more than
		// TailFraction of it (a 36-sample run still diverging passed a
		// 5-sample tail check and made up a rest point)
		return false, nil
	}
	pt := make([]float64, len(r.X))
	tail := make([]float64, k)
	for j, x := range r.X {
		copy(tail, x[n-k:])
		tlo, thi := minMax(tail)
		if span := hi[j] - lo[j]; span > 0 && thi-tlo > SettleSpread*span {
			return false, nil
		}
		pt[j] = median(tail)
	}
	return true, pt
}
