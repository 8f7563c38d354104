package lp_test

import (
	"errors"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"sync/atomic"
	"testing"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/floats/scalar"

	"basin.example/fit/lp"
	"basin.example/fit/lp/internal/certlp"
	"basin.example/internal/parallel"
)

// TestSolveCutsMatchesSolve: on tall random LPs the cutting-plane loop must
// reach the optimum of the whole LP solved at once, satisfy every row and
// use only a fraction of them.
func TestSolveCutsMatchesSolve(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 0))
	for _, sz := range [][2]int{{3, 5000}, {12, 20000}} {
		n, m := sz[0], sz[1]
		p := randomFeasible(rng, n, m)
		whole, err := lp.Solve(p, nil)
		if err != nil {
			t.Fatal(err)
		}
		r, err := lp.SolveCuts(p.C, lp.DenseRows{G: p.G, H: p.H}, p.Lower, p.Upper, &lp.CutOptions{Initial: 20, Batch: 20})
		if err != nil {
			t.Fatal(err)
		}
		// Both answers are optimal to 1e-8 relative (default tolerances).
		if !scalar.EqualWithinAbs(r.Objective, whole.Objective, 1e-7*(1+math.Abs(whole.Objective))) {
			t.Errorf("%d x %d: cuts objective %.12g, whole LP %.12g", m, n, r.Objective, whole.Objective)
		}
		checkKKT(t, p, r, 1e-7) // over all rows, with Z zero off the active set
		if len(r.Active) >= len(p.H)/2 || r.Rounds < 2 {
			t.Errorf("%d x %d: %d active rows in %d rounds", m, n, len(r.Active), r.Rounds)
		}
		if len(r.Z) != len(p.H) || !slices.IsSorted(r.Active) {
			t.Errorf("len(Z) = %d, Active sorted %v", len(r.Z), slices.IsSorted(r.Active))
		}
		t.Logf("%d x %d: %d rounds, %d active rows, %d iterations", m, n, r.Rounds, len(r.Active), r.Iterations)
	}
}

// TestSolveCutsPolygon: the regular N-gon circumscribed about the unit
// circle, with a facet normal along (1, 0), has max x = 1 (elementary
// geometry, exact). The unknowns are free, so the first restricted
// problem (2 rows) is unbounded and must be cut by the rows its ray
// violates.
func TestSolveCutsPolygon(t *testing.T) {
	const N = 10000
	g := make([]float64, 2*N)
	h := make([]float64, N)
	for i := 0; i < N; i++ {
		th := 2 * math.Pi * float64(i) / N
		g[2*i], g[2*i+1], h[i] = math.Cos(th), math.Sin(th), 1
	}
	r, err := lp.SolveCuts([]float64{-1, 0}, lp.DenseRows{G: g, H: h}, nil, nil, &lp.CutOptions{Initial: 2, Batch: 4})
	if err != nil {
		t.Fatal(err)
	}
	// Default solver tolerance 1e-8 relative.
	if !scalar.EqualWithinAbs(r.Objective, -1, 1e-7) || !scalar.EqualWithinAbs(r.X[0], 1, 1e-7) {
		t.Errorf("objective %.10g at %.10g, want -1 at x = 1", r.Objective, r.X)
	}
	t.Logf("%d rounds, %d active rows", r.Rounds, len(r.Active))
}

func TestSolveCutsInfeasibleUnbounded(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 0))
	p := infeasibleRandom(rng, 10, 3000)
	r, err := lp.SolveCuts(p.C, lp.DenseRows{G: p.G, H: p.H}, nil, nil, &lp.CutOptions{Initial: 50, Batch: 50})
	if !errors.Is(err, lp.ErrInfeasible) {
		t.Fatalf("infeasible: got %v", err)
	}
	checkFarkas(t, p, r.Farkas, 1e-7)

	p = unboundedRandom(rng, 10, 3000)
	r, err = lp.SolveCuts(p.C, lp.DenseRows{G: p.G, H: p.H}, nil, nil, &lp.CutOptions{Initial: 5, Batch: 5})
	if !errors.Is(err, lp.ErrUnbounded) {
		t.Fatalf("unbounded: got %v", err)
	}
	checkRay(t, p, r.Ray, 1e-7) // against all rows, not only the active ones
}

