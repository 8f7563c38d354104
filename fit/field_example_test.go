package fit_test

import (
	"context"
	"fmt"

	"basin.example/fit"
	"basin.example/fit/poly"
	"basin.example/ingest"
)

// ExampleField fits a damped linear oscillator theta' = omega,
// omega' = -4 theta - 0.8 omega from six clean runs sampled at 100 Hz
// (RK4 with 20 substeps a sample).
func ExampleField() {
	ds := &ingest.Dataset{States: []ingest.Column{{Name: "theta", Unit: "rad"}, {Name: "omega", Unit: "rad/s"}}}
	for r, x0 := range [][2]float64{{1, 0}, {0, 1}, {-0.5, 0.5}, {0.8, -0.8}, {-1, -0.3}, {0.2, 1.2}} {
		run := ingest.Run{Name: fmt.Sprint("run", r), X: make([][]float64, 2)}
		x := []float64{x0[0], x0[1]}
		const h, sub = 0.01, 20
		for i := 0; i < 600; i++ {
			run.T = append(run.T, float64(i)*h)
			run.X[0] = append(run.X[0], x[0])
			run.X[1] = append(run.X[1], x[1])
			for s := 0; s < sub; s++ { // RK4 substeps
				f := func(x []float64) []float64 { return []float64{x[1], -4*x[0] - 0.8*x[1]} }
				d := h / sub
				k1 := f(x)
				k2 := f([]float64{x[0] + d/2*k1[0], x[1] + d/2*k1[1]})
				k3 := f([]float64{x[0] + d/2*k2[0], x[1] + d/2*k2[1]})
				k4 := f([]float64{x[0] + d*k3[0], x[1] + d*k3[1]})
				for j := range x {
					x[j] += d / 6 * (k1[j] + 2*k2[j] + 2*k3[j] + k4[j])
				}
			}
		}
		ds.Runs = append(ds.Runs, run)
	}
	m, err := fit.Field(context.Background(), ds, &fit.FieldOptions{Bootstrap: -1})
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, eq := range m.Equations {
		fmt.Printf("d(%s)/dt =", eq.State)
		for k, c := range eq.Coefficients {
			fmt.Printf(" %+.3f %s", c, poly.MonomialName(eq.Exponents[k], m.States))
		}
		fmt.Println()
	}
	fmt.Printf("%s, eigenvalues %.2f\n", m.Equilibria[0].Class, m.JacobianEigenvalues)
	// Output:
	// d(theta)/dt = +1.000 omega
	// d(omega)/dt = -4.000 theta -0.800 omega
	// stable focus, eigenvalues [[-0.40 -1.96] [-0.40 1.96]]
}
