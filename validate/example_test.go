package validate_test

import (
	"fmt"
	"math"

	"basin.example/fit"
	"basin.example/fit/poly"
	"basin.example/ingest"
	"basin.example/validate"
)

// With 1000 decorrelated samples and the 6 decision variables of a
// quadratic V in 3 states, a new sample violates the decrease condition
// with probability at most 2.5%, with confidence 1 - 1e-6.
func ExampleViolationBound() {
	eps := validate.ViolationBound(1000, 6, 1e-6)
	fmt.Printf("%.4f\n", eps)
	// Output: 0.0252
}

// Screening a run against a hand-made certificate V = z0^2 + z1^2 <= 1:
// a run that spirals out rises, leaves and does not settle.
func ExampleScreener() {
	cert := &fit.Certificate{States: []string{"a", "b"}, Equilibrium: []float64{0, 0}, Scale: []float64{1, 1},
		V:     poly.Poly{Exponents: [][]int{{2, 0}, {0, 2}}, Coefficients: []float64{1, 1}},
		Level: 1, NoiseRadius: 0.01, Tolerance: 1e-4}
	run := &ingest.Run{Name: "out.csv", X: [][]float64{nil, nil}}
	for i := 0; i < 300; i++ {
		t := float64(i) * 0.01
		r := 0.5 * math.Exp(0.3*t)
		run.T = append(run.T, t)
		run.X[0] = append(run.X[0], r*math.Cos(2*t))
		run.X[1] = append(run.X[1], r*math.Sin(2*t))
	}
	s := validate.NewScreener(cert, nil)
	var res validate.RunScreen
	s.Screen(&res, "out.csv", run)
	for _, f := range res.Flags {
		fmt.Printf("%s at %.2f s\n", f.Kind, f.Time)
	}
	// Output:
	// rises at 0.01 s
	// leaves at 2.32 s
	// unsettled at 2.99 s
}
