// Package validate checks a fitted certificate on held-out runs, bounds the
// chance of a violation by the scenario approach, gives the verdict, and
// screens new logs against a saved certificate.
package validate

import (
	"context"
	"errors"

	"github.com/basin-dev/basin/fit"
	"github.com/basin-dev/basin/ingest"
)

// Flag kinds of the contract.
const (
	FlagRises     = "rises"     // V rose beyond the tolerance inside the region
	FlagLeaves    = "leaves"    // the run left the region after entering it
	FlagUnsettled = "unsettled" // the run did not settle
)

// Flag is one finding on a run.
type Flag struct {
	Kind   string  `json:"kind"`
	Time   float64 `json:"time"`   // first time it happened, seconds
	Excess float64 `json:"excess"` // worst excess, in units of V
}

// RunScreen is the result of screening one run.
type RunScreen struct {
	File    string `json:"file"`
	Run     string `json:"run"`
	Samples int    `json:"samples"`
	Flagged bool   `json:"flagged"`
	Flags   []Flag `json:"flags"`
	// StartInside says the run's first sample is in the region;
	// EverInside that some sample is; Settled that it ended settled.
	StartInside bool `json:"start_inside"`
	EverInside  bool `json:"ever_inside"`
	Settled     bool `json:"settled"`
}

// ScreenOptions controls screening. A nil *ScreenOptions means defaults.
type ScreenOptions struct {
	// Tolerance on a rise of V between consecutive samples, in units of V;
	// 0 means the certificate's Tolerance.
	Tolerance float64
}

// Options controls Evaluate and Check. A nil *Options means defaults.
type Options struct {
	Folds int    // folds over runs; 0 means 5
	Seed  uint64 // 0 means 1
	// Beta is the scenario approach's confidence parameter; 0 means 1e-6.
	Beta float64
	// MinDecrease is the decrease_fraction a certified verdict needs; 0
	// means 0.99.
	MinDecrease float64
	Field       *fit.FieldOptions
	Certify     *fit.CertifyOptions
}

// Result is the whole evaluation: model and certificate fitted on the fit
// runs, checked on the held-out runs.
type Result struct {
	Model       *fit.Model
	Certificate *fit.Certificate
	// Heldout[i] says run i of the data set was held out.
	Heldout []bool
	// Runs holds the per-run checks of the held-out runs.
	Runs []RunScreen
}

// Evaluate splits ds by run, fits the model and certificate on the fit
// runs, checks them on the held-out runs and sets the verdict.
func Evaluate(ctx context.Context, ds *ingest.Dataset, opts *Options) (*Result, error) {
	return nil, errors.New("validate: Evaluate not built yet")
}
