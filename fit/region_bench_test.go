package fit

import (
	"context"
	"fmt"
	"testing"
)

// regionSetup builds the checker of the stable chain of n states on
// about samples samples (runs of 200 samples from the box ±1.5) and the
// Lyapunov-equation V of its linearisation, for the region benchmarks.
func regionSetup(b *testing.B, n, samples int) (*checker, []float64) {
	sys := chainSystem(n)
	box := make([][2]float64, n)
	spread := make([]float64, n)
	for j := range box {
		box[j] = [2]float64{-1.5, 1.5}
		spread[j] = 0.5
	}
	ds := certRuns(sys, box, max(samples/200, 3), 0.01, 799, 4, 0.003, 6, false)
	m := sys.model(spread)
	m.Noise = make([]float64, n)
	for j := range m.Noise {
		m.Noise[j] = 0.003
	}
	o := (&CertifyOptions{}).get()
	ck, _, err := newChecker(context.Background(), m, ds, m.Equilibrium, spread, o)
	if err != nil {
		b.Fatal(err)
	}
	fe := NewFieldEvaluator(m)
	jac := fe.JacobianTo(make([]float64, n*n), nil, m.Equilibrium)
	ck.az = jac // spread is uniform, so the scaled Jacobian is the raw one
	p, err := Lyapunov(jac, eye(n), n)
	if err != nil {
		b.Fatal(err)
	}
	c := ck.fam.quadratic(p)
	tr := ck.fam.trace(c)
	for k := range c {
		c[k] /= tr
	}
	return ck, c
}

// benchRegion times one region search (the sampled level search and its
// branch-and-bound check) and reports the boxes the bound examined.
func benchRegion(b *testing.B, n, samples int) {
	ck, c := regionSetup(b, n, samples)
	var r levelResult
	for b.Loop() {
		r = ck.verify(c, ck.level(c))
	}
	if !r.ok {
		b.Fatalf("no region: %s", r.reason)
	}
	if r.bound != nil {
		b.ReportMetric(float64(r.bound.Boxes), "boxes")
	}
	b.ReportMetric(r.share, "trust-share")
}

// BenchmarkRegionStates: region search time against the state count at
// about 8,000 samples.
func BenchmarkRegionStates(b *testing.B) {
	for _, n := range []int{2, 3, 4, 6} {
		b.Run(fmt.Sprintf("n=%d", n), func(b *testing.B) { benchRegion(b, n, 8000) })
	}
}

// BenchmarkRegionSamples: region search time against the samples, 3
// states.
func BenchmarkRegionSamples(b *testing.B) {
	for _, s := range []int{2000, 8000, 32000} {
		b.Run(fmt.Sprintf("samples=%d", s), func(b *testing.B) { benchRegion(b, 3, s) })
	}
}
