package lp_test

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/floats/scalar"
	gonumlp "gonum.org/v1/gonum/optimize/convex/lp"

	"basin.example/fit/lp"
	"basin.example/fit/lp/internal/certlp"
)

// dualOnly asks SolveCuts for the dual simplex with no fallback.
func dualOnly(initial, batch int) *lp.CutOptions {
	return &lp.CutOptions{Method: lp.DualSimplex, Initial: initial, Batch: batch}
}

// TestDualTextbook solves known LPs with the dual simplex, once with every
// row in the first restricted problem and once adding one row per round
// (each round warm-started from the last basis). A vertex method gives
// the optimum to rounding error; 1e-10 leaves room for the refinement of
// x = B⁻¹b.
func TestDualTextbook(t *testing.T) {
	inf := math.Inf(1)
	for _, tc := range []struct {
		name string
		p    lp.Problem
		obj  float64
		x, y []float64 // y: row multipliers, nil if not asserted
	}{
		{
			// [Chvatal1983] ch. 2, first example (from memory; verified
			// there by vertex enumeration).
			name: "Chvatal ch.2",
			p: lp.Problem{C: []float64{-5, -4, -3},
				G: []float64{2, 3, 1, 4, 1, 2, 3, 4, 2}, H: []float64{5, 11, 8}, Lower: zeros(3)},
			obj: -13, x: []float64{2, 0, 1}, y: []float64{1, 0, 1},
		},
		{
			// [HillierLieberman] §3.1, Wyndor Glass (optimum and shadow
			// prices from memory).
			name: "Wyndor Glass",
			p: lp.Problem{C: []float64{-3, -5},
				G: []float64{1, 0, 0, 2, 3, 2}, H: []float64{4, 12, 18}, Lower: zeros(2)},
			obj: -36, x: []float64{2, 6}, y: []float64{0, 1.5, 1},
		},
		{
			// [Chvatal1983] ch. 3, the degenerate example on which the
			// largest-coefficient rule cycles (from memory; [Beale1955]).
			// No upper bounds: the dual simplex starts from artificial ones.
			name: "Chvatal ch.3 cycling",
			p: lp.Problem{C: []float64{-10, 57, 9, 24},
				G: []float64{0.5, -5.5, -2.5, 9, 0.5, -1.5, -0.5, 1, 1, 0, 0, 0},
				H: []float64{0, 0, 1}, Lower: zeros(4)},
			obj: -1, x: []float64{1, 0, 1, 0},
		},
		{
			// [Beale1955], the classic cycling example (from memory).
			name: "Beale 1955",
			p: lp.Problem{C: []float64{-0.75, 20, -0.5, 6},
				G: []float64{0.25, -8, -1, 9, 0.5, -12, -0.5, 3, 0, 0, 1, 0},
				H: []float64{0, 0, 1}, Lower: zeros(4)},
			obj: -1.25, x: []float64{1, 0, 1, 0},
		},
		{
			// [KleeMinty1972], the cube of dimension 3 (from memory:
			// max 100x1 + 10x2 + x3 = 10^4 at (0, 0, 10^4); gonum's
			// lp.Simplex below agrees).
			name: "Klee-Minty 3",
			p: lp.Problem{C: []float64{-100, -10, -1},
				G: []float64{1, 0, 0, 20, 1, 0, 200, 20, 1}, H: []float64{1, 100, 10000}, Lower: zeros(3)},
			obj: -10000, x: []float64{0, 0, 10000},
		},
		{
			// Chvátal's first example with x >= 0 as rows and the
			// unknowns free: every start bound is artificial.
			name: "Chvatal ch.2, bounds as rows",
			p: lp.Problem{C: []float64{-5, -4, -3},
				G: []float64{2, 3, 1, 4, 1, 2, 3, 4, 2, -1, 0, 0, 0, -1, 0, 0, 0, -1},
				H: []float64{5, 11, 8, 0, 0, 0}},
			obj: -13, x: []float64{2, 0, 1}, y: []float64{1, 0, 1, 0, 3, 0},
		},
		{
			// A box corner, by hand: min x1 - 2x2 on [-1, 1] x [-1, 3]
			// is -7 at (-1, 3), with no rows binding (the row is slack).
			name: "box corner",
			p: lp.Problem{C: []float64{1, -2}, G: []float64{1, 1}, H: []float64{10},
				Lower: []float64{-1, -1}, Upper: []float64{1, 3}},
			obj: -7, x: []float64{-1, 3}, y: []float64{0},
		},
		{
			// Degenerate by construction, by hand: four rows through the
			// optimum (1, 1) of max x1 + x2 (x1 <= 1, x2 <= 1, x1 + x2 <= 2,
			// 2x1 + x2 <= 3), one of them repeated.
			name: "degenerate vertex",
			p: lp.Problem{C: []float64{-1, -1},
				G: []float64{1, 0, 0, 1, 1, 1, 2, 1, 1, 1}, H: []float64{1, 1, 2, 3, 2},
				Lower: []float64{-inf, -inf}, Upper: []float64{inf, inf}},
			obj: -2, x: []float64{1, 1},
		},
	} {
		// Cross-check the optimum with gonum's lp.Simplex where its
		// standard form applies (every unknown with a finite lower bound
		// or free), an independent implementation.
		if tc.p.Lower != nil && tc.p.Upper == nil {
			c, a, b, off := standardForm(&lp.Problem{C: tc.p.C, G: tc.p.G, H: tc.p.H,
				Lower: tc.p.Lower, Upper: []float64{inf, inf, inf, inf}[:len(tc.p.C)]})
			want, _, err := gonumlp.Simplex(c, a, b, 1e-10, nil)
			if err != nil || !scalar.EqualWithinAbsOrRel(want+off, tc.obj, 1e-9, 1e-9) {
				t.Errorf("%s: gonum lp.Simplex gives %g (%v), table %g", tc.name, want+off, err, tc.obj)
			}
		}
		for _, o := range []*lp.CutOptions{dualOnly(len(tc.p.H), 1), dualOnly(1, 1)} {
			t.Run(fmt.Sprintf("%s/initial %d", tc.name, o.Initial), func(t *testing.T) {
				r, err := lp.SolveCuts(tc.p.C, lp.DenseRows{G: tc.p.G, H: tc.p.H}, tc.p.Lower, tc.p.Upper, o)
				if err != nil {
					t.Fatal(err)
				}
				if r.Status != lp.Optimal || r.Method != lp.DualSimplex {
					t.Fatalf("status %v by %v", r.Status, r.Method)
				}
				const tol = 1e-10
				if !scalar.EqualWithinAbsOrRel(r.Objective, tc.obj, tol, tol) {
					t.Errorf("objective %.15g, want %g", r.Objective, tc.obj)
				}
				if !floats.EqualApprox(r.X, tc.x, tol) {
					t.Errorf("x = %.15g, want %g", r.X, tc.x)
				}
				if tc.y != nil && !floats.EqualApprox(r.Z, tc.y, tol) {
					t.Errorf("dual = %.15g, want %g", r.Z, tc.y)
				}
				checkKKT(t, &tc.p, r, 1e-12)
			})
		}
	}
}

