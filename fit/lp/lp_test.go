package lp_test

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"
	gonumlp "gonum.org/v1/gonum/optimize/convex/lp"

	"basin.example/fit/lp"
)

// tight asks the solver for a relative gap of 1e-12, so that textbook
// optima can be asserted to 1e-9 ([Chvatal1983] suggests 1e-9).
var tight = &lp.Options{Tol: 1e-12}

func zeros(n int) []float64 { return make([]float64, n) }

func TestSolveTextbook(t *testing.T) {
	for _, tc := range []struct {
		name  string
		p     lp.Problem
		obj   float64
		x     []float64
		y     []float64 // row multipliers, nil if not asserted
		tol   float64
		maxIt int
	}{
		{
			// [Chvatal1983] ch. 2, first example; also
			// Vanderbei, Linear Programming: Foundations and Extensions, ch. 2
			// (from memory; [Chvatal1983], verified there by vertex
			// enumeration). Maximise 5x1+4x2+3x3, so minimise the negative.
			name: "Chvatal ch.2",
			p: lp.Problem{C: []float64{-5, -4, -3},
				G: []float64{2, 3, 1, 4, 1, 2, 3, 4, 2}, H: []float64{5, 11, 8}, Lower: zeros(3)},
			obj: -13, x: []float64{2, 0, 1}, y: []float64{1, 0, 1}, tol: 1e-9,
		},
		{
			// Hillier & Lieberman, Introduction to Operations Research, §3.1,
			// Wyndor Glass (statement confirmed, optimum from memory;
			// [HillierLieberman]). Shadow prices (0, 3/2, 1) from memory.
			name: "Wyndor Glass",
			p: lp.Problem{C: []float64{-3, -5},
				G: []float64{1, 0, 0, 2, 3, 2}, H: []float64{4, 12, 18}, Lower: zeros(2)},
			obj: -36, x: []float64{2, 6}, y: []float64{0, 1.5, 1}, tol: 1e-9,
		},
		{
			// [Chvatal1983] ch. 3, the degenerate example on which the
			// largest-coefficient rule cycles (from memory; [Chvatal1983], [Beale1955]).
			name: "Chvatal ch.3 cycling",
			p: lp.Problem{C: []float64{-10, 57, 9, 24},
				G: []float64{0.5, -5.5, -2.5, 9, 0.5, -1.5, -0.5, 1, 1, 0, 0, 0},
				H: []float64{0, 0, 1}, Lower: zeros(4)},
			obj: -1, x: []float64{1, 0, 1, 0}, tol: 1e-9,
		},
		{
			// Beale (1955), the classic cycling example (from memory;
			// [Chvatal1983], [Beale1955]).
			name: "Beale 1955",
			p: lp.Problem{C: []float64{-0.75, 20, -0.5, 6},
				G: []float64{0.25, -8, -1, 9, 0.5, -12, -0.5, 3, 0, 0, 1, 0},
				H: []float64{0, 0, 1}, Lower: zeros(4)},
			obj: -1.25, x: []float64{1, 0, 1, 0}, tol: 1e-9,
		},
		{
			// Chvátal's first example again with x >= 0 written as rows
			// -x <= 0 and the variables free: the same optimum.
			name: "Chvatal ch.2, bounds as rows",
			p: lp.Problem{C: []float64{-5, -4, -3},
				G: []float64{2, 3, 1, 4, 1, 2, 3, 4, 2, -1, 0, 0, 0, -1, 0, 0, 0, -1},
				H: []float64{5, 11, 8, 0, 0, 0}},
			obj: -13, x: []float64{2, 0, 1}, y: []float64{1, 0, 1, 0, 3, 0}, tol: 1e-9,
		},
	} {
		t.Run(tc.name, func(t *testing.T) {
			r, err := lp.Solve(&tc.p, tight)
			if err != nil {
				t.Fatal(err)
			}
			if r.Status != lp.Optimal {
				t.Fatalf("status %v", r.Status)
			}
			if !scalar.EqualWithinAbs(r.Objective, tc.obj, tc.tol) {
				t.Errorf("objective %.12g, want %g", r.Objective, tc.obj)
			}
			if !floats.EqualApprox(r.X, tc.x, tc.tol) {
				t.Errorf("x = %.12g, want %g", r.X, tc.x)
			}
			if tc.y != nil && !floats.EqualApprox(r.Z, tc.y, tc.tol) {
				t.Errorf("dual = %.12g, want %g", r.Z, tc.y)
			}
			checkKKT(t, &tc.p, r, 1e-9)
		})
	}
}

