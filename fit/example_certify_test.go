package fit_test

import (
	"context"
	"fmt"
	"math"

	"basin.example/fit"
	"basin.example/ingest"
)

// ExampleCertify certifies a damped linear oscillator, theta' = omega,
// omega' = -4 theta - 0.8 omega, from eight exactly recorded runs and the
// exact model (as fit.Field would return it).
func ExampleCertify() {
	ds := &ingest.Dataset{States: []ingest.Column{{Name: "theta", Unit: "rad"}, {Name: "omega", Unit: "rad/s"}}}
	for r := 0; r < 8; r++ {
		a := 2 * math.Pi * float64(r) / 8
		x := []float64{math.Cos(a), 2 * math.Sin(a)}
		run := ingest.Run{Name: fmt.Sprintf("run%d", r), X: make([][]float64, 2)}
		for i := 0; i < 1500; i++ {
			run.T = append(run.T, 0.01*float64(i))
			run.X[0] = append(run.X[0], x[0])
			run.X[1] = append(run.X[1], x[1])
			for s := 0; s < 10; s++ { // Euler at 1 ms is enough here
				d0, d1 := x[1], -4*x[0]-0.8*x[1]
				x[0] += 0.001 * d0
				x[1] += 0.001 * d1
			}
		}
		ds.Runs = append(ds.Runs, run)
	}
	m := &fit.Model{
		Format: fit.ModelFormat, States: []string{"theta", "omega"}, Units: []string{"rad", "rad/s"},
		Equations: []fit.Equation{
			{State: "theta", Exponents: [][]int{{0, 1}}, Coefficients: []float64{1}},
			{State: "omega", Exponents: [][]int{{1, 0}, {0, 1}}, Coefficients: []float64{-4, -0.8}},
		},
		Equilibrium: []float64{0, 0},
		Spread:      []float64{0.5, 1},
	}
	c, err := fit.Certify(context.Background(), m, ds, nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println("found:", c.Found)
	fmt.Println("verdict:", c.Verdict, "(until validated on held-out runs)")
	fmt.Println("V terms:", len(c.V.Coefficients))
	fmt.Println("positive level:", c.Level > 0)
	fmt.Println("empirical:", c.Empirical)
	// Output:
	// found: true
	// verdict: inconclusive (until validated on held-out runs)
	// V terms: 3
	// positive level: true
	// empirical: true
}
