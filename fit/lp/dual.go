package lp

import (
	"fmt"
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"
)

// Dual simplex constants (not user-facing).
const (
	dualFeasTol   = 1e-9  // a row is violated when a'x - b exceeds this times (1 + |b| + |x|_inf) (rows of unit norm)
	dualOptTol    = 1e-11 // multipliers above -dualOptTol·(1+|c|_inf) count as non-negative
	dualPivTol    = 1e-9  // smallest ratio-test pivot, relative to the largest entry of w
	refactorEvery = 100   // pivots between refactorisations of the basis
	blandAfter    = 50    // degenerate pivots in a row before Bland's rule
	bigStart      = 1e6   // artificial bounds, relative to the data's magnitude
	bigGrow       = 1e3   // their growth when one binds or proves a false infeasibility
	bigTries      = 4     // growths before giving up
	maxCondition  = 1e13  // a basis worse conditioned than this is a numerical failure
	perturbRel    = 1e-7  // cost perturbation of the dual pivots, relative to 1+|c|_inf
	minWeight     = 1e-12 // floor of a steepest-edge weight
)

// dual is the dual simplex method on the restricted problem
//
//	minimise c'x  subject to  a_k'x <= b_k
//
// over the pool rows and the bounds, in the row (active-set) form that
// suits few unknowns and many rows (the textbook dual simplex method,
// with every row's slack in the standard form's basis but its own n
// constraints). A basis is n linearly independent constraints held at
// equality: B has their normals as rows, the vertex is x = B⁻¹b_B and
// their multipliers y = -B⁻ᵀc. The basis stays dual feasible (y >= 0)
// throughout, so a row added to the pool keeps the previous optimal basis
// as a warm start: each pivot brings in a violated constraint r (by dual
// steepest edge, see price; w = B⁻ᵀa_r) and drops the basic constraint the ratio test min y_k/w_k over
// w_k > 0 picks (Harris's two-pass test, the larger pivot among near
// ties [Harris1973]), then updates the explicit B⁻¹ by a rank-one change and
// refactorises it by LU every refactorEvery pivots. After blandAfter
// degenerate pivots in a row both choices fall back to Bland's
// smallest-index rule, which cannot cycle [Bland1977]. The costs are
// perturbed during the dual pivots and restored at their end (see run).
//
// The start is the basis of bounds that makes y = |c| >= 0: the lower
// bound of x_j when c_j > 0, the upper when c_j < 0. Where that bound is
// infinite an artificial one at ±big stands in; one that binds at the
// optimum points along a ray (reported as unbounded once the ray keeps
// every pool row and bound), else big grows and the pivots go on. An
// infeasibility proof that leans on an artificial bound grows big the same
// way.
type dual struct {
	n   int
	c   []float64
	cn  float64   // |c|_inf
	lb  []float64 // bounds; constraint 2j is -x_j <= -lb[j], 2j+1 is x_j <= ub[j]
	ub  []float64
	art []bool // per bound constraint: an artificial bound at ±big
	big float64
	// pool rows, constraint 2n+i, scaled to unit infinity norm
	g, h, rs, nrm []float64
	idx           []int
	inB           []bool // per constraint: in the basis
	basis         []int  // constraint at each position
	binv          []float64
	x, y          []float64
	w, u, ax, bb  []float64
	bm            *mat.Dense
	res           []float64 // pool rows' a_i'x - b_i
	al            []float64 // scratch of pivot: a_i'u and a_i'tau per pool row
	beta          []float64 // steepest-edge weights, per constraint
	tau           []float64
	weighted      int       // pool rows with a weight
	weightsOK     bool      // the bounds' weights (and all others) are current
	cc            []float64 // perturbed costs
	perturbed     bool
	rng           *rand.Rand
	since         int // pivots since the last refactorisation
	iters         int
	grows         int
	degenerate    int
	// set by run for Infeasible and Unbounded
	farkasRow int       // the violated constraint whose ratio test was empty
	farkasW   []float64 // its w
	farkasV   float64   // its violation
	ray       []float64
}

