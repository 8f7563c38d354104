package ingest

import (
	"fmt"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"
)

// TestGapLimitShortcut: splitGroup skips the median of the time steps
// when no step exceeds GapFactor times the least one; the runs must be
// those of the rule itself (split where a step exceeds GapFactor times
// the median step, the median taken by sorting: common practice), on
// even clocks, jittered ones, and clocks with gaps just below, at and
// above the limit, and with the least step far below the median.
func TestGapLimitShortcut(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 11))
	cases := 0
	for trial := range 400 {
		n := 20 + rng.IntN(200)
		dt := 0.01
		ts := make([]float64, n)
		for i := 1; i < n; i++ {
			step := dt
			switch trial % 4 {
			case 1:
				step = dt * (0.8 + 0.4*rng.Float64()) // jitter
			case 2:
				if rng.IntN(30) == 0 { // a gap near the limit
					step = dt * GapFactor * (0.98 + 0.04*rng.Float64())
				}
			case 3:
				if rng.IntN(40) == 0 { // a short step, and a gap
					step = dt / 10
				} else if rng.IntN(40) == 0 {
					step = dt * GapFactor * 1.5
				}
			}
			ts[i] = ts[i-1] + step
		}
		var b strings.Builder
		b.WriteString("t,x\n")
		for i, tt := range ts {
			fmt.Fprintf(&b, "%.17g,%.17g\n", tt, float64(i%7))
		}
		ds, err := ReadCSV(strings.NewReader(b.String()), "c.csv", &Options{KeepHead: true, KeepEvents: true})
		if err != nil {
			t.Fatal(err)
		}
		// the rule: the median step by sorting, then the splits
		steps := make([]float64, n-1)
		for i := 1; i < n; i++ {
			steps[i-1] = ts[i] - ts[i-1]
		}
		s := slices.Clone(steps)
		slices.Sort(s)
		med := s[len(s)/2]
		if len(s)%2 == 0 {
			med = (s[len(s)/2-1] + s[len(s)/2]) / 2
		}
		var want []int
		start := 0
		for i, st := range steps {
			if st > GapFactor*med {
				want = append(want, i+1-start)
				start = i + 1
			}
		}
		want = append(want, n-start)
		var got []int
		for _, r := range ds.Runs {
			got = append(got, r.Len())
		}
		if !slices.Equal(got, want) {
			t.Fatalf("trial %d: runs of %v samples, the rule gives %v", trial, got, want)
		}
		cases++
	}
	if cases != 400 {
		t.Fatalf("%d cases", cases)
	}
}