// checkKKT recomputes, independently of the solver's own figures, primal
// feasibility, dual feasibility, sign of the multipliers and the duality
// gap of r for p, each relative to the data's magnitude.
func checkKKT(t *testing.T, p *lp.Problem, r *lp.Result, tol float64) {
	t.Helper()
	n, m := len(p.C), len(p.H)
	scale := 1 + floats.Norm(p.C, math.Inf(1)) + floats.Norm(p.H, math.Inf(1))
	dual := append([]float64(nil), p.C...)
	dobj := 0.0
	for i := 0; i < m; i++ {
		g := p.G[i*n : (i+1)*n]
		if v := floats.Dot(g, r.X) - p.H[i]; v > tol*scale {
			t.Errorf("row %d violated by %g", i, v)
		}
		if r.Z[i] < 0 {
			t.Errorf("row multiplier %d = %g < 0", i, r.Z[i])
		}
		floats.AddScaled(dual, r.Z[i], g)
		dobj -= p.H[i] * r.Z[i]
	}
	for j := 0; j < n; j++ {
		if r.ZLower[j] < 0 || r.ZUpper[j] < 0 {
			t.Errorf("bound multipliers %d = %g, %g", j, r.ZLower[j], r.ZUpper[j])
		}
		dual[j] += r.ZUpper[j] - r.ZLower[j]
		if p.Lower != nil && !math.IsInf(p.Lower[j], -1) {
			if p.Lower[j]-r.X[j] > tol*scale {
				t.Errorf("x[%d] = %g below %g", j, r.X[j], p.Lower[j])
			}
			dobj += p.Lower[j] * r.ZLower[j]
		} else if r.ZLower[j] != 0 {
			t.Errorf("multiplier on an infinite lower bound %d", j)
		}
		if p.Upper != nil && !math.IsInf(p.Upper[j], 1) {
			if r.X[j]-p.Upper[j] > tol*scale {
				t.Errorf("x[%d] = %g above %g", j, r.X[j], p.Upper[j])
			}
			dobj -= p.Upper[j] * r.ZUpper[j]
		} else if r.ZUpper[j] != 0 {
			t.Errorf("multiplier on an infinite upper bound %d", j)
		}
	}
	if d := floats.Norm(dual, math.Inf(1)); !(d <= tol*scale) {
		t.Errorf("dual residual %g", d)
	}
	pobj := floats.Dot(p.C, r.X)
	if g := math.Abs(pobj - dobj); !(g <= tol*(1+math.Abs(pobj))) {
		t.Errorf("duality gap %g (primal %g, dual %g)", g, pobj, dobj)
	}
}

// randomFeasible returns a random LP with mixed bound types (boxed, one
// sided either way, free) that is feasible (at x0, strictly) and bounded
// (every unknown is limited on both sides by a bound or a row).
func randomFeasible(rng *rand.Rand, n, m int) *lp.Problem {
	p := &lp.Problem{C: make([]float64, n), Lower: make([]float64, n), Upper: make([]float64, n)}
	x0 := make([]float64, n)
	for j := 0; j < n; j++ {
		p.C[j] = rng.NormFloat64()
		x0[j] = rng.NormFloat64()
		p.Lower[j], p.Upper[j] = math.Inf(-1), math.Inf(1)
		switch rng.IntN(4) {
		case 0:
			p.Lower[j] = x0[j] - rng.Float64()
			p.Upper[j] = x0[j] + rng.Float64()
		case 1:
			p.Lower[j] = x0[j] - rng.Float64()
		case 2:
			p.Upper[j] = x0[j] + rng.Float64()
		}
	}
	row := func(g []float64, slack float64) {
		p.G = append(p.G, g...)
		p.H = append(p.H, floats.Dot(g, x0)+slack)
	}
	for i := 0; i < m; i++ {
		g := make([]float64, n)
		for j := range g {
			g[j] = rng.NormFloat64()
		}
		row(g, rng.Float64())
	}
	for j := 0; j < n; j++ { // close the open sides with rows
		if math.IsInf(p.Upper[j], 1) {
			g := make([]float64, n)
			g[j] = 1
			row(g, 1+3*rng.Float64())
		}
		if math.IsInf(p.Lower[j], -1) {
			g := make([]float64, n)
			g[j] = -1
			row(g, 1+3*rng.Float64())
		}
	}
	return p
}