func newDual(c, lower, upper []float64, rowsHint int) (*dual, error) {
	n := len(c)
	s := &dual{n: n, c: c}
	s.lb = make([]float64, n)
	s.ub = make([]float64, n)
	s.art = make([]bool, 2*n)
	s.inB = make([]bool, 2*n, 2*n+rowsHint)
	s.g = make([]float64, 0, rowsHint*n)
	for j, v := range c {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, fmt.Errorf("%w: objective coefficient %d is %v", ErrInvalid, j, v)
		}
		s.cn = max(s.cn, math.Abs(v))
	}
	for j := 0; j < n; j++ {
		s.lb[j], s.ub[j] = math.Inf(-1), math.Inf(1)
		if lower != nil {
			if l := lower[j]; math.IsNaN(l) || math.IsInf(l, 1) {
				return nil, fmt.Errorf("%w: lower bound %d is %v", ErrInvalid, j, l)
			}
			s.lb[j] = lower[j]
		}
		if upper != nil {
			if u := upper[j]; math.IsNaN(u) || math.IsInf(u, -1) {
				return nil, fmt.Errorf("%w: upper bound %d is %v", ErrInvalid, j, u)
			}
			s.ub[j] = upper[j]
		}
	}
	s.binv = make([]float64, n*n)
	s.x = make([]float64, n)
	s.y = make([]float64, n)
	s.w = make([]float64, n)
	s.u = make([]float64, n)
	s.bb = make([]float64, n)
	s.basis = make([]int, n)
	return s, nil
}

// addRow appends row g'x <= h (original index i), scaled; a row with
// h = +Inf is skipped.
func (s *dual) addRow(g []float64, h float64, i int) error {
	if math.IsNaN(h) || math.IsInf(h, -1) {
		return fmt.Errorf("%w: row %d: right-hand side is %v", ErrInvalid, i, h)
	}
	if math.IsInf(h, 1) {
		return nil
	}
	scale := 0.0
	for j, v := range g {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return fmt.Errorf("%w: row %d column %d: coefficient is %v", ErrInvalid, i, j, v)
		}
		scale = max(scale, math.Abs(v))
	}
	if scale == 0 {
		scale = 1
	}
	k := len(s.g)
	s.g = append(s.g, g...)
	r := s.g[k:]
	floats.Scale(1/scale, r)
	s.h = append(s.h, h/scale)
	s.rs = append(s.rs, scale)
	s.nrm = append(s.nrm, max(floats.Norm(r, 2), 1e-300))
	s.idx = append(s.idx, i)
	s.inB = append(s.inB, false)
	return nil
}

func (s *dual) rows() int { return len(s.h) }

// rhs returns b of constraint k.
func (s *dual) rhs(k int) float64 {
	n := s.n
	switch {
	case k >= 2*n:
		return s.h[k-2*n]
	case k%2 == 0:
		return -s.lb[k/2]
	}
	return s.ub[k/2]
}

// start sets the basis of bounds (artificial ones where needed) with
// y = |c|, the artificial bounds at ±big.
func (s *dual) start() {
	n := s.n
	mag := 1.0
	for j := 0; j < n; j++ {
		for _, v := range [2]float64{s.lb[j], s.ub[j]} {
			if !math.IsInf(v, 0) {
				mag = max(mag, math.Abs(v))
			}
		}
	}
	for _, v := range s.h {
		mag = max(mag, math.Abs(v))
	}
	s.big = bigStart * mag
	clear(s.binv)
	for j := 0; j < n; j++ {
		useUpper := s.c[j] < 0 || (s.c[j] == 0 && math.IsInf(s.lb[j], -1) && !math.IsInf(s.ub[j], 1))
		k := 2 * j
		if useUpper {
			k++
		}
		if useUpper && math.IsInf(s.ub[j], 1) {
			s.art[k], s.ub[j] = true, s.big
		}
		if !useUpper && math.IsInf(s.lb[j], -1) {
			s.art[k], s.lb[j] = true, -s.big
		}
		s.basis[j] = k
		s.inB[k] = true
		if useUpper {
			s.binv[j*n+j] = 1
			s.x[j] = s.ub[j]
		} else {
			s.binv[j*n+j] = -1
			s.x[j] = s.lb[j]
		}
		s.y[j] = math.Abs(s.c[j])
	}
}

// normalTo stores constraint k's normal in dst and returns dst.
func (s *dual) normalTo(dst []float64, k int) []float64 {
	n := s.n
	if k >= 2*n {
		copy(dst, s.g[(k-2*n)*n:(k-2*n+1)*n])
		return dst
	}
	clear(dst)
	if k%2 == 0 {
		dst[k/2] = -1
	} else {
		dst[k/2] = 1
	}
	return dst
}