// TestDualMatchesInteriorPoint: on generated LPs the dual simplex (warm
// started across rounds) and the interior point (cold, tolerance 1e-11)
// reach the same optimum to 1e-9 relative, the agreement asked of the
// benchmark against HiGHS. Rows count as violated above 1e-10 relative
// (the default 1e-7 lets either loop stop with the optimum off by about
// that much); the interior point's own error is about its tolerance.
func TestDualMatchesInteriorPoint(t *testing.T) {
	const rowTol = 1e-10
	ipm := &lp.CutOptions{Method: lp.InteriorPoint, Solve: &lp.Options{Tol: 1e-11}, Tol: rowTol}
	rng := rand.New(rand.NewPCG(21, 0))
	type gen struct {
		name            string
		c, lower, upper []float64
		rows            lp.Rows
		p               *lp.Problem // for the KKT check, when dense
	}
	var cases []gen
	for _, sz := range [][2]int{{2, 500}, {5, 3000}, {12, 20000}, {40, 5000}} {
		p := randomFeasible(rng, sz[0], sz[1])
		cases = append(cases, gen{fmt.Sprintf("random %dx%d", sz[1], sz[0]), p.C, p.Lower, p.Upper, lp.DenseRows{G: p.G, H: p.H}, p})
	}
	for _, cs := range []certlp.Case{
		{N: 2, D: 2, Samples: 3000, Box: 2, F: certlp.Duffing2},
		{N: 2, D: 4, Samples: 3000, Box: 2, F: certlp.Duffing2},
		{N: 3, D: 4, Samples: 2000, Box: 1, F: certlp.Poly3},
		{N: 6, D: 2, Samples: 2000, Box: 1, F: certlp.Chain6},
	} {
		c := cs.LP()
		obj, lo, up := c.Bounds()
		cases = append(cases, gen{"certificate " + cs.Name(), obj, lo, up, c, nil})
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			d, err := lp.SolveCuts(tc.c, tc.rows, tc.lower, tc.upper, &lp.CutOptions{Method: lp.DualSimplex, Tol: rowTol})
			if err != nil {
				t.Fatal(err)
			}
			i, err := lp.SolveCuts(tc.c, tc.rows, tc.lower, tc.upper, ipm)
			if err != nil {
				t.Fatal(err)
			}
			if d.Method != lp.DualSimplex || i.Method != lp.InteriorPoint {
				t.Fatalf("methods %v, %v", d.Method, i.Method)
			}
			if !scalar.EqualWithinAbsOrRel(d.Objective, i.Objective, 1e-9, 1e-9) {
				t.Errorf("dual simplex %.15g, interior point %.15g", d.Objective, i.Objective)
			}
			if tc.p != nil {
				checkKKT(t, tc.p, d, 1e-9)
			}
			t.Logf("dual simplex: %d rounds, %d rows, %d pivots; interior point: %d rounds, %d rows",
				d.Rounds, len(d.Active), d.Iterations, i.Rounds, len(i.Active))
		})
	}
}

