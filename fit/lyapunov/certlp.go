package lyapunov

import (
	"errors"
	"math"

	"basin.example/fit/lp"
)

// certRows are the rows of the certificate LP, generated on demand for
// lp.SolveCuts. The unknowns are u = (V's p coefficients, g). For each
// point z_i (recorded samples and fill points, outside the noise ball):
//
//	positivity       -V(z_i)                                  <= -posEps |z_i|²
//	model decrease    grad V(z_i)·f(z_i) + g |z_i|²
//	                    - lambda |z_i|² (V(z_i) - 1)            <= 0
//
// for each target point (the level set the round tries to reach):
//
//	target            V(z_i)                                  <= 1
//
// for positivity-only points (drawn across the samples' box, so that V
// stays positive in the box of its level set's piece):
//
//	positivity       -V(z_i)                                  <= -posEps |z_i|²
//
// for exclusion points (points of the samples' box where the model is not
// trusted, so that the level set {V <= 1} stays in the trust region):
//
//	exclusion        -V(z_i)                                  <= -1
//
// and for each recorded pair (z_k, z_{k+1}) at a target point, time step
// dt_k:
//
//	data decrease     V(z_{k+1}) - V(z_k) + g dt_k |z_k|²       <= tau_k
//
// tau_k being the noise tolerance of the pair. The target rows fix V's
// scale (the level set {V <= 1} must hold the targets; positivity rules out
// V = 0). The multiplier term (a fixed lambda >= 0, the S-procedure) asks
// for decrease only where V < 1 and relaxes it outside, where the region
// is not claimed.
type certRows struct {
	fam     *vFamily
	n, p    int
	lambda  float64
	pz, pf  []float64 // points and the field there, n each
	np      int
	targets []int32 // indices of target points
	a0, a1  []float64
	dt      []float64
	tau     []float64
	// positivity-only points (across the samples' box, trusted or not:
	// the piece's box may not hold a part where V is not positive)
	pp  []float64
	npp int
	// exclusion points (untrusted points of the samples' box): V >= 1
	xp  []float64
	nxp int
	// scratch
	val, grad, work, val1 []float64
}

func newCertRows(fam *vFamily, lambda float64) *certRows {
	r := &certRows{fam: fam, n: fam.n, p: fam.Len(), lambda: lambda}
	return r.init()
}

func (r *certRows) init() *certRows {
	lib := r.fam.lib
	r.val = make([]float64, r.p)
	r.val1 = make([]float64, r.p)
	r.grad = make([]float64, r.p*r.n)
	r.work = make([]float64, lib.GradWorkLen())
	return r
}

func (r *certRows) addPoint(z, f []float64, target bool) {
	if target {
		r.targets = append(r.targets, int32(r.np))
	}
	r.pz = append(r.pz, z...)
	r.pf = append(r.pf, f...)
	r.np++
}

func (r *certRows) addPair(z0, z1 []float64, dt, tau float64) {
	r.a0 = append(r.a0, z0...)
	r.a1 = append(r.a1, z1...)
	r.dt = append(r.dt, dt)
	r.tau = append(r.tau, tau)
}

// addPositive adds a positivity-only point.
func (r *certRows) addPositive(z []float64) {
	r.pp = append(r.pp, z...)
	r.npp++
}

// addExcluded adds an exclusion point.
func (r *certRows) addExcluded(z []float64) {
	r.xp = append(r.xp, z...)
	r.nxp++
}

// Len returns the number of rows.
func (r *certRows) Len() int { return 2*r.np + len(r.targets) + len(r.dt) + r.npp + r.nxp }

// Clone returns a copy with its own scratch space (lp.Cloner).
func (r *certRows) Clone() lp.Rows {
	c := *r
	return c.init()
}

