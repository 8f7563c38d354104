package lp

import (
	"context"
	"fmt"
	"math"
	"runtime"
	"slices"
	"sync/atomic"

	"gonum.org/v1/gonum/floats"

	"basin.example/internal/parallel"
)

// looseTol is the solver tolerance of the rounds before the last.
const looseTol = 1e-5

// CutOptions controls SolveCuts. A nil *CutOptions means all defaults.
type CutOptions struct {
	// Solve controls each interior-point solve; nil means defaults.
	Solve *Options
	// Initial is the number of rows in the first restricted problem,
	// spread evenly over the index range; 0 means, for the dual simplex,
	// k·unknowns with k = sqrt(rows/unknowns)/4 held between 2 and 40,
	// and 20·unknowns for the interior point.
	Initial int
	// Batch is the largest number of violated rows added per round, the
	// most violated first; 0 means max(2, k/4)·unknowns for the dual
	// simplex (k as for Initial) and 10·unknowns for the interior point.
	Batch int
	// Tol is the tolerance on a row's violation relative to its
	// magnitude: row i counts as violated by x when
	// g_i'x - h_i > Tol·(|h_i| + sum_j |g_ij x_j|); 0 means 1e-7.
	Tol float64
	// MaxRounds caps the restricted solves; 0 means 100.
	MaxRounds int
	// Workers is the number of goroutines that evaluate the rows; 0 means
	// runtime.GOMAXPROCS(0).
	Workers int
	// Method solves the restricted problems; the zero value, Auto, is
	// the dual simplex with the interior point as its fallback.
	Method Method
}

// Method is the solver of SolveCuts's restricted problems.
type Method int

// Methods.
const (
	// Auto is the dual simplex method, warm-started across rounds, with
	// the interior-point method, from scratch, if it fails.
	Auto Method = iota
	// DualSimplex is the dual simplex method alone.
	DualSimplex
	// InteriorPoint is the interior-point method of Solve alone, each
	// round from scratch (the rounds before the last to 1e-5).
	InteriorPoint
)

func (m Method) String() string {
	switch m {
	case Auto:
		return "auto"
	case DualSimplex:
		return "dual simplex"
	case InteriorPoint:
		return "interior point"
	}
	return "unknown"
}

func (o *CutOptions) get() CutOptions {
	var c CutOptions
	if o != nil {
		c = *o
	}
	if c.Tol <= 0 {
		c.Tol = 1e-7
	}
	if c.MaxRounds <= 0 {
		c.MaxRounds = 100
	}
	if c.Workers <= 0 {
		c.Workers = runtime.GOMAXPROCS(0)
	}
	return c
}

// DenseRows adapts a dense row-major matrix G (len(H) rows) and right-hand
// side H to [Rows]. It is safe for concurrent use.
type DenseRows struct {
	G, H []float64
}

// Len returns len(H).
func (d DenseRows) Len() int { return len(d.H) }

// RowTo copies row i of G into dst and returns H[i].
func (d DenseRows) RowTo(dst []float64, i int) float64 {
	n := len(dst)
	copy(dst, d.G[i*n:(i+1)*n])
	return d.H[i]
}