// TestDualInfeasibleUnbounded: the dual simplex reports infeasible LPs
// with a Farkas certificate and unbounded ones with a ray, both checked
// against all rows.
func TestDualInfeasibleUnbounded(t *testing.T) {
	rng := rand.New(rand.NewPCG(22, 0))
	inf := math.Inf(1)
	for _, tc := range []struct {
		name string
		p    *lp.Problem
	}{
		{"x1+x2<=-1, x in [0,1]^2", &lp.Problem{C: []float64{1, 1}, G: []float64{1, 1}, H: []float64{-1},
			Lower: zeros(2), Upper: []float64{1, 1}}},
		{"x1+x2<=-1, x>=0", &lp.Problem{C: []float64{1, 1}, G: []float64{1, 1}, H: []float64{-1}, Lower: zeros(2)}},
		{"lower above upper", &lp.Problem{C: []float64{1, 0}, Lower: []float64{3, -inf}, Upper: []float64{2, inf}}},
		{"row against bounds", &lp.Problem{C: []float64{0, 0}, G: []float64{1, 1}, H: []float64{0.5},
			Lower: []float64{1, 0}, Upper: []float64{2, 1}}},
		{"random 400x30", infeasibleRandom(rng, 30, 400)},
		{"random 3000x10", infeasibleRandom(rng, 10, 3000)},
	} {
		t.Run("infeasible "+tc.name, func(t *testing.T) {
			r, err := lp.SolveCuts(tc.p.C, lp.DenseRows{G: tc.p.G, H: tc.p.H}, tc.p.Lower, tc.p.Upper, dualOnly(0, 0))
			if !errors.Is(err, lp.ErrInfeasible) || r == nil || r.Status != lp.Infeasible || r.Method != lp.DualSimplex {
				t.Fatalf("got %v, want infeasible from the dual simplex", err)
			}
			// A certificate from a vertex: exact up to rounding.
			checkFarkas(t, tc.p, r.Farkas, 1e-9)
		})
	}
	for _, tc := range []struct {
		name string
		p    *lp.Problem
	}{
		{"min -x1, x >= 0, x1 - x2 <= 1", &lp.Problem{C: []float64{-1, 0}, G: []float64{1, -1}, H: []float64{1}, Lower: zeros(2)}},
		{"random 3000x10", unboundedRandom(rng, 10, 3000)},
		{"random 500x4", unboundedRandom(rng, 4, 500)},
	} {
		t.Run("unbounded "+tc.name, func(t *testing.T) {
			r, err := lp.SolveCuts(tc.p.C, lp.DenseRows{G: tc.p.G, H: tc.p.H}, tc.p.Lower, tc.p.Upper, dualOnly(0, 0))
			if !errors.Is(err, lp.ErrUnbounded) || r == nil || r.Status != lp.Unbounded || r.Method != lp.DualSimplex {
				t.Fatalf("got %v, want unbounded from the dual simplex", err)
			}
			checkRay(t, tc.p, r.Ray, 1e-9)
		})
	}
}

