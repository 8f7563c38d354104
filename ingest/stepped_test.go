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
	// 144 samples: enc climbs 0, 0.01, ..., 0.11, one step every 12
	// samples (11 changes, all of 0.01, read back from decimals); drv
	// visits 12 levels with steps that grow with the level
	ramp := make([]float64, 144)
	xr := make([]float64, 144)
	enc := make([]float64, 144)
	drv := make([]float64, 144)
	for i := range ramp {
		ramp[i] = float64(i)
		xr[i] = math.Cos(float64(i) / 7)
		enc[i] = atof(ftoa(float64(i/12) / 100))
		lv := float64(i / 12)
		drv[i] = lv * (lv + 1) / 20
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
		// an encoder of step 0.01 on a slow ramp over 12 levels: it holds on
		// 11 of every 12 pairs (91.7%) but every change is one step
		{"a coarse sensor is not stepped", []Run{{T: ramp, X: [][]float64{xr, enc, xr, xr}}}, nil},
		// the same holds and levels, but steps of sizes of their own: a drive
		{"a drive through as many levels is", []Run{{T: ramp, X: [][]float64{xr, drv, xr, xr}}},
			[]Stepped{{State: 1, Held: 132.0 / 143, Levels: 12}}},
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
