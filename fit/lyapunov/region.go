package lyapunov

import (
	"fmt"
	"io"
	"math"

	"gonum.org/v1/gonum/mat"
)

const (
	// posEps is the positivity margin: V(z) >= posEps |z|² (V has unit
	// trace, so this asks the smallest eigenvalue of the quadratic part to
	// be at least posEps where the quadratic part dominates).
	posEps = 1e-3
	// levelShrink keeps the level strictly below the first bad value.
	levelShrink = 1e-9
	// boxMargin widens the piece's box beyond the level set's extent, so
	// that V exceeds the level on its faces by a margin a bound can show
	// (2%: about 4% in V for a quadratic V).
	boxMargin = 0.02
	// rayPoints is the number of points checked along each ray.
	rayPoints = 32
	// robustK multiplies the standard error of the fitted field in the
	// robust decrease condition: 3, the one-sided normal quantile of
	// 0.99865 (the "3 sigma" of common practice); the fitted value's
	// error is about normal for many samples.
	robustK = 3
	// exemptFactor widens the uncertainty ball (where the robust term
	// exceeds the linearised decrease) for the higher-order terms.
	exemptFactor = 2
)

// zRun is one recorded run in scaled coordinates.
type zRun struct {
	name string
	off  int // index of the run's first sample among all samples
	t    []float64
	z    []float64 // n a sample, row-major
	h    []float64 // leverage of each sample
}

// ray is one direction from the equilibrium, cut where the model stops
// being trusted: rayPoints points up to and including the first untrusted
// one (exit), with the field and the leverage there (independent of V).
type ray struct {
	z, f, h []float64 // rayPoints points, n each for z and f
	exit    bool      // the last point is untrusted
}

// checker finds the largest certified level of a given V.
type checker struct {
	fam    *vFamily
	field  Field // the model's field in z
	trust  *Trust
	inside func(z []float64) bool // the trust region's membership
	runs   []zRun
	others [][]float64 // other equilibria, in z
	sigma  []float64   // noise std per state, in z
	sigmaF []float64   // residual std of the fitted field per state, z/s
	r0     float64     // noise radius
	az     []float64   // Jacobian at the equilibrium, in z, row-major
	kappa  float64     // noise multiplier of the pair tolerance
	rays   []ray
	fz     []*Poly // the field in z
	// The V-independent parts of the checks at the recorded samples (in
	// run order, with the field), the ray points (ray by ray) and the
	// pool (see pointCache).
	samples, rayPts, poolPts *pointCache
	dots                     sampleDots  // of the V being checked
	vals                     [][]float64 // V at the samples, per run (see values)
	// pool holds Monte-Carlo points of the samples' box that are trusted
	// (n each); poolShare is their share of the box's points.
	pool      []float64
	poolShare float64
	outside   []float64 // untrusted points of the box, n each
	// nonRise replaces strict decrease by non-rise (see setNonRise);
	// tmax is the longest run's duration.
	nonRise bool
	tmax    float64
	trace   io.Writer // Options.Trace
}

// nonRiseFloor is the relative allowance of V-dot on the non-rise path,
// in units of |grad V|·|f|: rounding of the dot product and of the
// central differences of the cell bound (about 1e-13 relative), with a
// wide safety factor, still far below any damping the data could show.
const nonRiseFloor = 1e-6

// setNonRise (called by newChecker only, before any check) switches the
// checks to the non-rise conditions, for a linearisation with an
// eigenvalue on the imaginary axis where V cannot fall strictly. V-dot may then be positive by at most vdTol: the rise
// that stays within one pair's noise tolerance over the longest recorded
// run (a drift the data cannot tell from noise), plus nonRiseFloor.
// Recorded pairs keep their tolerance; the noise ball, envelope, other
// equilibria and the cell bound (against vdTol) all still apply. The
// linear ball is empty: near the equilibrium only the noise ball is
// exempt.
func (ck *checker) setNonRise() {
	ck.nonRise = true
	ck.tmax = 0
	for i := range ck.runs {
		if t := ck.runs[i].t; len(t) > 1 {
			ck.tmax = math.Max(ck.tmax, t[len(t)-1]-t[0])
		}
	}
}