// standardForm rewrites p as min c's s.t. A s = b, s >= 0 for gonum's
// lp.Simplex: x_j = l_j + u (lower finite; a slack row when the upper bound
// is finite too), x_j = u_j - u (only upper finite), x_j = u - v (free),
// and a slack per row. It returns the constant term of the objective.
func standardForm(p *lp.Problem) (c []float64, a *mat.Dense, b []float64, off float64) {
	n, m := len(p.C), len(p.H)
	type sub struct {
		col    []int     // standard-form columns
		coef   []float64 // x_j = off + sum coef*s_col
		offset float64
	}
	subs := make([]sub, n)
	cols := 0
	var boxes [][2]float64 // (column, width) for boxed unknowns
	for j := 0; j < n; j++ {
		l, u := p.Lower[j], p.Upper[j]
		switch {
		case !math.IsInf(l, -1):
			subs[j] = sub{[]int{cols}, []float64{1}, l}
			if !math.IsInf(u, 1) {
				boxes = append(boxes, [2]float64{float64(cols), u - l})
			}
			cols++
		case !math.IsInf(u, 1):
			subs[j] = sub{[]int{cols}, []float64{-1}, u}
			cols++
		default:
			subs[j] = sub{[]int{cols, cols + 1}, []float64{1, -1}, 0}
			cols += 2
		}
	}
	rows := m + len(boxes)
	total := cols + rows // one slack per row
	a = mat.NewDense(rows, total, nil)
	b = make([]float64, rows)
	c = make([]float64, total)
	for j, s := range subs {
		off += p.C[j] * s.offset
		for k, col := range s.col {
			c[col] += p.C[j] * s.coef[k]
		}
	}
	for i := 0; i < m; i++ {
		b[i] = p.H[i]
		for j, s := range subs {
			gij := p.G[i*n+j]
			b[i] -= gij * s.offset
			for k, col := range s.col {
				a.Set(i, col, a.At(i, col)+gij*s.coef[k])
			}
		}
		a.Set(i, cols+i, 1)
	}
	for k, bx := range boxes {
		i := m + k
		a.Set(i, int(bx[0]), 1)
		a.Set(i, cols+i, 1)
		b[i] = bx[1]
	}
	for i := range b { // gonum wants b >= 0 for its initial basis search
		if b[i] < 0 {
			b[i] = -b[i]
			for k := 0; k < total; k++ {
				a.Set(i, k, -a.At(i, k))
			}
		}
	}
	return c, a, b, off
}

// TestSolveAgainstSimplex compares optima with gonum's lp.Simplex (an
// independent general-purpose library) on small random LPs where it
// finishes quickly.
func TestSolveAgainstSimplex(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 0))
	for k := 0; k < 40; k++ {
		n, m := 2+rng.IntN(5), 3+rng.IntN(18)
		p := randomFeasible(rng, n, m)
		c, a, b, off := standardForm(p)
		want, _, err := gonumlp.Simplex(c, a, b, 1e-10, nil)
		if err != nil {
			t.Fatalf("case %d: gonum lp.Simplex: %v", k, err)
		}
		want += off
		r, err := lp.Solve(p, &lp.Options{Tol: 1e-10})
		if err != nil {
			t.Fatalf("case %d (%d x %d): %v", k, m, n, err)
		}
		// Both solvers work to about 1e-10 relative; 1e-8 leaves room for
		// the conditioning of random data.
		if !scalar.EqualWithinAbs(r.Objective, want, 1e-8*(1+math.Abs(want))) {
			t.Errorf("case %d (%d x %d): objective %.12g, gonum lp.Simplex %.12g", k, m, n, r.Objective, want)
		}
		checkKKT(t, p, r, 1e-8)
	}
}

