package fit

import (
	"context"
	"testing"
)

// TestCertifyCollinear: samples on the line x2 = 2·x1 make the library
// {1, x1, x2} collinear (its columns are dependent; exact), so leverage is
// undefined: a verdict with the degenerate trust region's kind, never a
// certificate.
func TestCertifyCollinear(t *testing.T) {
	ds := certRuns(vdpReverse, [][2]float64{{-1, 1}, {-1, 1}}, 6, 0.01, 300, 5, 0, 4, false)
	for i := range ds.Runs {
		for k := range ds.Runs[i].X[1] {
			ds.Runs[i].X[1][k] = 2 * ds.Runs[i].X[0][k]
		}
	}
	sys := &certSystem{states: []string{"x1", "x2"}, eq: []float64{0, 0}, eqs: []Equation{
		{State: "x1", Exponents: [][]int{{1, 0}}, Coefficients: []float64{-1}},
		{State: "x2", Exponents: [][]int{{0, 1}}, Coefficients: []float64{-1}},
	}}
	c, err := Certify(context.Background(), sys.model([]float64{1, 1}), ds, nil)
	if err != nil {
		t.Fatal(err)
	}
	if c.Found || c.ReasonKind != ReasonTrustDegenerate || c.Verdict != Inconclusive {
		t.Errorf("found %v kind %q verdict %s: %s", c.Found, c.ReasonKind, c.Verdict, c.Reason)
	}
	t.Log(c.Reason)
}