// SolveCuts minimises c'x subject to every row of rows and
// lower <= x <= upper (nil means no bound) by cutting planes: it solves the
// problem on a subset of the rows, evaluates all rows at the answer in one
// parallel pass, adds the most violated ones (at most CutOptions.Batch)
// and repeats until no row is violated beyond CutOptions.Tol (Kelley's
// cutting-plane method [Kelley1960]). An unbounded
// restricted problem is cut the same way, with the rows that its ray
// violates.
//
// The restricted problems are solved as CutOptions.Method says: by
// default with the dual simplex method, each round starting from the
// previous round's optimal basis, and with [Solve]'s interior-point
// method, from scratch, if the dual simplex fails (Result.Method says
// which one answered).
//
// The Result is that of the last restricted problem, extended to all rows:
// Z has one entry per row (zero outside Active) and PrimalResidual is the
// largest violation over all rows. A Farkas certificate of a restricted
// problem proves the whole problem infeasible; an unbounded ray is
// returned only when no row cuts it. Errors are those of Solve; a NaN or
// infinite coefficient gives ErrInvalid naming the row. SolveCuts panics
// if a bound does not have len(c) entries.
func SolveCuts(c []float64, rows Rows, lower, upper []float64, opts *CutOptions) (*Result, error) {
	o := opts.get()
	n := len(c)
	if (lower != nil && len(lower) != n) || (upper != nil && len(upper) != n) {
		panic(fmt.Sprintf("lp: %d unknowns but %d lower and %d upper bounds", n, len(lower), len(upper)))
	}
	ev := newEvaluator(rows, n, o.Workers)
	if o.Method != InteriorPoint {
		res, err, ok := solveCutsDual(c, rows, lower, upper, o, ev)
		if ok || o.Method == DualSimplex {
			return res, err
		}
	}
	return solveCutsIPM(c, rows, lower, upper, o, ev)
}

// initialRows returns k0 row indices spread evenly over [0, m).
func initialRows(m, k0 int) []int {
	k0 = min(m, k0)
	out := make([]int, k0)
	for j := range out {
		out[j] = int((float64(j) + 0.5) * float64(m) / float64(k0))
	}
	return out
}

// solveCutsDual is SolveCuts with the dual simplex method, warm-started
// across rounds. It reports ok = false when the dual simplex failed
// (a numerical failure or its pivot limit), so that the interior point
// can take over.
func solveCutsDual(c []float64, rows Rows, lower, upper []float64, o CutOptions, ev *evaluator) (res *Result, err error, ok bool) {
	n := len(c)
	m := rows.Len()
	o.Initial, o.Batch = o.Sizes(n, m)
	s, err := newDual(c, lower, upper, min(m, o.Initial+4*o.Batch))
	if err != nil {
		return nil, err, true
	}
	active := make([]bool, m)
	buf := make([]float64, n)
	add := func(i int) error {
		active[i] = true
		h := rows.RowTo(buf, i)
		return s.addRow(buf, h, i)
	}
	for _, i := range initialRows(m, o.Initial) {
		if err := add(i); err != nil {
			return nil, err, true
		}
	}
	s.start()
	var st Status
	round := 0
	worst := 0.0
	for {
		round++
		st = s.run(dualMaxPivots(n, s.rows()))
		if st == NumericalFailure || st == IterationLimit {
			res = &Result{Status: st, Method: DualSimplex, Rounds: round, Iterations: s.iters, Objective: math.NaN()}
			return res, res.err(), false
		}
		if st == Infeasible {
			break
		}
		ray := st == Unbounded
		probe := s.x
		if ray {
			probe = s.ray
		}
		w, err := ev.pass(probe, ray)
		if err != nil {
			return nil, err, true
		}
		cand := ev.violated(o.Tol, active)
		if !ray {
			worst = w
		}
		if len(cand) == 0 {
			break
		}
		if round >= o.MaxRounds {
			st = IterationLimit // the restricted answer violates some rows
			break
		}
		cand = ev.diverse(cand, o.Batch, rows, diverseCos)
		for _, i := range cand {
			if err := add(i); err != nil {
				return nil, err, true
			}
		}
	}
	res = &Result{Method: DualSimplex, Rounds: round, Iterations: s.iters}
	s.fill(res, st, m, func(i int) ([]float64, float64) {
		h := rows.RowTo(buf, i)
		return buf, h
	})
	if st == Optimal || st == IterationLimit {
		res.PrimalResidual = max(res.PrimalResidual, worst)
	}
	res.Active = make([]int, len(s.idx))
	copy(res.Active, s.idx)
	slices.Sort(res.Active)
	return res, res.err(), true
}