// vdTol returns the allowed V-dot at a point with gradient g of V and
// field f there: 0 (strict decrease) unless on the non-rise path.
func (ck *checker) vdTol(g, f []float64, hq float64) float64 {
	if !ck.nonRise {
		return 0
	}
	tol := nonRiseFloor * math.Sqrt(norm2(g)*norm2(f))
	if ck.tmax > 0 {
		tol += ck.pairTol(g, hq) / ck.tmax
	}
	return tol
}

// levelResult is the certified level set of one V.
type levelResult struct {
	ok        bool
	reason    string
	level     float64
	limit     Limit
	limitZ    []float64
	limitRun  string
	lo, hi    []float64 // the piece's box, in z
	share     float64   // of the trust region's volume
	tolerance float64   // noise tolerance on V differences in the region
	pairs     int
	decrease  float64
	vball     float64 // largest V on the exempt ball
	exempt    float64 // radius of the exempt ball (noise and model uncertainty)
	ballShare float64 // without a level: exempt over the distance to the trust region's nearest edge
	margin    float64 // min of -Vdot/|z|² over checked samples in the region
	figured   bool    // pairs, tolerance, decrease and margin are set
	bound     *Verified
}

// badMark is a failing check: the level at which it joins the piece.
type badMark struct {
	key  float64
	kind Limit
	z    []float64
	run  string
}

// pairTol returns the noise tolerance on V(z_{k+1}) - V(z_k) for
// independent noise e of standard deviation sigma per state: kappa times
// the standard deviation of the first-order term grad V · (e_{k+1} - e_k),
// plus kappa² hq |sigma|², a bound on the second-order term e'Pe at the
// same level (hq the largest eigenvalue of V's quadratic part; it matters
// near the noise ball, where grad V is small).
func (ck *checker) pairTol(g []float64, hq float64) float64 {
	s, s2 := 0.0, 0.0
	for j, gj := range g {
		s += gj * gj * ck.sigma[j] * ck.sigma[j]
		s2 += ck.sigma[j] * ck.sigma[j]
	}
	return ck.kappa*math.Sqrt(2*s) + ck.kappa*ck.kappa*math.Max(hq, 0)*s2
}

// pairTolAt is pairTol for a pair starting at V = v; on the non-rise
// path it adds nonRiseFloor·|v| for rounding and the integrator's drift
// of a conserved V on noiseless records (nothing on the strict path,
// where the decrease dominates).
func (ck *checker) pairTolAt(g []float64, hq, v float64) float64 {
	t := ck.pairTol(g, hq)
	if ck.nonRise {
		t += nonRiseFloor * math.Abs(v)
	}
	return t
}

// quadMax returns the largest eigenvalue of V's quadratic part.
func (ck *checker) quadMax(c []float64) float64 {
	n := ck.fam.n
	ev := symEigen(ck.fam.quadMatrix(c), n)
	if ev == nil {
		return 0
	}
	return ev[n-1]
}

// robust returns the robust decrease term K·sqrt(h)·|g ∘ sigmaF| at a
// point with leverage h and gradient g of V (0 on the non-rise path,
// where the held-out runs decide).
func (ck *checker) robust(g []float64, h float64) float64 {
	if ck.nonRise || ck.sigmaF == nil {
		return 0
	}
	s := 0.0
	for j, gj := range g {
		s += gj * gj * ck.sigmaF[j] * ck.sigmaF[j]
	}
	return robustK * math.Sqrt(math.Max(h, 0)*s)
}

