package lyapunov

import (
	"math"
	"math/rand/v2"

	"basin.example/fit/poly"
)

// vFamily is the space of candidate Lyapunov functions: polynomials in the
// scaled coordinates z with every monomial of total degree 2..D (no
// constant or linear term, so V(0) = 0 and grad V(0) = 0).
//
// The LP normalises V by the trace of its quadratic part: the coefficients
// of z_j² sum to 1. The coefficient of z_n² is eliminated (it is 1 minus
// the others), so the LP's unknowns are the other p-1 coefficients and
// the margin g, and no equality row is needed.
type vFamily struct {
	n, deg int
	lib    *poly.Library
	diag   []int // index of z_j² in lib
	elim   int   // the eliminated coefficient, diag[n-1]
	isDiag []bool
}

func newVFamily(n, deg int) *vFamily {
	lib := poly.NewLibrary(n, 2, deg)
	f := &vFamily{n: n, deg: deg, lib: lib, diag: make([]int, n), isDiag: make([]bool, lib.Len())}
	for k := 0; k < lib.Len(); k++ {
		e := lib.Exponents(k)
		for j, p := range e {
			if p == 2 && lib.Degree(k) == 2 {
				f.diag[j] = k
				f.isDiag[k] = true
			}
		}
	}
	f.elim = f.diag[n-1]
	return f
}

// Len returns the number of coefficients of V.
func (f *vFamily) Len() int { return f.lib.Len() }

// Unknowns returns the number of LP unknowns: p-1 coefficients and g.
func (f *vFamily) Unknowns() int { return f.lib.Len() }

// expand maps LP unknowns u (the coefficients without elim, then g) to
// the full coefficient vector dst (length p) and returns dst.
func (f *vFamily) expand(dst, u []float64) []float64 {
	p := f.lib.Len()
	s := 0.0
	i := 0
	for k := 0; k < p; k++ {
		if k == f.elim {
			continue
		}
		dst[k] = u[i]
		if f.isDiag[k] {
			s += u[i]
		}
		i++
	}
	dst[f.elim] = 1 - s
	return dst
}

// compress is the inverse of expand for coefficients normalised to unit
// trace; it writes p-1 entries of dst.
func (f *vFamily) compress(dst, c []float64) []float64 {
	i := 0
	for k := range c {
		if k == f.elim {
			continue
		}
		dst[i] = c[k]
		i++
	}
	return dst
}

// foldRow turns the row a'c <= h over the full coefficients into a row
// over the LP's coefficient unknowns (first p-1 entries of dst) and
// returns its right-hand side.
func (f *vFamily) foldRow(dst, a []float64, h float64) float64 {
	ae := a[f.elim]
	i := 0
	for k, v := range a {
		if k == f.elim {
			continue
		}
		if f.isDiag[k] {
			v -= ae
		}
		dst[i] = v
		i++
	}
	return h - ae
}

// quadratic returns the coefficients of z'Pz (P n×n symmetric,
// row-major) in the family's order, higher terms zero.
func (f *vFamily) quadratic(p []float64) []float64 {
	c := make([]float64, f.lib.Len())
	n := f.n
	for k := 0; k < f.lib.Len(); k++ {
		if f.lib.Degree(k) != 2 {
			continue
		}
		e := f.lib.Exponents(k)
		var idx []int
		for j, q := range e {
			for ; q > 0; q-- {
				idx = append(idx, j)
			}
		}
		i, j := idx[0], idx[1]
		if i == j {
			c[k] = p[i*n+i]
		} else {
			c[k] = p[i*n+j] + p[j*n+i]
		}
	}
	return c
}

// quadMatrix returns the symmetric n×n matrix P of V's quadratic part
// (V = z'Pz + higher terms), row-major.
func (f *vFamily) quadMatrix(c []float64) []float64 {
	n := f.n
	p := make([]float64, n*n)
	for k := 0; k < f.lib.Len(); k++ {
		if f.lib.Degree(k) != 2 {
			continue
		}
		var idx []int
		for j, q := range f.lib.Exponents(k) {
			for ; q > 0; q-- {
				idx = append(idx, j)
			}
		}
		i, j := idx[0], idx[1]
		if i == j {
			p[i*n+i] = c[k]
		} else {
			p[i*n+j] = c[k] / 2
			p[j*n+i] = c[k] / 2
		}
	}
	return p
}

