package main

import (
	"errors"
	"testing"

	"basin.example/fit"
	"basin.example/ingest"
)

// TestLevelsHint: a collinear library is explained by the column with the
// fewest distinct values when they are no more than the degree (a column
// with k values has its powers up to k-1 spanning every higher one on the
// data: the Vandermonde matrix of k points has rank k; textbook linear
// algebra, common practice); otherwise the error is left as it is.
func TestLevelsHint(t *testing.T) {
	collinear := &fit.CollinearError{Condition: 1e16, Degree: 3}
	ds := func(state []float64, input []float64) *ingest.Dataset {
		d := &ingest.Dataset{States: []ingest.Column{{Name: "pos", Unit: "rad"}}}
		r := ingest.Run{X: [][]float64{state}}
		if input != nil {
			d.Inputs = []ingest.Column{{Name: "cmd", Unit: "rad"}}
			r.U = [][]float64{input}
		}
		d.Runs = []ingest.Run{r, r}
		return d
	}
	smooth := []float64{0.1, 0.22, 0.31, 0.47, 0.5, 0.66}
	for _, tc := range []struct {
		name   string
		err    error
		ds     *ingest.Dataset
		degree int
		want   string // the whole message
	}{
		{"input at three setpoints", collinear, ds(smooth, []float64{0.3, 0.5, 0.5, 0.7, 0.5, 0.3}), 3,
			collinear.Error() + `; input "cmd" takes only 3 distinct values, so its powers above 2 repeat the lower ones: give --degree 2 or less, or record more levels of it`},
		{"a switching state", collinear, ds([]float64{0, 1, 1, 0, 1, 0}, nil), 2,
			collinear.Error() + `; state "pos" takes only 2 distinct values, so its powers above 1 repeat the lower ones: give --degree 1 or less, or record more levels of it`},
		{"enough levels", collinear, ds(smooth, []float64{0.3, 0.4, 0.5, 0.6, 0.7, 0.5}), 3, collinear.Error()},
		{"another error", fit.ErrTooFewSamples, ds(smooth, []float64{0.3, 0.5, 0.5, 0.7, 0.5, 0.3}), 3, fit.ErrTooFewSamples.Error()},
	} {
		t.Run(tc.name, func(t *testing.T) {
			got := levelsHint(tc.err, tc.ds, tc.degree)
			if got.Error() != tc.want {
				t.Errorf("message\n got %s\nwant %s", got, tc.want)
			}
			if !errors.Is(got, tc.err) {
				t.Errorf("%v does not wrap %v", got, tc.err)
			}
		})
	}
	if err := levelsHint(nil, ds(smooth, nil), 3); err != nil {
		t.Errorf("nil error became %v", err)
	}
}