// Sizes returns the initial rows and the batch SolveCuts uses with these
// options on a problem with the given unknowns and rows: Initial and
// Batch where set, else their defaults for the method (Auto as
// DualSimplex). A nil *CutOptions means all defaults.
func (o *CutOptions) Sizes(unknowns, rows int) (initial, batch int) {
	var c CutOptions
	if o != nil {
		c = *o
	}
	initial, batch = c.Initial, c.Batch
	var ini, bat int
	if c.Method == InteriorPoint {
		ini, bat = 20*max(1, unknowns), 10*max(1, unknowns)
	} else {
		ini, bat = dualSizes(unknowns, rows)
	}
	if initial <= 0 {
		initial = ini
	}
	if batch <= 0 {
		batch = bat
	}
	return initial, batch
}

// dualSizes returns the default initial rows and batch of the dual
// simplex loop for n unknowns and m rows. With warm starts a round costs
// about one pass over all m rows (m·n products) plus its pivots, each of
// which updates every pool row (pool·n products), and about 10n pivots
// are made in all. When the rows are many per unknown the passes
// dominate, and a larger start and batch, which save rounds, pay; when
// they are few (m/n of order 100) the pivots do, and a small pool pays.
// Per unknown the start is sqrt(m/n)/4 rows, between dualInitialMin and
// dualInitialMax, and the batch a quarter of that, at least dualBatchMin.
// On the five shapes of make bench-lp this took the rounds from 15, 7,
// 9, 8, 7 (5 and 2 rows per unknown) to 8, 6, 5, 4, 7 and fit/lp's time
// down 2-4x on the four shapes the passes dominate, and on the fifth (204
// unknowns, 98 rows per unknown: 2 and 2 rows per unknown) the pivots'
// work down 1.6x with the pool at its end 1780 rows, not 2298;
// sqrt(m/n)/4 is a fit to those shapes, not a derivation.
func dualSizes(n, m int) (initial, batch int) {
	n = max(1, n)
	per := int(math.Sqrt(float64(m)/float64(n)) / 4)
	per = min(dualInitialMax, max(dualInitialMin, per))
	return per * n, max(dualBatchMin, per/4) * n
}

// Bounds of the dual simplex loop's default sizes, in rows per unknown.
const (
	dualInitialMin = 2
	dualInitialMax = 40
	dualBatchMin   = 2
)

// dualMaxPivots is the pivot limit of the dual simplex on a pool of rows
// (a variable so that a test can make the dual simplex give up).
var dualMaxPivots = func(n, rows int) int { return 1000 + 50*(n+rows) }