// TestDualBadInput: NaN or misplaced infinities give ErrInvalid from the
// dual simplex loop as from Solve, whether the bad row is in the first
// restricted problem or only met in a pass; a row with h = +Inf is no
// constraint.
func TestDualBadInput(t *testing.T) {
	nan, inf := math.NaN(), math.Inf(1)
	for _, tc := range []struct {
		name    string
		p       *lp.Problem
		initial int
	}{
		{"NaN in G, first rows", &lp.Problem{C: []float64{1}, G: []float64{nan}, H: []float64{1}}, 1},
		{"NaN in H, met in a pass", &lp.Problem{C: []float64{-1}, G: []float64{1, 1, 1}, H: []float64{nan, 3, 2}}, 1},
		// Initial 1 of 3 rows starts with row 1 (x <= 3); row 0 is met in the first pass.
		{"NaN in G, met in a pass", &lp.Problem{C: []float64{-1}, G: []float64{nan, 1, 1}, H: []float64{1, 3, 2}}, 1},
		{"NaN in C", &lp.Problem{C: []float64{nan}}, 0},
		{"-Inf in H", &lp.Problem{C: []float64{1}, G: []float64{1}, H: []float64{-inf}}, 1},
		{"+Inf lower bound", &lp.Problem{C: []float64{1}, Lower: []float64{inf}}, 0},
		{"-Inf upper bound", &lp.Problem{C: []float64{1}, Upper: []float64{-inf}}, 0},
		{"Inf in G, met in a pass", &lp.Problem{C: []float64{-1}, G: []float64{-inf, 1, 1}, H: []float64{1, 3, 2}}, 1},
	} {
		t.Run(tc.name, func(t *testing.T) {
			r, err := lp.SolveCuts(tc.p.C, lp.DenseRows{G: tc.p.G, H: tc.p.H}, tc.p.Lower, tc.p.Upper, dualOnly(tc.initial, 1))
			if !errors.Is(err, lp.ErrInvalid) || r != nil {
				t.Fatalf("got %v, %v; want ErrInvalid", r, err)
			}
		})
	}
	r, err := lp.SolveCuts([]float64{-1}, lp.DenseRows{G: []float64{1, 1}, H: []float64{inf, 2}}, nil, nil, dualOnly(0, 0))
	if err != nil || !scalar.EqualWithinAbs(r.X[0], 2, 1e-12) || r.Z[0] != 0 || r.Method != lp.DualSimplex {
		t.Errorf("h = +Inf row: %v %v", r, err)
	}
}

// degenerateRandom is a random LP built to be degenerate: every row
// passes through x0 (so x0 is a vertex of many more than n tight rows),
// some rows repeat, and the objective is a non-negative combination of
// a few rows' normals, so the optimum is x0 with several optimal bases
// (by construction: c = -sum y_i g_i with y >= 0 on rows tight at x0).
func degenerateRandom(rng *rand.Rand, n, m int) *lp.Problem {
	x0 := make([]float64, n)
	for j := range x0 {
		x0[j] = rng.NormFloat64()
	}
	p := &lp.Problem{C: make([]float64, n), Lower: make([]float64, n), Upper: make([]float64, n)}
	for j := range p.Lower {
		p.Lower[j], p.Upper[j] = x0[j]-2, x0[j]+2
	}
	for i := 0; i < m; i++ {
		g := make([]float64, n)
		if i > 0 && rng.IntN(5) == 0 { // a repeated row
			copy(g, p.G[(i-1)*n:i*n])
		} else {
			for j := range g {
				g[j] = rng.NormFloat64()
			}
		}
		p.G = append(p.G, g...)
		p.H = append(p.H, floats.Dot(g, x0))
		if i < 2*n && rng.IntN(2) == 0 {
			floats.AddScaled(p.C, -rng.Float64(), g)
		}
	}
	return p
}

// TestDualDegenerate: on degenerate LPs (many rows tight at the optimum,
// repeated rows, several optimal bases; and a zero objective, where every
// feasible point is optimal) the dual simplex ends at the optimum the
// construction gives, c'x0, and passes the KKT check.
func TestDualDegenerate(t *testing.T) {
	rng := rand.New(rand.NewPCG(23, 0))
	for _, sz := range [][2]int{{3, 200}, {10, 2000}, {30, 3000}} {
		p := degenerateRandom(rng, sz[0], sz[1])
		// The optimum: x0 is feasible (every row tight), and c = -G'y with
		// y >= 0, so c'x >= c'x0 on the feasible set.
		x0 := make([]float64, sz[0])
		for j := range x0 {
			x0[j] = p.Lower[j] + 2
		}
		want := floats.Dot(p.C, x0)
		zero := &lp.Problem{C: make([]float64, sz[0]), G: p.G, H: p.H, Lower: p.Lower, Upper: p.Upper}
		for _, q := range []*lp.Problem{p, zero} {
			r, err := lp.SolveCuts(q.C, lp.DenseRows{G: q.G, H: q.H}, q.Lower, q.Upper, dualOnly(0, 0))
			if err != nil {
				t.Fatalf("%dx%d: %v", sz[1], sz[0], err)
			}
			w := want
			if q == zero {
				w = 0
			}
			// A vertex: rounding error of the data's size.
			if !scalar.EqualWithinAbsOrRel(r.Objective, w, 1e-10, 1e-10) {
				t.Errorf("%dx%d: objective %.15g, want %.15g", sz[1], sz[0], r.Objective, w)
			}
			checkKKT(t, q, r, 1e-9)
		}
	}
}