// refactor recomputes B⁻¹ by LU, then x and y from it. It reports false
// when B is singular or too badly conditioned.
func (s *dual) refactor() bool {
	n := s.n
	s.since = 0
	if n == 0 {
		return true
	}
	if s.bm == nil {
		s.bm = mat.NewDense(n, n, nil)
	}
	row := make([]float64, n)
	for k, id := range s.basis {
		s.bm.SetRow(k, s.normalTo(row, id))
	}
	var inv mat.Dense
	if err := inv.Inverse(s.bm); err != nil {
		if c, ok := err.(mat.Condition); !ok || float64(c) > maxCondition {
			return false
		}
	}
	raw := inv.RawMatrix()
	for i := 0; i < n; i++ {
		copy(s.binv[i*n:(i+1)*n], raw.Data[i*raw.Stride:i*raw.Stride+n])
	}
	s.resolve()
	s.sync()
	return true
}

// resolve recomputes x = B⁻¹b_B (with one step of iterative refinement)
// and y = -B⁻ᵀc from the current B⁻¹, clamping rounding-level negative
// multipliers to zero.
func (s *dual) resolve() {
	n := s.n
	for k, id := range s.basis {
		s.bb[k] = s.rhs(id)
	}
	B := blas64.General{Rows: n, Cols: n, Stride: n, Data: s.binv}
	blas64.Gemv(blas.NoTrans, 1, B, blas64.Vector{N: n, Inc: 1, Data: s.bb}, 0, blas64.Vector{N: n, Inc: 1, Data: s.x})
	// refinement: r = b_B - B x, x += B⁻¹ r
	for k, id := range s.basis {
		s.u[k] = s.bb[k] - s.dot(id, s.x)
	}
	blas64.Gemv(blas.NoTrans, 1, B, blas64.Vector{N: n, Inc: 1, Data: s.u}, 0, blas64.Vector{N: n, Inc: 1, Data: s.w})
	floats.Add(s.x, s.w)
	blas64.Gemv(blas.Trans, -1, B, blas64.Vector{N: n, Inc: 1, Data: s.costs()}, 0, blas64.Vector{N: n, Inc: 1, Data: s.y})
}

// dot returns a_k'x.
func (s *dual) dot(k int, x []float64) float64 {
	n := s.n
	if k >= 2*n {
		return floats.Dot(s.g[(k-2*n)*n:(k-2*n+1)*n], x)
	}
	if k%2 == 0 {
		return -x[k/2]
	}
	return x[k/2]
}

// price returns the violated constraint to bring in and its violation,
// or -1: by dual steepest edge, the largest violation² / ||B⁻ᵀa_k||²
// [ForrestGoldfarb1992], or with bland the
// lowest-numbered violated constraint.
func (s *dual) price(bland bool) (int, float64) {
	n := s.n
	xinf := floats.Norm(s.x, math.Inf(1))
	best, bestV, bestScore := -1, 0.0, 0.0
	consider := func(k int, v, b float64) bool {
		if !(v > dualFeasTol*(1+math.Abs(b)+xinf)) {
			return false
		}
		if sc := v * v / s.beta[k]; best < 0 || sc > bestScore {
			best, bestV, bestScore = k, v, sc
		}
		return bland
	}
	for j := 0; j < n; j++ {
		if !s.inB[2*j] && !math.IsInf(s.lb[j], -1) && consider(2*j, s.lb[j]-s.x[j], s.lb[j]) {
			return best, bestV
		}
		if !s.inB[2*j+1] && !math.IsInf(s.ub[j], 1) && consider(2*j+1, s.x[j]-s.ub[j], s.ub[j]) {
			return best, bestV
		}
	}
	for i, v := range s.res {
		if !s.inB[2*n+i] && consider(2*n+i, v, s.h[i]) {
			return best, bestV
		}
	}
	return best, bestV
}