// solveCutsIPM is SolveCuts with the interior-point method, each round
// from scratch.
func solveCutsIPM(c []float64, rows Rows, lower, upper []float64, o CutOptions, ev *evaluator) (*Result, error) {
	n := len(c)
	m := rows.Len()
	// Few rows are ever active (on the certificate LPs of the benchmarks
	// about 15-40 per unknown at the optimum): a small start keeps the
	// restricted problems small, and batches of 10 per unknown keep the
	// rounds (each one pass over all rows and a cold interior-point
	// solve) few. These defaults ended with 1.3-2x the active rows of a
	// row-generation loop around HiGHS's dual simplex on the same LPs
	// (make bench-lp), where the earlier max(20·unknowns, min(rows/10,
	// 4000)) start ended with up to 20x.
	ipm := o
	ipm.Method = InteriorPoint // also when the dual simplex failed first
	o.Initial, o.Batch = ipm.Sizes(n, m)
	s, err := newIPM(c, lower, upper, min(m, o.Initial+4*o.Batch))
	if err != nil {
		return nil, err
	}
	active := make([]bool, m)
	buf := make([]float64, n)
	add := func(i int) error {
		active[i] = true
		h := rows.RowTo(buf, i)
		return s.addRow(buf, h, i)
	}
	for _, i := range initialRows(m, o.Initial) {
		if err := add(i); err != nil {
			return nil, err
		}
	}

	// Rounds solve to a loose tolerance while rows are still being added;
	// once none is violated, the same rows are solved again to the
	// requested tolerance and checked again.
	final := o.Solve
	cur := final
	if final.tol() < looseTol {
		cur = &Options{Tol: looseTol, MaxIter: final.maxIter()}
	}
	total := 0
	var res *Result
	for round := 1; ; round++ {
		res = s.run(cur)
		total += res.Iterations
		res.Rounds = round
		var probe []float64 // x to check, or the ray
		switch res.Status {
		case Optimal:
			probe = make([]float64, n)
			for j := range probe {
				probe[j] = s.last.x[j] / s.last.tau
			}
		case Unbounded:
			probe = s.last.x
		}
		if probe == nil && cur != final {
			cur = final // confirm a certificate or a failure at full accuracy
			continue
		}
		if probe == nil {
			break // infeasible or failed: nothing more to learn from the rows
		}
		ray := res.Status == Unbounded
		worst, err := ev.pass(probe, ray)
		if err != nil {
			return nil, err
		}
		cand := ev.violated(o.Tol, active)
		if len(cand) == 0 && cur != final {
			cur = final
			continue
		}
		if len(cand) == 0 {
			if !ray {
				res.PrimalResidual = worst // combined with the bounds below
			}
			break
		}
		if round >= o.MaxRounds {
			res.Status = IterationLimit // the restricted answer violates some rows
			if !ray {
				res.PrimalResidual = worst
			}
			break
		}
		if len(cand) > o.Batch {
			cand = ev.top(cand, o.Batch)
		}
		for _, i := range cand {
			if err := add(i); err != nil {
				return nil, err
			}
		}
	}
	worst := res.PrimalResidual
	status := res.Status
	s.fill(res, m, func(i int) ([]float64, float64) {
		h := rows.RowTo(buf, i)
		return buf, h
	})
	if status == Optimal || status == IterationLimit {
		res.PrimalResidual = max(res.PrimalResidual, worst)
	}
	res.Method = InteriorPoint
	res.Iterations = total
	res.Active = make([]int, len(s.idx))
	copy(res.Active, s.idx)
	slices.Sort(res.Active)
	return res, res.err()
}

// evaluator computes every row's relative violation in parallel.
//
// A pass at a point skips the rows that cannot be violated there: a row
// evaluated at an earlier point x_s with slack sigma = h - g'x_s > 0
// still holds at x when ||g||·||x - x_s|| < sigma (Cauchy-Schwarz). So
// each row keeps its distance sigma/||g|| from x_s and the index s, each
// pass computes x's distance from every earlier point (one per round),
// and only the rows whose distance does not exceed it are evaluated
// again. The rows found violated, and the answer, are those of a full
// pass.
type evaluator struct {
	rows    []Rows // one per worker
	n       int
	viol    []float64
	vals    []float64 // scratch for top
	scratch [][]float64
	// the skipping of surely satisfied rows
	key   []float64 // per row: its distance sigma/||g|| from x_s, the point of its last evaluation
	at    []int32   // per row: s, the index of that point in pts
	nrm   []float64 // per row: ||g||_2, or -1 until first computed
	pts   []float64 // the points passed, n values each
	dist  []float64 // per point passed: its distance from the current one
	point bool      // some point has been passed
	dirty bool      // a ray pass left values in viol that a skip would keep
}

func newEvaluator(rows Rows, n, workers int) *evaluator {
	m := rows.Len()
	workers = max(1, min(workers, m/1024+1))
	ev := &evaluator{n: n, viol: make([]float64, m), key: make([]float64, m), at: make([]int32, m), nrm: make([]float64, m)}
	for i := range ev.nrm {
		ev.nrm[i] = -1
	}
	for w := 0; w < workers; w++ {
		r := rows
		if cl, ok := rows.(Cloner); ok && w > 0 {
			r = cl.Clone()
		}
		ev.rows = append(ev.rows, r)
		ev.scratch = append(ev.scratch, make([]float64, n))
	}
	return ev
}