// nanRows is a Rows with one bad row.
type nanRows struct {
	lp.DenseRows
	bad int
}

func (r nanRows) RowTo(dst []float64, i int) float64 {
	h := r.DenseRows.RowTo(dst, i)
	if i == r.bad {
		dst[1] = math.NaN()
	}
	return h
}

func TestSolveCutsBadRow(t *testing.T) {
	rng := rand.New(rand.NewPCG(10, 0))
	p := randomFeasible(rng, 4, 5000)
	_, err := lp.SolveCuts(p.C, nanRows{lp.DenseRows{G: p.G, H: p.H}, 3777}, p.Lower, p.Upper, nil)
	if !errors.Is(err, lp.ErrInvalid) || !strings.Contains(err.Error(), "row 3777") {
		t.Fatalf("got %v, want ErrInvalid naming row 3777", err)
	}
}

// TestSolveCutsWorkers: the answer does not depend on the number of
// goroutines that evaluate the rows.
func TestSolveCutsWorkers(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 0))
	p := randomFeasible(rng, 6, 20000)
	var xs [][]float64
	for _, w := range []int{1, 2, 3} {
		r, err := lp.SolveCuts(p.C, lp.DenseRows{G: p.G, H: p.H}, p.Lower, p.Upper, &lp.CutOptions{Workers: w, Initial: 30, Batch: 30})
		if err != nil {
			t.Fatal(err)
		}
		xs = append(xs, r.X)
	}
	for _, x := range xs[1:] {
		if !floats.Equal(x, xs[0]) {
			t.Errorf("x = %v, with one worker %v", x, xs[0])
		}
	}
}

// TestSolveCutsNoRows: with no rows the answer is the best corner of the
// box (exact, by hand).
func TestSolveCutsNoRows(t *testing.T) {
	r, err := lp.SolveCuts([]float64{1, -2}, lp.DenseRows{}, []float64{-1, -1}, []float64{1, 3}, nil)
	if err != nil || !scalar.EqualWithinAbs(r.Objective, -7, 1e-7) { // default tolerance 1e-8 relative
		t.Fatalf("got %v, %v; want -7", r, err)
	}
}

// TestSolveCutsMaxRounds: stopping early is reported as an iteration
// limit, with the violation of the rows left out in PrimalResidual.
func TestSolveCutsMaxRounds(t *testing.T) {
	rng := rand.New(rand.NewPCG(12, 0))
	p := randomFeasible(rng, 12, 20000)
	r, err := lp.SolveCuts(p.C, lp.DenseRows{G: p.G, H: p.H}, p.Lower, p.Upper,
		&lp.CutOptions{Initial: 5, Batch: 5, MaxRounds: 2})
	if !errors.Is(err, lp.ErrIterations) || r == nil || r.Status != lp.IterationLimit {
		t.Fatalf("got %v, want an iteration limit", err)
	}
	if r.PrimalResidual <= 0 {
		t.Errorf("PrimalResidual = %g, want the violation of the rows left out", r.PrimalResidual)
	}
}

// panicRows panics when row bad is read.
type panicRows struct {
	lp.DenseRows
	bad int
}

func (r panicRows) RowTo(dst []float64, i int) float64 {
	if i == r.bad {
		panic("row source failed")
	}
	return r.DenseRows.RowTo(dst, i)
}

// TestSolveCutsPanickingRows: a panic in RowTo during the parallel pass
// comes back as an error (a *parallel.PanicError), not a crash, for both
// methods.
func TestSolveCutsPanickingRows(t *testing.T) {
	rng := rand.New(rand.NewPCG(13, 0))
	p := randomFeasible(rng, 4, 20000)
	for _, m := range []lp.Method{lp.DualSimplex, lp.InteriorPoint} {
		_, err := lp.SolveCuts(p.C, panicRows{lp.DenseRows{G: p.G, H: p.H}, 7}, p.Lower, p.Upper,
			&lp.CutOptions{Method: m, Initial: 1, Workers: 2})
		var pe *parallel.PanicError
		if !errors.As(err, &pe) {
			t.Errorf("%v: got %v, want a recovered panic", m, err)
		}
	}
}

