package fit

import (
	"context"
	"testing"

	"basin.example/fit/lyapunov"
	"basin.example/ingest"
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

// TestCertifyReasonKinds: each way of finding no V has its own kind,
// decided by the search's typed outcome, never by the reason's text;
// every outcome of the search maps to a kind.
func TestCertifyReasonKinds(t *testing.T) {
	lin := func(a, b, c, d float64) []Equation {
		return []Equation{
			{State: "x1", Exponents: [][]int{{1, 0}, {0, 1}}, Coefficients: []float64{a, b}},
			{State: "x2", Exponents: [][]int{{1, 0}, {0, 1}}, Coefficients: []float64{c, d}},
		}
	}
	stable := &certSystem{states: []string{"x1", "x2"}, eq: []float64{0, 0}, eqs: lin(0, 1, -2, -3),
		f: func(dst, x []float64) { dst[0] = x[1]; dst[1] = -2*x[0] - 3*x[1] }}
	ds := certRuns(stable, [][2]float64{{-1, 1}, {-1, 1}}, 6, 0.01, 300, 5, 0, 4, false)
	few := certRuns(stable, [][2]float64{{-1, 1}, {-1, 1}}, 2, 0.01, 100, 5, 0, 4, false)
	for _, tc := range []struct {
		name   string
		sys    *certSystem
		ds     *ingest.Dataset
		degree int
		want   ReasonKind
		contra bool
	}{
		// Eigenvalue +0.5 (a diagonal A; exact).
		{"unstable", &certSystem{states: stable.states, eq: []float64{0, 0}, eqs: lin(0.5, 0, 0, -1)}, ds, 2, ReasonUnstableLinearisation, true},
		// 2 runs of 21 samples against 3·42 for the 42 terms of degree 2..8
		// in two states.
		{"too few for degree 8", stable, few, 8, ReasonTooFewSamples, false},
		// The model's equilibrium (5, 5) lies far outside the runs' box.
		{"outside", &certSystem{states: stable.states, eq: []float64{5, 5}, eqs: []Equation{
			{State: "x1", Exponents: [][]int{{0, 0}, {1, 0}}, Coefficients: []float64{5, -1}},
			{State: "x2", Exponents: [][]int{{0, 0}, {0, 1}}, Coefficients: []float64{5, -1}},
		}}, ds, 2, ReasonOutsideData, false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if tc.ds.Samples() == 0 {
				t.Fatal("no samples")
			}
			c, err := Certify(context.Background(), tc.sys.model([]float64{1, 1}), tc.ds, &CertifyOptions{Degree: tc.degree})
			if err != nil {
				t.Fatal(err)
			}
			if c.Found || c.ReasonKind != tc.want || c.Contradicted != tc.contra || c.Verdict != Inconclusive {
				t.Errorf("found %v kind %q contradicted %v: %s", c.Found, c.ReasonKind, c.Contradicted, c.Reason)
			}
		})
	}
	for _, o := range []lyapunov.Outcome{lyapunov.Found, lyapunov.EigenFailed, lyapunov.Unstable, lyapunov.TrustDegenerate,
		lyapunov.TooFewSamples, lyapunov.OutsideTrust, lyapunov.LyapunovSingular, lyapunov.LPInfeasible,
		lyapunov.LPFailed, lyapunov.NoLevel, lyapunov.NoBound} {
		if reasonKinds[o] == "" {
			t.Errorf("outcome %q has no reason kind", o)
		}
	}
}
