package validate

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"slices"
	"testing"
)

// TestEvaluateWorkers: the folds fitted one at a time and all at once
// give the same result bit for bit (model, certificate, held-out checks
// and fold verdicts, compared as JSON, which prints every float64 to its
// shortest round-tripping decimal), and the progress reported is
// non-decreasing and ends at 1. A property of the implementation, not of
// a source: each fold's computation does not depend on the goroutine
// that runs it.
func TestEvaluateWorkers(t *testing.T) {
	sys := damped
	sys.runs, sys.dur = 8, 8
	ds := simulate(t, sys, 0.002, 3)
	type out struct {
		res   []byte
		share []float64
	}
	var outs []out
	for _, workers := range []int{1, 4} {
		o := evalOpts()
		o.Workers = workers
		var share []float64
		o.Progress = func(_ string, done float64) { share = append(share, done) }
		res, err := Evaluate(context.Background(), ds, o)
		if err != nil {
			t.Fatalf("workers %d: %v", workers, err)
		}
		if len(res.FoldVerdicts) != o.Folds {
			t.Fatalf("workers %d: %d fold verdicts, want %d", workers, len(res.FoldVerdicts), o.Folds)
		}
		b, err := json.Marshal(struct {
			M, C, R, F, H any
		}{res.Model, res.Certificate, res.Runs, res.FoldVerdicts, res.Heldout})
		if err != nil {
			t.Fatal(err)
		}
		if !slices.IsSorted(share) || len(share) < 2 || share[len(share)-1] != 1 {
			t.Errorf("workers %d: progress %v, want non-decreasing, ending at 1", workers, share)
		}
		outs = append(outs, out{b, share})
	}
	if !bytes.Equal(outs[0].res, outs[1].res) {
		t.Errorf("one fold at a time and all at once differ:\n%s\n%s", outs[0].res, outs[1].res)
	}
}

// TestEvaluateCancelled: a done context stops the folds with its error.
func TestEvaluateCancelled(t *testing.T) {
	sys := damped
	sys.runs, sys.dur = 8, 8
	ds := simulate(t, sys, 0.002, 3)
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	o := evalOpts()
	o.Workers = 4
	if _, err := Evaluate(ctx, ds, o); !errors.Is(err, context.Canceled) {
		t.Errorf("cancelled: %v, want context.Canceled", err)
	}
}
