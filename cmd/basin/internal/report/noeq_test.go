package report

import (
	"strings"
	"testing"

	"basin.example/fit"
)

// TestNoEquilibriumLineStill: without an equilibrium found in the box, a field
// that vanishes where the runs settle (x' = -x + d, d' = 0: a drive d
// read as a state, with a line of rest points x = d, every point of it
// an equilibrium; linear algebra, from memory) is not called a drift,
// while a state whose rate stays away from zero there (T' = 0.5 K/s, a
// temperature that keeps rising) is.
func TestNoEquilibriumLineStill(t *testing.T) {
	line := &fit.Model{States: []string{"x", "drive"}, Units: []string{"mm", "V"}, Spread: []float64{1, 1},
		Equations: []fit.Equation{
			{State: "x", Exponents: [][]int{{1, 0}, {0, 1}}, Coefficients: []float64{-1, 1}},
			{State: "drive"}}}
	got := noEquilibriumLine(line, []float64{0.5, 0.5})
	if !strings.Contains(got, "no isolated equilibrium") || !strings.Contains(got, "--inputs") || strings.Contains(got, "drifts") {
		t.Errorf("line of rest points: %q", got)
	}
	drift := &fit.Model{States: []string{"T"}, Units: []string{"K"}, Spread: []float64{2},
		Equations: []fit.Equation{{State: "T", Exponents: [][]int{{0}}, Coefficients: []float64{0.5}}}}
	if got := noEquilibriumLine(drift, []float64{20}); !strings.Contains(got, "d(T)/dt is 0.5 K/s there; a state that drifts") {
		t.Errorf("drift: %q", got)
	}
}
