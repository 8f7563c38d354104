package lyapunov

// pointCacheMax caps the float64s one point set's cache holds (16 MB).
// A part that does not fit (see newPointCache for the order) is not
// kept, and the checks compute it at the point when they need it, as
// without a cache.
const pointCacheMax = 1 << 21

// pointCache holds what the checks of every V need at a fixed set of
// points and that does not depend on V: the monomials of V's family
// there (p a point, as poly.Library.GradWorkTo stores them), their
// gradients (p·n a point, row-major) and the model's field (n a point).
// The level search evaluates many V of one family on the same recorded
// samples, rays and Monte-Carlo points; with the cache each V costs a
// dot product per point instead of the monomials and the field again.
// Each part is nil when it is not kept. The values are the very numbers
// vEval computes at the point, so a V evaluated from the cache is the
// same, bit for bit, as one evaluated at the point.
type pointCache struct {
	p, n         int
	phi, grad, f []float64
	z2           []float64 // |z|² a point
}

// newPointCache computes the cache of the points z (n each): |z|², the
// field when field is not nil, the monomials, and their gradients when
// grad is set, each part in that order as far as it fits.
func newPointCache(fam *vFamily, z []float64, field Field, grad bool) *pointCache {
	n, p := fam.n, fam.Len()
	m := len(z) / n
	pc := &pointCache{p: p, n: n}
	budget := pointCacheMax
	if m <= budget {
		pc.z2 = make([]float64, m)
		for i := range pc.z2 {
			pc.z2[i] = norm2(z[i*n : (i+1)*n])
		}
		budget -= m
	}
	if field != nil && m*n <= budget {
		pc.f = make([]float64, m*n)
		budget -= m * n
	}
	if m*p <= budget {
		pc.phi = make([]float64, m*p)
		budget -= m * p
		if grad && m*p*n <= budget {
			pc.grad = make([]float64, m*p*n)
		}
	}
	if pc.phi == nil && pc.f == nil {
		return pc
	}
	lib := fam.lib
	work := make([]float64, lib.GradWorkLen())
	for i := 0; i < m; i++ {
		x := z[i*n : (i+1)*n]
		switch {
		case pc.grad != nil:
			lib.GradWorkTo(pc.grad[i*p*n:(i+1)*p*n], pc.phi[i*p:(i+1)*p], work, x)
		case pc.phi != nil:
			lib.EvalWorkTo(pc.phi[i*p:(i+1)*p], work[:lib.WorkLen()], x)
		}
		if pc.f != nil {
			field(pc.f[i*n:(i+1)*n], x)
		}
	}
	return pc
}

// norm2 returns |z|² at point i (z its coordinates).
func (pc *pointCache) norm2(i int, z []float64) float64 {
	if pc == nil || pc.z2 == nil {
		return norm2(z)
	}
	return pc.z2[i]
}

// value returns V at point i (z its coordinates).
func (pc *pointCache) value(ve *vEval, i int, z []float64) float64 {
	if pc == nil || pc.phi == nil {
		return ve.value(z)
	}
	return ve.valueFrom(pc.phi[i*pc.p : (i+1)*pc.p])
}

// valueGrad returns V at point i and stores its gradient in g.
func (pc *pointCache) valueGrad(ve *vEval, g []float64, i int, z []float64) float64 {
	if pc == nil || pc.grad == nil {
		return ve.valueGrad(g, z)
	}
	p, n := pc.p, pc.n
	return ve.valueGradFrom(g, pc.phi[i*p:(i+1)*p], pc.grad[i*p*n:(i+1)*p*n])
}

// fieldAt returns the model's field at point i, into dst when it is not
// cached.
func (pc *pointCache) fieldAt(dst []float64, field Field, i int, z []float64) []float64 {
	if pc == nil || pc.f == nil {
		return field(dst, z)
	}
	return pc.f[i*pc.n : (i+1)*pc.n]
}

// vdot is vEval.vdot at point i: it returns V and grad V · f, with the
// gradient in ve.gbuf and the field in ve.fbuf.
func (pc *pointCache) vdot(ve *vEval, field Field, i int, z []float64) (v, vd float64) {
	v = pc.valueGrad(ve, ve.gbuf, i, z)
	f := pc.fieldAt(ve.fbuf, field, i, z)
	copy(ve.fbuf, f)
	for j, g := range ve.gbuf {
		vd += g * ve.fbuf[j]
	}
	return v, vd
}

// sampleDots memoises, for the one V being checked, V-dot and the pair
// tolerance (checker.pairTolAt) at each recorded sample: the level
// search's marks compute them, and the figures of the level found reuse
// them instead of evaluating the gradient again. reset starts a new V.
type sampleDots struct {
	gen     uint32
	at      []uint32 // at[k] == gen: vd[k] and tol[k] are the current V's
	vd, tol []float64
	off     bool // keep nothing (the tests' reference path)
}

// reset forgets every value, for a new V over total samples.
func (sd *sampleDots) reset(total int) {
	if sd.off {
		return
	}
	if len(sd.at) < total {
		sd.at, sd.vd, sd.tol = make([]uint32, total), make([]float64, total), make([]float64, total)
		sd.gen = 0
	}
	sd.gen++
	if sd.gen == 0 { // wrapped: no stale stamp may match
		clear(sd.at)
		sd.gen = 1
	}
}

// get returns sample k's V-dot and pair tolerance when known.
func (sd *sampleDots) get(k int) (vd, tol float64, ok bool) {
	if k >= len(sd.at) || sd.at[k] != sd.gen {
		return 0, 0, false
	}
	return sd.vd[k], sd.tol[k], true
}

// set records sample k's V-dot and pair tolerance.
func (sd *sampleDots) set(k int, vd, tol float64) {
	if k < len(sd.at) {
		sd.at[k], sd.vd[k], sd.tol[k] = sd.gen, vd, tol
	}
}
