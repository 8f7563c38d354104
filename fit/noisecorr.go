package fit

import (
	"fmt"
	"strings"

	"basin.example/ingest"
)

// NoiseCorrelation reports a state whose measurement noise is correlated
// over many samples (see [Model.CorrelatedNoise] and
// [ingest.CorrelatedNoise]).
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
