package lyapunov

import (
	"context"
	"fmt"
	"testing"
)

// regionSetup builds the checker of the stable chain of n states on
// about samples samples (runs of 200 samples from the box ±1.5, noise
// 0.003) in z = x/0.5 and the Lyapunov-equation V of its linearisation,
// for the region benchmarks.
func regionSetup(b *testing.B, n, samples int) (*checker, []float64) {
	const spread, noise = 0.5, 0.003
	x := chainZ(n)
	box := make([][2]float64, n)
	for j := range box {
		box[j] = [2]float64{-1.5, 1.5}
	}
	d := x.runs(box, max(samples/200, 3), 0.01, 799, 4, noise, 6)
	for i := range d.Z {
		d.Z[i] /= spread
	}
	shift, scale := make([]float64, n), make([]float64, n)
	for j := range scale {
		scale[j] = spread
	}
	z := &testSystem{n: n}
	for _, p := range x.f {
		z.f = append(z.f, Sum([]float64{1 / spread}, Affine(p, shift, scale)))
	}
	o := (&Options{}).Defaults()
	ck, err := newChecker(context.Background(), d, z.system(noise/spread), o, false)
	if err != nil {
		b.Fatal(err)
	}
	p, err := Solve(ck.az, eye(n), n)
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