// exemptRadius returns the radius of the ball around the equilibrium
// where no decrease is asked of V: the noise ball, widened to where the
// model's own uncertainty outweighs the linearised decrease. With P the
// quadratic part of V and lambda < 0 the largest eigenvalue of A'P + PA,
// V-dot is about lambda|z|² there while the robust term is at most
// K·sqrt(h(0))·max sigmaF·2·lambda_max(P)|z|, so decrease can be shown
// only beyond 2K·sqrt(h(0))·max sigmaF·lambda_max(P)/|lambda|, times
// exemptFactor for the higher-order terms.
func (ck *checker) exemptRadius(c []float64, lam float64) float64 {
	r := ck.r0
	if ck.nonRise || ck.sigmaF == nil || !(lam < 0) {
		return r
	}
	sm := 0.0
	for _, s := range ck.sigmaF {
		sm = math.Max(sm, s)
	}
	h0 := ck.trust.Leverage(make([]float64, ck.fam.n))
	ru := exemptFactor * 2 * robustK * math.Sqrt(h0) * sm * ck.quadMax(c) / -lam
	return math.Max(r, ru)
}

// rayMax returns the largest V on the segment from the equilibrium to z
// (rayPoints points): the level at which z joins the piece of {V <= c}
// along that segment (an upper bound of the true joining level).
func rayMax(ve *vEval, z, buf []float64) float64 {
	mx := 0.0
	for k := 1; k <= rayPoints; k++ {
		t := float64(k) / rayPoints
		for j := range buf {
			buf[j] = t * z[j]
		}
		mx = math.Max(mx, ve.value(buf))
	}
	return mx
}

// rayMaxBelow is rayMax, stopped at the first point where the running
// maximum is not below limit: it returns the maximum and true when it
// stays below limit, else false (and the maximum so far). It says true
// exactly when rayMax(ve, z, buf) < limit (math.Max keeps a NaN, which
// is below nothing).
func rayMaxBelow(ve *vEval, z, buf []float64, limit float64) (float64, bool) {
	mx := 0.0
	for k := 1; k <= rayPoints; k++ {
		t := float64(k) / rayPoints
		for j := range buf {
			buf[j] = t * z[j]
		}
		mx = math.Max(mx, ve.value(buf))
		if !(mx < limit) {
			return mx, false
		}
	}
	return mx, true
}

// level returns the largest c such that the piece of {V <= c} holding
// the equilibrium (as seen along rays from it) passes every check at the
// recorded samples and along the rays: positivity, the robust model
// decrease, decrease within the noise tolerance along every recorded
// pair, no other equilibrium, and the trust region (each ray ends at the
// first point where the model is not trusted). It is a sampled search,
// fast enough for every growth round; Certify bounds the final V's level
// with [Verify].
func (ck *checker) level(c []float64) levelResult {
	return ck.levelOf(c, true)
}

// levelOf is level; without inSample it leaves the in-sample figures
// (pairs, tolerance, decrease, margin) out, for a candidate that may not
// be kept (see completeFigures).
func (ck *checker) levelOf(c []float64, inSample bool) levelResult {
	ve := newVEval(ck.fam, c)
	hq := ck.quadMax(c)
	lam, reason := ck.linearCheck(c)
	if reason != "" {
		return levelResult{reason: reason}
	}
	rex := ck.exemptRadius(c, lam)
	vals := ck.values(ve)
	ck.dots.reset(len(ck.trust.HSamples))
	first := badMark{key: math.Inf(1), kind: LimitNone}
	ck.markSamples(&first, ve, vals, rex, hq)
	ck.markRays(&first, ve, rex, hq)
	ck.markOthers(&first, ve)
	if ck.fam.deg == 2 {
		ck.markFaces(&first, c)
	}
	return ck.levelAt(first, ve, c, vals, rex, hq, inSample)
}

// linearCheck returns lambda_max(A'P + PA) for V's quadratic part, and a
// reason when V does not decrease along the linearised field (on the
// non-rise path: when it rises).
func (ck *checker) linearCheck(c []float64) (lam float64, reason string) {
	lam, ok := ck.linearDecay(c)
	if ck.nonRise {
		if !ck.nonRiseLinear(c, lam) {
			return lam, "V's change along the linearised field is not negative semidefinite at the equilibrium"
		}
	} else if !ok {
		return lam, "V's decrease along the linearised field is not negative definite at the equilibrium"
	}
	return lam, ""
}

