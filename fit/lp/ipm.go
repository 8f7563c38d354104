package lp

import (
	"context"
	"fmt"
	"math"
	"runtime"

	"basin.example/fit/internal/gram"
	"basin.example/internal/parallel"
	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/lapack/lapack64"
)

// Solver constants (not user-facing).
const (
	stepFrac     = 0.99  // fraction of the step to the boundary
	regStart     = 1e-13 // diagonal shift of the normal matrix, relative to each diagonal entry
	regFloor     = 1e-3  // the shift's floor, relative to regStart times the mean diagonal entry
	refineSteps  = 3     // iterative refinement of each normal-equations solve
	regGrow      = 100   // shift growth after a failed factorisation
	regTries     = 8     // factorisation attempts per iteration
	stallIters   = 8     // iterations with tiny steps before giving up
	tinyStep     = 1e-10 // a step this short makes no progress
	minDiagonal  = 1e-300
	parallelWork = 1 << 21 // multiply-adds above which the normal matrix is formed in parallel
)

// Solve minimises p.C'x subject to p.G x <= p.H and p.Lower <= x <= p.Upper.
//
// The returned *Result is non-nil whenever err is nil or wraps one of
// ErrInfeasible, ErrUnbounded, ErrIterations or ErrNumerical, and carries
// the certificate for the first two. ErrInvalid (NaN or misplaced infinite
// data) comes with a nil Result. Solve panics if the slice lengths do not
// match (len(G) != len(H)*len(C), or a bound of the wrong length).
func Solve(p *Problem, opts *Options) (*Result, error) {
	n := len(p.C)
	m := len(p.H)
	if len(p.G) != m*n || (p.Lower != nil && len(p.Lower) != n) || (p.Upper != nil && len(p.Upper) != n) {
		panic(fmt.Sprintf("lp: length mismatch: %d unknowns, %d rows, len(G)=%d, len(Lower)=%d, len(Upper)=%d",
			n, m, len(p.G), len(p.Lower), len(p.Upper)))
	}
	s, err := newIPM(p.C, p.Lower, p.Upper, m)
	if err != nil {
		return nil, err
	}
	for i := 0; i < m; i++ {
		if err := s.addRow(p.G[i*n:(i+1)*n], p.H[i], i); err != nil {
			return nil, err
		}
	}
	res := s.run(opts)
	res.Method = InteriorPoint
	s.fill(res, m, func(i int) ([]float64, float64) { return p.G[i*n : (i+1)*n], p.H[i] })
	return res, res.err()
}

func (r *Result) err() error {
	switch r.Status {
	case Optimal:
		return nil
	case Infeasible:
		return fmt.Errorf("%w (Farkas certificate residual %.2g)", ErrInfeasible, r.Farkas.Residual)
	case Unbounded:
		return ErrUnbounded
	case IterationLimit:
		return fmt.Errorf("%w after %d iterations (primal residual %.2g, dual residual %.2g, gap %.2g)",
			ErrIterations, r.Iterations, r.PrimalResidual, r.DualResidual, r.Gap)
	}
	return fmt.Errorf("%w after %d iterations (primal residual %.2g, dual residual %.2g, gap %.2g)",
		ErrNumerical, r.Iterations, r.PrimalResidual, r.DualResidual, r.Gap)
}

// ipm holds the scaled problem in the form min c'x s.t. Ax <= b, where A
// stacks the kept rows of G (each divided by its infinity norm), -I on the
// finite lower bounds and I on the finite upper bounds.
type ipm struct {
	n   int
	c   []float64
	g   []float64 // kept rows, scaled, row-major
	h   []float64 // their right-hand sides, scaled
	rs  []float64 // scale of each kept row: scaled = original / rs
	idx []int     // original index of each kept row
	lo  []int     // unknowns with a finite lower bound
	up  []int     // unknowns with a finite upper bound
	lb  []float64 // the bounds, per entry of lo and up
	ub  []float64

	last state     // the final iterate of run
	part []float64 // per-worker partial normal matrices
}