// TestSolveLargeKKT checks the solver's answer on large random LPs by its
// own optimality conditions, recomputed here, since no independent solver
// finishes at this size.
func TestSolveLargeKKT(t *testing.T) {
	sizes := [][2]int{{40, 3000}, {120, 1500}}
	if testing.Short() {
		sizes = sizes[:1]
	}
	rng := rand.New(rand.NewPCG(5, 0))
	for _, sz := range sizes {
		n, m := sz[0], sz[1]
		p := randomFeasible(rng, n, m)
		r, err := lp.Solve(p, nil)
		if err != nil {
			t.Fatalf("%d x %d: %v", m, n, err)
		}
		// The default tolerance is 1e-8 relative on scaled rows; 1e-7
		// allows for the row scaling being undone.
		checkKKT(t, p, r, 1e-7)
		if !(r.PrimalResidual <= 1e-7) || !(r.DualResidual <= 1e-7) || !scalar.EqualWithinAbs(r.RelGap, 0, 1e-7) {
			t.Errorf("%d x %d: reported residuals %g %g gap %g", m, n, r.PrimalResidual, r.DualResidual, r.RelGap)
		}
		t.Logf("%d x %d: %d iterations", m, n, r.Iterations)
	}
}

// checkFarkas verifies a certificate of infeasibility independently:
// y >= 0, G'y - yl + yu = 0 and h'y - l'yl + u'yu = -1 (Farkas' lemma).
func checkFarkas(t *testing.T, p *lp.Problem, f *lp.Farkas, tol float64) {
	t.Helper()
	if f == nil {
		t.Fatal("no Farkas certificate")
	}
	n, m := len(p.C), len(p.H)
	r := make([]float64, n)
	by := 0.0
	ynorm := 0.0
	for i := 0; i < m; i++ {
		if f.Y[i] < 0 {
			t.Errorf("y[%d] = %g < 0", i, f.Y[i])
		}
		floats.AddScaled(r, f.Y[i], p.G[i*n:(i+1)*n])
		by += p.H[i] * f.Y[i]
		ynorm = max(ynorm, f.Y[i])
	}
	for j := 0; j < n; j++ {
		if f.YLower[j] < 0 || f.YUpper[j] < 0 {
			t.Errorf("bound multipliers %d: %g %g", j, f.YLower[j], f.YUpper[j])
		}
		r[j] += f.YUpper[j] - f.YLower[j]
		if f.YLower[j] != 0 {
			by -= p.Lower[j] * f.YLower[j]
		}
		if f.YUpper[j] != 0 {
			by += p.Upper[j] * f.YUpper[j]
		}
		ynorm = max(ynorm, f.YLower[j], f.YUpper[j])
	}
	if !scalar.EqualWithinAbs(by, -1, 1e-9) {
		t.Errorf("h'y = %g, want -1", by)
	}
	if d := floats.Norm(r, math.Inf(1)); !(d <= tol*(1+ynorm)) {
		t.Errorf("|G'y - yl + yu| = %g (|y| %g)", d, ynorm)
	}
}

// infeasibleRandom adds to a feasible random LP the row -sum y_i g_i <=
// -sum y_i h_i - 1 for random y > 0, which contradicts the others: a
// construction straight from Farkas' lemma.
func infeasibleRandom(rng *rand.Rand, n, m int) *lp.Problem {
	p := randomFeasible(rng, n, m)
	p.Lower, p.Upper = nil, nil // the combination uses rows only
	g := make([]float64, n)
	h := 0.0
	for i := range p.H {
		y := rng.Float64()
		floats.AddScaled(g, -y, p.G[i*n:(i+1)*n])
		h -= y * p.H[i]
	}
	p.G = append(p.G, g...)
	p.H = append(p.H, h-1)
	return p
}

