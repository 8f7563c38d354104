package validate

import (
	"math"
	"testing"

	"basin.example/fit"
	"gonum.org/v1/gonum/floats/scalar"
)

// TestModelChecks: the true model of the damped oscillator has a small
// derivative and trajectory error on noiseless held-out runs and never
// departs; a model that blows up is counted, not crashed on.
func TestModelChecks(t *testing.T) {
	ds := simulate(t, damped, 0, 9)
	truth := &fit.Model{States: []string{"x", "v"}, Equations: []fit.Equation{
		{State: "x", Exponents: [][]int{{0, 1}}, Coefficients: []float64{1}},
		{State: "v", Exponents: [][]int{{1, 0}, {0, 1}}, Coefficients: []float64{-4, -0.6}},
	}}
	val := &fit.Validation{}
	modelChecks(truth, ds, val, (*Options)(nil).get())
	// Savitzky–Golay degree 2 over 11 samples at 50 Hz: truncation error
	// about (0.1 s)^2/6 |x'''|/|x'| ~ 0.7% for a 2 rad/s oscillation, so
	// 2% normalised; the simulation at rtol 1e-6 is within 1e-4 of the
	// truth simulated at 1e-9.
	for j, e := range val.DerivativeError {
		if !(e <= 0.02) {
			t.Errorf("state %d derivative error %g", j, e)
		}
	}
	for j, e := range val.TrajectoryError {
		if !(e <= 1e-4) {
			t.Errorf("state %d trajectory error %g", j, e)
		}
	}
	if val.Diverged != 0 || !scalar.EqualWithinAbs(val.DepartureTime, damped.dur, 1e-9) {
		t.Errorf("diverged %d, departure %g s", val.Diverged, val.DepartureTime)
	}
	// x' = 5 x^2 v^0 + ..., blows up from any positive start.
	blow := &fit.Model{States: []string{"x", "v"}, Equations: []fit.Equation{
		{State: "x", Exponents: [][]int{{2, 0}, {0, 0}}, Coefficients: []float64{5, 5}},
		{State: "v", Exponents: [][]int{{0, 1}}, Coefficients: []float64{1}},
	}}
	val = &fit.Validation{}
	modelChecks(blow, ds, val, (*Options)(nil).get())
	if val.Diverged != len(ds.Runs) || val.DepartureTime >= 1 {
		t.Errorf("blow-up: diverged %d of %d, departure %g", val.Diverged, len(ds.Runs), val.DepartureTime)
	}
	for _, e := range val.TrajectoryError {
		if math.IsNaN(e) || math.IsInf(e, 0) {
			t.Errorf("non-finite trajectory error %v", val.TrajectoryError)
		}
	}
}
