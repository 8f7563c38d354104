package validate_test

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"

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

// Runs of the two-well oscillator x” + 0.5 x' - x + x³ = 0 settle at
// x = +1 or x = -1: EvaluateAll gives a certificate for each well, the
// one more runs settle at first.
func ExampleEvaluateAll() {
	ds := &ingest.Dataset{States: []ingest.Column{{Name: "x"}, {Name: "v"}}}
	rng := rand.New(rand.NewPCG(2, 0))
	f := func(x []float64) []float64 { return []float64{x[1], x[0] - 0.5*x[1] - x[0]*x[0]*x[0]} }
	for r := 0; r < 24; r++ {
		x := []float64{4*rng.Float64() - 2, 4*rng.Float64() - 2}
		run := ingest.Run{Name: fmt.Sprintf("run%02d", r), X: [][]float64{nil, nil}}
		const h = 0.02
		for i := 0; i < 800; i++ {
			run.T = append(run.T, float64(i)*h)
			for j := range x {
				run.X[j] = append(run.X[j], x[j]+0.002*rng.NormFloat64())
			}
			for k := 0; k < 4; k++ { // classical Runge-Kutta, h/4
				k1 := f(x)
				k2 := f([]float64{x[0] + h/8*k1[0], x[1] + h/8*k1[1]})
				k3 := f([]float64{x[0] + h/8*k2[0], x[1] + h/8*k2[1]})
				k4 := f([]float64{x[0] + h/4*k3[0], x[1] + h/4*k3[1]})
				for j := range x {
					x[j] += h / 24 * (k1[j] + 2*k2[j] + 2*k3[j] + k4[j])
				}
			}
		}
		ds.Runs = append(ds.Runs, run)
	}
	all, _, err := validate.EvaluateAll(context.Background(), ds, &validate.Options{Field: &fit.FieldOptions{Bootstrap: -1}})
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, r := range all {
		fmt.Printf("x = %+.0f: %d runs settle there\n", r.Certificate.Equilibrium[0], r.Rest.Runs)
	}
	// Output:
	// x = -1: 14 runs settle there
	// x = +1: 10 runs settle there
}