func newIPM(c, lower, upper []float64, rowsHint int) (*ipm, error) {
	n := len(c)
	s := &ipm{n: n, c: c}
	s.g = make([]float64, 0, rowsHint*n)
	for j, v := range c {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, fmt.Errorf("%w: objective coefficient %d is %v", ErrInvalid, j, v)
		}
	}
	for j := 0; j < n; j++ {
		if lower != nil {
			l := lower[j]
			if math.IsNaN(l) || math.IsInf(l, 1) {
				return nil, fmt.Errorf("%w: lower bound %d is %v", ErrInvalid, j, l)
			}
			if !math.IsInf(l, -1) {
				s.lo = append(s.lo, j)
				s.lb = append(s.lb, l)
			}
		}
		if upper != nil {
			u := upper[j]
			if math.IsNaN(u) || math.IsInf(u, -1) {
				return nil, fmt.Errorf("%w: upper bound %d is %v", ErrInvalid, j, u)
			}
			if !math.IsInf(u, 1) {
				s.up = append(s.up, j)
				s.ub = append(s.ub, u)
			}
		}
	}
	return s, nil
}

// addRow appends row g'x <= h (original index i), scaled; a row with
// h = +Inf is skipped.
func (s *ipm) addRow(g []float64, h float64, i int) error {
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
	floats.Scale(1/scale, s.g[k:])
	s.h = append(s.h, h/scale)
	s.rs = append(s.rs, scale)
	s.idx = append(s.idx, i)
	return nil
}

func (s *ipm) rows() int { return len(s.h) + len(s.lo) + len(s.up) }

// mulA stores A x in dst.
func (s *ipm) mulA(dst, x []float64) {
	n, m := s.n, len(s.h)
	for i := 0; i < m; i++ {
		dst[i] = floats.Dot(s.g[i*n:(i+1)*n], x)
	}
	for k, j := range s.lo {
		dst[m+k] = -x[j]
	}
	o := m + len(s.lo)
	for k, j := range s.up {
		dst[o+k] = x[j]
	}
}

// mulAT stores A'y in dst.
func (s *ipm) mulAT(dst, y []float64) {
	n, m := s.n, len(s.h)
	for j := range dst {
		dst[j] = 0
	}
	for i := 0; i < m; i++ {
		if y[i] != 0 {
			floats.AddScaled(dst, y[i], s.g[i*n:(i+1)*n])
		}
	}
	for k, j := range s.lo {
		dst[j] -= y[m+k]
	}
	o := m + len(s.lo)
	for k, j := range s.up {
		dst[j] += y[o+k]
	}
}

// state is the iterate of the homogeneous self-dual embedding
//
//	A'z + c tau = 0,  Ax + s = b tau,  c'x + b'z + kappa = 0,
//	s, z, tau, kappa >= 0.
type state struct {
	x, s, z    []float64
	tau, kappa float64
}

