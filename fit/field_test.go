package fit

import (
	"context"
	"testing"
)

func lorenzStarts() [][]float64 {
	return [][]float64{{-8, 7, 27}, {1, 1, 1}, {10, -5, 30}, {-3, -6, 15}, {5, 10, 20}, {0.5, -2, 35}}
}

func TestLorenzScratch(t *testing.T) {
	for _, noise := range []float64{0, 0.01} {
		for _, meth := range []string{DerivFornberg, DerivSavitzkyGolay, DerivIntegral} {
			ds := simulate(lorenz, lorenzStarts(), 5, 0.002, 4, noise, 1)
			m, err := Field(context.Background(), ds, &FieldOptions{Degree: 2, Derivative: meth})
			if err != nil {
				t.Fatal(err)
			}
			sup, rel := compare(m, lorenz)
			t.Logf("noise %g %s: support %v rel %.2e basis %s cond %.2g tau %g lam %g win %v", noise, meth, sup, rel, m.Basis, m.Condition, m.Threshold, m.Ridge, m.Window)
			for _, e := range m.Equations {
				t.Logf("  %s %v %v", e.State, e.Exponents, e.Coefficients)
			}
			t.Logf("  eq %v eig %v", m.Equilibrium, m.JacobianEigenvalues)
		}
	}
}
