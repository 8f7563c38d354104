package ingest

import (
	"errors"
	"math"
	"strings"
	"testing"
)

// TestRateUnusable: a Rate that is NaN, infinite, or so small or large
// that i/Rate underflows, overflows or repeats is an error naming the
// option (NaN was an index out of range).
func TestRateUnusable(t *testing.T) {
	for _, r := range []float64{math.NaN(), math.Inf(1), 1e-320, 1e300, MinRate / 2, MaxRate * 2} {
		_, err := ReadCSV(strings.NewReader("x,y\n1,2\n2,3\n3,4\n"), "r.csv", &Options{Rate: r})
		var pe *ParseError
		if !errors.As(err, &pe) || !errors.Is(err, ErrFormat) || !strings.Contains(err.Error(), "Options.Rate") {
			t.Errorf("Rate %g: err = %v, want a ParseError naming Options.Rate", r, err)
		}
	}
	for _, r := range []float64{MinRate, 100, MaxRate} {
		if _, err := ReadCSV(strings.NewReader("x,y\n1,2\n2,3\n3,4\n"), "r.csv", &Options{Rate: r}); err != nil {
			t.Errorf("Rate %g: %v", r, err)
		}
	}
}
