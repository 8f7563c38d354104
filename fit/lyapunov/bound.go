package lyapunov

import (
	"math"
)

// Bound-check settings (not user-facing): the boxes one check may examine,
// and the halvings of a box edge (relative to the samples' box) below
// which a failing box is not split, by state count: finer in few states.
const boundBoxes = 200000

// keepLimit: a bound within this share of the sampled level keeps the
// sampled search's limit as the reason.
const keepLimit = 0.97

func boundDepth(n int) int { return max(7, 12-n) }

// verify bounds the level of V (coefficients c) found by the sampled
// search r with [Verify] and returns the result with the level,
// box, limit and figures of the bound (r itself when the bound confirms
// it).
func (ck *checker) verify(c []float64, r levelResult) levelResult {
	n := ck.fam.n
	lib := ck.fam.lib
	v := NewPoly(n, lib.Terms(), c)
	grad := make([]*Poly, n)
	var terms []*Poly
	for j := 0; j < n; j++ {
		grad[j] = Deriv(v, j)
		terms = append(terms, Mul(grad[j], ck.fz[j]))
	}
	ones := make([]float64, n)
	for j := range ones {
		ones[j] = 1
	}
	p := &Problem{
		N: n, V: v, VDot: Sum(ones, terms...), Grad: grad,
		Trust: ck.trust, Lo: ck.trust.Lo, Hi: ck.trust.Hi,
		Exempt: r.exempt, PosEps: posEps, Others: ck.others,
		MaxBoxes: boundBoxes, Depth: boundDepth(n),
	}
	if !ck.nonRise && ck.sigmaF != nil {
		p.Sigma, p.K = ck.sigmaF, robustK
	}
	ve := newVEval(ck.fam, c)
	hq := ck.quadMax(c)
	if ck.nonRise {
		p.Tol = ck.nonRiseTol(ve, r, hq)
	}
	vr := Verify(p, r.level, r.lo, r.hi)
	r.bound = &vr
	tracef(ck.trace, "bound: sampled level %.5g -> %.5g, limit %s at %v, box %v..%v (asked %v..%v), %d boxes, %d rounds, radial %.3g exempt %.3g", r.level, vr.Level, vr.Limit, vr.Point, vr.Lo, vr.Hi, r.lo, r.hi, vr.Boxes, vr.Rounds, vr.Radial, r.exempt)
	if vr.Level >= r.level {
		return r
	}
	r.level = vr.Level
	if !(r.level > r.vball) {
		r.ok = false
		note, share := ck.ballFill(r.exempt)
		r.reason = "the bound over the region found no level set of V beyond the noise ball (limited by " + string(vr.Limit) + ")" + note
		r.ballShare = share
		return r
	}
	switch {
	case vr.Level >= keepLimit*r.level:
		// The bound only trimmed the sampled level: what stopped the
		// sampled search still explains the region.
	case vr.Limit == LimitTrust:
		r.limit = LimitTrust
	case vr.Limit == LimitOther:
		r.limit = LimitOther
	case vr.Limit == LimitBudget:
		r.limit = LimitBudget
	default:
		r.limit = LimitDecrease
	}
	if vr.Level < keepLimit*r.level {
		r.limitZ, r.limitRun = vr.Point, ""
	}
	r.lo, r.hi = ck.pieceBox(ve, c, r.level)
	for j := range r.lo {
		// the bound's box holds the piece too
		r.lo[j], r.hi[j] = math.Max(r.lo[j], vr.Lo[j]), math.Min(r.hi[j], vr.Hi[j])
	}
	ck.dots.reset(len(ck.trust.HSamples)) // V may not be the last one checked
	ck.shareOf(&r, ve)
	ck.figures(&r, ve, ck.values(ve), hq)
	return r
}

// nonRiseTol returns the largest V-dot allowance of the non-rise path
// (see checker.vdTol) over the recorded samples inside the region: a
// constant for the bound.
func (ck *checker) nonRiseTol(ve *vEval, r levelResult, hq float64) float64 {
	n := ck.fam.n
	tol := 0.0
	for ri := range ck.runs {
		rr := &ck.runs[ri]
		for i := range rr.t {
			z := rr.z[i*n : (i+1)*n]
			if v, _ := ck.samples.vdot(ve, ck.field, rr.off+i, z); v <= r.level {
				tol = math.Max(tol, ck.vdTol(ve.gbuf, ve.fbuf, hq))
			}
		}
	}
	return tol
}
