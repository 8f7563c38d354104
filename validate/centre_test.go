package validate

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"basin.example/fit"
	"basin.example/ingest"
)

// TestCentreGrowth: a 4-state rig of two modes, (p, q) lightly damped or
// growing at rate g (p' = g p + 3 q, q' = -3 p + g q) and (r, s) decaying
// (r' = -0.1 r + 2 s, s' = -2 r - 0.1 s), logged 20 s at 100 Hz with 1%
// noise; the model is the fit that dropped g: (p, q) a centre. For the
// linear system the centre mode's |c|² changes at exactly 2g (modal
// decomposition, linear systems theory; from memory), so growth at
// g = +0.005 and +0.01 1/s must be told, and a decay (g = -0.01) or a
// true centre (g = 0) must not be called growth.
func TestCentreGrowth(t *testing.T) {
	const w = 3.0
	m := &fit.Model{States: []string{"p", "q", "r", "s"}, Equilibrium: []float64{0, 0, 0, 0},
		Noise: []float64{0.005, 0.005, 0.005, 0.005},
		Equations: []fit.Equation{
			{State: "p", Exponents: [][]int{{0, 1, 0, 0}}, Coefficients: []float64{w}},
			{State: "q", Exponents: [][]int{{1, 0, 0, 0}}, Coefficients: []float64{-w}},
			{State: "r", Exponents: [][]int{{0, 0, 1, 0}, {0, 0, 0, 1}}, Coefficients: []float64{-0.1, 2}},
			{State: "s", Exponents: [][]int{{0, 0, 1, 0}, {0, 0, 0, 1}}, Coefficients: []float64{-2, -0.1}},
		}}
	for _, tc := range []struct {
		g    float64
		grow bool
	}{{0.01, true}, {0.005, true}, {0, false}, {-0.01, false}} {
		t.Run(fmt.Sprint(tc.g), func(t *testing.T) {
			rng := rand.New(rand.NewPCG(11, 5))
			ds := &ingest.Dataset{}
			for k := 0; k < 6; k++ {
				a, b := 0.3+0.1*rng.Float64(), 1+rng.Float64()
				ph, ps := 2*math.Pi*rng.Float64(), 2*math.Pi*rng.Float64()
				run := ingest.Run{Name: fmt.Sprintf("r%d", k), X: make([][]float64, 4)}
				for i := 0; i <= 2000; i++ {
					tt := float64(i) * 0.01
					ea, eb := a*math.Exp(tc.g*tt), b*math.Exp(-0.1*tt)
					run.T = append(run.T, tt)
					for j, v := range []float64{ea * math.Cos(w*tt+ph), -ea * math.Sin(w*tt+ph), eb * math.Cos(2*tt+ps), -eb * math.Sin(2*tt+ps)} {
						run.X[j] = append(run.X[j], v+0.005*rng.NormFloat64())
					}
				}
				ds.Runs = append(ds.Runs, run)
			}
			why := centreGrowth(m, ds, 0.005)
			if (why != "") != tc.grow {
				t.Fatalf("g = %g: growth %v (%q), want %v", tc.g, why != "", why, tc.grow)
			}
			if tc.grow && !strings.Contains(why, "6 of the 6") {
				t.Errorf("g = %g: %s", tc.g, why)
			}
		})
	}
	// A system that is all centre is left to V's own trend.
	all := &fit.Model{States: []string{"p", "q"}, Equilibrium: []float64{0, 0}, Noise: []float64{0.005, 0.005},
		Equations: m.Equations[:2]}
	all.Equations = []fit.Equation{
		{State: "p", Exponents: [][]int{{0, 1}}, Coefficients: []float64{w}},
		{State: "q", Exponents: [][]int{{1, 0}}, Coefficients: []float64{-w}},
	}
	if why := centreGrowth(all, &ingest.Dataset{}, 0.005); why != "" {
		t.Errorf("all-centre model: %q", why)
	}
}