// sync brings the pool rows' residuals a_i'x - b_i up to date with x and
// gives the rows added since the last call (or, after primal pivots, all
// constraints) their steepest-edge weights ||B⁻ᵀa_k||².
func (s *dual) sync() {
	n, m := s.n, len(s.h)
	if cap(s.res) < m {
		s.res = make([]float64, m, 2*m)
	}
	s.res = s.res[:m]
	if m > 0 {
		G := blas64.General{Rows: m, Cols: n, Stride: n, Data: s.g}
		blas64.Gemv(blas.NoTrans, 1, G, blas64.Vector{N: n, Inc: 1, Data: s.x}, 0, blas64.Vector{N: m, Inc: 1, Data: s.res})
		floats.Sub(s.res, s.h)
	}
	if len(s.beta) < 2*n+m {
		s.beta = append(s.beta, make([]float64, 2*n+m-len(s.beta))...)
	}
	from := s.weighted
	if !s.weightsOK {
		from = 0
		for j := 0; j < n; j++ {
			r := s.binv[j*n : (j+1)*n]
			s.beta[2*j] = max(floats.Dot(r, r), minWeight)
			s.beta[2*j+1] = s.beta[2*j]
		}
		s.weightsOK = true
	}
	if from < m {
		k := m - from
		w := make([]float64, k*n)
		G := blas64.General{Rows: k, Cols: n, Stride: n, Data: s.g[from*n:]}
		B := blas64.General{Rows: n, Cols: n, Stride: n, Data: s.binv}
		W := blas64.General{Rows: k, Cols: n, Stride: n, Data: w}
		blas64.Gemm(blas.NoTrans, blas.NoTrans, 1, G, B, 0, W) // row i: (B⁻ᵀa_i)'
		for i := 0; i < k; i++ {
			r := w[i*n : (i+1)*n]
			s.beta[2*n+from+i] = max(floats.Dot(r, r), minWeight)
		}
	}
	s.weighted = m
}

// run pivots until the pool's problem is solved, at most maxIter pivots
// in all. Status is Optimal, Infeasible (farkas fields set), Unbounded
// (ray set), IterationLimit or NumericalFailure.
//
// The dual pivots run on perturbed costs (perturb), which makes ties in
// the ratio test, and the stalling they cause on these highly degenerate
// problems, unlikely. At their optimum the true costs come back; a
// multiplier that turns negative then is removed by primal simplex
// pivots (primal), as HiGHS does after its own cost perturbation
// [HuangfuHall2018].
func (s *dual) run(maxIter int) Status {
	dtol := dualOptTol * (1 + s.cn)
	for {
		if !s.perturbed {
			s.perturb()
		}
		s.sync()
		r, viol, st := s.dualPhase(maxIter, dtol)
		switch st {
		case Infeasible:
			st, again := s.infeasible(r, viol)
			if again {
				continue
			}
			return st
		case Optimal:
		default:
			return st
		}
		if !s.unperturb() {
			return NumericalFailure
		}
		if st := s.primal(maxIter, dtol); st != Optimal {
			return st
		}
		s.sync()
		if r, _ := s.price(false); r >= 0 {
			continue // a rounding-level violation after the refactorisation
		}
		st, again := s.optimal(dtol)
		if again {
			continue
		}
		return st
	}
}

// dualPhase makes dual simplex pivots until no constraint is violated
// (Optimal), the ratio test for the violated constraint r is empty
// (Infeasible, with r, its violation and w in s.w) or a limit or a
// failure stops it.
func (s *dual) dualPhase(maxIter int, dtol float64) (int, float64, Status) {
	n := s.n
	for {
		if s.since >= refactorEvery && !s.refactor() {
			return -1, 0, NumericalFailure
		}
		bland := s.degenerate >= blandAfter
		r, viol := s.price(bland)
		if r < 0 {
			if s.since > 0 { // confirm on a fresh factorisation
				if !s.refactor() {
					return -1, 0, NumericalFailure
				}
				if r, _ = s.price(false); r >= 0 {
					continue
				}
			}
			return -1, 0, Optimal
		}
		if s.iters >= maxIter {
			return -1, 0, IterationLimit
		}
		// w = B⁻ᵀ a_r
		B := blas64.General{Rows: n, Cols: n, Stride: n, Data: s.binv}
		if r >= 2*n {
			blas64.Gemv(blas.Trans, 1, B, blas64.Vector{N: n, Inc: 1, Data: s.g[(r-2*n)*n : (r-2*n+1)*n]}, 0,
				blas64.Vector{N: n, Inc: 1, Data: s.w})
		} else {
			copy(s.w, s.binv[(r/2)*n:(r/2+1)*n])
			if r%2 == 0 {
				floats.Scale(-1, s.w)
			}
		}
		l := s.ratio(dtol, bland)
		if l < 0 {
			return r, viol, Infeasible
		}
		s.pivot(r, l, viol)
	}
}

