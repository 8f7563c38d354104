package lyapunov

import (
	"container/heap"
	"math"

	"gonum.org/v1/gonum/mat"
)

// Limit names what stops a level set from growing.
type Limit string

// The limits of a level search.
const (
	// LimitTrust: the level set reaches where the model is not trusted
	// (leverage above the samples' largest, or the samples' box).
	LimitTrust Limit = "trust region edge"
	// LimitDecrease: V's robust model decrease fails.
	LimitDecrease Limit = "model decrease fails"
	// LimitPositive: V is not positive.
	LimitPositive Limit = "V not positive"
	// LimitOther: another equilibrium.
	LimitOther Limit = "other equilibrium"
	// LimitComponent: the piece's box cannot be closed (V <= c reaches
	// its faces), as when another component of {V <= c} comes close.
	LimitComponent Limit = "level set not closed"
	// LimitBudget: the bound needed more boxes than allowed.
	LimitBudget Limit = "bound budget"
	// LimitViolated: a recorded pair or sample fails a check (V rises
	// beyond the noise tolerance, or V or the model decrease fails there).
	LimitViolated Limit = "violated sample"
	// LimitGrowth: the growth rounds ran out while the region still grew.
	LimitGrowth Limit = "growth cap"
	// LimitNone: nothing stopped it within the search.
	LimitNone Limit = "none"
)

// Problem is one bound check of a level set {V <= c}: in scaled
// coordinates z, over the box Domain (the samples' box), V and its model
// derivative VDot = grad V · f must satisfy on every point of {V <= c}
// inside the piece's box, outside the exempt ball |z| <= Exempt:
//
//	positivity        V(z) >= PosEps |z|²
//	robust decrease   VDot(z) + K sqrt(h(z)) |grad V(z) ∘ Sigma| <= Tol
//	                  (strictly below 0 when Tol is 0)
//	trust             h(z) <= Trust.HMax
//
// with Sigma the residual standard deviation of the fitted field per
// state (z units per second, so Sigma_j sqrt(h) is the standard error of
// f_j), and no other equilibrium in it; and V > c on the faces of the
// piece's box, so that the box holds whole components of {V <= c}.
type Problem struct {
	N      int
	V      *Poly
	VDot   *Poly
	Grad   []*Poly // dV/dz_j
	Sigma  []float64
	K      float64
	Tol    float64
	Trust  *Trust // nil: no trust check (the box only)
	Lo, Hi []float64
	Exempt float64
	PosEps float64
	Others [][]float64
	// MaxBoxes caps the boxes examined by one Verify; 0 means 200000.
	MaxBoxes int
	// Depth is the number of halvings of a box edge, per state, below
	// which a failing box is not split further; 0 means 7.
	Depth int
}

// Verdict of one level.
type Verified struct {
	// Level is the largest level found to pass (at most the one asked).
	Level float64
	// Lo, Hi is the piece's box, z.
	Lo, Hi []float64
	// Limit says what stopped it, Point where (z), when it was lowered.
	Limit Limit
	Point []float64
	// Boxes counts the boxes examined; Rounds is 1 (kept for reports).
	Boxes, Rounds int
	// Radial is the radius of the ball around the equilibrium where the
	// decrease and positivity were shown by a radial bound.
	Radial float64
}

type bbox struct {
	c, r  []float64
	depth []uint8
	// checks already shown on an enclosing box
	trustOK, decOK, posOK bool
	vlo                   float64 // lower bound of V over the box

}

// verifier holds the Bounders (scratch) of one Problem.
type verifier struct {
	p              *Problem
	v, vd, h       *Bounder
	g              []*Bounder
	radial         float64
	boxes, maxBox  int
	depth          int
	width          []float64
	failKey        float64
	failKind       Limit
	failZ          []float64
	exhausted      bool
	sigmaMax, hAll float64
	// The quadratic-part bounds: p = z'Mz + rest, with z'Mz between
	// lambda_min(M)|z|² and lambda_max(M)|z|² (see [quadSplit]).
	vRest, vdRest     *Bounder
	vLamLo, vdLamHi   float64
	vQuadOK, vdQuadOK bool
}

