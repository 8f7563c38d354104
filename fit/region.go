package fit

import (
	"container/heap"
	"math"
	"math/rand/v2"
)

// Limits of a region, as reported in Region.Limit.
const (
	LimitEnvelope = "envelope edge"
	LimitOther    = "other equilibrium"
	LimitViolated = "violated sample"
	LimitGrowth   = "growth cap"
	LimitNone     = "none"
)

const (
	// posEps is the positivity margin: V(z) >= posEps |z|² (V has unit
	// trace, so this asks the smallest eigenvalue of the quadratic part to
	// be at least posEps where the quadratic part dominates).
	posEps = 1e-3
	// levelShrink keeps the level strictly below the first bad value.
	levelShrink = 1e-9
)

// zRun is one recorded run in scaled coordinates.
type zRun struct {
	name string
	t    []float64
	z    []float64 // n a sample, row-major
	cell []int32   // envelope cell of each sample
}

// checker finds the largest certified level of a given V.
type checker struct {
	fam        *vFamily
	zf         *zField
	env        *envelope
	runs       []zRun
	others     [][]float64 // other equilibria, in z
	sigma      []float64   // noise std per state, in z
	r0         float64     // noise radius
	az         []float64   // Jacobian at the equilibrium, in z, row-major
	kappa      float64     // noise multiplier of the pair tolerance
	maxDepth   int         // cell subdivision depth
	extraDepth int         // further depth for cells near the equilibrium
	rlin       float64     // radius of the linear ball of the V under test (set by level)
	share      int         // Monte-Carlo points for the envelope share
	rng        *rand.Rand
	// Radial lower bound of the V under test (set by level).
	radLam  float64
	radHigh []float64
	// Samples grouped by cell: bySample[cellStart[c]:cellStart[c+1]].
	cellStart []int32
	bySample  [][2]int32
	// nonRise replaces strict decrease by non-rise (see setNonRise);
	// tmax is the longest run's duration.
	nonRise bool
	tmax    float64
}

// nonRiseFloor is the relative allowance of V-dot on the non-rise path,
// in units of |grad V|·|f|: rounding of the dot product and of the
// central differences of the cell bound (about 1e-13 relative), with a
// wide safety factor, still far below any damping the data could show.
const nonRiseFloor = 1e-6

// setNonRise switches the checks to the non-rise conditions, for a
// linearisation with an eigenvalue on the imaginary axis where V cannot
// fall strictly. V-dot may then be positive by at most vdTol: the rise
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
	limit     string
	limitZ    []float64
	limitRun  string
	lo, hi    []float64 // the piece's box, in z
	share     float64   // of the envelope's volume
	pieceLen  int
	tolerance float64 // noise tolerance on V differences in the region
	pairs     int
	decrease  float64
	vball     float64 // largest V on the noise ball
	margin    float64 // min of -Vdot/|z|² over checked samples in the region
}

// boxSlack widens the first-order lower bound of V over a cell when
// deciding which cells of the box need their checks (curvature of V
// within a cell).
const boxSlack = 0.25