// countRows counts the rows it hands out (RowTo calls), across clones.
type countRows struct {
	lp.Rows
	n *atomic.Int64
}

func (r countRows) RowTo(dst []float64, i int) float64 {
	r.n.Add(1)
	return r.Rows.RowTo(dst, i)
}

func (r countRows) Clone() lp.Rows {
	if cl, ok := r.Rows.(lp.Cloner); ok {
		return countRows{cl.Clone(), r.n}
	}
	return r
}

// TestSolveCutsSkipSame: the passes that skip the rows which surely hold
// (their distance from x exceeds x's move since they were evaluated)
// give bit for bit the answer of full passes, with fewer row
// evaluations. The polygon's first restricted problems are unbounded
// (a ray pass before the point passes); the certificate LPs are those of
// the benchmarks, smaller.
func TestSolveCutsSkipSame(t *testing.T) {
	polyG := make([]float64, 2*4000)
	polyH := make([]float64, 4000)
	for i := range polyH {
		th := 2 * math.Pi * float64(i) / 4000
		polyG[2*i], polyG[2*i+1], polyH[i] = math.Cos(th), math.Sin(th), 1
	}
	rng := rand.New(rand.NewPCG(12, 0))
	feas := randomFeasible(rng, 5, 8000)
	duff := certlp.New(2, 4, 5000, 2, certlp.Duffing2, 1)
	dObj, dLo, dUp := duff.Bounds()
	poly3 := certlp.New(3, 4, 3000, 1, certlp.Poly3, 1)
	pObj, pLo, pUp := poly3.Bounds()
	for _, tc := range []struct {
		name   string
		c      []float64
		rows   func() lp.Rows
		lo, up []float64
		opts   lp.CutOptions
	}{
		{"polygon", []float64{-1, -0.5}, func() lp.Rows { return lp.DenseRows{G: polyG, H: polyH} }, nil, nil, lp.CutOptions{Initial: 2, Batch: 4}},
		{"random", feas.C, func() lp.Rows { return lp.DenseRows{G: feas.G, H: feas.H} }, feas.Lower, feas.Upper, lp.CutOptions{Initial: 20, Batch: 10}},
		{"duffing", dObj, func() lp.Rows { return duff }, dLo, dUp, lp.CutOptions{}},
		{"duffing-ipm", dObj, func() lp.Rows { return duff }, dLo, dUp, lp.CutOptions{Method: lp.InteriorPoint}},
		{"poly3", pObj, func() lp.Rows { return poly3 }, pLo, pUp, lp.CutOptions{}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var res [2]*lp.Result
			var evals [2]int64
			for k, on := range []bool{false, true} {
				old := lp.SetSkipRows(on)
				var n atomic.Int64
				o := tc.opts
				r, err := lp.SolveCuts(tc.c, countRows{tc.rows(), &n}, tc.lo, tc.up, &o)
				lp.SetSkipRows(old)
				if err != nil {
					t.Fatalf("skip %v: %v", on, err)
				}
				res[k], evals[k] = r, n.Load()
			}
			full, skip := res[0], res[1]
			if skip.Status != full.Status || skip.Rounds != full.Rounds || !slices.Equal(skip.Active, full.Active) ||
				!floats.Equal(skip.X, full.X) || skip.PrimalResidual != full.PrimalResidual {
				t.Errorf("with skipping: %v, %d rounds, %d rows, x %v, residual %g; full passes: %v, %d rounds, %d rows, x %v, residual %g",
					skip.Status, skip.Rounds, len(skip.Active), skip.X, skip.PrimalResidual,
					full.Status, full.Rounds, len(full.Active), full.X, full.PrimalResidual)
			}
			if !(evals[1] < evals[0]) {
				t.Errorf("row evaluations: %d with skipping, %d without", evals[1], evals[0])
			}
			t.Logf("%d rounds; row evaluations %d with skipping, %d without", full.Rounds, evals[1], evals[0])
		})
	}
}
