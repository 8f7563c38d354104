package ingest

import (
	"math"
	"math/rand/v2"
	"sort"
	"testing"
)

// TestMedianSorted checks medianSorted against the classical median
// (the middle value, or the mean of the two middle values; common
// practice) of the whole slice as sort.Float64s orders it, NaN first and
// counted as values below every number: bit for bit on odd and even
// counts, ties, and from no NaN up to all NaN.
func TestMedianSorted(t *testing.T) {
	rng := rand.New(rand.NewPCG(31, 7))
	byDefinition := func(s []float64) float64 {
		n := len(s)
		if n%2 == 1 {
			return s[n/2]
		}
		return (s[n/2-1] + s[n/2]) / 2
	}
	checked, withNaN := 0, 0
	for trial := range 2000 {
		n := 1 + rng.IntN(40)
		v := make([]float64, n)
		for i := range v {
			v[i] = rng.NormFloat64()
			if trial%3 == 0 {
				v[i] = math.Round(v[i])
			}
		}
		nan := 0
		if trial%2 == 1 {
			nan = rng.IntN(n + 1)
		}
		for i := range nan {
			v[i] = math.NaN()
		}
		ref := append([]float64(nil), v...)
		sort.Float64s(ref)
		want := byDefinition(ref)
		got := median(v)
		if math.Float64bits(got) != math.Float64bits(want) && !(math.IsNaN(got) && math.IsNaN(want)) {
			t.Fatalf("n=%d with %d NaN: median %v, the definition %v (%v)", n, nan, got, want, ref)
		}
		if nan > 0 && !math.IsNaN(want) {
			withNaN++
		}
		checked++
	}
	if checked < 2000 || withNaN < 100 {
		t.Fatalf("%d cases, %d with NaN and a number for median: too few", checked, withNaN)
	}
}

// TestRateJitter checks the rate and jitter of a small step list by hand:
// steps 1, 2, 2, 4 (sorted) have the definition-7 quartiles [HyndmanFan1996]
// 1.75, 2, 2.5, so rate 1/2 and jitter (2.5-1.75)/2.
func TestRateJitter(t *testing.T) {
	rate, jitter := rateJitter([]float64{2, 4, 1, 2})
	if rate != 0.5 || jitter != 0.375 {
		t.Errorf("rate %v jitter %v, want 0.5 and 0.375", rate, jitter)
	}
	if r, j := rateJitter(nil); r != 0 || j != 0 {
		t.Errorf("no steps: rate %v jitter %v, want 0 and 0", r, j)
	}
}