// badMark is the first failing check of a cell: the lowest V at which it
// fails (a lower bound over the failing part of the cell).
type badMark struct {
	key  float64
	kind string
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

// level returns the largest c such that the connected piece of {V <= c}
// holding the equilibrium stays inside the envelope, holds no other
// equilibrium, and passes every check: positivity and model decrease at
// every sample and cell, a first-order bound on V-dot over every cell
// (with subdivision), and decrease within the noise tolerance along
// every recorded pair.
func (ck *checker) level(c []float64) levelResult {
	env, n := ck.env, ck.fam.n
	ve := newVEval(ck.fam, c)
	hq := ck.quadMax(c)
	ck.setRadial(c)
	bad := map[int]*badMark{}
	mark := func(cell int, key float64, kind string, z []float64, run string) {
		if cell < 0 {
			return
		}
		if b, ok := bad[cell]; ok && b.key <= key {
			return
		}
		bad[cell] = &badMark{key: key, kind: kind, z: append([]float64(nil), z...), run: run}
	}
	g := make([]float64, n)
	r02 := ck.r0 * ck.r0

	// V at every sample (cheap; the pair checks and figures need it).
	vals := make([][]float64, len(ck.runs))
	for ri := range ck.runs {
		r := &ck.runs[ri]
		vs := make([]float64, len(r.t))
		for i := range vs {
			vs[i] = ve.value(r.z[i*n : (i+1)*n])
		}
		vals[ri] = vs
	}
	var ok bool
	if ck.rlin, ok = ck.linearBall(ve); !ok {
		return levelResult{reason: "V's decrease along the linearised field is not negative definite at the equilibrium"}
	}
	center := make([]float64, n)
	half := make([]float64, n)
	for j := range half {
		half[j] = env.h[j] / 2
	}
	cs := newCellScratch(n, ck.maxDepth+ck.extraDepth)
	cs.hq = hq
	// check runs every check of an envelope cell, once, when the search
	// first needs it (cells the level set never reaches are not checked):
	// positivity, model decrease and recorded pairs at its samples, the
	// other equilibria in it, and the cell bound on V-dot.
	checked := map[int]bool{}
	check := func(cell int) {
		if checked[cell] {
			return
		}
		checked[cell] = true
		for _, si := range ck.cellSamples(cell) {
			r := &ck.runs[si[0]]
			i := int(si[1])
			z := r.z[i*n : (i+1)*n]
			z2 := norm2(z)
			if z2 <= r02 {
				continue
			}
			v, vd := ve.vdot(ck.zf, z)
			switch {
			case !(v >= posEps*z2), !(vd < 0 || (ck.nonRise && vd <= ck.vdTol(ve.gbuf, ve.fbuf, hq))):
				mark(cell, v, LimitViolated, z, r.name)
			case i+1 < len(r.t):
				if vals[si[0]][i+1]-v > ck.pairTolAt(ve.gbuf, hq, v) {
					mark(cell, v, LimitViolated, z, r.name)
				}
			}
		}
		for _, o := range ck.others {
			if env.cellOf(o) == cell {
				mark(cell, ve.value(o), LimitOther, o, "")
			}
		}
		env.centerTo(center, cell)
		if key, z := ck.cellKey(ve, cs, center, half, 0); key < math.Inf(1) {
			mark(cell, key, LimitViolated, z, "")
		}
	}
	// Other equilibria outside the grid cannot be reached; those in a
	// non-envelope cell are behind the envelope edge.
	// Lower bound of V over a cell, for joining and for non-envelope cells.
	hd := env.halfDiag()
	vlow := func(cell int) float64 {
		env.centerTo(center, cell)
		v := ve.valueGrad(g, center)
		return math.Max(v-math.Sqrt(norm2(g))*hd, ck.vLowRadial(center, half))
	}

	// Minimax flood from the equilibrium's cell.
	start := env.cellOf(make([]float64, n))
	if start < 0 || env.count[start] == 0 {
		return levelResult{reason: "the equilibrium lies outside the envelope the data cover"}
	}
	join := map[int]float64{}
	queued := map[int]bool{start: true}
	pq := &floodQueue{}
	heap.Push(pq, floodItem{level: math.Inf(-1), cell: start})
	var stop *floodItem
	var stopMark badMark
	for pq.Len() > 0 {
		it := heap.Pop(pq).(floodItem)
		if it.bad {
			stop = &it
			break
		}
		join[it.cell] = it.level
		if env.count[it.cell] == 0 {
			// Outside the envelope: bad as soon as it is reached.
			heap.Push(pq, floodItem{level: it.level, cell: it.cell, bad: true})
			continue
		}
		check(it.cell)
		if b, ok := bad[it.cell]; ok {
			heap.Push(pq, floodItem{level: math.Max(it.level, b.key), cell: it.cell, bad: true})
		}
		env.neighbours(it.cell, func(nb int) {
			if queued[nb] {
				return
			}
			queued[nb] = true
			heap.Push(pq, floodItem{level: math.Max(it.level, vlow(nb)), cell: nb})
		})
	}
	if stop == nil { // cannot happen: the grid is padded with empty cells
		return levelResult{reason: "internal: flood did not meet the envelope edge"}
	}
	markOf := func(cell int) badMark {
		if b, ok := bad[cell]; ok && env.count[cell] != 0 {
			return *b
		}
		z := env.centerTo(make([]float64, n), cell)
		return badMark{key: vlow(cell), kind: LimitEnvelope, z: z}
	}
	stopMark = markOf(stop.cell)
	level := stop.level - levelShrink*math.Max(1, math.Abs(stop.level))

	// The piece and its box; no bad or non-envelope cell in the box may
	// lie below the level (other components of {V <= c} are claimed by
	// the contract's {V <= level, x in box} too).
	lo, hi := make([]float64, n), make([]float64, n)
	var piece []int
	for iter := 0; iter < 20; iter++ {
		piece = piece[:0]
		for cell, l := range join {
			if l <= level && env.count[cell] != 0 {
				piece = append(piece, cell)
			}
		}
		if len(piece) == 0 {
			break
		}
		ilo, ihi := make([]int, n), make([]int, n)
		for j := range ilo {
			ilo[j], ihi[j] = math.MaxInt, -1
		}
		for _, cell := range piece {
			for j := 0; j < n; j++ {
				i := env.index(cell, j)
				ilo[j], ihi[j] = min(ilo[j], i), max(ihi[j], i)
			}
		}
		for j := 0; j < n; j++ {
			lo[j] = env.lo[j] + float64(ilo[j])*env.h[j]
			hi[j] = env.lo[j] + float64(ihi[j]+1)*env.h[j]
		}
		lowered := false
		forBox(env, ilo, ihi, func(cell int) {
			var bm badMark
			vl := vlow(cell)
			if vl > level+boxSlack*math.Max(math.Abs(level), math.Abs(vl)) {
				return // V exceeds the level on the whole cell
			}
			if env.count[cell] != 0 {
				check(cell)
			}
			if env.count[cell] == 0 {
				bm = markOf(cell)
			} else if b, ok := bad[cell]; ok {
				bm = *b
			} else {
				return
			}
			if bm.key <= level {
				level = bm.key - levelShrink*math.Max(1, math.Abs(bm.key))
				stopMark = bm
				lowered = true
			}
		})
		if !lowered {
			break
		}
	}
	res := levelResult{ok: true, level: level, limit: stopMark.kind, limitZ: stopMark.z,
		limitRun: stopMark.run, lo: lo, hi: hi, pieceLen: len(piece)}
	// The region must reach beyond the noise ball.
	res.vball = ck.ballMax(ve)
	if len(piece) == 0 || !(level > res.vball) {
		res.ok = false
		res.reason = "no level set of V reaches beyond the noise ball while passing the checks (limited by " + stopMark.kind + ")"
		return res
	}
	inBox := func(z []float64) bool {
		for j, v := range z {
			if v < lo[j] || v > hi[j] {
				return false
			}
		}
		return true
	}
	// Envelope share by Monte Carlo.
	z := make([]float64, n)
	in := 0
	for s := 0; s < ck.share; s++ {
		env.randomTo(z, ck.rng)
		if inBox(z) && ve.value(z) <= level {
			in++
		}
	}
	res.share = float64(in) / float64(ck.share)
	// In-sample figures and the tolerance.
	res.margin = math.Inf(1)
	dec := 0
	for ri := range ck.runs {
		r := &ck.runs[ri]
		vs := vals[ri]
		for i := 0; i+1 < len(r.t); i++ {
			z0 := r.z[i*n : (i+1)*n]
			z1 := r.z[(i+1)*n : (i+2)*n]
			if !(vs[i] <= level && vs[i+1] <= level && inBox(z0) && inBox(z1)) {
				continue
			}
			res.pairs++
			_, vd := ve.vdot(ck.zf, z0)
			tol := ck.pairTolAt(ve.gbuf, hq, vs[i])
			res.tolerance = math.Max(res.tolerance, tol)
			if vs[i+1]-vs[i] <= tol {
				dec++
			}
			if z2 := norm2(z0); z2 > r02 {
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
	return res
}

// Linear-ball search (not user-facing): radii from linMin to linMax in z,
// linSteps geometric steps, linDirs·n directions a radius.
const (
	linMin   = 1e-3
	linMax   = 0.25
	linSteps = 40
	linDirs  = 200
)

// linearBall checks V against the linearisation at the equilibrium and
// returns the radius of the ball where the linearisation decides.
//
// With P the quadratic part of V and A the Jacobian (in z), V-dot =
// z'Mz + O(|z|³), M = A'P + PA. If M is negative definite (checked by its
// eigenvalues: Lyapunov's indirect method) V falls on some ball around
// the equilibrium. The first-order cell bound cannot show that near the
// equilibrium, where V-dot is quadratic, so cells inside the returned
// radius are exempt from it: the largest sampled radius rho (at most
// linMax) such that V-dot(z) <= lambda_max(M)|z|²/2 at every sampled
// direction and radius up to rho, i.e. where the cubic remainder has not
// eaten half the quadratic decrease. It returns ok = false when M is not
// negative definite.
func (ck *checker) linearBall(ve *vEval) (float64, bool) {
	n := ck.fam.n
	lam, ok := ck.linearDecay(ve.c)
	if ck.nonRise {
		// Non-rise: M only needs to be negative semidefinite, up to the
		// rounding allowance 2·nonRiseFloor·|P|·|A| (|.| the largest
		// entry times n, a bound on the spectral norm); no linear ball.
		pa, aa := 0.0, 0.0
		for _, v := range ck.fam.quadMatrix(ve.c) {
			pa = math.Max(pa, math.Abs(v))
		}
		for _, v := range ck.az {
			aa = math.Max(aa, math.Abs(v))
		}
		return 0, lam <= 2*nonRiseFloor*float64(n*n)*pa*aa
	}
	if !ok {
		return 0, false
	}
	rng := rand.New(rand.NewPCG(11, 11))
	dirs := make([]float64, linDirs*n*n)
	for d := 0; d < linDirs*n; d++ {
		u := dirs[d*n : (d+1)*n]
		for j := range u {
			u[j] = rng.NormFloat64()
		}
		r := math.Sqrt(norm2(u))
		for j := range u {
			u[j] /= r
		}
	}
	z := make([]float64, n)
	rho := 0.0
	for s := 0; s <= linSteps; s++ {
		r := linMin * math.Pow(linMax/linMin, float64(s)/linSteps)
		for d := 0; d < linDirs*n; d++ {
			u := dirs[d*n : (d+1)*n]
			for j := range z {
				z[j] = r * u[j]
			}
			if _, vd := ve.vdot(ck.zf, z); !(vd <= 0.5*lam*r*r) {
				return rho, true
			}
		}
		rho = r
	}
	return rho, true
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

// setRadial prepares vLowRadial for V: the smallest eigenvalue of the
// quadratic part and, per degree above 2, the sum of |coefficients|.
func (ck *checker) setRadial(c []float64) {
	n := ck.fam.n
	ev := symEigen(ck.fam.quadMatrix(c), n)
	ck.radLam = 0
	if ev != nil {
		ck.radLam = ev[0]
	}
	ck.radHigh = make([]float64, ck.fam.deg+1)
	for k, ck2 := range c {
		if d := ck.fam.lib.Degree(k); d > 2 {
			ck.radHigh[d] += math.Abs(ck2)
		}
	}
}

// vLowRadial is a lower bound of V over the box centre ± half that holds
// near the equilibrium, where the first-order bound is poor: with P the
// quadratic part, V(z) >= lambda_min(P)|z|² - sum over higher terms of
// |c_k| |z|^deg_k (each monomial of degree d is at most |z|^d in size),
// taken with the box's nearest and farthest distances from 0.
func (ck *checker) vLowRadial(center, half []float64) float64 {
	dmin, dmax := 0.0, 0.0
	for j, c := range center {
		a := math.Abs(c)
		dmin += math.Pow(math.Max(0, a-half[j]), 2)
		dmax += math.Pow(a+half[j], 2)
	}
	dmax = math.Sqrt(dmax)
	v := ck.radLam * dmin
	for d := 3; d < len(ck.radHigh); d++ {
		if ck.radHigh[d] != 0 {
			v -= ck.radHigh[d] * math.Pow(dmax, float64(d))
		}
	}
	return v
}

// cellSamples returns the (run, sample) indices of the samples in cell.
func (ck *checker) cellSamples(cell int) [][2]int32 {
	return ck.bySample[ck.cellStart[cell]:ck.cellStart[cell+1]]
}

// indexSamples groups the samples by envelope cell.
func (ck *checker) indexSamples() {
	env := ck.env
	ck.cellStart = make([]int32, env.total+1)
	for ri := range ck.runs {
		for _, c := range ck.runs[ri].cell {
			if c >= 0 {
				ck.cellStart[c+1]++
			}
		}
	}
	for c := 0; c < env.total; c++ {
		ck.cellStart[c+1] += ck.cellStart[c]
	}
	ck.bySample = make([][2]int32, ck.cellStart[env.total])
	next := append([]int32(nil), ck.cellStart[:env.total]...)
	for ri := range ck.runs {
		for i, c := range ck.runs[ri].cell {
			if c >= 0 {
				ck.bySample[next[c]] = [2]int32{int32(ri), int32(i)}
				next[c]++
			}
		}
	}
}

// ballMax returns the largest V found on the noise sphere |z| = r0.
func (ck *checker) ballMax(ve *vEval) float64 {
	n := ck.fam.n
	z := make([]float64, n)
	mx := 0.0
	rng := rand.New(rand.NewPCG(7, 7))
	for s := 0; s < 200*n; s++ {
		r := 0.0
		for j := range z {
			z[j] = rng.NormFloat64()
			r += z[j] * z[j]
		}
		r = ck.r0 / math.Sqrt(r)
		for j := range z {
			z[j] *= r
		}
		mx = math.Max(mx, ve.value(z))
	}
	return mx
}

// cellScratch holds per-depth buffers for cellKey.
type cellScratch struct {
	sub, half [][]float64
	zp        []float64
	hq        float64 // largest eigenvalue of V's quadratic part
}

func newCellScratch(n, depth int) *cellScratch {
	cs := &cellScratch{zp: make([]float64, n)}
	for d := 0; d <= depth; d++ {
		cs.sub = append(cs.sub, make([]float64, n))
		cs.half = append(cs.half, make([]float64, n))
	}
	return cs
}

// cellFDStep is the relative step of the central differences for the
// gradient of V-dot (relative to the cell's half width): small enough
// that the difference error (O(step²)) is far below the bound's slack.
const cellFDStep = 1e-3

// cellKey checks the cell centre ± half: positivity at the centre and
// the first-order bound V-dot(c) + |grad V-dot(c)|·|half| < 0, splitting
// the cell into 2^n halves up to maxDepth when the bound fails. Parts
// within the noise ball are exempt. It returns +Inf when the cell
// passes, else a lower bound of V over the failing part and its centre.
func (ck *checker) cellKey(ve *vEval, cs *cellScratch, center, half []float64, depth int) (float64, []float64) {
	n := len(center)
	r := math.Sqrt(norm2(half))
	cn := math.Sqrt(norm2(center))
	if cn+r <= ck.r0 || cn+r <= ck.rlin {
		return math.Inf(1), nil
	}
	v, vd := ve.vdot(ck.zf, center)
	gv := math.Sqrt(norm2(ve.gbuf))
	tol := ck.vdTol(ve.gbuf, ve.fbuf, cs.hq)
	lowV := math.Max(v-gv*r, ck.vLowRadial(center, half))
	touches := cn-r <= ck.r0
	if !touches && !(v >= posEps*cn*cn) {
		return lowV, append([]float64(nil), center...)
	}
	// Gradient of V-dot by central differences.
	gd := 0.0 // max of the linear term over the box: sum |d_j| half_j
	zp := cs.zp
	for j := 0; j < n; j++ {
		step := cellFDStep * half[j]
		copy(zp, center)
		zp[j] += step
		_, a := ve.vdot(ck.zf, zp)
		zp[j] -= 2 * step
		_, b := ve.vdot(ck.zf, zp)
		gd += math.Abs(a-b) / (2 * step) * half[j]
	}
	if vd+gd < 0 || (ck.nonRise && vd+gd <= tol) {
		return math.Inf(1), nil
	}
	// Near the equilibrium V-dot is quadratic, so the first-order bound
	// only passes on cells small against their distance: keep splitting
	// those (few of them) deeper.
	limit := ck.maxDepth
	if cn < 3*r {
		limit += ck.extraDepth
	}
	if depth >= limit {
		if touches {
			return math.Inf(1), nil // at the noise ball's edge: exempt
		}
		return lowV, append([]float64(nil), center...)
	}
	sub, sh := cs.sub[depth+1], cs.half[depth+1]
	for j := range sh {
		sh[j] = half[j] / 2
	}
	best, bestZ := math.Inf(1), []float64(nil)
	for mask := 0; mask < 1<<n; mask++ {
		for j := 0; j < n; j++ {
			if mask&(1<<j) != 0 {
				sub[j] = center[j] + sh[j]
			} else {
				sub[j] = center[j] - sh[j]
			}
		}
		// sub and sh are overwritten by deeper calls: pass copies.
		k, z := ck.cellKey(ve, cs, append([]float64(nil), sub...), append([]float64(nil), sh...), depth+1)
		if k < best {
			best, bestZ = k, z
		}
	}
	return best, bestZ
}

// forBox calls fn for every grid cell with per-axis index in [ilo, ihi].
func forBox(env *envelope, ilo, ihi []int, fn func(int)) {
	n := env.n
	idx := append([]int(nil), ilo...)
	for {
		c := 0
		for j := 0; j < n; j++ {
			c += idx[j] * env.stride[j]
		}
		fn(c)
		j := 0
		for ; j < n; j++ {
			idx[j]++
			if idx[j] <= ihi[j] {
				break
			}
			idx[j] = ilo[j]
		}
		if j == n {
			return
		}
	}
}

type floodItem struct {
	level float64
	cell  int
	bad   bool
}

type floodQueue []floodItem

func (q floodQueue) Len() int { return len(q) }
func (q floodQueue) Less(i, j int) bool {
	if q[i].level != q[j].level {
		return q[i].level < q[j].level
	}
	return q[i].bad && !q[j].bad // a bad event at a level stops before a join at it
}
func (q floodQueue) Swap(i, j int) { q[i], q[j] = q[j], q[i] }
func (q *floodQueue) Push(x any)   { *q = append(*q, x.(floodItem)) }
func (q *floodQueue) Pop() any {
	old := *q
	it := old[len(old)-1]
	*q = old[:len(old)-1]
	return it
}
