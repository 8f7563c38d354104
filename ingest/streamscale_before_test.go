package ingest

import (
	"math"
	"math/rand/v2"
	"slices"
	"strconv"
	"testing"
	"time"

	"basin.example/internal/order"
)

// scaleOfBefore is scaleOf before the sampled brackets, kept for
// BenchmarkScaleOf: two whole selections of the subsample.
func scaleOfBefore(w, v []float64) ([]float64, float64) {
	if len(v) == 0 {
		return w, 0
	}
	step := max(1, len(v)/noiseSubsample)
	w = w[:0]
	for i := 0; i < len(v); i += step {
		x := v[i]
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return w, robustScale(v)
		}
		w = append(w, x)
	}
	n := len(w)
	order.Select(w, n/2)
	m := w[n/2]
	if n%2 == 0 {
		m = (slices.Max(w[:n/2]) + m) / 2 // w[:n/2] holds the n/2 smallest
	}
	for i, x := range w {
		w[i] = math.Abs(x - m)
	}
	order.Select(w, n/2)
	d := w[n/2]
	if n%2 == 0 {
		d = (slices.Max(w[:n/2]) + d) / 2
	}
	return w, madGauss * d
}

// TestBracketedMisses checks that TestScaleOf's "sample misses" cases
// take the whole selection (the bracket misses) and a Gaussian sample
// the bracket, so that both of scaleOf's paths are compared there.
func TestBracketedMisses(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 1))
	const n = 16384
	v := make([]float64, n)
	for i := range v {
		v[i] = rng.NormFloat64()
	}
	in, samp := make([]float64, n), make([]float64, scaleSample)
	if _, _, _, ok := bracketed(v, 1, in, samp, n/2, true, false, 0); !ok {
		t.Error("the median's bracket missed on Gaussian values")
	}
	if _, _, _, ok := bracketed(v, 1, in, samp, n/2, true, true, 0); !ok {
		t.Error("the deviations' bracket missed on Gaussian values")
	}
	for i := range scaleSample {
		v[i*n/scaleSample] = 1e6
	}
	if _, _, _, ok := bracketed(v, 1, in, samp, n/2, true, false, 0); ok {
		t.Error("the median's bracket held with the sample far above the rest")
	}
	for i := range scaleSample {
		v[i*n/scaleSample] = 0.25
	}
	if _, _, _, ok := bracketed(v, 1, in, samp, n/2, true, true, 0.25); ok {
		t.Error("the deviations' bracket held with the sample at the center")
	}
}

// BenchmarkScaleOf times scaleOf against scaleOfBefore (two whole
// selections), alternately in one loop, on the subsample sizes the
// streamed noise takes (an even and an odd count) of Gaussian jump
// statistics and of rounded ones (ties), checking they agree to the
// bit. It reports each one's median ns per call and the median of the
// per-pair ratios (x-before: now over before).
func BenchmarkScaleOf(b *testing.B) {
	rng := rand.New(rand.NewPCG(9, 1))
	for _, n := range []int{16384, 16385} {
		for _, kind := range []string{"normal", "rounded"} {
			v := make([]float64, n)
			for i := range v {
				v[i] = rng.NormFloat64()
				if kind == "rounded" {
					v[i] = math.Round(v[i] * 3)
				}
			}
			b.Run(kind+"/n="+strconv.Itoa(n), func(b *testing.B) {
				b.ReportAllocs()
				var w []float64
				var now, before, ratio []float64
				for b.Loop() {
					var got, want float64
					t0 := time.Now()
					w, got = scaleOf(w, v)
					t1 := time.Now()
					w, want = scaleOfBefore(w, v)
					t2 := time.Now()
					if got != want {
						b.Fatalf("scale %v, before %v", got, want)
					}
					a, c := float64(t1.Sub(t0)), float64(t2.Sub(t1))
					now, before, ratio = append(now, a), append(before, c), append(ratio, a/c)
				}
				med := func(s []float64) float64 { slices.Sort(s); return s[len(s)/2] }
				b.ReportMetric(med(now), "now-ns")
				b.ReportMetric(med(before), "before-ns")
				b.ReportMetric(med(ratio), "x-before")
			})
		}
	}
}
