package lyapunov

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
)

// TestNoiseBallContent checks the noise ball the search exempts from the
// decrease checks against the share of the measurement noise it holds.
// For one state the radius is 3σ: the two-sided 3σ share of a normal
// variable is 1 - 0.0027 ([AbramowitzStegun1964] table 26.1, from
// memory). For two states with equal noise |e|²/σ² is chi-square with 2
// degrees of freedom, whose CDF is 1 - exp(-x/2) (the Rayleigh law;
// common practice), so the radius is σ·sqrt(-2 ln 0.0027) = 3.4386σ
// exactly. For every case, Gaussian noise drawn here (200,000 vectors)
// must fall inside the ball with that share or more, and with equal noise
// not much more: the ball of 3|σ| (the norm over the states) held all but
// 1e-7 of it for five states, 6.7σ wide where 4.27σ holds 0.9973.
func TestNoiseBallContent(t *testing.T) {
	const draws = 200000
	// 4 standard errors of a share of 0.9973 over the draws.
	se4 := 4 * math.Sqrt(0.0027*0.9973/draws)
	for _, tc := range []struct {
		sigma []float64
		exact float64 // radius in units of the largest sigma; 0: none known
	}{
		{[]float64{0.05}, 3},
		{[]float64{0.02, 0.02}, math.Sqrt(-2 * math.Log(0.0027))},
		{[]float64{0.01, 0.02}, 0},
		{[]float64{0.1, 0.1, 0.1, 0.1, 0.1}, 0},
		{[]float64{0.102, 0.139, 0.0992, 0.162, 0.112}, 0},
		{[]float64{0.05, 0.05, 0.05, 0.05, 0.05, 0.05}, 0},
	} {
		n := len(tc.sigma)
		t.Run(fmt.Sprint(tc.sigma), func(t *testing.T) {
			d := chainZ(n).runs(unitBox(n), 6, 0.01, 1500, 5, 0, 1)
			// the checker's noise, as Certify passes it per state
			s := chainZ(n).system(0)
			copy(s.Noise, tc.sigma)
			ck, err := newChecker(t.Context(), d, s, (&Options{}).Defaults(), false)
			if err != nil {
				t.Fatal(err)
			}
			r := ck.r0
			mx := 0.0
			for _, v := range tc.sigma {
				mx = math.Max(mx, v)
			}
			if tc.exact > 0 && !scalar.EqualWithinRel(r, tc.exact*mx, 1e-4) {
				t.Errorf("radius %.6g, want %.6g (%.5g sigma)", r, tc.exact*mx, tc.exact)
			}
			rng := rand.New(rand.NewPCG(uint64(n), 9))
			in := 0
			for k := 0; k < draws; k++ {
				e2 := 0.0
				for _, sg := range tc.sigma {
					e := sg * rng.NormFloat64()
					e2 += e * e
				}
				if e2 <= r*r {
					in++
				}
			}
			share := float64(in) / draws
			equal := true
			for _, v := range tc.sigma {
				equal = equal && v == tc.sigma[0]
			}
			if share < noiseContent-se4 || (equal && share > noiseContent+se4) {
				t.Errorf("radius %.4g holds %.5f of the noise, want %.4f (± %.1e)", r, share, noiseContent, se4)
			}
			t.Logf("radius %.4g = %.3f max sigma, holds %.5f of the noise", r, r/mx, share)
		})
	}
}

// unitBox returns [-1, 1]^n.
func unitBox(n int) [][2]float64 {
	b := make([][2]float64, n)
	for j := range b {
		b[j] = [2]float64{-1, 1}
	}
	return b
}

// TestNoiseBallFillsData: a stable chain logged from starts within ±1
// with noise so large (σ = 0.3 in z) that the noise ball, 3.44σ = 1.03
// wide for two states (the chi-square quantile above), reaches the edge
// of the data: no level set can hold it inside the trust region, and the
// result must say that the ball is the reason, not only that no level
// was found.
func TestNoiseBallFillsData(t *testing.T) {
	sys := chainZ(2)
	d := sys.runs(unitBox(2), 20, 0.01, 1000, 5, 0, 4)
	s := sys.system(0.3)
	res, err := Certify(t.Context(), d, s, nil)
	if err != nil {
		t.Fatal(err)
	}
	if res.Outcome == Found {
		t.Fatalf("found a region of level %.3g with a noise ball of radius %.3g", res.Level, res.NoiseRadius)
	}
	if !strings.Contains(res.Detail, "nearest edge of the trust region") {
		t.Errorf("outcome %s, detail %q: does not say the noise ball fills the data", res.Outcome, res.Detail)
	}
	if !(res.BallShare >= 1) {
		t.Errorf("ball share %.3g, want at least 1 (radius %.3g)", res.BallShare, res.NoiseRadius)
	}
	t.Logf("%s (ball share %.3g): %s", res.Outcome, res.BallShare, res.Detail)
}