// perturb shifts the costs so that the basis's multipliers grow by small
// random amounts: with delta_k in [1, 2]·perturbRel·(1+|c|_inf), the
// costs c - B'delta give y + delta. Deterministic (a fixed seed).
func (s *dual) perturb() {
	n := s.n
	if s.cc == nil {
		s.cc = make([]float64, n)
		s.rng = rand.New(rand.NewPCG(1, 0))
	}
	copy(s.cc, s.c)
	for k, id := range s.basis {
		d := perturbRel * (1 + s.cn) * (1 + s.rng.Float64())
		s.y[k] = max(s.y[k], 0) + d
		if id >= 2*n {
			floats.AddScaled(s.cc, -d, s.g[(id-2*n)*n:(id-2*n+1)*n])
		} else if id%2 == 0 {
			s.cc[id/2] += d
		} else {
			s.cc[id/2] -= d
		}
	}
	s.perturbed = true
}

// unperturb restores the true costs: a fresh factorisation, x and y.
func (s *dual) unperturb() bool {
	s.perturbed = false
	return s.refactor()
}

// costs returns the costs the multipliers belong to.
func (s *dual) costs() []float64 {
	if s.perturbed {
		return s.cc
	}
	return s.c
}

// primal makes primal simplex pivots from a vertex that satisfies every
// pool constraint until no multiplier is below -dtol: the basic
// constraint with the most negative multiplier is released (x moves along
// d = -B⁻¹e_l, along which c'd = y_l < 0) and the first constraint to
// turn tight takes its place (Harris's test; Bland's rule after
// blandAfter degenerate steps). Unbounded (ray set) when nothing blocks.
func (s *dual) primal(maxIter int, dtol float64) Status {
	n, m := s.n, len(s.h)
	d := make([]float64, n)
	degenerate := 0
	for {
		if s.since >= refactorEvery && !s.refactor() {
			return NumericalFailure
		}
		bland := degenerate >= blandAfter
		l := -1
		for k, yk := range s.y {
			if yk < -dtol && (l < 0 || (bland && s.basis[k] < s.basis[l]) || (!bland && yk < s.y[l])) {
				l = k
			}
		}
		if l < 0 {
			clampNeg(s.y)
			return Optimal
		}
		if s.iters >= maxIter {
			return IterationLimit
		}
		for i := 0; i < n; i++ {
			d[i] = -s.binv[i*n+l]
		}
		dn := floats.Norm(d, math.Inf(1))
		xinf := floats.Norm(s.x, math.Inf(1))
		// Harris: the largest step any constraint allows with a slack of
		// its feasibility tolerance, then the largest a'd among those
		// blocking before it.
		type blk struct {
			k           int
			slack, rate float64
		}
		var bl []blk
		consider := func(k int, ax, b, ad, nrm float64) {
			if ad > dualPivTol*dn*nrm {
				bl = append(bl, blk{k, b - ax, ad})
			}
		}
		for j := 0; j < n; j++ {
			if !s.inB[2*j] && !math.IsInf(s.lb[j], -1) {
				consider(2*j, -s.x[j], -s.lb[j], -d[j], 1)
			}
			if !s.inB[2*j+1] && !math.IsInf(s.ub[j], 1) {
				consider(2*j+1, s.x[j], s.ub[j], d[j], 1)
			}
		}
		if m > 0 {
			if cap(s.ax) < 2*m {
				s.ax = make([]float64, 2*m, 4*m)
			}
			ax, ad := s.ax[:m], s.ax[m:2*m]
			G := blas64.General{Rows: m, Cols: n, Stride: n, Data: s.g}
			blas64.Gemv(blas.NoTrans, 1, G, blas64.Vector{N: n, Inc: 1, Data: s.x}, 0, blas64.Vector{N: m, Inc: 1, Data: ax})
			blas64.Gemv(blas.NoTrans, 1, G, blas64.Vector{N: n, Inc: 1, Data: d}, 0, blas64.Vector{N: m, Inc: 1, Data: ad})
			for i := 0; i < m; i++ {
				if !s.inB[2*n+i] {
					consider(2*n+i, ax[i], s.h[i], ad[i], s.nrm[i])
				}
			}
		}
		if len(bl) == 0 {
			cd := floats.Dot(s.c, d)
			s.ray = append(s.ray[:0], d...)
			floats.Scale(1/(-cd), s.ray)
			return Unbounded
		}
		tmax := math.Inf(1)
		for _, b := range bl {
			tol := dualFeasTol * (1 + math.Abs(s.rhs(b.k)) + xinf)
			tmax = min(tmax, (max(b.slack, 0)+tol)/b.rate)
		}
		best := -1
		tmin := math.Inf(1)
		for _, b := range bl {
			tmin = min(tmin, max(b.slack, 0)/b.rate)
		}
		for q, b := range bl {
			step := max(b.slack, 0) / b.rate
			switch {
			case bland:
				if step <= tmin*(1+1e-12) && (best < 0 || b.k < bl[best].k) {
					best = q
				}
			case step <= tmax && (best < 0 || b.rate > bl[best].rate):
				best = q
			}
		}
		b := bl[best]
		step := max(b.slack, 0) / b.rate
		if step*(-s.y[l]) <= 1e-14*(1+s.cn) {
			degenerate++
		} else {
			degenerate = 0
		}
		floats.AddScaled(s.x, step, d)
		// w = B⁻ᵀ a_k for the entering constraint, then the basis change.
		B := blas64.General{Rows: n, Cols: n, Stride: n, Data: s.binv}
		a := s.normalTo(make([]float64, n), b.k)
		blas64.Gemv(blas.Trans, 1, B, blas64.Vector{N: n, Inc: 1, Data: a}, 0, blas64.Vector{N: n, Inc: 1, Data: s.w})
		s.swap(b.k, l)
		s.weightsOK = false
		blas64.Gemv(blas.Trans, -1, B, blas64.Vector{N: n, Inc: 1, Data: s.c}, 0, blas64.Vector{N: n, Inc: 1, Data: s.y})
	}
}