// values returns V at every recorded sample, per run.
// The slices are the checker's, reused by the next call: valid until
// then.
func (ck *checker) values(ve *vEval) [][]float64 {
	n := ck.fam.n
	if len(ck.vals) != len(ck.runs) {
		total := len(ck.trust.HSamples)
		buf := make([]float64, total)
		ck.vals = make([][]float64, len(ck.runs))
		for ri := range ck.runs {
			r := &ck.runs[ri]
			ck.vals[ri] = buf[r.off : r.off+len(r.t) : r.off+len(r.t)]
		}
	}
	vals := ck.vals
	for ri := range ck.runs {
		r := &ck.runs[ri]
		vs := vals[ri]
		for i := range vs {
			vs[i] = ck.samples.value(ve, r.off+i, r.z[i*n:(i+1)*n])
		}
		vals[ri] = vs
	}
	return vals
}

// lower lowers b to the failing check at level key, if below it.
func (b *badMark) lower(key float64, kind Limit, z []float64, run string) {
	if key < b.key {
		*b = badMark{key: key, kind: kind, z: append([]float64(nil), z...), run: run}
	}
}

// markSamples lowers first to the recorded samples outside the exempt
// ball (radius rex) that fail positivity, the robust model decrease or
// the pair's decrease within the noise tolerance, each at the level at
// which it joins the piece (along its ray).
func (ck *checker) markSamples(first *badMark, ve *vEval, vals [][]float64, rex, hq float64) {
	n := ck.fam.n
	rex2 := rex * rex
	buf := make([]float64, n)
	for ri := range ck.runs {
		r := &ck.runs[ri]
		vs := vals[ri]
		for i := range vs {
			z := r.z[i*n : (i+1)*n]
			z2 := ck.samples.norm2(r.off+i, z)
			if z2 <= rex2 || vs[i] >= first.key {
				continue
			}
			v, vd := ck.samples.vdot(ve, ck.field, r.off+i, z)
			tol := ck.pairTolAt(ve.gbuf, hq, v)
			ck.dots.set(r.off+i, vd, tol)
			bad := !(v >= posEps*z2) ||
				!(vd+ck.robust(ve.gbuf, r.h[i]) < 0 || (ck.nonRise && vd <= ck.vdTol(ve.gbuf, ve.fbuf, hq))) ||
				(i+1 < len(vs) && vs[i+1]-v > tol)
			if bad {
				if k, below := rayMaxBelow(ve, z, buf, first.key); below {
					first.lower(k, LimitViolated, z, r.name)
				}
			}
		}
	}
}

// markRays lowers first along the rays: the model's conditions between
// the samples (positivity and the robust decrease outside the exempt
// ball), and the trust region's edge where a ray leaves it.
func (ck *checker) markRays(first *badMark, ve *vEval, rex, hq float64) {
	n := ck.fam.n
	rex2 := rex * rex
	g := make([]float64, n)
	for ri := range ck.rays {
		ry := &ck.rays[ri]
		mx := 0.0
		for k := 0; k < rayPoints; k++ {
			z := ry.z[k*n : (k+1)*n]
			v := ck.rayPts.valueGrad(ve, g, ri*rayPoints+k, z)
			mx = math.Max(mx, v)
			if mx >= first.key {
				break
			}
			if k == rayPoints-1 && ry.exit {
				first.lower(mx, LimitTrust, z, "")
				break
			}
			z2 := ck.rayPts.norm2(ri*rayPoints+k, z)
			if z2 <= rex2 {
				continue
			}
			vd := 0.0
			f := ry.f[k*n : (k+1)*n]
			for j := range g {
				vd += g[j] * f[j]
			}
			okd := vd+ck.robust(g, ry.h[k]) < 0 || (ck.nonRise && vd <= ck.vdTol(g, f, hq))
			if !(v >= posEps*z2) || !okd {
				first.lower(mx, LimitDecrease, z, "")
				break
			}
		}
	}
}

// markOthers lowers first to the levels at which the other equilibria
// join the piece.
func (ck *checker) markOthers(first *badMark, ve *vEval) {
	buf := make([]float64, ck.fam.n)
	for _, o := range ck.others {
		first.lower(rayMax(ve, o, buf), LimitOther, o, "")
	}
}

