package fit

import (
	"errors"
	"math"

	"github.com/basin-dev/basin/fit/lp"
)

// certRows are the rows of the certificate LP, generated on demand for
// lp.SolveCuts. The unknowns are u = (V's coefficients without the
// eliminated z_n² one, g); see [vFamily]. For each point z_i (recorded
// samples and fill points, all outside the noise ball):
//
//	positivity       -V(z_i)                              <= -posEps |z_i|²
//	model decrease    grad V(z_i)·f(z_i) + g |z_i|²       <= 0
//
// and for each recorded pair (z_k, z_{k+1}) with time step dt_k:
//
//	data decrease     V(z_{k+1}) - V(z_k) + g dt_k |z_k|² <= tau_k
//
// where tau_k is the noise tolerance of the pair.
type certRows struct {
	fam    *vFamily
	n, p   int
	pz, pf []float64 // points and the field there, n each
	np     int
	a0, a1 []float64 // pair endpoints, n each
	dt     []float64
	tau    []float64
	// scratch
	a, val, grad, work, val1 []float64
}

func newCertRows(fam *vFamily) *certRows {
	r := &certRows{fam: fam, n: fam.n, p: fam.Len()}
	return r.init()
}

func (r *certRows) init() *certRows {
	lib := r.fam.lib
	r.a = make([]float64, r.p)
	r.val = make([]float64, r.p)
	r.val1 = make([]float64, r.p)
	r.grad = make([]float64, r.p*r.n)
	r.work = make([]float64, lib.GradWorkLen())
	return r
}

func (r *certRows) addPoint(z, f []float64) {
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

// Len returns the number of rows.
func (r *certRows) Len() int { return 2*r.np + len(r.dt) }

// Clone returns a copy with its own scratch space (lp.Cloner).
func (r *certRows) Clone() lp.Rows {
	c := *r
	return c.init()
}

// RowTo stores row i in dst (length p) and returns its right-hand side.
func (r *certRows) RowTo(dst []float64, i int) float64 {
	n, p, lib := r.n, r.p, r.fam.lib
	switch {
	case i < r.np:
		z := r.pz[i*n : (i+1)*n]
		lib.EvalWorkTo(r.val, r.work[:lib.WorkLen()], z)
		for k, v := range r.val {
			r.a[k] = -v
		}
		dst[p-1] = 0
		return r.fam.foldRow(dst[:p-1], r.a, -posEps*norm2(z))
	case i < 2*r.np:
		i -= r.np
		z := r.pz[i*n : (i+1)*n]
		f := r.pf[i*n : (i+1)*n]
		lib.GradWorkTo(r.grad, nil, r.work, z)
		for k := 0; k < p; k++ {
			s := 0.0
			gk := r.grad[k*n : (k+1)*n]
			for j, fj := range f {
				s += gk[j] * fj
			}
			r.a[k] = s
		}
		dst[p-1] = norm2(z)
		return r.fam.foldRow(dst[:p-1], r.a, 0)
	default:
		i -= 2 * r.np
		z0 := r.a0[i*n : (i+1)*n]
		z1 := r.a1[i*n : (i+1)*n]
		w := r.work[:lib.WorkLen()]
		lib.EvalWorkTo(r.val, w, z0)
		lib.EvalWorkTo(r.val1, w, z1)
		for k := range r.a {
			r.a[k] = r.val1[k] - r.val[k]
		}
		dst[p-1] = r.dt[i] * norm2(z0)
		return r.fam.foldRow(dst[:p-1], r.a, r.tau[i])
	}
}

// LP bounds (not user-facing). V has unit trace, so its quadratic
// coefficients lie in [-1, 1] for a positive definite part (|P_ij| <=
// sqrt(P_ii P_jj) <= 1/2 and the z_i z_j coefficient is 2 P_ij); higher
// coefficients get a looser box so quartic terms can matter at |z| ~ 1.
const (
	lpQuadBound   = 1
	lpHigherBound = 10
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
}

// solveCertLP maximises g over the rows.
func solveCertLP(fam *vFamily, rows *certRows) lpOutcome {
	p := fam.Len()
	obj := make([]float64, p)
	obj[p-1] = -1
	lower := make([]float64, p)
	upper := make([]float64, p)
	i := 0
	for k := 0; k < p; k++ {
		if k == fam.elim {
			continue
		}
		b := float64(lpHigherBound)
		if fam.lib.Degree(k) == 2 {
			b = lpQuadBound
		}
		lower[i], upper[i] = -b, b
		if fam.isDiag[k] {
			lower[i] = 0
		}
		i++
	}
	lower[p-1], upper[p-1] = -lpMarginBound, lpMarginBound
	res, err := lp.SolveCuts(obj, rows, lower, upper, nil)
	out := lpOutcome{err: err}
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
	out.c = fam.expand(make([]float64, p), res.X)
	out.g = res.X[p-1]
	if math.IsNaN(out.g) {
		out.err = lp.ErrNumerical
	}
	return out
}