// clampNeg sets the negative entries of v to zero.
func clampNeg(v []float64) {
	for i, x := range v {
		v[i] = max(x, 0)
	}
}

// ratio returns the basis position to drop for w, or -1 when no w_k is
// positive (the dual is unbounded along the entering constraint).
func (s *dual) ratio(dtol float64, bland bool) int {
	wmax := floats.Norm(s.w, math.Inf(1))
	piv := dualPivTol * max(1, wmax)
	tmax := math.Inf(1)
	for k, wk := range s.w {
		if wk > piv {
			tmax = min(tmax, (max(s.y[k], 0)+dtol)/wk)
		}
	}
	if math.IsInf(tmax, 1) {
		return -1
	}
	best := -1
	if bland {
		tmin := math.Inf(1)
		for k, wk := range s.w {
			if wk > piv {
				tmin = min(tmin, max(s.y[k], 0)/wk)
			}
		}
		for k, wk := range s.w {
			if wk > piv && max(s.y[k], 0)/wk <= tmin+dtol/wk && (best < 0 || s.basis[k] < s.basis[best]) {
				best = k
			}
		}
		return best
	}
	for k, wk := range s.w {
		if wk > piv && max(s.y[k], 0)/wk <= tmax && (best < 0 || wk > s.w[best]) {
			best = k
		}
	}
	return best
}

// pivot brings constraint r (violated by viol, w = B⁻ᵀa_r) into the basis
// at position l: y moves along the dual ray, x along -B⁻¹e_l until row r
// is tight. The residuals and the steepest-edge weights follow: with
// u = B⁻¹e_l, tau = B⁻¹w, alpha_k = a_k'u and a = alpha_k/w_l, each
// nonbasic constraint's B⁻ᵀa_k changes by -a (w - e_l), so its residual
// by -a·viol and its weight by -2a(a_k'tau - alpha_k) + a²||w - e_l||²
// ([ForrestGoldfarb1992], in this row form).
func (s *dual) pivot(r, l int, viol float64) {
	n, m := s.n, len(s.h)
	wl := s.w[l]
	t := max(s.y[l], 0) / wl
	for k := range s.y {
		s.y[k] = max(s.y[k]-t*s.w[k], 0)
	}
	s.y[l] = t
	if t*viol <= 1e-14*(1+s.cn) {
		s.degenerate++
	} else {
		s.degenerate = 0
	}
	for i := 0; i < n; i++ {
		s.u[i] = s.binv[i*n+l]
	}
	if len(s.tau) < n {
		s.tau = make([]float64, n)
	}
	B := blas64.General{Rows: n, Cols: n, Stride: n, Data: s.binv}
	blas64.Gemv(blas.NoTrans, 1, B, blas64.Vector{N: n, Inc: 1, Data: s.w}, 0, blas64.Vector{N: n, Inc: 1, Data: s.tau})
	ww := floats.Dot(s.w, s.w)
	wn2 := ww - 2*wl + 1 // ||w - e_l||²
	step := viol / wl
	upd := func(k int, alpha, rho float64) {
		a := alpha / wl
		s.beta[k] = max(s.beta[k]-2*a*(rho-alpha)+a*a*wn2, a*a, minWeight)
	}
	for j := 0; j < n; j++ {
		if !s.inB[2*j] {
			upd(2*j, -s.u[j], -s.tau[j])
		}
		if !s.inB[2*j+1] {
			upd(2*j+1, s.u[j], s.tau[j])
		}
	}
	if m > 0 {
		// alpha = G u and rho = G tau over the pool, by two
		// matrix-vector products (gonum's assembly kernels: 1.5x the
		// speed of one fused loop per row on the 204-unknown LP of
		// make bench-lp).
		if cap(s.al) < 2*m {
			s.al = make([]float64, 2*m, 4*m)
		}
		al, rh := s.al[:m], s.al[m:2*m]
		G := blas64.General{Rows: m, Cols: n, Stride: n, Data: s.g}
		blas64.Gemv(blas.NoTrans, 1, G, blas64.Vector{N: n, Inc: 1, Data: s.u}, 0, blas64.Vector{N: m, Inc: 1, Data: al})
		blas64.Gemv(blas.NoTrans, 1, G, blas64.Vector{N: n, Inc: 1, Data: s.tau}, 0, blas64.Vector{N: m, Inc: 1, Data: rh})
		for i := 0; i < m; i++ {
			if s.inB[2*n+i] {
				continue
			}
			s.res[i] -= step * al[i]
			upd(2*n+i, al[i], rh[i])
		}
	}
	q := s.basis[l]
	s.beta[q] = max((ww-wl*wl+1)/(wl*wl), minWeight)
	if q >= 2*n {
		s.res[q-2*n] = -step
	}
	if r >= 2*n {
		s.res[r-2*n] = 0
	}
	floats.AddScaled(s.x, -step, s.u)
	s.swap(r, l)
}

