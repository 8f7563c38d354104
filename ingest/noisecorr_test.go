package ingest

import (
	"fmt"
	"math"
	"math/rand/v2"
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
		lag, ratio := CorrelatedNoise(runs, 16000)
		top := ar1Spread(tc.phi, 1024) / ar1Spread(tc.phi, 1)
		t.Logf("φ %.3f: lag %d, ratio %.3g (plateau %.3g)", tc.phi, lag, ratio, top)
		if (ratio >= CorrelatedRatio) != tc.flagged {
			t.Errorf("φ %.3f: ratio %.3g, flagged %v, want %v", tc.phi, ratio, ratio >= CorrelatedRatio, tc.flagged)
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
		lag, ratio := CorrelatedNoise(runs, 16000)
		t.Logf("period %g samples: lag %d, ratio %.3g", period, lag, ratio)
		if ratio >= CorrelatedRatio {
			t.Errorf("period %g samples: white noise taken for correlated (lag %d, ratio %.3g)", period, lag, ratio)
		}
	}
}

// TestSummariseCorrelated: Summarise reports, per state, the correlation
// CorrelatedNoise finds: noise filtered at 20 Hz on a 1 kHz log
// (AR(1), φ = e^(-2π·20/1000), plateau 3.74 times) counts as correlated
// over 16 to 64 samples; white noise on the same signal does not.
func TestSummariseCorrelated(t *testing.T) {
	rng := rand.New(rand.NewPCG(12, 3))
	for _, phi := range []float64{0, math.Exp(-2 * math.Pi * 20 / 1000)} {
		ds := &Dataset{States: []Column{{Name: "x"}}}
		for r := range 6 {
			n := 5000
			tt, x := make([]float64, n), ar1(rng, n, phi)
			for i := range tt {
				tt[i] = float64(i) / 1000
				x[i] = 0.01*x[i] + math.Exp(-tt[i]/2)*math.Cos(2*tt[i]+float64(r))
			}
			ds.Runs = append(ds.Runs, Run{Name: fmt.Sprint(r), T: tt, X: [][]float64{x}})
		}
		st := Summarise(ds).States[0]
		t.Logf("φ %.3f: lag %d, ratio %.3g", phi, st.NoiseLag, st.NoiseRatio)
		if got := st.NoiseRatio >= CorrelatedRatio; got != (phi > 0) {
			t.Errorf("φ %.3f: ratio %.3g, correlated %v", phi, st.NoiseRatio, got)
		}
		if phi > 0 && (st.NoiseLag < 16 || st.NoiseLag > 64) {
			t.Errorf("φ %.3f: lag %d, want 16..64", phi, st.NoiseLag)
		}
	}
}
