package fit

import (
	"context"
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

// ar1 returns n samples of unit-variance AR(1) noise e[i] = φ e[i-1] +
// √(1-φ²) w[i], w white Gaussian: autocovariance φ^|k| ([BoxJenkins]).
func ar1(rng *rand.Rand, n int, phi float64) []float64 {
	e := make([]float64, n)
	v := rng.NormFloat64()
	for i := range e {
		v = phi*v + math.Sqrt(1-phi*phi)*rng.NormFloat64()
		e[i] = v
	}
	return e
}

// TestFieldCorrelatedNoise: a damped oscillator (x' = y, y' = -x - 0.2y:
// stable, common practice) logged at 100 samples a second with noise
// filtered at 2 Hz (AR(1), φ = e^(-2π·2/100)) gets the model's
// correlated_noise entry and the equations' warning; with white noise
// of the same size it gets neither.
func TestFieldCorrelatedNoise(t *testing.T) {
	sys := system{name: "oscillator", states: []string{"x", "y"}, f: func(d, x []float64) {
		d[0] = x[1]
		d[1] = -x[0] - 0.2*x[1]
	}}
	rng := rand.New(rand.NewPCG(11, 2))
	var starts [][]float64
	for range 12 {
		starts = append(starts, []float64{2*rng.Float64() - 1, 2*rng.Float64() - 1})
	}
	for _, phi := range []float64{0, math.Exp(-2 * math.Pi * 2 / 100)} {
		ds := simulate(sys, starts, 30, 0.01, 2, 0, 1)
		for _, r := range ds.Runs {
			for j := range r.X {
				e := ar1(rng, len(r.X[j]), phi)
				for i := range r.X[j] {
					r.X[j][i] += 0.01 * e[i]
				}
			}
		}
		m, err := Field(context.Background(), ds, nil)
		if err != nil {
			t.Fatal(err)
		}
		t.Logf("φ %.3f: correlated %+v", phi, m.CorrelatedNoise)
		warned := 0
		for _, eq := range m.Equations {
			if strings.Contains(eq.Warning, "is correlated over about") && strings.Contains(eq.Warning, "average the runs in blocks") {
				warned++
			}
		}
		if phi == 0 && (len(m.CorrelatedNoise) > 0 || warned > 0) {
			t.Errorf("white noise: correlated %+v, %d warnings", m.CorrelatedNoise, warned)
		}
		if phi > 0 && (len(m.CorrelatedNoise) != 2 || warned != 2) {
			t.Errorf("noise filtered at 2 Hz: correlated %+v, %d warnings, want both states", m.CorrelatedNoise, warned)
		}
	}
}