func TestSolveInfeasible(t *testing.T) {
	rng := rand.New(rand.NewPCG(6, 0))
	inf := math.Inf(1)
	for _, tc := range []struct {
		name string
		p    *lp.Problem
	}{
		{"x1+x2<=-1, x>=0", &lp.Problem{C: []float64{1, 1}, G: []float64{1, 1}, H: []float64{-1}, Lower: zeros(2)}},
		{"x<=1 and x>=2 as rows", &lp.Problem{C: []float64{1}, G: []float64{1, -1}, H: []float64{1, -2}}},
		{"lower above upper", &lp.Problem{C: []float64{1, 0}, Lower: []float64{3, -inf}, Upper: []float64{2, inf}}},
		{"row against bounds", &lp.Problem{C: []float64{0, 0}, G: []float64{1, 1}, H: []float64{0.5},
			Lower: []float64{1, 0}, Upper: []float64{2, 1}}},
		{"random 60x8", infeasibleRandom(rng, 8, 60)},
		{"random 400x30", infeasibleRandom(rng, 30, 400)},
	} {
		t.Run(tc.name, func(t *testing.T) {
			r, err := lp.Solve(tc.p, nil)
			if !errors.Is(err, lp.ErrInfeasible) || r == nil || r.Status != lp.Infeasible {
				t.Fatalf("got %v, want infeasible", err)
			}
			if r.X != nil {
				t.Error("X set on an infeasible problem")
			}
			// Solver tolerance 1e-8 relative to the certificate's size.
			checkFarkas(t, tc.p, r.Farkas, 1e-7)
		})
	}
}

// checkRay verifies an unbounded direction: c'd = -1, G d <= 0 and d
// respects the sign of every finite bound.
func checkRay(t *testing.T, p *lp.Problem, d []float64, tol float64) {
	t.Helper()
	n := len(p.C)
	if len(d) != n {
		t.Fatalf("ray has %d entries", len(d))
	}
	if cd := floats.Dot(p.C, d); !scalar.EqualWithinAbs(cd, -1, 1e-9) {
		t.Errorf("c'd = %g, want -1", cd)
	}
	dn := floats.Norm(d, math.Inf(1))
	for i := range p.H {
		if v := floats.Dot(p.G[i*n:(i+1)*n], d); v > tol*(1+dn) {
			t.Errorf("row %d grows along the ray: %g", i, v)
		}
	}
	for j := 0; j < n; j++ {
		if p.Lower != nil && !math.IsInf(p.Lower[j], -1) && d[j] < -tol*(1+dn) {
			t.Errorf("ray leaves lower bound %d: %g", j, d[j])
		}
		if p.Upper != nil && !math.IsInf(p.Upper[j], 1) && d[j] > tol*(1+dn) {
			t.Errorf("ray leaves upper bound %d: %g", j, d[j])
		}
	}
}

// unboundedRandom is a feasible random LP whose rows all satisfy g'd <= 0
// for a random d with c'd < 0, so d is a ray of unboundedness.
func unboundedRandom(rng *rand.Rand, n, m int) *lp.Problem {
	d := make([]float64, n)
	x0 := make([]float64, n)
	for j := range d {
		d[j] = rng.NormFloat64()
		x0[j] = rng.NormFloat64()
	}
	p := &lp.Problem{C: make([]float64, n)}
	for j := range p.C {
		p.C[j] = rng.NormFloat64()
	}
	if floats.Dot(p.C, d) > 0 {
		floats.Scale(-1, p.C)
	}
	for i := 0; i < m; i++ {
		g := make([]float64, n)
		for j := range g {
			g[j] = rng.NormFloat64()
		}
		if floats.Dot(g, d) > 0 {
			floats.Scale(-1, g)
		}
		p.G = append(p.G, g...)
		p.H = append(p.H, floats.Dot(g, x0)+rng.Float64())
	}
	return p
}

func TestSolveUnbounded(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 0))
	for _, tc := range []struct {
		name string
		p    *lp.Problem
	}{
		{"x1-x2<=1, x>=0", &lp.Problem{C: []float64{-1, -1}, G: []float64{1, -1}, H: []float64{1}, Lower: zeros(2)}},
		{"free unknown, no rows", &lp.Problem{C: []float64{0, 2}, Lower: []float64{0, math.Inf(-1)}, Upper: []float64{1, math.Inf(1)}}},
		{"random 50x6", unboundedRandom(rng, 6, 50)},
		{"random 500x20", unboundedRandom(rng, 20, 500)},
	} {
		t.Run(tc.name, func(t *testing.T) {
			r, err := lp.Solve(tc.p, nil)
			if !errors.Is(err, lp.ErrUnbounded) || r == nil || r.Status != lp.Unbounded {
				t.Fatalf("got %v, want unbounded", err)
			}
			checkRay(t, tc.p, r.Ray, 1e-7)
		})
	}
}