// markFaces lowers first, for a quadratic V, to the least V on each face
// of the samples' box, exactly (for z'Pz on z_j = b it is b²/(P^-1)_jj
// at b·P^-1 e_j/(P^-1)_jj).
func (ck *checker) markFaces(first *badMark, c []float64) {
	n := ck.fam.n
	inv := symInverse(ck.fam.quadMatrix(c), n)
	if inv == nil {
		return
	}
	for j := 0; j < n; j++ {
		for _, b := range []float64{ck.trust.Lo[j], ck.trust.Hi[j]} {
			z := make([]float64, n)
			for i := range z {
				z[i] = b * inv[i*n+j] / inv[j*n+j]
			}
			first.lower(b*b/inv[j*n+j], LimitTrust, z, "")
		}
	}
}

// levelAt returns the level result just below the first failing check:
// the level, unless it does not reach beyond the exempt ball (radius
// rex), with the piece's box and the figures.
func (ck *checker) levelAt(first badMark, ve *vEval, c []float64, vals [][]float64, rex, hq float64, inSample bool) levelResult {
	n := ck.fam.n
	res := levelResult{ok: true, limit: first.kind, limitZ: first.z, limitRun: first.run, exempt: rex}
	res.level = first.key - levelShrink*math.Max(1, math.Abs(first.key))
	if math.IsInf(first.key, 1) {
		// Nothing stopped it along the rays (which all end at the trust
		// region's edge): cannot happen unless every ray stays trusted.
		res.level = 0
		for ri := range ck.rays {
			ry := &ck.rays[ri]
			res.level = math.Max(res.level, ck.rayPts.value(ve, ri*rayPoints+rayPoints-1, ry.z[(rayPoints-1)*n:]))
		}
	}
	res.vball = ck.ballMax(ve, rex)
	if !(res.level > res.vball) {
		res.ok = false
		note, share := ck.ballFill(rex)
		res.reason = "no level set of V reaches beyond the noise ball while passing the checks (limited by " + string(first.kind) + ")" + note
		res.ballShare = share
		return res
	}
	res.lo, res.hi = ck.pieceBox(ve, c, res.level)
	ck.shareOf(&res, ve)
	if inSample {
		ck.figures(&res, ve, vals, hq)
	}
	return res
}

// completeFigures fills the in-sample figures of a level result of V
// (coefficients c) that levelOf left out, as level would have.
func (ck *checker) completeFigures(res *levelResult, c []float64) {
	if !res.ok || res.figured {
		return
	}
	ve := newVEval(ck.fam, c)
	ck.dots.reset(len(ck.trust.HSamples))
	ck.figures(res, ve, ck.values(ve), ck.quadMax(c))
}

// nonRiseLinear checks, on the non-rise path, that A'P + PA is negative
// semidefinite up to the rounding allowance 2·nonRiseFloor·|P|·|A| (|.|
// the largest entry times n, a bound on the spectral norm).
func (ck *checker) nonRiseLinear(c []float64, lam float64) bool {
	n := ck.fam.n
	pa, aa := 0.0, 0.0
	for _, v := range ck.fam.quadMatrix(c) {
		pa = math.Max(pa, math.Abs(v))
	}
	for _, v := range ck.az {
		aa = math.Max(aa, math.Abs(v))
	}
	return lam <= 2*nonRiseFloor*float64(n*n)*pa*aa
}

