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

// TestNumberForms: Go's digit separators and hexadecimal floats are not
// numbers in a log, and a decimal beyond float64's range is called out of
// range like an infinity (it was "not a number").
func TestNumberForms(t *testing.T) {
	for _, tc := range []struct{ cell, want string }{
		{"1_000", "no digit separators"},
		{"0x1p-2", "no hexadecimal"},
		{"1e5000", "infinite or out of range"},
		{"-1e5000", "infinite or out of range"},
		{"+inf", "infinite or out of range"},
	} {
		_, err := ReadCSV(strings.NewReader("t,x\n0,1\n0.1,"+tc.cell+"\n0.2,3\n"), "n.csv", nil)
		if !errors.Is(err, ErrNotNumber) || !strings.Contains(err.Error(), tc.want) || !strings.Contains(err.Error(), "n.csv:3:2") {
			t.Errorf("%s: err = %v, want n.csv:3:2 and %q", tc.cell, err, tc.want)
		}
	}
	if _, err := ReadCSV(strings.NewReader("t,x\n0,1e3\n0.1, 2.5 \n0.2,NaN\n0.3,4\n"), "n.csv", nil); err != nil {
		t.Errorf("plain decimals refused: %v", err)
	}
}