// RowTo stores row i in dst (length p+1) and returns its right-hand side.
func (r *certRows) RowTo(dst []float64, i int) float64 {
	n, p, lib := r.n, r.p, r.fam.lib
	w := r.work[:lib.WorkLen()]
	switch {
	case i < r.np:
		z := r.pz[i*n : (i+1)*n]
		lib.EvalWorkTo(r.val, w, z)
		for k, v := range r.val {
			dst[k] = -v
		}
		dst[p] = 0
		return -posEps * norm2(z)
	case i < 2*r.np:
		i -= r.np
		z := r.pz[i*n : (i+1)*n]
		f := r.pf[i*n : (i+1)*n]
		z2 := norm2(z)
		lib.GradWorkTo(r.grad, r.val, r.work, z)
		for k := 0; k < p; k++ {
			s := 0.0
			gk := r.grad[k*n : (k+1)*n]
			for j, fj := range f {
				s += gk[j] * fj
			}
			dst[k] = s - r.lambda*z2*r.val[k]
		}
		dst[p] = z2
		return -r.lambda * z2
	case i < 2*r.np+len(r.targets):
		i = int(r.targets[i-2*r.np])
		lib.EvalWorkTo(dst[:p], w, r.pz[i*n:(i+1)*n])
		dst[p] = 0
		return 1
	case i >= 2*r.np+len(r.targets)+len(r.dt)+r.npp:
		i -= 2*r.np + len(r.targets) + len(r.dt) + r.npp
		lib.EvalWorkTo(r.val, w, r.xp[i*n:(i+1)*n])
		for k, v := range r.val {
			dst[k] = -v
		}
		dst[p] = 0
		return -1
	case i >= 2*r.np+len(r.targets)+len(r.dt):
		i -= 2*r.np + len(r.targets) + len(r.dt)
		z := r.pp[i*n : (i+1)*n]
		lib.EvalWorkTo(r.val, w, z)
		for k, v := range r.val {
			dst[k] = -v
		}
		dst[p] = 0
		return -posEps * norm2(z)
	default:
		i -= 2*r.np + len(r.targets)
		z0 := r.a0[i*n : (i+1)*n]
		z1 := r.a1[i*n : (i+1)*n]
		lib.EvalWorkTo(r.val, w, z0)
		lib.EvalWorkTo(r.val1, w, z1)
		for k := range r.val {
			dst[k] = r.val1[k] - r.val[k]
		}
		dst[p] = r.dt[i] * norm2(z0)
		return r.tau[i]
	}
}

// denseRowsMax caps the entries of the certificate LP's rows held as a
// dense matrix (32 MB of float64s): lp.SolveCuts reads every row on
// each of its rounds, so rows computed once and read in place cost one
// evaluation of the monomials per row instead of one a round. Larger row
// sets are generated on demand.
const denseRowsMax = 1 << 22

// solverRows returns the rows for lp.SolveCuts: r itself, or when they
// fit within denseRowsMax, the same rows computed once into an
// lp.DenseRows (RowTo's values bit for bit, so the LP is the same).
func (r *certRows) solverRows() lp.Rows {
	m, w := r.Len(), r.p+1
	if m == 0 || m*w > denseRowsMax {
		return r
	}
	d := lp.DenseRows{G: make([]float64, m*w), H: make([]float64, m)}
	for i := 0; i < m; i++ {
		d.H[i] = r.RowTo(d.G[i*w:(i+1)*w], i)
	}
	return d
}

// LP bounds (not user-facing): a box on V's coefficients that V <= 1 on
// targets of size ~1 in z never reaches, and on the margin.
const (
	lpCoefBound   = 1e3
	lpMarginBound = 1e4
)

// lpOutcome is one certificate LP's result.
type lpOutcome struct {
	c      []float64 // V's coefficients (unit trace)
	g      float64   // margin
	status lp.Status
	rounds int
	rows   int // active rows in the last restricted problem
	iters  int
	err    error
	res    *lp.Result // the solver's result (its Farkas certificate when infeasible); may be nil
}

// solveCertLP maximises g over the rows. On the non-rise path (central)
// the restricted problems are solved by the interior-point method alone:
// there the margin's optimum is degenerate (every conserved V has g = 0),
// and a vertex of the optimal face, as the simplex method returns, sits
// on the positivity rows (V = posEps|z|² along some direction: the level
// sets stretch along it and the level search stops at a tiny level),
// while the interior point's solution lies inside the face, away from
// them.
func solveCertLP(fam *vFamily, rows *certRows, central bool) lpOutcome {
	p := fam.Len()
	obj := make([]float64, p+1)
	obj[p] = -1
	lower := make([]float64, p+1)
	upper := make([]float64, p+1)
	for k := 0; k < p; k++ {
		lower[k], upper[k] = -lpCoefBound, lpCoefBound
	}
	lower[p], upper[p] = -lpMarginBound, lpMarginBound
	var opts *lp.CutOptions
	if central {
		opts = &lp.CutOptions{Method: lp.InteriorPoint}
	}
	res, err := lp.SolveCuts(obj, rows.solverRows(), lower, upper, opts)
	out := lpOutcome{err: err, res: res}
	if res != nil {
		out.status = res.Status
		out.rounds = res.Rounds
		out.rows = len(res.Active)
		out.iters = res.Iterations
	}
	if err != nil {
		return out
	}
	if res.Status != lp.Optimal || res.X == nil {
		out.err = errors.New("lp: " + res.Status.String())
		return out
	}
	out.c = append([]float64(nil), res.X[:p]...)
	out.g = res.X[p]
	if math.IsNaN(out.g) {
		out.err = lp.ErrNumerical
	}
	return out
}