// Verify returns the largest level at most c0 for which every condition
// of p holds on the piece of {V <= level} inside box0 (z), by branch and
// bound with the Taylor-form bounds of [Bounder]: a box whose lower bound
// of V exceeds the level is dropped; a box where every bound passes is
// kept whole; any other box is halved along its widest edge (relative to
// the domain) until Depth, and a box that still fails lowers the level to
// below its lower bound of V. Boxes are taken best first (lowest bound
// of V first), so the search stops at the first such box. Boxes fully
// inside the exempt ball
// pass; a box that straddles its edge and fails at the finest depth is
// taken as exempt (the bound's only gap: a sliver of width 2^-Depth of the
// domain at the noise ball's edge). When MaxBoxes is exhausted the level
// is cut below the next box's lower bound of V (everything below it has
// been shown). The faces of the box are checked first (V > c), and a face
// inside the domain where that fails moves out (at most faceGrowths
// times). Verify returns Level 0 when no positive level passes.
func Verify(p *Problem, c0 float64, lo0, hi0 []float64) Verified {
	n := p.N
	vf := &verifier{p: p, v: NewBounder(p.V), vd: NewBounder(p.VDot), maxBox: p.MaxBoxes, depth: p.Depth}
	if rest, ok := quadSplit(p.V); ok {
		if ev := symEigen(QuadMatrix(p.V), n); ev != nil {
			vf.vRest, vf.vLamLo, vf.vQuadOK = NewBounder(rest), ev[0], true
		}
	}
	if rest, ok := quadSplit(p.VDot); ok {
		if ev := symEigen(QuadMatrix(p.VDot), n); ev != nil {
			vf.vdRest, vf.vdLamHi, vf.vdQuadOK = NewBounder(rest), ev[n-1], true
		}
	}
	if vf.maxBox <= 0 {
		vf.maxBox = 200000
	}
	if vf.depth <= 0 {
		vf.depth = 7
	}
	if p.Trust != nil {
		vf.h = NewBounder(p.Trust.H)
	}
	for _, g := range p.Grad {
		vf.g = append(vf.g, NewBounder(g))
	}
	vf.width = make([]float64, n)
	for j := range vf.width {
		vf.width[j] = p.Hi[j] - p.Lo[j]
	}
	for _, s := range p.Sigma {
		vf.sigmaMax = math.Max(vf.sigmaMax, s)
	}
	vf.radial = vf.radialBall()
	out := Verified{Level: c0, Radial: vf.radial, Limit: LimitNone}
	lo := append([]float64(nil), lo0...)
	hi := append([]float64(nil), hi0...)
	c := c0
	out.Rounds = 1
	vf.failKey = math.Inf(1)
	for j := 0; j < n; j++ {
		lo[j], hi[j] = math.Max(lo[j], p.Lo[j]), math.Min(hi[j], p.Hi[j])
	}
	// Grow the box where V <= c reaches a face inside the domain.
	for g := 0; ; g++ {
		grow := vf.faces(c, lo, hi, g == faceGrowths)
		if len(grow) == 0 || g == faceGrowths {
			break
		}
		for _, f := range grow {
			j := f / 2
			w := 0.05 * vf.width[j]
			if f%2 == 0 {
				lo[j] = math.Max(lo[j]-w, p.Lo[j])
			} else {
				hi[j] = math.Min(hi[j]+w, p.Hi[j])
			}
		}
	}
	// Other equilibria in the box with V <= c.
	for _, o := range p.Others {
		if in(o, lo, hi) {
			if v := p.V.Eval(o); v <= c {
				vf.fail(v, LimitOther, o)
			}
		}
	}
	faceBoxes := vf.boxes
	vf.boxes = 0
	vf.interior(c, lo, hi)
	out.Boxes = vf.boxes + faceBoxes
	out.Lo, out.Hi = lo, hi
	if math.IsInf(vf.failKey, 1) {
		return out
	}
	out.Limit, out.Point = vf.failKind, vf.failZ
	out.Level = math.Min(c, vf.failKey)*(1-1e-6) - 1e-12
	if !(out.Level > 0) {
		out.Level = 0
	}
	return out
}

func in(z, lo, hi []float64) bool {
	for j, v := range z {
		if v < lo[j] || v > hi[j] {
			return false
		}
	}
	return true
}