func TestSolveBadInput(t *testing.T) {
	nan := math.NaN()
	for _, tc := range []struct {
		name string
		p    *lp.Problem
	}{
		{"NaN in G", &lp.Problem{C: []float64{1}, G: []float64{nan}, H: []float64{1}}},
		{"NaN in C", &lp.Problem{C: []float64{nan}}},
		{"-Inf in H", &lp.Problem{C: []float64{1}, G: []float64{1}, H: []float64{math.Inf(-1)}}},
		{"+Inf lower bound", &lp.Problem{C: []float64{1}, Lower: []float64{math.Inf(1)}}},
		{"Inf in G", &lp.Problem{C: []float64{1}, G: []float64{math.Inf(1)}, H: []float64{1}}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			r, err := lp.Solve(tc.p, nil)
			if !errors.Is(err, lp.ErrInvalid) || r != nil {
				t.Fatalf("got %v, %v; want ErrInvalid", r, err)
			}
		})
	}
	// A row with h = +Inf is no constraint.
	r, err := lp.Solve(&lp.Problem{C: []float64{-1}, G: []float64{1, 1}, H: []float64{math.Inf(1), 2}}, nil)
	if err != nil || !scalar.EqualWithinAbs(r.X[0], 2, 1e-7) || r.Z[0] != 0 {
		t.Errorf("h = +Inf row: %v %v", r, err)
	}
}

// TestSolveEdgeCases: degenerate shapes with answers that follow from the
// definitions (exact, computed by hand).
func TestSolveEdgeCases(t *testing.T) {
	inf := math.Inf(1)
	for _, tc := range []struct {
		name   string
		p      *lp.Problem
		status lp.Status
		obj    float64
	}{
		{"box only", &lp.Problem{C: []float64{1, -2}, Lower: []float64{-1, -1}, Upper: []float64{1, 3}}, lp.Optimal, -7},
		{"fixed unknown", &lp.Problem{C: []float64{1, 1}, G: []float64{-1, -1}, H: []float64{-3},
			Lower: []float64{2, 0}, Upper: []float64{2, inf}}, lp.Optimal, 3},
		{"zero row, h >= 0", &lp.Problem{C: []float64{1}, G: []float64{0}, H: []float64{0}, Lower: []float64{0}}, lp.Optimal, 0},
		{"zero row, h < 0", &lp.Problem{C: []float64{1}, G: []float64{0}, H: []float64{-1}, Lower: []float64{0}}, lp.Infeasible, 0},
		{"duplicate rows", &lp.Problem{C: []float64{-1}, G: []float64{1, 1, 1, 2}, H: []float64{1, 1, 1, 2}}, lp.Optimal, -1},
		{"no unknowns, feasible", &lp.Problem{H: []float64{1}}, lp.Optimal, 0},
		{"no unknowns, infeasible", &lp.Problem{H: []float64{-1}}, lp.Infeasible, 0},
		{"equality as two rows", &lp.Problem{C: []float64{1, 2}, G: []float64{1, 1, -1, -1}, H: []float64{1, -1},
			Lower: zeros(2)}, lp.Optimal, 1},
		{"zero objective", &lp.Problem{C: []float64{0, 0}, G: []float64{1, 1}, H: []float64{1}, Lower: zeros(2)}, lp.Optimal, 0},
		{"scaled rows 1e6 apart", &lp.Problem{C: []float64{-1, -1}, G: []float64{1e6, 0, 0, 1e-6}, H: []float64{1e6, 1e-6}}, lp.Optimal, -2},
	} {
		t.Run(tc.name, func(t *testing.T) {
			r, err := lp.Solve(tc.p, nil)
			if r == nil || r.Status != tc.status {
				t.Fatalf("got %v, %v; want %v", r, err, tc.status)
			}
			switch tc.status {
			case lp.Optimal:
				// Default tolerance 1e-8 relative.
				if err != nil || !scalar.EqualWithinAbs(r.Objective, tc.obj, 1e-7*(1+math.Abs(tc.obj))) {
					t.Errorf("objective %g (%v), want %g", r.Objective, err, tc.obj)
				}
				checkKKT(t, tc.p, r, 1e-7)
			case lp.Infeasible:
				checkFarkas(t, tc.p, r.Farkas, 1e-7)
			}
		})
	}
}