// skipRows turns the skipping of surely satisfied rows on (a variable
// so that a test can compare the two).
var skipRows = true

// skipMargin is the relative margin of the skip test: a row's slack is
// reduced by skipMargin·(|h| + ||g||·||x||) and the distances grown by
// the factor 1+skipMargin, far above the rounding errors of the dot
// products and norms (n·eps relative for n up to 10^5).
const skipMargin = 1e-10

// pass stores in viol[i] the violation of row i at x relative to the
// row's magnitude, (g'x - h) / (|h| + sum |g_j x_j|), or for a ray the
// relative growth g'x / sum |g_j x_j|, where positive (else a value
// <= 0). It returns the largest absolute violation max(0, g'x - h). The
// rows are split into one contiguous range per worker (internal/parallel:
// a panic in RowTo comes back as an error); a bad row gives the error of
// the lowest such row's range. A pass at a point skips the rows that
// surely hold there (see evaluator); a ray pass evaluates every row.
func (ev *evaluator) pass(x []float64, ray bool) (worst float64, err error) {
	m := len(ev.viol)
	W := len(ev.rows)
	outs := make([]float64, W)
	skip := !ray && ev.point && skipRows
	dirty := ev.dirty
	xn := 0.0
	var cur int32
	if !ray {
		n := ev.n
		ev.dist = ev.dist[:0]
		for s := 0; s < len(ev.pts); s += n {
			ev.dist = append(ev.dist, floats.Distance(x, ev.pts[s:s+n], 2)*(1+skipMargin))
		}
		cur = int32(len(ev.dist))
		ev.pts = append(ev.pts, x...)
		xn = floats.Norm(x, 2)
	}
	dist := ev.dist
	var next atomic.Int32
	err = parallel.For(context.Background(), W, W,
		func() int { return int(next.Add(1) - 1) }, // each worker its own Rows clone and scratch
		func(_ context.Context, w int, k int) error {
			lo, hi := w*m/W, (w+1)*m/W
			rows, g := ev.rows[k], ev.scratch[k]
			dense, isDense := rows.(DenseRows)
			n := len(g)
			var worst float64
			for i := lo; i < hi; i++ {
				if skip && ev.key[i] > dist[ev.at[i]] {
					if dirty {
						ev.viol[i] = -1 // surely satisfied
					}
					continue
				}
				var h float64
				if isDense { // read the row in place
					g, h = dense.G[i*n:(i+1)*n], dense.H[i]
					if r := dot4(g, x) - h; !ray && !(r > 0) && r > math.Inf(-1) {
						ev.viol[i] = r // satisfied (the common case; NaN and -Inf go the long way)
						// holds, inline (h is finite here)
						nrm := ev.nrm[i]
						if nrm < 0 {
							nrm = norm2(g)
							ev.nrm[i] = nrm
						}
						key := math.Inf(-1)
						if s := -r - skipMargin*(math.Abs(h)+nrm*xn); s > 0 {
							key = s / (nrm * (1 + skipMargin)) // +Inf for an all-zero row
						}
						ev.key[i], ev.at[i] = key, cur
						continue
					}
				} else {
					h = rows.RowTo(g, i)
				}
				if math.IsNaN(h) || math.IsInf(h, -1) {
					return badRow(i)
				}
				// Only a row that x (or the ray) violates needs its
				// magnitude; the others get v = g'x - h <= 0, which ranks
				// below every violated row.
				dot := dot4(g, x)
				if math.IsNaN(dot) || math.IsInf(dot, 0) {
					if !finiteAll(g) {
						return badRow(i)
					}
				}
				var v float64
				switch {
				case math.IsInf(h, 1):
					v = math.Inf(-1)
				case ray:
					v = dot
					if dot > 0 {
						_, mag := dotMag(g, x)
						v = dot / mag
					}
				default:
					r := dot - h
					worst = max(worst, r)
					v = r
					if r > 0 {
						_, mag := dotMag(g, x)
						v = r / (math.Abs(h) + mag)
					}
				}
				if math.IsNaN(v) { // 0/0: an all-zero row at h = 0, or a zero ray component
					v = 0
				}
				ev.viol[i] = v
				if !ray {
					ev.key[i], ev.at[i] = ev.holds(i, g, dot-h, h, xn), cur
				}
			}
			outs[w] = worst
			return nil
		})
	if err != nil {
		return 0, err
	}
	if ray {
		ev.dirty = true
	} else {
		ev.point = true
		ev.dirty = false
	}
	for _, o := range outs {
		worst = max(worst, o)
	}
	return worst, nil
}