func (vf *verifier) fail(key float64, kind Limit, z []float64) {
	key = math.Max(key, 0)
	if key < vf.failKey {
		vf.failKey, vf.failKind, vf.failZ = key, kind, append([]float64(nil), z...)
	}
}

// faceGrowths is how many times a box face may move out by 5% of the
// domain where V <= c reaches it, before that counts as a failure (the
// piece meets another component of {V <= c} or is wider than the data).
const faceGrowths = 6

// faces checks V > c on each face of the box and returns the faces
// (2j for the low side of state j, 2j+1 the high side) where it fails
// inside the domain; the box must grow there. Where a face on the
// domain's edge fails, the level must fall (the region may not reach the
// edge of the data): that is recorded as a failure.
func (vf *verifier) faces(c float64, lo, hi []float64, last bool) []int {
	n := vf.p.N
	var grow []int
	for j := 0; j < n; j++ {
		for side := 0; side < 2; side++ {
			b := bbox{c: make([]float64, n), r: make([]float64, n), depth: make([]uint8, n)}
			for i := 0; i < n; i++ {
				b.c[i], b.r[i] = (lo[i]+hi[i])/2, (hi[i]-lo[i])/2
			}
			if side == 0 {
				b.c[j] = lo[j]
			} else {
				b.c[j] = hi[j]
			}
			boxDepth(&b, vf.width)
			b.r[j] = 0
			b.depth[j] = uint8(vf.depth)
			edge := onDomainEdge(b, vf.p.Lo, vf.p.Hi)
			q := &boxQueue{}
			b.vlo = vf.vLow(b.c, b.r, c)
			heap.Push(q, b)
			budget := vf.maxBox / (4 * n)
			for used := 0; q.Len() > 0; used++ {
				b := heap.Pop(q).(bbox)
				vlo := b.vlo
				if vlo > math.Min(c, vf.failKey) {
					break
				}
				vf.boxes++
				if used > budget {
					vf.fail(vlo, LimitBudget, b.c)
					break
				}
				if k, ok := vf.split(b, false); ok {
					for _, kb := range k {
						kb.vlo = vf.vLow(kb.c, kb.r, math.Min(c, vf.failKey))
						kb.vlo = math.Max(kb.vlo, vlo)
						heap.Push(q, kb)
					}
					continue
				}
				if !edge && !last {
					grow = append(grow, 2*j+side)
					break
				}
				kind := LimitTrust
				if !edge {
					kind = LimitComponent
				}
				vf.fail(vlo, kind, b.c)
				break
			}
		}
	}
	return grow
}

func onDomainEdge(b bbox, lo, hi []float64) bool {
	for j := range b.c {
		if b.r[j] == 0 && (b.c[j] <= lo[j] || b.c[j] >= hi[j]) {
			return true
		}
	}
	return false
}

// nearDepth is the further depth allowed for a box that is wide against
// its distance from the equilibrium (there V-dot is quadratic and the
// first-order part of the bound must be small against it).
const nearDepth = 10

// split halves b along its widest edge relative to the domain, unless
// every edge is at the finest depth (deeper by nearDepth when near).
func (vf *verifier) split(b bbox, near bool) ([]bbox, bool) {
	limit := vf.depth
	if near {
		limit += nearDepth
	}
	best, bw := -1, 0.0
	for j := range b.r {
		if b.r[j] == 0 || int(b.depth[j]) >= limit {
			continue
		}
		if w := b.r[j] / vf.width[j]; w > bw {
			best, bw = j, w
		}
	}
	if best < 0 {
		return nil, false
	}
	out := make([]bbox, 2)
	for s := 0; s < 2; s++ {
		k := bbox{c: append([]float64(nil), b.c...), r: append([]float64(nil), b.r...), depth: append([]uint8(nil), b.depth...),
			trustOK: b.trustOK, decOK: b.decOK, posOK: b.posOK}
		k.r[best] /= 2
		k.depth[best]++
		if s == 0 {
			k.c[best] -= k.r[best]
		} else {
			k.c[best] += k.r[best]
		}
		out[s] = k
	}
	return out, true
}