// swap puts constraint r at basis position l, given w = B⁻ᵀa_r (w_l != 0):
// B⁻¹ -= u (w - e_l)'/w_l with u = B⁻¹e_l. It overwrites w and u.
func (s *dual) swap(r, l int) {
	n := s.n
	wl := s.w[l]
	for i := 0; i < n; i++ {
		s.u[i] = s.binv[i*n+l]
	}
	s.w[l] -= 1
	blas64.Ger(-1/wl, blas64.Vector{N: n, Inc: 1, Data: s.u}, blas64.Vector{N: n, Inc: 1, Data: s.w},
		blas64.General{Rows: n, Cols: n, Stride: n, Data: s.binv})
	s.inB[s.basis[l]] = false
	s.inB[r] = true
	s.basis[l] = r
	s.iters++
	s.since++
}

// optimal handles a basis with no violated constraint: the answer, unless
// an artificial bound binds, in which case it returns Unbounded with a
// ray, or grows big and asks for more pivots.
func (s *dual) optimal(dtol float64) (Status, bool) {
	n := s.n
	binding := false
	for k, id := range s.basis {
		if id < 2*n && s.art[id] && s.y[k] > dtol {
			binding = true
		}
	}
	if !binding {
		return Optimal, false
	}
	// The vertex moves along d = sum of B⁻¹'s columns of the artificial
	// constraints as big grows; c'd = -(their multipliers) < 0.
	d := make([]float64, n)
	for k, id := range s.basis {
		if id < 2*n && s.art[id] {
			for i := 0; i < n; i++ {
				d[i] += s.binv[i*n+k]
			}
		}
	}
	cd := floats.Dot(s.c, d)
	dn := floats.Norm(d, math.Inf(1))
	ok := cd < 0 && -cd > dualFeasTol*(1+s.cn)*dn
	for j := 0; j < n && ok; j++ {
		if !s.art[2*j] && !math.IsInf(s.lb[j], -1) && d[j] < -dualFeasTol*dn {
			ok = false
		}
		if !s.art[2*j+1] && !math.IsInf(s.ub[j], 1) && d[j] > dualFeasTol*dn {
			ok = false
		}
	}
	for i := 0; i < len(s.h) && ok; i++ {
		if floats.Dot(s.g[i*n:(i+1)*n], d) > dualFeasTol*dn*s.nrm[i] {
			ok = false
		}
	}
	if ok {
		floats.Scale(1/(-cd), d)
		s.ray = d
		return Unbounded, false
	}
	return s.grow()
}

