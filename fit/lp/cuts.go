package lp

import (
	"fmt"
	"math"
	"runtime"
	"slices"
	"sync"
)

// looseTol is the solver tolerance of the rounds before the last.
const looseTol = 1e-5

// CutOptions controls SolveCuts. A nil *CutOptions means all defaults.
type CutOptions struct {
	// Solve controls each interior-point solve; nil means defaults.
	Solve *Options
	// Initial is the number of rows in the first restricted problem,
	// spread evenly over the index range; 0 means 20·unknowns.
	Initial int
	// Batch is the largest number of violated rows added per round, the
	// most violated first; 0 means 10·unknowns.
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
// problem on a subset of the rows with [Solve]'s method, evaluates all
// rows at the answer in one parallel pass, adds the most violated ones
// (at most CutOptions.Batch) and repeats until no row is violated beyond
// CutOptions.Tol. An unbounded restricted problem is cut the same way,
// with the rows that its ray violates.
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
	m := rows.Len()
	if (lower != nil && len(lower) != n) || (upper != nil && len(upper) != n) {
		panic(fmt.Sprintf("lp: %d unknowns but %d lower and %d upper bounds", n, len(lower), len(upper)))
	}
	// Few rows are ever active (on the certificate LPs of the benchmarks
	// about 15-40 per unknown at the optimum): a small start keeps the
	// restricted problems small, and batches of 10 per unknown keep the
	// rounds (each one pass over all rows and a cold interior-point
	// solve) few. These defaults ended with 1.3-2x the active rows of a
	// row-generation loop around HiGHS's dual simplex on the same LPs
	// (make bench-lp), where the earlier max(20·unknowns, min(rows/10,
	// 4000)) start ended with up to 20x.
	if o.Initial <= 0 {
		o.Initial = 20 * max(1, n)
	}
	if o.Batch <= 0 {
		o.Batch = 10 * max(1, n)
	}
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
	k0 := min(m, o.Initial)
	for j := 0; j < k0; j++ {
		if err := add(int((float64(j) + 0.5) * float64(m) / float64(k0))); err != nil {
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
	ev := newEvaluator(rows, n, o.Workers)
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
	res.Iterations = total
	res.Active = make([]int, len(s.idx))
	copy(res.Active, s.idx)
	slices.Sort(res.Active)
	return res, res.err()
}

// evaluator computes every row's relative violation in parallel.
type evaluator struct {
	rows    []Rows // one per worker
	n       int
	viol    []float64
	vals    []float64 // scratch for top
	scratch [][]float64
}

func newEvaluator(rows Rows, n, workers int) *evaluator {
	m := rows.Len()
	workers = max(1, min(workers, m/1024+1))
	ev := &evaluator{n: n, viol: make([]float64, m)}
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

// pass stores in viol[i] the violation of row i at x relative to the
// row's magnitude, (g'x - h) / (|h| + sum |g_j x_j|), or for a ray the
// relative growth g'x / sum |g_j x_j|. It returns the largest absolute
// violation max(0, g'x - h).
func (ev *evaluator) pass(x []float64, ray bool) (worst float64, err error) {
	m := len(ev.viol)
	W := len(ev.rows)
	type out struct {
		worst float64
		bad   int // first row with non-finite data, or -1
	}
	outs := make([]out, W)
	var wg sync.WaitGroup
	for w := 0; w < W; w++ {
		lo, hi := w*m/W, (w+1)*m/W
		wg.Add(1)
		go func(w, lo, hi int) {
			defer wg.Done()
			rows, g := ev.rows[w], ev.scratch[w]
			dense, isDense := rows.(DenseRows)
			n := len(g)
			o := out{bad: -1}
			for i := lo; i < hi; i++ {
				var h float64
				if isDense { // read the row in place
					g, h = dense.G[i*n:(i+1)*n], dense.H[i]
				} else {
					h = rows.RowTo(g, i)
				}
				if math.IsNaN(h) || math.IsInf(h, -1) {
					o.bad = i
					break
				}
				dot, mag := dotMag(g, x)
				if !(mag <= math.MaxFloat64) && !finiteAll(g) { // NaN or ±Inf shows in mag
					o.bad = i
					break
				}
				var v float64
				switch {
				case math.IsInf(h, 1):
					v = math.Inf(-1)
				case ray:
					v = dot / mag
				default:
					r := dot - h
					o.worst = max(o.worst, r)
					v = r / (math.Abs(h) + mag)
				}
				if math.IsNaN(v) { // 0/0: an all-zero row at h = 0, or a zero ray component
					v = 0
				}
				ev.viol[i] = v
			}
			outs[w] = o
		}(w, lo, hi)
	}
	wg.Wait()
	for _, o := range outs {
		if o.bad >= 0 {
			return 0, fmt.Errorf("%w: row %d: coefficient or right-hand side is not a finite number", ErrInvalid, o.bad)
		}
		worst = max(worst, o.worst)
	}
	return worst, nil
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
