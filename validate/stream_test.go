package validate

import (
	"math"
	"math/rand/v2"
	"testing"

	"basin.example/fit"
	"basin.example/ingest"
)

// TestStreamNoise: the run noise computed over a stream of blocks is
// fit.RunNoise's (the same formula over the same samples; bit for bit),
// for runs shorter and longer than the cap, fed in blocks of several
// sizes.
func TestStreamNoise(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 0))
	for _, m := range []int{5, 6, 100, 4100, 4101, 20000, 100003} {
		run := &ingest.Run{T: make([]float64, m), X: [][]float64{make([]float64, m), make([]float64, m)}}
		for i := range m {
			run.T[i] = float64(i) * 1e-3
			run.X[0][i] = math.Sin(float64(i)*1e-2) + 1e-3*rng.NormFloat64()
			run.X[1][i] = 0.01 * rng.NormFloat64()
		}
		want := fit.RunNoise(run)
		for _, block := range []int{1, 2, 3, 4, 5, 7, 256, 1 << 20} {
			var a streamNoise
			a.init(2)
			a.begin(m)
			for i := 0; i < m; i += block {
				e := min(i+block, m)
				a.add([][]float64{run.X[0][i:e], run.X[1][i:e]})
			}
			got := a.noise()
			for j := range want {
				if math.Float64bits(got[j]) != math.Float64bits(want[j]) || !(want[j] > 0) {
					t.Errorf("m=%d block=%d state %d: %v, fit.RunNoise %v", m, block, j, got[j], want[j])
				}
			}
		}
	}
}
