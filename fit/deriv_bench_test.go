package fit

import (
	"math"
	"math/rand/v2"
	"testing"
)

// BenchmarkSGRuns times the Savitzky–Golay stage on one run shaped like
// the demo's (2,001 samples at 200 Hz with 20 µs rms timing jitter, two
// states with half-widths 6 and 12, the widths the demo's field fit
// picks), by the per-sample factorisation and by the prefix sums of
// sgBlocks, side by side: go test ./fit -run '^$' -bench SGRuns -count 5
// alternates the two.
func BenchmarkSGRuns(b *testing.B) {
	rng := rand.New(rand.NewPCG(7, 0))
	n := 2001
	tm := make([]float64, n)
	for i := range tm {
		j := max(-60e-6, min(60e-6, 20e-6*rng.NormFloat64()))
		tm[i] = 0.005*float64(i) + j
	}
	x := [][]float64{make([]float64, n), make([]float64, n)}
	for i, s := range tm {
		x[0][i] = 0.3*math.Exp(-0.2*s)*math.Sin(9.5*s) + 3e-4*rng.NormFloat64()
		x[1][i] = 2.8*math.Exp(-0.2*s)*math.Cos(9.5*s) + 5e-3*rng.NormFloat64()
	}
	half := []int{6, 12}
	xs := [][]float64{make([]float64, n), make([]float64, n)}
	dx := [][]float64{make([]float64, n), make([]float64, n)}
	for _, tc := range []struct {
		name      string
		perSample bool
	}{{"per-sample", true}, {"blocks", false}} {
		b.Run(tc.name, func(b *testing.B) {
			sgPerSample = tc.perSample
			defer func() { sgPerSample = false }()
			dw := newDerivWork()
			b.ReportAllocs()
			for b.Loop() {
				dw.sgRuns(xs, dx, tm, x, half)
			}
			b.ReportMetric(b.Elapsed().Seconds()*1e9/float64(b.N*n*len(half)), "ns/value")
		})
	}
}
