package validate

import (
	"fmt"
	"slices"

	"basin.example/fit"
	"basin.example/internal/order"
)

// DecayMinSamples is the fewest samples inside the region and outside the
// noise ball that a run's approach needs for a decay rate; a stretch
// between noise-ball samples with fewer is skipped (see [Screener]).
const DecayMinSamples = 10

// Bound on the decay rate: a run is slow when its rate is below
// decayBoundShare times the smallest held-out rate; with fewer than
// decayMinRuns held-out rates there is no bound.
const (
	decayBoundShare = 0.5
	decayMinRuns    = 3
)

// DecayOf returns the distribution of the decay rates of the runs
// (screened on held-out data) that have one, and the lower bound below
// which screening flags a run slow: half the smallest held-out rate. A new
// run that behaves like the held-out runs (exchangeable with them) has a
// rate below their smallest with chance at most 1/(n+1) for n runs, and
// below half of it with less; FalseAlarm measures it on the held-out runs
// themselves, each against the bound set from the others. It returns nil
// when no run has a rate. It does not modify runs.
func DecayOf(runs []RunScreen) *fit.Decay {
	var rates []float64
	for i := range runs {
		if runs[i].DecaySamples > 0 {
			rates = append(rates, runs[i].DecayRate)
		}
	}
	if len(rates) == 0 {
		return nil
	}
	slices.Sort(rates)
	n := len(rates)
	d := &fit.Decay{Runs: n, Rates: rates, Min: rates[0], Max: rates[n-1], Median: order.Median(rates)}
	if n < decayMinRuns || !(rates[0] > 0) {
		d.Rule = fmt.Sprintf("no bound: %d held-out run(s) with a rate, smallest %.3g 1/s (a bound needs %d runs and a positive smallest rate)",
			n, rates[0], decayMinRuns)
		return d
	}
	d.LowerBound = decayBoundShare * rates[0]
	// Leave one out: only the smallest rate's bound changes (to half the
	// second smallest) when it is left out.
	alarms := 0
	if rates[0] < decayBoundShare*rates[1] {
		alarms++
	}
	d.FalseAlarm = float64(alarms) / float64(n)
	d.Rule = fmt.Sprintf("slow below %g times the smallest of %d held-out rates; "+
		"a run like the held-out ones falls below their smallest with chance at most 1/(n+1) = %.3g",
		decayBoundShare, n, 1/float64(n+1))
	return d
}