// holds returns row i's key after its evaluation at a point x with
// ||x||_2 = xn and residual r = g'x - h: the distance from x within which
// the row surely holds, -Inf when it may not hold at x itself.
func (ev *evaluator) holds(i int, g []float64, r, h, xn float64) float64 {
	if math.IsInf(h, 1) {
		return math.Inf(1)
	}
	nrm := ev.nrm[i]
	if nrm < 0 {
		nrm = norm2(g)
		ev.nrm[i] = nrm
	}
	slack := -r - skipMargin*(math.Abs(h)+nrm*xn)
	switch {
	case !(slack > 0):
		return math.Inf(-1)
	case nrm == 0:
		return math.Inf(1)
	}
	return slack / (nrm * (1 + skipMargin))
}

// norm2 returns ||g||_2 without scaling where the plain sum of squares
// neither overflows nor underflows.
func norm2(g []float64) float64 {
	var s0, s1 float64
	j := 0
	for ; j+2 <= len(g); j += 2 {
		s0 += g[j] * g[j]
		s1 += g[j+1] * g[j+1]
	}
	for ; j < len(g); j++ {
		s0 += g[j] * g[j]
	}
	if s := s0 + s1; s > 1e-290 && s < 1e290 {
		return math.Sqrt(s)
	}
	return floats.Norm(g, 2)
}

func badRow(i int) error {
	return fmt.Errorf("%w: row %d: coefficient or right-hand side is not a finite number", ErrInvalid, i)
}

// dot4 returns g'x, four products at a time.
func dot4(g, x []float64) float64 {
	x = x[:len(g)]
	var d0, d1, d2, d3 float64
	j := 0
	for ; j+4 <= len(g); j += 4 {
		d0 += g[j] * x[j]
		d1 += g[j+1] * x[j+1]
		d2 += g[j+2] * x[j+2]
		d3 += g[j+3] * x[j+3]
	}
	for ; j < len(g); j++ {
		d0 += g[j] * x[j]
	}
	return (d0 + d1) + (d2 + d3)
}

// dotMag returns g'x and sum_j |g_j x_j|, four products at a time (four
// independent sums, so that the additions overlap).
func dotMag(g, x []float64) (dot, mag float64) {
	x = x[:len(g)]
	var d0, d1, d2, d3, m0, m1, m2, m3 float64
	j := 0
	for ; j+4 <= len(g); j += 4 {
		p0, p1, p2, p3 := g[j]*x[j], g[j+1]*x[j+1], g[j+2]*x[j+2], g[j+3]*x[j+3]
		d0, d1, d2, d3 = d0+p0, d1+p1, d2+p2, d3+p3
		m0, m1, m2, m3 = m0+math.Abs(p0), m1+math.Abs(p1), m2+math.Abs(p2), m3+math.Abs(p3)
	}
	for ; j < len(g); j++ {
		p := g[j] * x[j]
		d0 += p
		m0 += math.Abs(p)
	}
	return (d0 + d1) + (d2 + d3), (m0 + m1) + (m2 + m3)
}

// finiteAll reports whether every entry of g is a finite number.
func finiteAll(g []float64) bool {
	for _, v := range g {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return false
		}
	}
	return true
}

