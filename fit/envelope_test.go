package fit

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"
)

// TestLeverageFit: leverageFit's h is the hat matrix's diagonal,
// h_i = x_i'(X'X)^-1 x_i, for the fitted rows, and x'(X'X)^-1 x for rows
// it was not fitted on ([MontgomeryPeckVining], from memory), against
// gonum's QR (H = QQ' for the thin Q of X) and gonum's Solve. The column
// scaling leverageFit applies changes no h (a scaling of the columns
// leaves the hat matrix unchanged), and the columns it is given are a
// subset of the rows' entries. The tolerance: h is at most 1 and both
// are backward stable solves on a condition number below 1e3 here, so
// 1e-10 is far above their rounding.
func TestLeverageFit(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 0))
	const rows, p = 60, 5
	phi := make([]float64, rows*p)
	for k := range phi {
		phi[k] = rng.NormFloat64()
	}
	for r := 0; r < rows; r++ {
		phi[r*p] = 1 // a constant column, as the library's
		phi[r*p+3] *= 100
	}
	cols := []int{0, 1, 3, 4} // column 2 left out
	var fitted []int
	for r := 0; r < 40; r++ {
		fitted = append(fitted, r)
	}
	h, hmax, ok := leverageFit(phi, p, cols, fitted, func(int) bool { return true }, rows)
	if !ok {
		t.Fatal("leverage not defined on a well-conditioned design")
	}
	X := mat.NewDense(len(fitted), len(cols), nil)
	for a, r := range fitted {
		for b, k := range cols {
			X.Set(a, b, phi[r*p+k])
		}
	}
	var qr mat.QR
	qr.Factorize(X)
	var q mat.Dense
	qr.QTo(&q)
	var xtx mat.SymDense
	xtx.SymOuterK(1, X.T())
	want := math.Inf(-1)
	for r := 0; r < rows; r++ {
		ref := 0.0
		if r < 40 {
			for b := range cols {
				ref += q.At(r, b) * q.At(r, b)
			}
			want = math.Max(want, ref)
		} else {
			x := mat.NewVecDense(len(cols), nil)
			for b, k := range cols {
				x.SetVec(b, phi[r*p+k])
			}
			var s mat.VecDense
			if err := s.SolveVec(&xtx, x); err != nil {
				t.Fatal(err)
			}
			ref = mat.Dot(x, &s)
		}
		if !scalar.EqualWithinAbsOrRel(h[r], ref, 1e-10, 1e-10) {
			t.Errorf("row %d: h = %.15g, gonum %.15g", r, h[r], ref)
		}
	}
	if !scalar.EqualWithinAbsOrRel(hmax, want, 1e-10, 1e-10) {
		t.Errorf("largest fitted leverage %.15g, gonum %.15g", hmax, want)
	}
	// Too few fitted rows for the columns, and a zero column: not defined.
	if _, _, ok := leverageFit(phi, p, cols, fitted[:7], func(int) bool { return true }, rows); ok {
		t.Error("leverage defined on 7 rows for 4 columns")
	}
	zero := append([]float64(nil), phi...)
	for r := 0; r < rows; r++ {
		zero[r*p+4] = 0
	}
	if _, _, ok := leverageFit(zero, p, cols, fitted, func(int) bool { return true }, rows); ok {
		t.Error("leverage defined with a column zero on every row")
	}
}

// TestMisfitSpreadNamesRuns: a term outside the library that every run
// feels (the restoring force of a damped pendulum, -4 sin x, fitted with
// a library of degree 1: the truth is not linear, and runs of 1.2-2.5 rad
// see the difference sin x - x of up to 0.4) gives a lack-of-fit warning
// spread over most runs (no robust refit can fit most windows); it still
// names the runs that drive it (before, it named none: "in most runs"),
// and Misfit's reason names them too. The
// pendulum is [Khalil2002] §4.1's (a = 4, b = 0.8); that its field is
// outside a linear library is exact.
func TestMisfitSpreadNamesRuns(t *testing.T) {
	sys := system{name: "pendulum", states: []string{"theta", "omega"}, f: func(d, x []float64) {
		d[0] = x[1]
		d[1] = -4*math.Sin(x[0]) - 0.8*x[1]
	}}
	st := boxStarts(rand.New(rand.NewPCG(3, 0)), 12, []float64{1.2, -1}, []float64{2.5, 1})
	ds := simulate(sys, st, 10, 0.02, 4, 0.005, 7)
	m := mustFit(t, ds, &FieldOptions{Degree: 1, Bootstrap: -1})
	eq := m.Equations[1]
	t.Logf("d(omega)/dt: lack of fit %.3g (inside %.3g, %d outside), warning %q, misfit runs %v", eq.LackOfFit, eq.InsideLackOfFit, eq.OutsideWindows, eq.Warning, eq.MisfitRuns)
	if !strings.Contains(eq.Warning, "the measurement noise leaves") {
		t.Fatalf("no lack-of-fit warning on a linear model of a pendulum: %q", eq.Warning)
	}
	if len(eq.MisfitRuns) == 0 {
		t.Fatalf("the warning names no run: %q", eq.Warning)
	}
	for _, r := range eq.MisfitRuns {
		if !strings.Contains(eq.Warning, r) {
			t.Errorf("run %s of MisfitRuns not in the warning %q", r, eq.Warning)
		}
	}
	why := m.Misfit()
	if why == "" || !strings.Contains(why, eq.MisfitRuns[0]) {
		t.Errorf("Misfit() = %q, want one naming %s", why, eq.MisfitRuns[0])
	}
}