// pieceBox returns the box of the piece of {V <= level} holding the
// equilibrium, in z, cut to the samples' box: for a quadratic V exactly
// (the ellipsoid's half widths sqrt(level·(P^-1)_jj)); otherwise the
// bounding box of the ray points and samples that join the piece below
// the level, widened by a fiftieth of its width (Certify's bound check
// then asks V > level on its faces and widens it where that fails).
func (ck *checker) pieceBox(ve *vEval, c []float64, level float64) (lo, hi []float64) {
	n := ck.fam.n
	lo, hi = make([]float64, n), make([]float64, n)
	tl, th := ck.trust.Lo, ck.trust.Hi
	if ck.fam.deg == 2 {
		if inv := symInverse(ck.fam.quadMatrix(c), n); inv != nil {
			for j := 0; j < n; j++ {
				w := math.Sqrt(math.Max(level*inv[j*n+j], 0)) * (1 + boxMargin)
				lo[j], hi[j] = math.Max(-w, tl[j]), math.Min(w, th[j])
			}
			return lo, hi
		}
	}
	for j := range lo {
		lo[j], hi[j] = 0, 0
	}
	add := func(z []float64) {
		for j, v := range z {
			lo[j], hi[j] = math.Min(lo[j], v), math.Max(hi[j], v)
		}
	}
	for ri := range ck.rays {
		ry := &ck.rays[ri]
		mx := 0.0
		for k := 0; k < rayPoints; k++ {
			z := ry.z[k*n : (k+1)*n]
			mx = math.Max(mx, ck.rayPts.value(ve, ri*rayPoints+k, z))
			if mx > level {
				break
			}
			add(z)
		}
	}
	buf := make([]float64, n)
	// rayMax <= level is rayMax < the next float64 above a finite level.
	above := math.Nextafter(level, math.Inf(1))
	finite := !math.IsInf(level, 0) && !math.IsNaN(level)
	for ri := range ck.runs {
		r := &ck.runs[ri]
		for i := range r.t {
			z := r.z[i*n : (i+1)*n]
			if inside(z, lo, hi) {
				continue // adding it would not change the box
			}
			if ck.samples.value(ve, r.off+i, z) <= level {
				var join bool
				if finite {
					_, join = rayMaxBelow(ve, z, buf, above)
				} else {
					join = rayMax(ve, z, buf) <= level
				}
				if join {
					add(z)
				}
			}
		}
	}
	for j := range lo {
		w := hi[j] - lo[j]
		lo[j], hi[j] = math.Max(lo[j]-w*boxMargin, tl[j]), math.Min(hi[j]+w*boxMargin, th[j])
	}
	return lo, hi
}

// inBox reports whether z lies in the box lo..hi.
func inBox(z, lo, hi []float64) bool {
	for j, v := range z {
		if v < lo[j] || v > hi[j] {
			return false
		}
	}
	return true
}

// inside reports whether z lies strictly inside the box lo..hi, where
// widening the box to hold z changes none of its bounds (not even the
// sign of a zero one).
func inside(z, lo, hi []float64) bool {
	for j, v := range z {
		if !(lo[j] < v && v < hi[j]) {
			return false
		}
	}
	return true
}

// shareOf fills the share of the trust region of a level result.
func (ck *checker) shareOf(res *levelResult, ve *vEval) {
	n := ck.fam.n
	lo, hi, level := res.lo, res.hi, res.level
	in, np := 0, len(ck.pool)/n
	for k := 0; k < np; k++ {
		z := ck.pool[k*n : (k+1)*n]
		if inBox(z, lo, hi) && ck.poolPts.value(ve, k, z) <= level {
			in++
		}
	}
	if np > 0 {
		res.share = float64(in) / float64(np)
	}
}

// figures fills the in-sample figures and the tolerance of a level
// result (vals: V at the samples, hq: see pairTol).
func (ck *checker) figures(res *levelResult, ve *vEval, vals [][]float64, hq float64) {
	n := ck.fam.n
	lo, hi, level := res.lo, res.hi, res.level
	res.figured = true
	r02 := res.exempt * res.exempt
	res.margin = math.Inf(1)
	res.pairs, res.tolerance, res.decrease = 0, 0, 0
	dec := 0
	for ri := range ck.runs {
		r := &ck.runs[ri]
		vs := vals[ri]
		for i := 0; i+1 < len(r.t); i++ {
			z0 := r.z[i*n : (i+1)*n]
			z1 := r.z[(i+1)*n : (i+2)*n]
			if !(vs[i] <= level && vs[i+1] <= level && inBox(z0, lo, hi) && inBox(z1, lo, hi)) {
				continue
			}
			res.pairs++
			vd, tol, ok := ck.dots.get(r.off + i)
			if !ok {
				_, vd = ck.samples.vdot(ve, ck.field, r.off+i, z0)
				tol = ck.pairTolAt(ve.gbuf, hq, vs[i])
				ck.dots.set(r.off+i, vd, tol)
			}
			res.tolerance = math.Max(res.tolerance, tol)
			if vs[i+1]-vs[i] <= tol {
				dec++
			}
			if z2 := ck.samples.norm2(r.off+i, z0); z2 > r02 {
				res.margin = math.Min(res.margin, -vd/z2)
			}
		}
	}
	if res.pairs > 0 {
		res.decrease = float64(dec) / float64(res.pairs)
	}
	if math.IsInf(res.margin, 1) {
		res.margin = 0
	}
}