// run is the interior-point method. It leaves the final (unnormalised)
// iterate in s.last and returns a Result with Status and Iterations and,
// for Optimal, Infeasible and Unbounded, the scaled answer in res fields
// that fill converts.
func (s *ipm) run(opts *Options) *Result {
	tol := opts.tol()
	maxIter := opts.maxIter()
	n, M, m := s.n, s.rows(), len(s.h)

	b := make([]float64, M)
	copy(b, s.h)
	for k := range s.lo {
		b[m+k] = -s.lb[k]
	}
	for k := range s.up {
		b[m+len(s.lo)+k] = s.ub[k]
	}
	bnorm := floats.Norm(b, math.Inf(1))
	cnorm := floats.Norm(s.c, math.Inf(1))

	st := state{x: make([]float64, n), s: make([]float64, M), z: make([]float64, M), tau: 1, kappa: 1}
	for i := range st.s {
		st.s[i], st.z[i] = 1, 1
	}

	// Work space.
	var (
		rx  = make([]float64, n) // A'z + c tau
		rz  = make([]float64, M) // -Ax + b tau - s
		ax  = make([]float64, M)
		d   = make([]float64, M) // z / s
		r2  = make([]float64, M)
		tmp = make([]float64, M)
		tn  = make([]float64, n)
		x1  = make([]float64, n)
		z1  = make([]float64, M)
		x2  = make([]float64, n)
		z2  = make([]float64, M)
		dx  = make([]float64, n)
		dz  = make([]float64, M)
		ds  = make([]float64, M)
		dsa = make([]float64, M) // affine ds∘dz, for the corrector
		tgt = make([]float64, M) // complementarity target
		rhs = make([]float64, n) // refinement
		rr  = make([]float64, n)
		ra  = make([]float64, M)
		bw  = make([]float64, m*((n+7)&^7))
		nm  = make([]float64, n*n)
		nm0 = make([]float64, n*n)
	)
	res := &Result{Status: IterationLimit}
	stall := 0
	reg := regStart

	for it := 0; ; it++ {
		// Residuals.
		s.mulAT(rx, st.z)
		floats.AddScaled(rx, st.tau, s.c)
		s.mulA(ax, st.x)
		for i := range rz {
			rz[i] = -ax[i] + b[i]*st.tau - st.s[i]
		}
		cx := floats.Dot(s.c, st.x)
		bz := floats.Dot(b, st.z)
		rt := -cx - bz - st.kappa
		sz := floats.Dot(st.s, st.z)
		mu := (sz + st.tau*st.kappa) / float64(M+1)

		// Termination.
		pres := floats.Norm(rz, math.Inf(1)) / st.tau / (1 + bnorm)
		dres := floats.Norm(rx, math.Inf(1)) / st.tau / (1 + cnorm)
		pobj, dobj := cx/st.tau, -bz/st.tau
		gap := max(math.Abs(pobj-dobj), sz/(st.tau*st.tau))
		relgap := gap / (1 + min(math.Abs(pobj), math.Abs(dobj)))
		res.Iterations = it
		if pres <= tol && dres <= tol && relgap <= tol {
			res.Status = Optimal
			break
		}
		if bz < 0 {
			s.mulAT(tn, st.z)
			if floats.Norm(tn, math.Inf(1)) <= tol*(-bz) {
				res.Status = Infeasible
				break
			}
		}
		if cx < 0 {
			// A ray: Ax <= 0 (rows have unit norm) and c'x < 0, both
			// significant relative to |c| |x|.
			pos := 0.0
			for _, v := range ax {
				pos = max(pos, v)
			}
			xn := floats.Norm(st.x, math.Inf(1))
			if pos*cnorm <= tol*(-cx) && -cx > tol*cnorm*xn {
				res.Status = Unbounded
				break
			}
		}
		if it >= maxIter {
			res.Status = IterationLimit
			break
		}

		// Normal matrix A'DA, D = z/s.
		for i := range d {
			d[i] = st.z[i] / st.s[i]
		}
		s.normal(nm0, bw, d[:m])
		for k, j := range s.lo {
			nm0[j*n+j] += d[m+k]
		}
		for k, j := range s.up {
			nm0[j*n+j] += d[m+len(s.lo)+k]
		}
		dmean := minDiagonal
		for j := 0; j < n; j++ {
			dmean += nm0[j*n+j] / float64(n)
		}
		var chol blas64.Triangular
		ok := false
		for try := 0; try < regTries; try++ {
			copy(nm, nm0)
			for j := 0; j < n; j++ {
				nm[j*n+j] += reg * (nm0[j*n+j] + regFloor*dmean)
			}
			if chol, ok = lapack64.Potrf(blas64.Symmetric{N: n, Stride: n, Uplo: blas.Upper, Data: nm}); ok {
				break
			}
			reg *= regGrow
		}
		if !ok {
			res.Status = NumericalFailure
			break
		}
		// solve overwrites v with M^-1 v, refining the solution with the
		// factor of the shifted matrix against the unshifted M = A'DA.
		solve := func(v []float64) {
			if n == 0 {
				return
			}
			copy(rhs, v)
			lapack64.Potrs(chol, blas64.General{Rows: n, Cols: 1, Stride: 1, Data: v})
			prev := math.Inf(1)
			for k := 0; k < refineSteps; k++ {
				s.mulA(ra, v)
				for i := range ra {
					ra[i] *= d[i]
				}
				s.mulAT(rr, ra)
				for j := range rr {
					rr[j] = rhs[j] - rr[j]
				}
				e := floats.Norm(rr, math.Inf(1))
				if e >= prev || e <= 1e-15*floats.Norm(rhs, math.Inf(1)) {
					break
				}
				prev = e
				lapack64.Potrs(chol, blas64.General{Rows: n, Cols: 1, Stride: 1, Data: rr})
				floats.Add(v, rr)
			}
		}

		// The tau direction: M x2 = -c + A'Db, z2 = D(A x2 - b).
		for i := range tmp {
			tmp[i] = d[i] * b[i]
		}
		s.mulAT(x2, tmp)
		floats.Sub(x2, s.c)
		solve(x2)
		s.mulA(z2, x2)
		for i := range z2 {
			z2[i] = d[i] * (z2[i] - b[i])
		}
		den0 := -floats.Dot(s.c, x2) - floats.Dot(b, z2)

		// step solves the Newton system for residual weight eta and
		// complementarity targets dsv (length M) and dk, storing the
		// direction in dx, dz, ds and returning dtau, dkappa.
		step := func(eta float64, dsv []float64, dk float64) (dtau, dkap float64) {
			// r2 = d_z + d_s/z with d_z = -eta rz.
			for i := range r2 {
				r2[i] = -eta*rz[i] + dsv[i]/st.z[i]
			}
			// M x1 = -eta rx - A'D r2.
			for i := range tmp {
				tmp[i] = d[i] * r2[i]
			}
			s.mulAT(x1, tmp)
			for j := range x1 {
				x1[j] = -eta*rx[j] - x1[j]
			}
			solve(x1)
			s.mulA(z1, x1)
			for i := range z1 {
				z1[i] = d[i] * (r2[i] + z1[i])
			}
			dtau = (-eta*rt + dk/st.tau + floats.Dot(s.c, x1) + floats.Dot(b, z1)) /
				(st.kappa/st.tau + den0)
			for j := range dx {
				dx[j] = x1[j] + dtau*x2[j]
			}
			for i := range dz {
				dz[i] = z1[i] + dtau*z2[i]
				ds[i] = (dsv[i] - st.s[i]*dz[i]) / st.z[i]
			}
			dkap = (dk - st.kappa*dtau) / st.tau
			return dtau, dkap
		}
		maxStep := func(dtau, dkap float64) float64 {
			a := 1 / stepFrac
			for i := range ds {
				if ds[i] < 0 {
					a = min(a, -st.s[i]/ds[i])
				}
				if dz[i] < 0 {
					a = min(a, -st.z[i]/dz[i])
				}
			}
			if dtau < 0 {
				a = min(a, -st.tau/dtau)
			}
			if dkap < 0 {
				a = min(a, -st.kappa/dkap)
			}
			return a
		}

		// Predictor (affine scaling).
		for i := range tgt {
			tgt[i] = -st.s[i] * st.z[i]
		}
		dta, dka := step(1, tgt, -st.tau*st.kappa)
		aa := min(1, maxStep(dta, dka))
		sigma := math.Pow(1-aa, 3)
		for i := range dsa {
			dsa[i] = ds[i] * dz[i]
		}
		// Corrector.
		sm := sigma * mu
		for i := range tgt {
			tgt[i] = -st.s[i]*st.z[i] - dsa[i] + sm
		}
		dtau, dkap := step(1-sigma, tgt, -st.tau*st.kappa-dta*dka+sm)
		alpha := min(1, stepFrac*maxStep(dtau, dkap))

		floats.AddScaled(st.x, alpha, dx)
		floats.AddScaled(st.s, alpha, ds)
		floats.AddScaled(st.z, alpha, dz)
		st.tau += alpha * dtau
		st.kappa += alpha * dkap
		if alpha < tinyStep {
			stall++
			if stall >= stallIters {
				res.Status = NumericalFailure
				res.Iterations = it + 1
				break
			}
		} else {
			stall = 0
		}
	}
	s.last = st
	return res
}