// dist returns the smallest and largest distance from 0 over the box.
func dist(b bbox) (dmin, dmax float64) {
	for j, c := range b.c {
		a := math.Abs(c)
		dmin += math.Pow(math.Max(0, a-b.r[j]), 2)
		dmax += math.Pow(a+b.r[j], 2)
	}
	return math.Sqrt(dmin), math.Sqrt(dmax)
}

// interior runs the branch and bound over the box, best first: boxes are
// taken in increasing order of their lower bound of V, so that when a box
// at the finest depth fails (or the budget runs out) every box below it
// has been shown, and the search stops there: the level is then just
// below that box's lower bound.
func (vf *verifier) interior(c float64, lo, hi []float64) {
	p := vf.p
	n := p.N
	b := bbox{c: make([]float64, n), r: make([]float64, n), depth: make([]uint8, n)}
	for j := 0; j < n; j++ {
		b.c[j], b.r[j] = (lo[j]+hi[j])/2, (hi[j]-lo[j])/2
	}
	boxDepth(&b, vf.width)
	q := &boxQueue{}
	b.vlo = vf.vLow(b.c, b.r, c)
	heap.Push(q, b)
	for q.Len() > 0 {
		b := heap.Pop(q).(bbox)
		vlo := b.vlo
		if vlo > math.Min(c, vf.failKey) {
			return // every remaining box lies above the level
		}
		vf.boxes++
		if vf.boxes > vf.maxBox {
			vf.fail(vlo, LimitBudget, b.c)
			return
		}
		dmin, dmax := dist(b)
		if dmax <= p.Exempt {
			continue
		}
		kind := Limit("")
		if !b.trustOK {
			if vf.trusted(b) {
				b.trustOK = true
			} else {
				kind = LimitTrust
			}
		}
		if kind == "" && dmax <= vf.radial {
			b.decOK, b.posOK = true, true
		}
		if kind == "" && !b.posOK {
			if vlo-p.PosEps*dmin*dmin > 0 || dmin <= p.Exempt {
				b.posOK = true
			} else {
				kind = LimitPositive
			}
		}
		if kind == "" && !b.decOK {
			if vf.decrease(b) {
				b.decOK = true
			} else {
				kind = LimitDecrease
			}
		}
		if kind == "" {
			continue
		}
		hd := 0.0
		for _, r := range b.r {
			hd += r * r
		}
		near := kind != LimitTrust && math.Sqrt(hd) > dmin/4
		if k, ok := vf.split(b, near); ok {
			for _, kb := range k {
				kb.vlo = vf.vLow(kb.c, kb.r, math.Min(c, vf.failKey))
				kb.vlo = math.Max(kb.vlo, vlo) // a part is at least its whole's bound
				heap.Push(q, kb)
			}
			continue
		}
		if dmin <= p.Exempt && kind != LimitTrust {
			continue // the exempt ball's edge at the finest depth
		}
		vf.fail(vlo, kind, b.c)
	}
}

// quadSplit returns p without its degree-2 terms; false when p has none.
func quadSplit(p *Poly) (*Poly, bool) {
	var es [][]int
	var cs []float64
	found := false
	for k, e := range p.E {
		d := 0
		for _, q := range e {
			d += q
		}
		if d == 2 {
			found = true
			continue
		}
		es, cs = append(es, e), append(cs, p.C[k])
	}
	if !found {
		return nil, false
	}
	return NewPoly(p.N, es, cs), true
}

// vLow returns a lower bound of V over the box center ± half: the larger
// of the Taylor-form bound of [Bounder] and, with V = z'Pz + rest,
// lambda_min(P)·d² + (the rest's lower bound), d the box's smallest
// (lambda_min >= 0) or largest (lambda_min < 0) distance from 0. Both
// bound V from below, so their maximum does; the second stays tight on
// boxes wide against their distance from the equilibrium, where the
// Taylor form is loose. The second is skipped when the first already
// exceeds need (the box lies above the level asked).
func (vf *verifier) vLow(center, half []float64, need float64) float64 {
	lo, _ := vf.v.Bounds(center, half)
	if !vf.vQuadOK || lo > need {
		return lo
	}
	dmin, dmax := dist(bbox{c: center, r: half})
	rlo, _ := vf.vRest.Bounds(center, half)
	q := vf.vLamLo * dmin * dmin
	if vf.vLamLo < 0 {
		q = vf.vLamLo * dmax * dmax
	}
	return math.Max(lo, q+rlo)
}