// violated returns the rows not yet active whose relative violation
// exceeds tol, in index order.
func (ev *evaluator) violated(tol float64, active []bool) []int {
	var c []int
	for i, v := range ev.viol {
		if v > tol && !active[i] {
			c = append(c, i)
		}
	}
	return c
}

// diverseCos is the largest |cosine| between two rows added in one round
// of the dual simplex loop. On the certificate LPs of make bench-lp it
// took the rows at the end from 643 to 184 (2 states, V of degree 4) and
// the rounds from 24 to 15; 0.999 kept more, 0.95 needed more rounds.
const diverseCos = 0.99

// diverse returns up to k rows of cand, the most violated first, leaving
// out a row nearly parallel to one already taken (|cos| > maxCos):
// neighbouring samples give nearly the same cut, one of them per round is
// enough, and the next pass brings the others back if they are still
// violated. It looks at the 8k most violated rows at most; the result is
// in descending order of violation, ties by index.
func (ev *evaluator) diverse(cand []int, k int, rows Rows, maxCos float64) []int {
	if len(cand) > 8*k {
		cand = ev.top(cand, 8*k)
	}
	slices.SortStableFunc(cand, func(a, b int) int {
		switch va, vb := ev.viol[a], ev.viol[b]; {
		case va > vb:
			return -1
		case va < vb:
			return 1
		}
		return 0
	})
	n := ev.n
	taken := make([]float64, 0, k*n)
	out := cand[:0]
	buf := make([]float64, n)
	for _, i := range cand {
		if len(out) == k {
			break
		}
		rows.RowTo(buf, i)
		if nrm := floats.Norm(buf, 2); nrm > 0 {
			floats.Scale(1/nrm, buf)
		}
		ok := true
		for t := 0; t < len(taken); t += n {
			if math.Abs(floats.Dot(taken[t:t+n], buf)) > maxCos {
				ok = false
				break
			}
		}
		if ok {
			taken = append(taken, buf...)
			out = append(out, i)
		}
	}
	return out
}

// top returns the k rows of cand (ascending indices) with the largest
// violation, ties broken by the lower index, in ascending index order. It
// runs in time linear in len(cand) on average.
func (ev *evaluator) top(cand []int, k int) []int {
	v := ev.vals[:0]
	for _, i := range cand {
		v = append(v, ev.viol[i])
	}
	ev.vals = v
	thr := kthLargest(v, k) // reorders v
	out := cand[:0]
	eq := 0 // rows at the threshold still allowed in
	above := 0
	for _, i := range cand {
		if ev.viol[i] > thr {
			above++
		}
	}
	eq = k - above
	for _, i := range cand {
		x := ev.viol[i]
		if x > thr || (x == thr && eq > 0) {
			if x == thr {
				eq--
			}
			out = append(out, i)
		}
	}
	return out
}

// kthLargest returns the k-th largest value of v (1 <= k <= len(v)) by
// quickselect with a median-of-three pivot and a three-way partition (so
// that ties cost nothing), reordering v.
func kthLargest(v []float64, k int) float64 {
	lo, hi := 0, len(v) // v[lo:hi] holds the wanted position
	want := k - 1       // position in descending order
	for hi-lo > 1 {
		a, b, c := v[lo], v[lo+(hi-lo)/2], v[hi-1]
		p := max(min(a, b), min(max(a, b), c)) // median of three
		// Three-way partition of v[lo:hi]: > p, == p, < p.
		gt, i, lt := lo, lo, hi
		for i < lt {
			switch x := v[i]; {
			case x > p:
				v[gt], v[i] = v[i], v[gt]
				gt++
				i++
			case x < p:
				lt--
				v[lt], v[i] = v[i], v[lt]
			default:
				i++
			}
		}
		switch {
		case want < gt:
			hi = gt
		case want >= lt:
			lo = lt
		default:
			return p
		}
	}
	return v[lo]
}