// fill converts the final iterate of run into res, in the units of the
// original problem with rows rows; row(i) returns original row i.
func (s *ipm) fill(res *Result, rows int, row func(i int) ([]float64, float64)) {
	n, m := s.n, len(s.h)
	st := s.last
	res.Objective = math.NaN()
	switch res.Status {
	case Infeasible:
		bz := 0.0
		for i := 0; i < m; i++ {
			bz += s.h[i] * st.z[i]
		}
		for k := range s.lo {
			bz -= s.lb[k] * st.z[m+k]
		}
		for k := range s.up {
			bz += s.ub[k] * st.z[m+len(s.lo)+k]
		}
		f := &Farkas{Y: make([]float64, rows), YLower: make([]float64, n), YUpper: make([]float64, n)}
		for i := 0; i < m; i++ {
			f.Y[s.idx[i]] = st.z[i] / (-bz) / s.rs[i]
		}
		for k, j := range s.lo {
			f.YLower[j] = st.z[m+k] / (-bz)
		}
		for k, j := range s.up {
			f.YUpper[j] = st.z[m+len(s.lo)+k] / (-bz)
		}
		r := make([]float64, n)
		for i := 0; i < m; i++ {
			g, _ := row(s.idx[i])
			floats.AddScaled(r, f.Y[s.idx[i]], g)
		}
		floats.Sub(r, f.YLower)
		floats.Add(r, f.YUpper)
		f.Residual = floats.Norm(r, math.Inf(1))
		res.Farkas = f
		return
	case Unbounded:
		cx := floats.Dot(s.c, st.x)
		res.Ray = make([]float64, n)
		floats.ScaleTo(res.Ray, 1/(-cx), st.x)
		return
	}
	tau := st.tau
	res.X = make([]float64, n)
	floats.ScaleTo(res.X, 1/tau, st.x)
	for k, j := range s.lo { // the interior point may sit a rounding error outside
		res.X[j] = max(res.X[j], s.lb[k])
	}
	for k, j := range s.up {
		res.X[j] = min(res.X[j], s.ub[k])
	}
	res.Z = make([]float64, rows)
	res.ZLower = make([]float64, n)
	res.ZUpper = make([]float64, n)
	for i := 0; i < m; i++ {
		res.Z[s.idx[i]] = st.z[i] / tau / s.rs[i]
	}
	for k, j := range s.lo {
		res.ZLower[j] = st.z[m+k] / tau
	}
	for k, j := range s.up {
		res.ZUpper[j] = st.z[m+len(s.lo)+k] / tau
	}
	res.Objective = floats.Dot(s.c, res.X)
	dual := make([]float64, n)
	copy(dual, s.c)
	dobj := 0.0
	pres := 0.0
	for i := 0; i < m; i++ {
		g, h := row(s.idx[i])
		zi := res.Z[s.idx[i]]
		floats.AddScaled(dual, zi, g)
		dobj -= h * zi
		pres = max(pres, floats.Dot(g, res.X)-h)
	}
	for k, j := range s.lo {
		dual[j] -= res.ZLower[j]
		dobj += s.lb[k] * res.ZLower[j]
		pres = max(pres, s.lb[k]-res.X[j])
	}
	for k, j := range s.up {
		dual[j] += res.ZUpper[j]
		dobj -= s.ub[k] * res.ZUpper[j]
		pres = max(pres, res.X[j]-s.ub[k])
	}
	res.PrimalResidual = pres
	res.DualResidual = floats.Norm(dual, math.Inf(1))
	res.Gap = res.Objective - dobj
	res.RelGap = res.Gap / (1 + math.Abs(res.Objective))
}