// boxQueue is a min-heap of boxes by their lower bound of V.
type boxQueue []bbox

func (q boxQueue) Len() int           { return len(q) }
func (q boxQueue) Less(i, j int) bool { return q[i].vlo < q[j].vlo }
func (q boxQueue) Swap(i, j int)      { q[i], q[j] = q[j], q[i] }
func (q *boxQueue) Push(x any)        { *q = append(*q, x.(bbox)) }
func (q *boxQueue) Pop() any {
	old := *q
	it := old[len(old)-1]
	*q = old[:len(old)-1]
	return it
}

// trusted bounds h over the box against HMax and checks the domain.
func (vf *verifier) trusted(b bbox) bool {
	p := vf.p
	for j := range b.c {
		if b.c[j]-b.r[j] < p.Lo[j]-1e-12 || b.c[j]+b.r[j] > p.Hi[j]+1e-12 {
			return false
		}
	}
	if vf.h == nil {
		return true
	}
	_, hhi := vf.h.Bounds(b.c, b.r)
	return hhi <= p.Trust.HMax
}

// decrease bounds VDot + K sqrt(h) |grad V ∘ Sigma| over the box. V-dot's
// upper bound is the Taylor form of [Bounder] or, where that fails, with
// VDot = z'Mz + rest, lambda_max(M)·d² + (the rest's upper bound), d the
// box's smallest (lambda_max < 0) or largest distance from 0: the
// smaller of two upper bounds is one.
func (vf *verifier) decrease(b bbox) bool {
	p := vf.p
	_, vdhi := vf.vd.Bounds(b.c, b.r)
	rob := 0.0
	if p.K > 0 && vf.sigmaMax > 0 {
		hhi := 0.0
		if vf.h != nil {
			_, hhi = vf.h.Bounds(b.c, b.r)
			hhi = math.Max(hhi, 0)
		}
		s := 0.0
		for j, g := range vf.g {
			glo, ghi := g.Bounds(b.c, b.r)
			m := math.Max(math.Abs(glo), math.Abs(ghi))
			s += m * m * p.Sigma[j] * p.Sigma[j]
		}
		rob = p.K * math.Sqrt(hhi*s)
	}
	pass := func(vdhi float64) bool {
		if p.Tol > 0 {
			return vdhi+rob <= p.Tol
		}
		return vdhi+rob < 0
	}
	if pass(vdhi) || !vf.vdQuadOK {
		return pass(vdhi)
	}
	dmin, dmax := dist(b)
	_, rhi := vf.vdRest.Bounds(b.c, b.r)
	q := vf.vdLamHi * dmax * dmax
	if vf.vdLamHi < 0 {
		q = vf.vdLamHi * dmin * dmin
	}
	return pass(math.Min(vdhi, q+rhi))
}

