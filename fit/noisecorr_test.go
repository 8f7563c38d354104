package fit

import (
	"context"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
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

// ar1Spread is the standard deviation of the lag-L fourth difference of
// unit AR(1) noise over √70 (the white-noise σ it gives): from the
// autocovariance φ^|k| ([BoxJenkins]), Var Σ c_a e[i+aL] = Σ_ab c_a c_b
// φ^(L|a-b|), c = (1, -4, 6, -4, 1).
func ar1Spread(phi float64, L int) float64 {
	c := []float64{1, -4, 6, -4, 1}
	v := 0.0
	for a := range c {
		for b := range c {
			v += c[a] * c[b] * math.Pow(phi, float64(L*abs(a-b)))
		}
	}
	return math.Sqrt(v / 70)
}

func abs(k int) int {
	if k < 0 {
		return -k
	}
	return k
}

// TestCorrelatedNoiseAR1: the robust spread of lag-L fourth differences
// of AR(1) noise follows the closed form from its autocovariance
// ([BoxJenkins]) at every lag, relative to lag 1, to 4% (the median of
// 16,000 differences has a relative standard error near 1.17/√16000 =
// 0.9%; neighbouring differences share samples, which widens it); and
// correlatedNoise finds the plateau: the noise's whole spread, at about
// its correlation length.
func TestCorrelatedNoiseAR1(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 5))
	for _, tc := range []struct {
		phi      float64
		flagged  bool
		lagRange [2]int // the plateau's lag
	}{
		{0, false, [2]int{1, 1}},
		{math.Exp(-2 * math.Pi * 20 / 200), false, [2]int{1, 16}},  // a 20 Hz filter at 200 Hz: 1.71
		{math.Exp(-2 * math.Pi * 20 / 1000), true, [2]int{16, 64}}, // at 1 kHz: 3.74
		{math.Exp(-2 * math.Pi * 5 / 1000), true, [2]int{64, 256}}, // 5 Hz at 1 kHz: 7.46
	} {
		runs := [][]float64{ar1(rng, 200000, tc.phi), ar1(rng, 200000, tc.phi)}
		s1 := lagNoise(runs, 1, 16000)
		checked := 0
		for L := 1; L <= 256; L *= 2 {
			got := lagNoise(runs, L, 16000) / s1
			want := ar1Spread(tc.phi, L) / ar1Spread(tc.phi, 1)
			if !scalar.EqualWithinRel(got, want, 0.04) {
				t.Errorf("φ %.3f, lag %d: spread ratio %.4g, the closed form %.4g", tc.phi, L, got, want)
			}
			checked++
		}
		if checked != 9 {
			t.Fatalf("%d lags checked", checked)
		}
		lag, ratio := correlatedNoise(runs, 16000)
		top := ar1Spread(tc.phi, 1024) / ar1Spread(tc.phi, 1)
		t.Logf("φ %.3f: lag %d, ratio %.3g (plateau %.3g)", tc.phi, lag, ratio, top)
		if (ratio >= noiseCorrRatio) != tc.flagged {
			t.Errorf("φ %.3f: ratio %.3g, flagged %v, want %v", tc.phi, ratio, ratio >= noiseCorrRatio, tc.flagged)
		}
		if !scalar.EqualWithinRel(ratio, top, 0.06) {
			t.Errorf("φ %.3f: ratio %.4g, the plateau of the closed form %.4g", tc.phi, ratio, top)
		}
		if lag < tc.lagRange[0] || lag > tc.lagRange[1] {
			t.Errorf("φ %.3f: plateau at lag %d, want %d..%d", tc.phi, lag, tc.lagRange[0], tc.lagRange[1])
		}
	}
}

// TestCorrelatedNoiseSignal: white noise on a signal that the longer
// lags resolve poorly (a damped oscillation of 100 to 400 samples a
// period, where the fourth difference of lag 64 is mostly signal) is
// not taken for correlated noise: the signal's growth speeds up from
// one doubling to the next and stops the walk.
func TestCorrelatedNoiseSignal(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 1))
	for _, period := range []float64{100, 200, 400} {
		var runs [][]float64
		for r := range 10 {
			x := make([]float64, 4000)
			a := 2 * (rng.Float64() - 0.5)
			for i := range x {
				ti := float64(i)
				x[i] = a*math.Exp(-ti/2000)*math.Cos(2*math.Pi*ti/period+float64(r)) + 0.01*rng.NormFloat64()
			}
			runs = append(runs, x)
		}
		lag, ratio := correlatedNoise(runs, 16000)
		t.Logf("period %g samples: lag %d, ratio %.3g", period, lag, ratio)
		if ratio >= noiseCorrRatio {
			t.Errorf("period %g samples: white noise taken for correlated (lag %d, ratio %.3g)", period, lag, ratio)
		}
	}
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