// symInverse returns the inverse of the symmetric positive definite n×n
// matrix s (row-major), or nil.
func symInverse(s []float64, n int) []float64 {
	var ch mat.Cholesky
	if !ch.Factorize(mat.NewSymDense(n, append([]float64(nil), s...))) {
		return nil
	}
	var inv mat.SymDense
	if ch.InverseTo(&inv) != nil {
		return nil
	}
	out := make([]float64, n*n)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			out[i*n+j] = inv.At(i, j)
		}
	}
	return out
}

// linearDecay returns lambda_max(A'P + PA) for V's quadratic part P and
// the scaled Jacobian, and whether it is negative.
func (ck *checker) linearDecay(c []float64) (float64, bool) {
	n := ck.fam.n
	p := ck.fam.quadMatrix(c)
	a := ck.az
	mm := make([]float64, n*n)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			s := 0.0
			for l := 0; l < n; l++ {
				s += a[l*n+i]*p[l*n+j] + p[i*n+l]*a[l*n+j]
			}
			mm[i*n+j] = s
		}
	}
	ev := symEigen(mm, n)
	if ev == nil {
		return 0, false
	}
	lam := ev[n-1]
	return lam, lam < 0
}

// ballNoteShare: ballNote speaks when the exempt ball reaches this share
// of the way to the trust region's nearest edge.
const ballNoteShare = 0.5

// ballNote returns, when the exempt ball (radius rex) reaches at least
// ballNoteShare of the way from the equilibrium to the nearest point
// where a ray leaves the trust region, a clause saying so (from "; "),
// else "": a level set must hold the whole ball, so such a ball leaves
// it little room inside the data.
func (ck *checker) ballNote(rex float64) string {
	note, _ := ck.ballFill(rex)
	return note
}

// ballFill is ballNote with the exempt ball's radius as a share of the
// distance to the trust region's nearest edge (0 when no ray leaves it).
func (ck *checker) ballFill(rex float64) (string, float64) {
	n := ck.fam.n
	edge := math.Inf(1)
	for i := range ck.rays {
		if ry := &ck.rays[i]; ry.exit {
			edge = math.Min(edge, math.Sqrt(norm2(ry.z[(rayPoints-1)*n:])))
		}
	}
	if math.IsInf(edge, 1) || !(edge > 0) {
		return "", 0
	}
	share := rex / edge
	if !(share >= ballNoteShare) {
		return "", share
	}
	what := "the noise outweighs"
	if rex > ck.r0 {
		what = "the noise and the model's uncertainty outweigh"
	}
	if rex >= edge {
		return fmt.Sprintf("; the ball around the equilibrium where %s any decrease (radius %.3g in z) reaches past the nearest edge of the trust region (%.3g away), so no level set holding it fits inside the data", what, rex, edge), share
	}
	return fmt.Sprintf("; the ball around the equilibrium where %s any decrease (radius %.3g in z) reaches %.0f%% of the way to the nearest edge of the trust region, so a level set holding it has little room inside the data", what, rex, 100*share), share
}

// ballMax returns an upper bound of V on the ball |z| <= r: exact for a
// quadratic V (r² lambda_max(P)), a sound term-wise bound otherwise (see
// [BallMax]). An upper bound is the safe side: the level must
// exceed every V of the exempt ball.
func (ck *checker) ballMax(ve *vEval, r float64) float64 {
	return BallMax(NewPoly(ck.fam.n, ck.fam.lib.Terms(), ve.c), r)
}