// normal stores G'DG in the upper triangle of dst (n x n), D = diag(d),
// using bw (len(d) rows of n rounded up to a multiple of 8, the padding
// zero) as scratch for the scaled rows sqrt(d_i) g_i. Large products are
// split by rows over the available cores and summed.
func (s *ipm) normal(dst, bw, d []float64) {
	n, m := s.n, len(d)
	for i := range dst {
		dst[i] = 0
	}
	if m == 0 || n == 0 {
		return
	}
	ws := (n + 7) &^ 7 // the Gram kernel's tile width
	w := min(runtime.GOMAXPROCS(0), m/64+1)
	if m*n*n/2 < parallelWork {
		w = 1
	}
	if len(s.part) < w*ws*ws {
		s.part = make([]float64, w*ws*ws)
	}
	// Worker k owns rows lo..hi, their block of bw and its ws x ws part.
	work := func(k int) {
		lo, hi := k*m/w, (k+1)*m/w
		blk := bw[lo*ws : hi*ws]
		for i := lo; i < hi; i++ {
			r := math.Sqrt(d[i])
			row := blk[(i-lo)*ws : (i-lo)*ws+n]
			for j, v := range s.g[i*n : (i+1)*n] {
				row[j] = r * v
			}
		}
		c := s.part[k*ws*ws : (k+1)*ws*ws]
		clear(c)
		gram.AddRows(c, blk, ws, hi-lo, ws)
	}
	if w == 1 {
		work(0)
	} else if err := parallel.For(context.Background(), w, w, nil, func(_ context.Context, k int, _ struct{}) error {
		work(k)
		return nil
	}); err != nil {
		panic(err) // a bug in the kernel: re-raised where the caller can recover it
	}
	for k := 0; k < w; k++ {
		c := s.part[k*ws*ws : (k+1)*ws*ws]
		for i := 0; i < n; i++ {
			floats.Add(dst[i*n+i:(i+1)*n], c[i*ws+i:i*ws+n])
		}
	}
}