// trace returns the sum of the z_j² coefficients of c.
func (f *vFamily) trace(c []float64) float64 {
	s := 0.0
	for _, k := range f.diag {
		s += c[k]
	}
	return s
}

// poly returns V as a Poly (every term, zero coefficients included, so
// the shape is the family's).
func (f *vFamily) poly(c []float64) poly.Poly {
	return poly.Poly{Exponents: f.lib.Terms(), Coefficients: append([]float64(nil), c...)}
}

// radiallyUnbounded reports whether the top-degree homogeneous part of V
// is positive on nSphere random points of the unit sphere (a sampled
// check, not a proof).
func (f *vFamily) radiallyUnbounded(c []float64, rng *rand.Rand) bool {
	top := 0
	for k := range c {
		if c[k] != 0 {
			top = max(top, f.lib.Degree(k))
		}
	}
	if top == 0 {
		return false
	}
	u := make([]float64, f.n)
	val := make([]float64, f.lib.Len())
	work := make([]float64, f.lib.WorkLen())
	for s := 0; s < 500*f.n; s++ {
		f.lib.EvalWorkTo(val, work, randomUnit(u, rng))
		v := 0.0
		for k, ck := range c {
			if f.lib.Degree(k) == top {
				v += ck * val[k]
			}
		}
		if !(v > 0) {
			return false
		}
	}
	return true
}

// vEval evaluates one V of a family and its gradient without allocating.
// It is not safe for concurrent use.
type vEval struct {
	fam              *vFamily
	c                []float64
	val, grad, work  []float64
	gwork            []float64
	n                int
	fbuf, gbuf, zbuf []float64
}

func newVEval(fam *vFamily, c []float64) *vEval {
	p := fam.lib.Len()
	return &vEval{fam: fam, c: c, n: fam.n,
		val: make([]float64, p), grad: make([]float64, p*fam.n),
		work: make([]float64, fam.lib.WorkLen()), gwork: make([]float64, fam.lib.GradWorkLen()),
		fbuf: make([]float64, fam.n), gbuf: make([]float64, fam.n), zbuf: make([]float64, fam.n)}
}

// value returns V(z).
func (e *vEval) value(z []float64) float64 {
	return e.valueFrom(e.fam.lib.EvalWorkTo(e.val, e.work, z))
}

// valueFrom returns V from the family's monomials val at a point.
func (e *vEval) valueFrom(val []float64) float64 {
	s := 0.0
	for k, v := range val {
		s += e.c[k] * v
	}
	return s
}

// valueGrad returns V(z) and stores grad V(z) in g.
func (e *vEval) valueGrad(g, z []float64) float64 {
	e.fam.lib.GradWorkTo(e.grad, e.val, e.gwork, z)
	return e.valueGradFrom(g, e.val, e.grad)
}

// valueGradFrom returns V from the family's monomials val at a point and
// stores grad V in g, from the monomials' gradients grad (row-major, as
// poly.Library.GradWorkTo stores them).
func (e *vEval) valueGradFrom(g, val, grad []float64) float64 {
	n := e.n
	s := 0.0
	for j := range g {
		g[j] = 0
	}
	for k, ck := range e.c {
		if ck == 0 {
			continue
		}
		s += ck * val[k]
		gk := grad[k*n : (k+1)*n]
		for j := range g {
			g[j] += ck * gk[j]
		}
	}
	return s
}

// vdot returns V(z), and grad V · f(z) in scaled coordinates.
func (e *vEval) vdot(field Field, z []float64) (v, vd float64) {
	v = e.valueGrad(e.gbuf, z)
	field(e.fbuf, z)
	for j, g := range e.gbuf {
		vd += g * e.fbuf[j]
	}
	return v, vd
}

// randomUnit stores in u a direction drawn uniformly from the unit
// sphere (normalised Gaussian draws) and returns u.
func randomUnit(u []float64, rng *rand.Rand) []float64 {
	r := 0.0
	for j := range u {
		u[j] = rng.NormFloat64()
		r += u[j] * u[j]
	}
	r = math.Sqrt(r)
	for j := range u {
		u[j] /= r
	}
	return u
}

func norm2(z []float64) float64 {
	s := 0.0
	for _, v := range z {
		s += v * v
	}
	return s
}
