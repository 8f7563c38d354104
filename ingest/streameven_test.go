package ingest

import (
	"context"
	"math"
	"path/filepath"
	"strconv"
	"testing"
)

// TestStreamEvenClock: pass 1 finds the clock even exactly when every
// three consecutive steps pass evenSteps (each sample's jump statistic
// then takes the even formula, so the detector skips clockCoef), for
// times i·dt, times read back from decimal text, one late step 1e-6
// longer, and one step of a whole missing row.
func TestStreamEvenClock(t *testing.T) {
	const n = 20000
	dir := t.TempDir()
	cases := []struct {
		name string
		time func(i int) float64
	}{
		{"i*dt", func(i int) float64 { return float64(i) * 0.001 }},
		{"decimal", func(i int) float64 {
			v, _ := strconv.ParseFloat(strconv.FormatFloat(float64(i)*0.001, 'f', 3, 64), 64)
			return v
		}},
		{"one late step", func(i int) float64 {
			if i >= 15000 {
				return float64(i)*0.001 + 1e-9
			}
			return float64(i) * 0.001
		}},
		{"a row left out", func(i int) float64 {
			if i >= 7000 {
				i++
			}
			return float64(i) * 0.001
		}},
	}
	for ci, c := range cases {
		tc := make([]float64, n)
		x := make([]float64, n)
		v := make([]float64, n)
		for i := range tc {
			tc[i] = c.time(i)
			x[i] = math.Sin(float64(i) * 1e-3)
			v[i] = math.Cos(float64(i) * 1e-3)
		}
		want := true
		for i := 3; i < n; i++ {
			if !evenSteps(tc[i-2]-tc[i-3], tc[i-1]-tc[i-2], tc[i]-tc[i-1]) {
				want = false
			}
		}
		p := filepath.Join(dir, "c"+strconv.Itoa(ci)+".parquet")
		writePlainCols(t, p, tc, x, v)
		sf, err := NewStreamer(nil, &StreamOptions{Window: -1, LateRuns: true}).Open(context.Background(), p)
		if err != nil {
			t.Fatal(err)
		}
		if sf.late == nil {
			t.Fatalf("%s: no plan left to the scan (read whole: %q)", c.name, sf.Whole)
		}
		if got := sf.late.even; got != want {
			t.Errorf("%s: even %v, want %v", c.name, got, want)
		}
		if c.name == "i*dt" && !want || c.name == "one late step" && want {
			t.Errorf("%s: evenSteps says %v: the case does not check what it names", c.name, want)
		}
		sf.Close()
	}
}
