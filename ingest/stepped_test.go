package ingest

import (
	"math"
	"slices"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
)

// TestSteppedStates: a column that repeats its value on at least 90% of
// consecutive pairs and takes more than one value is reported, whether
// it jumps inside a run or only between runs; a noisy state, a constant
// column and a mostly held column below the share are not. The shares
// are counted by hand from the columns below (common practice for
// parser tests).
func TestSteppedStates(t *testing.T) {
	// x moves every sample; u holds 0 for 10 samples, then 1 for 10:
	// 18 of its 19 pairs repeat (94.7%)
	x := make([]float64, 20)
	u := make([]float64, 20)
	half := make([]float64, 20) // changes at pairs 2-3, 3-4, 6-7 and 13-14: held on 15 of 19 (79%), below the share
	for i := range x {
		x[i] = math.Sin(float64(i)) + 0.001*float64(i)
		if i >= 10 {
			u[i] = 1
		}
		half[i] = float64(i / 7)
		if i == 3 {
			half[i] = 5
		}
	}
	ones := make([]float64, 20)
	for i := range ones {
		ones[i] = 1
	}
	twos := make([]float64, 20)
	for i := range twos {
		twos[i] = 2
	}
	tt := make([]float64, 20)
	for i := range tt {
		tt[i] = float64(i)
	}
	states := []Column{{"x", "m"}, {"u", "V"}, {"half", ""}, {"c", ""}}
	for _, tc := range []struct {
		name string
		runs []Run
		want []Stepped
	}{
		{"jumps inside a run", []Run{{T: tt, X: [][]float64{x, u, half, ones}}},
			[]Stepped{{State: 1, Held: 18.0 / 19, Levels: 2}}},
		// the constant column c holds 1 in one run and 2 in the other: held
		// on every pair within runs, two levels, so it is reported too
		{"levels only between runs", []Run{{T: tt, X: [][]float64{x, ones, half, ones}}, {T: tt, X: [][]float64{x, twos, half, twos}}},
			[]Stepped{{State: 1, Held: 1, Levels: 2}, {State: 3, Held: 1, Levels: 2}}},
		{"one value throughout is not stepped", []Run{{T: tt, X: [][]float64{x, ones, x, ones}}}, nil},
	} {
		t.Run(tc.name, func(t *testing.T) {
			ds := &Dataset{States: states, Runs: tc.runs}
			got := ds.SteppedStates()
			if !slices.EqualFunc(got, tc.want, func(a, b Stepped) bool {
				return a.State == b.State && a.Levels == b.Levels && scalar.EqualWithinAbs(a.Held, b.Held, 1e-12) // a ratio of small counts
			}) {
				t.Errorf("SteppedStates = %+v, want %+v", got, tc.want)
			}
		})
	}
}
