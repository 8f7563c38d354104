package fit

import (
	"context"
	"errors"
	"math/rand/v2"
	"testing"

	"basin.example/fit/poly"
	"basin.example/ingest"
	"basin.example/internal/parallel"
)

// TestWorkerPanics: a panic inside one of fit's parallel loops comes back
// as a *parallel.PanicError, not a crash (which would exit 2, the
// contract's code for bad input).
func TestWorkerPanics(t *testing.T) {
	run := &ingest.Run{Name: "r", T: []float64{0, 0.1, 0.2, 0.3, 0.4, 0.5}, X: [][]float64{{1, 0.9, 0.8, 0.7, 0.6, 0.5}}}
	lib := poly.NewLibrary(1, 0, 2)
	m := &Model{States: []string{"x"}, Centre: []float64{0}, Spread: []float64{1}}
	sc := &varScale{centre: []float64{0}, spread: []float64{1}}
	groups := []*groupSums{newGroupSums(lib.Len(), 1)}
	bad := func(r, i int) int { return i } // group index out of range from the second sample on
	err := accumulate(context.Background(), groups, bad, []*ingest.Run{run, run}, lib, m, sc, nil, 0, DerivFornberg, nil)
	var pe *parallel.PanicError
	if !errors.As(err, &pe) {
		t.Errorf("accumulate with a panicking worker: err = %v, want a *parallel.PanicError", err)
	}

	// a method without its problem: the worker dereferences nil
	ms := []*method{{name: "broken"}}
	sp := &problem{p: lib.Len(), n: 1, groups: groups, total: groups[0]}
	_, err = selectModel(context.Background(), ms, sp, []float64{0}, []float64{0}, 1, rand.New(rand.NewPCG(1, 0)))
	if !errors.As(err, &pe) {
		t.Errorf("selectModel with a panicking worker: err = %v, want a *parallel.PanicError", err)
	}
}
