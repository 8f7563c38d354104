package fit

import (
	"bytes"
	"context"
	"encoding/json"
	"math"
	"testing"

	"basin.example/fit/lyapunov"
	"basin.example/ingest"

	"gonum.org/v1/gonum/floats/scalar"
)

// TestCertifyConflictSaddle: an inverted pendulum's saddle (theta” =
// 9.8 theta - 0.5 omega; eigenvalues (-0.5 ± sqrt(0.25 + 39.2))/2, one
// positive: any mechanics text) has no V; the certificate says why in
// lp_conflict: the LP's proof (checked as a Farkas certificate in package
// lyapunov, [Schrijver1986]) with non-negative weights summing to 1, its
// points in the states' units, and the strongest one off the stable
// direction.
func TestCertifyConflictSaddle(t *testing.T) {
	saddle := &certSystem{states: []string{"theta", "omega"}, eq: []float64{0, 0}, eqs: []Equation{
		{State: "theta", Exponents: [][]int{{0, 1}}, Coefficients: []float64{1}},
		{State: "omega", Exponents: [][]int{{1, 0}, {0, 1}}, Coefficients: []float64{9.8, -0.5}},
	}, f: func(dst, x []float64) { dst[0] = x[1]; dst[1] = 9.8*x[0] - 0.5*x[1] }}
	ds := certRuns(saddle, [][2]float64{{-0.05, 0.05}, {-0.2, 0.2}}, 10, 0.005, 300, 2, 0, 5, true)
	if ds.Samples() == 0 {
		t.Fatal("no samples")
	}
	c, err := Certify(context.Background(), saddle.model([]float64{0.1, 0.5}), ds, nil)
	if err != nil {
		t.Fatal(err)
	}
	lc := c.LPConflict
	if c.Found || c.ReasonKind != ReasonUnstableLinearisation || lc == nil {
		t.Fatalf("found %v kind %s conflict %v", c.Found, c.ReasonKind, lc)
	}
	if lc.Kind != lyapunov.ConflictNegativeMargin || !(lc.Margin < 0) || lc.VDegree != 2 || lc.Rows == 0 || lc.LPRows < lc.Rows {
		t.Errorf("conflict %+v", *lc)
	}
	sum := 0.0
	for _, f := range lc.Families {
		if !(f.Share > 0 && f.Share <= 1) || f.Rows <= 0 {
			t.Errorf("family %+v", f)
		}
		sum += f.Share
	}
	if !scalar.EqualWithinAbs(sum, 1, 1e-9) {
		t.Errorf("shares sum to %g, want 1", sum)
	}
	if len(lc.Strongest) == 0 {
		t.Fatal("no strongest rows")
	}
	for _, r := range lc.Strongest {
		if !(r.Share > 0) || (r.Point != nil && len(r.Point) != 2) || (r.Sample != nil && (*r.Sample < 1 || r.Run == "")) {
			t.Errorf("row %+v", r)
		}
		if r.Sample != nil {
			run := ds.Runs[runIndex(t, ds.Runs, r.Run)]
			k := *r.Sample - 1
			if k >= len(run.T) || !scalar.EqualWithinAbs(run.X[0][k], r.Point[0], 1e-12) || !scalar.EqualWithinAbs(run.X[1][k], r.Point[1], 1e-12) {
				t.Errorf("row %+v is not the run's sample", r)
			}
		}
	}
	// The stable direction of A = [[0, 1], [9.8, -0.5]] is the
	// eigenvector of the negative eigenvalue, omega = lambda_s theta: V
	// can fall there, so the proof's weight lies off it.
	ls := (-0.5 - math.Sqrt(0.25+39.2)) / 2
	if p := lc.Strongest[0].Point; p != nil && math.Abs(p[1]-ls*p[0]) < 1e-3*math.Hypot(p[0], p[1]) {
		t.Errorf("strongest point %v on the stable direction", p)
	}
	// In certificate.json, additively.
	var buf bytes.Buffer
	if err := json.NewEncoder(&buf).Encode(c); err != nil {
		t.Fatal(err)
	}
	var doc map[string]json.RawMessage
	if err := json.Unmarshal(buf.Bytes(), &doc); err != nil {
		t.Fatal(err)
	}
	if _, ok := doc["lp_conflict"]; !ok {
		t.Error("certificate.json has no lp_conflict")
	}
	back, err := ReadCertificate(&buf)
	if err != nil || back.LPConflict == nil || back.LPConflict.Rows != lc.Rows {
		t.Errorf("read back: %v, %+v", err, back)
	}

	// A stable system has none.
	stable := *saddle
	stable.eqs = []Equation{
		{State: "theta", Exponents: [][]int{{0, 1}}, Coefficients: []float64{1}},
		{State: "omega", Exponents: [][]int{{1, 0}, {0, 1}}, Coefficients: []float64{-9.8, -0.5}},
	}
	stable.f = func(dst, x []float64) { dst[0] = x[1]; dst[1] = -9.8*x[0] - 0.5*x[1] }
	sd := certRuns(&stable, [][2]float64{{-0.2, 0.2}, {-0.5, 0.5}}, 10, 0.005, 1200, 4, 0, 5, false)
	c, err = Certify(context.Background(), stable.model([]float64{0.1, 0.5}), sd, nil)
	if err != nil || !c.Found || c.LPConflict != nil {
		t.Errorf("stable: err %v found %v conflict %+v (%s)", err, c.Found, c.LPConflict, c.Reason)
	}
}

func runIndex(t *testing.T, runs []ingest.Run, name string) int {
	t.Helper()
	for i := range runs {
		if runs[i].Name == name {
			return i
		}
	}
	t.Fatalf("no run %q", name)
	return -1
}