// radialBall returns the largest radius rho (at most the domain's
// half-diagonal) such that on every sphere |z| = r, Exempt <= r <= rho,
// the radial bounds show the robust decrease and positivity. For r in a
// shell [a, b] (the shells step geometrically from Exempt):
//
//	VDot(z) <= lambda_max(Q) a² + sum over degrees d != 2 of C_d b^d
//	V(z)    >= lambda_min(P) a² - sum over degrees d != 2 of D_d b^d
//	|grad V ∘ Sigma| <= |diag(Sigma) G1|_2 b + |(Sigma_j sum over d != 1 of G_jd b^d)_j|_2
//	h(z)    <= the bound of h over the cube [-b, b]^n (which holds the ball)
//
// (Q, P the quadratic parts, C_d, D_d, G_jd the sums of |coefficients| of
// each degree, see [DegreeNorms]; G1 the matrix of grad V's linear part,
// so |diag(Sigma) G1 z|_2 <= its spectral norm times |z|; lambda_max(Q)
// < 0 and lambda_min(P) > 0 are needed). Each shell's bounds hold for every
// r in it, so the claim holds on the whole ball, not only on the
// spheres sampled. 0 when it fails at the exempt radius.
func (vf *verifier) radialBall() float64 {
	p := vf.p
	n := p.N
	lq, ok := eigMax(QuadMatrix(p.VDot), n)
	if !ok || !(lq < 0) {
		return 0
	}
	lp, ok := eigMin(QuadMatrix(p.V), n)
	if !ok || !(lp > p.PosEps) {
		return 0
	}
	cd := DegreeNorms(p.VDot)
	dd := DegreeNorms(p.V)
	// grad V's linear part, rows scaled by Sigma, and the other degrees.
	g1 := make([]float64, n*n)
	gd := make([][]float64, n)
	sig := func(j int) float64 {
		if j < len(p.Sigma) {
			return p.Sigma[j]
		}
		return 0
	}
	for j, g := range p.Grad {
		for k, e := range g.E {
			s, at := 0, -1
			for i, q := range e {
				s += q
				if q > 0 {
					at = i
				}
			}
			if s == 1 {
				g1[j*n+at] += sig(j) * g.C[k]
			}
		}
		gd[j] = DegreeNorms(g)
	}
	// spectral norm of g1: sqrt of the largest eigenvalue of g1'g1.
	gtg := make([]float64, n*n)
	for a := 0; a < n; a++ {
		for b := 0; b < n; b++ {
			s := 0.0
			for j := 0; j < n; j++ {
				s += g1[j*n+a] * g1[j*n+b]
			}
			gtg[a*n+b] = s
		}
	}
	l1, ok := eigMax(gtg, n)
	if !ok {
		return 0
	}
	gnorm := math.Sqrt(math.Max(l1, 0)) * (1 + 1e-9)
	rmax := 0.0
	for j := range p.Lo {
		rmax += math.Max(p.Lo[j]*p.Lo[j], p.Hi[j]*p.Hi[j])
	}
	rmax = math.Sqrt(rmax)
	start := math.Max(p.Exempt, 1e-6*rmax)
	if start >= rmax {
		return 0
	}
	rho := 0.0
	const steps = 400
	zero := make([]float64, n)
	half := make([]float64, n)
	a := start
	for s := 1; s <= steps; s++ {
		b := start * math.Pow(rmax/start, float64(s)/steps)
		vd := lq * a * a
		for d, c := range cd {
			if d != 2 {
				vd += c * math.Pow(b, float64(d))
			}
		}
		hi := 0.0
		for j := range gd {
			t := 0.0
			for d, c := range gd[j] {
				if d != 1 {
					t += c * math.Pow(b, float64(d))
				}
			}
			t *= sig(j)
			hi += t * t
		}
		g := gnorm*b + math.Sqrt(hi)
		rob := 0.0
		if p.K > 0 && vf.sigmaMax > 0 {
			hh := 0.0
			if vf.h != nil {
				for j := range half {
					half[j] = b
				}
				_, hh = vf.h.Bounds(zero, half)
				hh = math.Max(hh, 0)
			}
			rob = p.K * math.Sqrt(hh) * g
		}
		v := (lp - p.PosEps) * a * a
		for d, c := range dd {
			if d != 2 {
				v -= c * math.Pow(b, float64(d))
			}
		}
		okd := vd+rob < 0 || (p.Tol > 0 && vd+rob <= p.Tol)
		if !okd || !(v > 0) {
			break
		}
		rho = b
		a = b
	}
	return rho
}

// eigMax and eigMin return the extreme eigenvalues of the symmetric n×n
// matrix s (row-major).
func eigMax(s []float64, n int) (float64, bool) {
	ev := symEigen(s, n)
	if ev == nil {
		return 0, false
	}
	return ev[n-1], true
}

func eigMin(s []float64, n int) (float64, bool) {
	ev := symEigen(s, n)
	if ev == nil {
		return 0, false
	}
	return ev[0], true
}

func symEigen(s []float64, n int) []float64 {
	var es mat.EigenSym
	if !es.Factorize(mat.NewSymDense(n, append([]float64(nil), s...)), false) {
		return nil
	}
	return es.Values(nil)
}

// boxDepth sets b's per-edge depth relative to the domain widths: an edge
// as wide as the domain is depth 0, each halving adds one.
func boxDepth(b *bbox, width []float64) {
	for j := range b.r {
		b.depth[j] = 0
		for w := width[j] / 2; w > b.r[j]*1.5 && b.depth[j] < 255; w /= 2 {
			b.depth[j]++
		}
	}
}