// infeasible handles an empty ratio test for constraint r: a Farkas
// certificate, unless it leans on an artificial bound.
func (s *dual) infeasible(r int, viol float64) (Status, bool) {
	n := s.n
	wmax := floats.Norm(s.w, math.Inf(1))
	for k, id := range s.basis {
		if id < 2*n && s.art[id] && s.w[k] < -dualPivTol*max(1, wmax) {
			return s.grow()
		}
	}
	s.farkasRow, s.farkasV = r, viol
	s.farkasW = append(s.farkasW[:0], s.w...)
	return Infeasible, false
}

// grow multiplies the artificial bounds by bigGrow and recomputes the
// vertex; it gives NumericalFailure after bigTries growths.
func (s *dual) grow() (Status, bool) {
	if s.grows >= bigTries {
		return NumericalFailure, false
	}
	s.grows++
	s.big *= bigGrow
	for j := 0; j < s.n; j++ {
		if s.art[2*j] {
			s.lb[j] = -s.big
		}
		if s.art[2*j+1] {
			s.ub[j] = s.big
		}
	}
	s.resolve()
	s.sync()
	return 0, true
}

// fill writes the answer of the last run (status st) into res in the
// units of the original problem with rows rows; row(i) returns original
// row i.
func (s *dual) fill(res *Result, st Status, rows int, row func(i int) ([]float64, float64)) {
	n := s.n
	res.Status = st
	res.Objective = math.NaN()
	switch st {
	case Infeasible:
		f := &Farkas{Y: make([]float64, rows), YLower: make([]float64, n), YUpper: make([]float64, n)}
		put := func(k int, v float64) {
			switch {
			case k >= 2*n:
				f.Y[s.idx[k-2*n]] += v / s.rs[k-2*n]
			case k%2 == 0:
				f.YLower[k/2] += v
			default:
				f.YUpper[k/2] += v
			}
		}
		put(s.farkasRow, 1/s.farkasV)
		for k, id := range s.basis {
			if wk := s.farkasW[k]; wk < 0 {
				put(id, -wk/s.farkasV)
			}
		}
		r := make([]float64, n)
		for i := range s.h {
			g, _ := row(s.idx[i])
			floats.AddScaled(r, f.Y[s.idx[i]], g)
		}
		floats.Sub(r, f.YLower)
		floats.Add(r, f.YUpper)
		f.Residual = floats.Norm(r, math.Inf(1))
		res.Farkas = f
		return
	case Unbounded:
		res.Ray = append([]float64(nil), s.ray...)
		return
	case Optimal, IterationLimit:
	default:
		return
	}
	res.X = append([]float64(nil), s.x...)
	res.Z = make([]float64, rows)
	res.ZLower = make([]float64, n)
	res.ZUpper = make([]float64, n)
	for k, id := range s.basis {
		yk := max(s.y[k], 0)
		switch {
		case id >= 2*n:
			res.Z[s.idx[id-2*n]] = yk / s.rs[id-2*n]
		case s.art[id]: // not binding (else the status is not Optimal)
		case id%2 == 0:
			res.ZLower[id/2] = yk
		default:
			res.ZUpper[id/2] = yk
		}
	}
	for j := 0; j < n; j++ { // the vertex may sit a rounding error outside
		if !s.art[2*j] {
			res.X[j] = max(res.X[j], s.lb[j])
		}
		if !s.art[2*j+1] {
			res.X[j] = min(res.X[j], s.ub[j])
		}
	}
	res.Objective = floats.Dot(s.c, res.X)
	dual := append([]float64(nil), s.c...)
	dobj, pres := 0.0, 0.0
	for i := range s.h {
		g, h := row(s.idx[i])
		zi := res.Z[s.idx[i]]
		floats.AddScaled(dual, zi, g)
		dobj -= h * zi
		pres = max(pres, floats.Dot(g, res.X)-h)
	}
	for j := 0; j < n; j++ {
		if !s.art[2*j] && !math.IsInf(s.lb[j], -1) {
			dual[j] -= res.ZLower[j]
			dobj += s.lb[j] * res.ZLower[j]
			pres = max(pres, s.lb[j]-res.X[j])
		}
		if !s.art[2*j+1] && !math.IsInf(s.ub[j], 1) {
			dual[j] += res.ZUpper[j]
			dobj -= s.ub[j] * res.ZUpper[j]
			pres = max(pres, res.X[j]-s.ub[j])
		}
	}
	res.PrimalResidual = pres
	res.DualResidual = floats.Norm(dual, math.Inf(1))
	res.Gap = res.Objective - dobj
	res.RelGap = res.Gap / (1 + math.Abs(res.Objective))
}
