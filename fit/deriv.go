package fit

import (
	"math"
	"slices"
	"strconv"
	"strings"
	"sync"

	"basin.example/ingest"
)

// Derivative methods for [FieldOptions.Derivative].
const (
	// DerivAuto tries every method below and keeps the one whose model has
	// the least held-out error on the integral-form yardstick.
	DerivAuto = "auto"
	// DerivFornberg differentiates by fourth-order finite differences whose
	// weights come from Fornberg's recursion on the actual (possibly
	// uneven) sample times: five nodes, centred where the run allows.
	DerivFornberg = "fornberg"
	// DerivSavitzkyGolay fits a cubic to a sliding window of samples by
	// least squares and takes its value (the smoothed state) and slope.
	// The window is chosen per state from the noise estimate: half the
	// widest smoothing window the noise explains ([chooseWindow]). Only
	// samples with a full centred window enter the regression.
	DerivSavitzkyGolay = "savitzky-golay"
	// DerivIntegral avoids differentiating: it regresses x(t_b) - x(t_a)
	// on the time integrals of the library over consecutive windows
	// [t_a, t_b] (composite Simpson's rule, uneven steps allowed).
	DerivIntegral = "integral"
)

// minWindow is the fewest samples any derivative method needs from a run:
// five nodes for the fourth-order stencil or the smallest cubic fit.
const minWindow = 5

// FornbergTo stores in c the weights of the finite-difference formulas
// for the derivatives of orders 0..len(c)-1 at x0 on the given nodes:
// f^(k)(x0) ≈ sum_j c[k][j] f(nodes[j]). Each c[k] must have len(nodes)
// entries. It returns c. The nodes may be unevenly spaced and need not
// bracket x0. This is the recursion of Fornberg, "Generation of finite
// difference formulas on arbitrarily spaced grids", Math. Comp. 51(184),
// 1988. It panics on a length mismatch and does not allocate.
func FornbergTo(c [][]float64, x0 float64, nodes []float64) [][]float64 {
	n := len(nodes)
	m := len(c) - 1
	for k := range c {
		if len(c[k]) != n {
			panic("fit: FornbergTo length mismatch")
		}
		for j := range c[k] {
			c[k][j] = 0
		}
	}
	if n == 0 || m < 0 {
		return c
	}
	c1 := 1.0
	c4 := nodes[0] - x0
	c[0][0] = 1
	for i := 1; i < n; i++ {
		mn := min(i, m)
		c2 := 1.0
		c5 := c4
		c4 = nodes[i] - x0
		for j := 0; j < i; j++ {
			c3 := nodes[i] - nodes[j]
			c2 *= c3
			if j == i-1 {
				for k := mn; k >= 1; k-- {
					c[k][i] = c1 * (float64(k)*c[k-1][i-1] - c5*c[k][i-1]) / c2
				}
				c[0][i] = -c1 * c5 * c[0][i-1] / c2
			}
			for k := mn; k >= 1; k-- {
				c[k][j] = (c4*c[k][j] - float64(k)*c[k-1][j]) / c3
			}
			c[0][j] = c4 * c[0][j] / c3
		}
		c1 = c2
	}
	return c
}

// sgWork is scratch space for Savitzky–Golay weights of one degree.
type sgWork struct {
	q   int       // polynomial degree
	mom []float64 // 2q+1 power sums of the scaled offsets
	a   []float64 // (q+1)^2 normal matrix, then its Cholesky factor
	g   []float64 // q+1
	g1  []float64 // q+1, a second right-hand side
}

func newSGWork(q int) *sgWork {
	return &sgWork{q: q, mom: make([]float64, 2*q+1), a: make([]float64, (q+1)*(q+1)),
		g: make([]float64, q+1), g1: make([]float64, q+1)}
}

// factor forms the normal matrix of the degree-q Vandermonde in the scaled
// offsets s = (t - x0)/h, h the largest |t - x0|, and factorises it by
// Cholesky. It returns h, and false when the nodes cannot carry a
// polynomial of degree q.
func (w *sgWork) factor(nodes []float64, x0 float64) (float64, bool) {
	q := w.q
	r := q + 1
	h := 0.0
	for _, t := range nodes {
		d := t - x0
		if d < 0 {
			d = -d
		}
		if d > h {
			h = d
		}
	}
	if !(h > 0) || len(nodes) < r {
		return h, false
	}
	// The normal matrix is a Hankel matrix of the power sums: a[u][v] is
	// the sum of s^(u+v).
	mom := w.mom
	clear(mom)
	inv := 1 / h
	for _, t := range nodes {
		s := (t - x0) * inv
		p := 1.0
		for i := range mom {
			mom[i] += p
			p *= s
		}
	}
	a := w.a
	for u := 0; u < r; u++ {
		for v := 0; v < r; v++ {
			a[u*r+v] = mom[u+v]
		}
	}
	// Cholesky in place (lower).
	for j := 0; j < r; j++ {
		d := a[j*r+j]
		for k := 0; k < j; k++ {
			d -= a[j*r+k] * a[j*r+k]
		}
		if d <= 1e-13*float64(len(nodes)) {
			return h, false
		}
		d = math.Sqrt(d)
		a[j*r+j] = d
		for i := j + 1; i < r; i++ {
			s := a[i*r+j]
			for k := 0; k < j; k++ {
				s -= a[i*r+k] * a[j*r+k]
			}
			a[i*r+j] = s / d
		}
	}
	return h, true
}

// unit stores in g the solution of L L' g = e_deriv with the factor of
// the last factor call.
func (w *sgWork) unit(g []float64, deriv int) {
	r := w.q + 1
	a := w.a
	clear(g)
	g[deriv] = 1
	for i := deriv; i < r; i++ { // forward; g[:deriv] stays 0
		s := g[i]
		for k := deriv; k < i; k++ {
			s -= a[i*r+k] * g[k]
		}
		g[i] = s / a[i*r+i]
	}
	for i := r - 1; i >= 0; i-- { // back
		s := g[i]
		for k := i + 1; k < r; k++ {
			s -= a[k*r+i] * g[k]
		}
		g[i] = s / a[i*r+i]
	}
}

// weights stores in dst the weights w_j with sum_j w_j f(nodes[j]) equal
// to the deriv-th derivative at x0 of the degree-q least-squares
// polynomial through (nodes, f). It returns false when the nodes cannot
// carry a polynomial of that degree.
func (w *sgWork) weights(dst, nodes []float64, x0 float64, deriv int) bool {
	if deriv > w.q {
		return false
	}
	h, ok := w.factor(nodes, x0)
	if !ok {
		return false
	}
	g := w.g
	w.unit(g, deriv)
	fact := 1.0
	for i := 2; i <= deriv; i++ {
		fact *= float64(i)
	}
	scale := fact / math.Pow(h, float64(deriv))
	inv := 1 / h
	for j, t := range nodes {
		s := (t - x0) * inv
		v, p := 0.0, 1.0
		for _, gi := range g {
			v += gi * p
			p *= s
		}
		dst[j] = v * scale
	}
	return true
}

// pair stores in w0 and w1 the smoothing (value) and first-derivative
// weights at x0 of the degree-q least-squares polynomial through the
// nodes, from one factorisation: the same numbers as weights with deriv
// 0 and 1. It returns false when the nodes cannot carry the polynomial.
func (w *sgWork) pair(w0, w1, nodes []float64, x0 float64) bool {
	if w.q < 1 {
		return false
	}
	h, ok := w.factor(nodes, x0)
	if !ok {
		return false
	}
	g0, g1 := w.g, w.g1
	w.unit(g0, 0)
	w.unit(g1, 1)
	inv := 1 / h
	for j, t := range nodes {
		s := (t - x0) * inv
		v0, v1, p := 0.0, 0.0, 1.0
		for i, a := range g0 {
			v0 += a * p
			v1 += g1[i] * p
			p *= s
		}
		w0[j] = v0
		w1[j] = v1 * inv
	}
	return true
}

// SavitzkyGolayTo stores in dst the Savitzky–Golay weights for the
// deriv-th derivative at x0 of the least-squares polynomial of the given
// degree through the nodes (Savitzky & Golay, Anal. Chem. 36(8), 1964, on
// any grid), and returns dst; deriv 0 gives smoothing weights. It panics
// on a length mismatch and returns nil when the nodes cannot carry a
// polynomial of that degree (too few, or all at x0).
func SavitzkyGolayTo(dst, nodes []float64, x0 float64, degree, deriv int) []float64 {
	if len(dst) != len(nodes) || degree < 0 || deriv < 0 {
		panic("fit: SavitzkyGolayTo bad arguments")
	}
	var buf [4*sgSmallDegree + 3 + (sgSmallDegree+1)*(sgSmallDegree+1)]float64
	var w sgWork
	if r := degree + 1; degree <= sgSmallDegree { // scratch on the stack: no allocation
		w = sgWork{q: degree, mom: buf[:2*degree+1], g: buf[2*degree+1 : 2*degree+1+r],
			g1: buf[2*degree+1+r : 2*degree+1+2*r], a: buf[2*degree+1+2*r : 2*degree+1+2*r+r*r]}
	} else {
		w = *newSGWork(degree)
	}
	if !w.weights(dst, nodes, x0, deriv) {
		return nil
	}
	return dst
}

// sgSmallDegree is the largest degree whose SavitzkyGolayTo scratch lives
// on the stack.
const sgSmallDegree = 4

// noiseStd estimates the standard deviation of white measurement noise on
// one state from its fourth differences, pooled over runs: for a smooth
// signal sampled densely the fourth difference is dominated by noise, with
// variance 70 σ² (C(8,4)); the median absolute value makes it robust to the
// few places where the signal itself is rough: σ ≈ 1.4826·median|Δ⁴x|/√70.
// At most about limit differences are used (evenly strided).
func noiseStd(runs [][]float64, limit int) float64 {
	total := 0
	for _, x := range runs {
		total += max(0, len(x)-4)
	}
	if total == 0 {
		return 0
	}
	stride := max(1, total/limit)
	d := make([]float64, 0, min(total, limit+len(runs)))
	for _, x := range runs {
		for i := 0; i+4 < len(x); i += stride {
			v := x[i] - 4*x[i+1] + 6*x[i+2] - 4*x[i+3] + x[i+4]
			d = append(d, math.Abs(v))
		}
	}
	if len(d) == 0 {
		return 0
	}
	return 1.4826 * medianSelect(d) / math.Sqrt(70)
}

// windowCandidates are the Savitzky–Golay half-widths tried (window 2m+1).
var windowCandidates = []int{2, 3, 4, 5, 6, 8, 10, 12, 15, 19, 24, 30, 38, 48, 60}

// discrepancySlack is how much the smoothing residual may exceed what noise
// alone explains before the window counts as biased (20%, common practice
// for a discrepancy principle on a few thousand residuals).
const discrepancySlack = 1.2

// chooseWindow returns the half-width m of the cubic Savitzky–Golay window
// for one state with noise std sigma: the largest candidate whose
// smoothing residual is still explained by noise alone (Morozov's
// discrepancy principle). For a projection filter with centre weight w0,
// pure noise leaves a residual of mean square σ²(1 - w0); once the window
// is wide enough to bend the signal the residual grows beyond that. The
// residual is measured on about limit interior points, assuming a nearly
// uniform grid (indices, not times). With sigma 0 the smallest window wins.
func chooseWindow(runs [][]float64, sigma float64, limit int) int {
	best := windowCandidates[0]
	if sigma <= 0 {
		return best
	}
	total := 0
	for _, x := range runs {
		total += len(x)
	}
	stride := max(1, total/limit)
	for _, m := range windowCandidates {
		a, _ := sgSmoothing(m)
		ss, cnt := 0.0, 0
		for _, x := range runs {
			ss, cnt = smoothResidual(ss, cnt, x, m, stride)
		}
		if cnt < 20 {
			break
		}
		if ss/float64(cnt) > discrepancySlack*sigma*sigma*(1-a) {
			break
		}
		best = m
	}
	return best
}

// sgSmoothing returns the centred cubic (equally, quadratic) smoothing
// weights of 2m+1 equally spaced points as w_k = a - b k^2, k = -m..m:
// a = 3(3m² + 3m - 1)/((2m+1)(4m² + 4m - 3)), b = 15/((2m+1)(4m² + 4m - 3))
// (Savitzky & Golay, Anal. Chem. 36(8), 1964; m = 2 gives
// (-3, 12, 17, 12, -3)/35). a is also the centre weight.
func sgSmoothing(m int) (a, b float64) {
	f := float64(m)
	den := (2*f + 1) * (4*f*f + 4*f - 3)
	return 3 * (3*f*f + 3*f - 1) / den, 15 / den
}

// smoothRestart bounds the running-sum updates of smoothResidual between
// two direct sums, so rounding cannot drift: after 64 updates of sums of
// about m³|x| the error is below 64 · 2.2e-16 of them, about 1e-14 |x| in
// the smoothed value (the residuals it enters are noise, 1e-3 |x| and
// more on the data it is for).
const smoothRestart = 64

// smoothResidual adds to ss and cnt the squared residuals x_i - s_i of
// the centred smoothing of x over 2m+1 samples ([sgSmoothing]) at
// i = m, m+stride, ... while the window fits. The smoothed value is
// a·S0 - b·S2 with S0 = Σ x_{i+k} and S2 = Σ k² x_{i+k}; moving the centre
// by the stride re-centres the sums (with S1 = Σ k x_{i+k}) and trades the
// samples that leave for those that enter, so a point costs O(stride)
// rather than O(m).
func smoothResidual(ss float64, cnt int, x []float64, m, stride int) (float64, int) {
	a, b := sgSmoothing(m)
	var s0, s1, s2 float64
	since := smoothRestart
	d := float64(stride)
	for i := m; i+m < len(x); i += stride {
		if since >= smoothRestart || stride > m {
			s0, s1, s2 = 0, 0, 0
			for k := -m; k <= m; k++ {
				v, fk := x[i+k], float64(k)
				s0 += v
				s1 += fk * v
				s2 += fk * fk * v
			}
			since = 0
		} else {
			s2 += -2*d*s1 + d*d*s0 // offsets from the new centre
			s1 -= d * s0
			for j := i - stride - m; j < i-m; j++ { // leaving
				v, fk := x[j], float64(j-i)
				s0 -= v
				s1 -= fk * v
				s2 -= fk * fk * v
			}
			for j := i - stride + m + 1; j <= i+m; j++ { // entering
				v, fk := x[j], float64(j-i)
				s0 += v
				s1 += fk * v
				s2 += fk * fk * v
			}
			since++
		}
		r := x[i] - (a*s0 - b*s2)
		ss += r * r
		cnt++
	}
	return ss, cnt
}

// uniformGrid reports whether t is evenly spaced to within a relative
// 1e-6 of its median step, and returns that step.
func uniformGrid(t []float64) (bool, float64) {
	if len(t) < 2 {
		return false, 0
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	for i := 1; i < len(t); i++ {
		d := t[i] - t[i-1]
		lo, hi = math.Min(lo, d), math.Max(hi, d)
	}
	h := (t[len(t)-1] - t[0]) / float64(len(t)-1)
	return hi-lo <= 1e-6*h, h
}

// derivWork holds per-goroutine scratch for differentiating one run.
type derivWork struct {
	sg    *sgWork
	c     [][]float64
	wt    []float64
	wt0   []float64
	node  []float64
	group []int
	pre   []float64 // prefix sums of sgBlocks
	ref   []float64 // per-state reference levels of sgBlocks
}

func newDerivWork() *derivWork {
	return &derivWork{sg: newSGWork(3), c: [][]float64{make([]float64, minWindow), make([]float64, minWindow)}}
}

// stencil returns the start of the width-w window of [0, n) nearest to
// centre i.
func stencil(i, n, w int) int {
	a := i - w/2
	return max(0, min(a, n-w))
}

// fornbergRun stores in dx the fourth-order finite-difference derivative of
// x over times t.
func (dw *derivWork) fornbergRun(dx, t, x []float64) {
	n := len(t)
	uni, _ := uniformGrid(t)
	var cached []float64 // interior weights on a uniform grid
	for i := 0; i < n; i++ {
		a := stencil(i, n, minWindow)
		var w []float64
		if uni && a == i-minWindow/2 && cached != nil {
			w = cached
		} else {
			FornbergTo(dw.c, t[i], t[a:a+minWindow])
			w = dw.c[1]
			if uni && a == i-minWindow/2 {
				cached = append([]float64(nil), w...)
			}
		}
		s := 0.0
		for k, c := range w {
			s += c * x[a+k]
		}
		dx[i] = s
	}
}

// sgRuns stores in xs[j] the smoothed states and in dx[j] the slopes of
// the cubic least-squares fits over windows of 2·half[j]+1 samples of
// x[j] (fewer near the ends: the window slides but keeps its width). The
// weights depend only on the time stamps, so they are computed once per
// sample and window width, value and slope from one factorisation, and
// applied to every state with that width.
func (dw *derivWork) sgRuns(xs, dx [][]float64, t []float64, x [][]float64, half []int) {
	uni, _ := uniformGrid(t)
	group := dw.group[:0]
	for j, m := range half {
		if slices.Contains(half[:j], m) {
			continue // done with the first state of that width
		}
		group = group[:0]
		for k := j; k < len(half); k++ {
			if half[k] == m {
				group = append(group, k)
			}
		}
		dw.sgGroup(xs, dx, t, x, group, m, uni)
	}
	dw.group = group
}

// sgPerSample makes sgGroup factorise a normal matrix at every sample on
// every grid (the reference path), for the benchmark and the tests that
// compare the two paths.
var sgPerSample = false

// sgGroup is sgRuns for the states in group, all of half-width m. On a
// uniform grid the centred weights are computed once and reused. On any
// other grid the windows are summed from prefix sums ([derivWork.sgBlocks]),
// which costs a few operations per sample instead of a factorisation over
// the whole window.
func (dw *derivWork) sgGroup(xs, dx [][]float64, t []float64, x [][]float64, group []int, m int, uni bool) {
	n := len(t)
	w := min(2*m+1, n)
	if uni || sgPerSample || w < 4 {
		dw.sgSamples(xs, dx, t, x, group, w, 0, n, uni)
		return
	}
	dw.sgBlocks(xs, dx, t, x, group, w)
}

// sgSamples is sgGroup for the centres i0 <= i < i1 with windows of w
// samples: a factorisation and a pair of weight vectors per sample
// (once in all when uni says the grid is uniform).
func (dw *derivWork) sgSamples(xs, dx [][]float64, t []float64, x [][]float64, group []int, w, i0, i1 int, uni bool) {
	n := len(t)
	if cap(dw.wt) < w {
		dw.wt, dw.wt0, dw.node = make([]float64, w), make([]float64, w), make([]float64, w)
	}
	wt1, wt0, nodes := dw.wt[:w], dw.wt0[:w], dw.node[:w]
	var c0, c1 []float64 // centred weights on a uniform grid
	for i := i0; i < i1; i++ {
		a := stencil(i, n, w)
		centred := a == i-w/2 && w%2 == 1
		var u0, u1 []float64
		if uni && centred && c0 != nil {
			u0, u1 = c0, c1
		} else {
			for k := range nodes {
				nodes[k] = t[a+k] - t[i]
			}
			if !dw.sg.pair(wt0, wt1, nodes, 0) { // cannot happen for w >= 4 distinct times; keep the sample
				for _, j := range group {
					xs[j][i], dx[j][i] = x[j][i], 0
				}
				continue
			}
			u0, u1 = wt0, wt1
			if uni && centred {
				c0, c1 = append([]float64(nil), wt0...), append([]float64(nil), wt1...)
			}
		}
		for _, j := range group {
			win := x[j][a : a+len(u0)]
			s0, s1 := 0.0, 0.0
			for k, v := range win {
				s0 += u0[k] * v
				s1 += u1[k] * v
			}
			xs[j][i], dx[j][i] = s0, s1
		}
	}
}

// sgMoments is the number of power sums of the offsets a cubic fit needs
// (u^0 .. u^6) and sgCoef the number of its coefficients.
const (
	sgMoments = 7
	sgCoef    = 4
)

// sgBlock returns how many consecutive centres share one anchor in
// sgBlocks for windows of w samples: a quarter of the window, so that a
// window spans at least four fifths of its block's nodes and the normal
// matrix in the block's offsets stays about as well conditioned as in
// the window's own (its condition grows like the inverse sixth power of
// that share).
func sgBlock(w int) int { return max(1, w/4) }

// sgBlocks is sgGroup for a cubic on windows of w >= 4 samples on any
// grid. The centres go in blocks of sgBlock(w); a block's nodes span the
// union of its windows, and each node's offset u = (t - tc)/L from the
// span's midpoint tc (L its half-length, so |u| <= 1) enters prefix sums
// of u^0..u^6 and of u^0..u^3 times each state (less the state's value
// at the span's middle, so a large constant level costs no digits). A
// window's normal matrix and right-hand sides are then differences of
// two prefix rows; one Cholesky factor per sample serves every state of
// the group, and value and slope come from one solve per state,
// evaluated at the sample's own offset. The least-squares cubic does not
// depend on the basis it is written in, so this is the per-sample fit of
// sgSamples up to rounding. A block whose sums are not finite, or a
// window whose normal matrix is near singular, goes to sgSamples.
func (dw *derivWork) sgBlocks(xs, dx [][]float64, t []float64, x [][]float64, group []int, w int) {
	n := len(t)
	g := len(group)
	stride := sgMoments + sgCoef*g
	b := sgBlock(w)
	if cap(dw.ref) < g {
		dw.ref = make([]float64, g)
	}
	ref := dw.ref[:g]
	for i0 := 0; i0 < n; i0 += b {
		i1 := min(n, i0+b)
		lo := stencil(i0, n, w)
		hi := stencil(i1-1, n, w) + w
		tc := 0.5 * (t[lo] + t[hi-1])
		half := 0.5 * (t[hi-1] - t[lo])
		if !(half > 0) || math.IsInf(half, 0) {
			dw.sgSamples(xs, dx, t, x, group, w, i0, i1, false)
			continue
		}
		inv := 1 / half
		mid := (lo + hi) / 2
		for k, j := range group {
			ref[k] = x[j][mid]
		}
		span := hi - lo
		if need := (span + 1) * stride; cap(dw.pre) < need {
			dw.pre = make([]float64, need)
		}
		pre := dw.pre[:(span+1)*stride]
		clear(pre[:stride])
		for k := 0; k < span; k++ {
			src := pre[k*stride : (k+1)*stride]
			dst := pre[(k+1)*stride : (k+2)*stride]
			u := (t[lo+k] - tc) * inv
			u2 := u * u
			u3 := u2 * u
			dst[0] = src[0] + 1
			dst[1] = src[1] + u
			dst[2] = src[2] + u2
			dst[3] = src[3] + u3
			dst[4] = src[4] + u2*u2
			dst[5] = src[5] + u2*u3
			dst[6] = src[6] + u3*u3
			for q, j := range group {
				v := x[j][lo+k] - ref[q]
				o := sgMoments + sgCoef*q
				dst[o] = src[o] + v
				dst[o+1] = src[o+1] + v*u
				dst[o+2] = src[o+2] + v*u2
				dst[o+3] = src[o+3] + v*u3
			}
		}
		if !finite(pre[span*stride : (span+1)*stride]...) {
			dw.sgSamples(xs, dx, t, x, group, w, i0, i1, false)
			continue
		}
		for i := i0; i < i1; i++ {
			a := stencil(i, n, w) - lo
			r0 := pre[a*stride : (a+1)*stride]
			r1 := pre[(a+w)*stride : (a+w+1)*stride]
			var f ldl4
			if !f.factor(r0, r1) {
				dw.sgSamples(xs, dx, t, x, group, w, i, i+1, false)
				continue
			}
			u := (t[i] - tc) * inv
			for q, j := range group {
				o := sgMoments + sgCoef*q
				c0, c1, c2, c3 := f.solve(r1[o]-r0[o], r1[o+1]-r0[o+1], r1[o+2]-r0[o+2], r1[o+3]-r0[o+3])
				xs[j][i] = ref[q] + (c0 + u*(c1+u*(c2+u*c3)))
				dx[j][i] = (c1 + u*(2*c2+u*3*c3)) * inv
			}
		}
	}
}

// sgPivotMin is the smallest share of a diagonal entry of the normal
// matrix that its Cholesky pivot may keep: below it the window's offsets
// hardly carry a cubic (repeated time stamps) and the sample goes to the
// per-sample path, which decides for itself.
const sgPivotMin = 1e-9

// ldl4 is the factorisation L D L' of a 4x4 normal matrix of a cubic
// (unit lower triangular L below the diagonal, and the reciprocals of D).
type ldl4 struct {
	l10, l20, l30, l21, l31, l32 float64
	r0, r1, r2, r3               float64
}

// factor factorises the Hankel matrix whose entry (u, v) is the power
// sum r1[u+v] - r0[u+v], and reports whether every pivot D_j kept at
// least sgPivotMin of its diagonal entry.
func (f *ldl4) factor(r0, r1 []float64) bool {
	r0, r1 = r0[:sgMoments], r1[:sgMoments]
	m0, m1, m2, m3 := r1[0]-r0[0], r1[1]-r0[1], r1[2]-r0[2], r1[3]-r0[3]
	m4, m5, m6 := r1[4]-r0[4], r1[5]-r0[5], r1[6]-r0[6]
	// Column 0.
	if !(m0 > 0) {
		return false
	}
	f.r0 = 1 / m0
	f.l10, f.l20, f.l30 = m1*f.r0, m2*f.r0, m3*f.r0
	// Column 1: e = a - sum over earlier columns of L D L'.
	d1 := m2 - f.l10*m1
	if !(d1 > sgPivotMin*m2) {
		return false
	}
	f.r1 = 1 / d1
	e21 := m3 - f.l20*m1
	e31 := m4 - f.l30*m1
	f.l21, f.l31 = e21*f.r1, e31*f.r1
	// Column 2.
	d2 := m4 - f.l20*m2 - f.l21*e21
	if !(d2 > sgPivotMin*m4) {
		return false
	}
	f.r2 = 1 / d2
	e32 := m5 - f.l30*m2 - f.l31*e21
	f.l32 = e32 * f.r2
	// Column 3.
	d3 := m6 - f.l30*m3 - f.l31*e31 - f.l32*e32
	if !(d3 > sgPivotMin*m6) {
		return false
	}
	f.r3 = 1 / d3
	return true
}

// solve returns the solution of L D L' c = b.
func (f *ldl4) solve(b0, b1, b2, b3 float64) (c0, c1, c2, c3 float64) {
	y1 := b1 - f.l10*b0
	y2 := b2 - f.l20*b0 - f.l21*y1
	y3 := b3 - f.l30*b0 - f.l31*y1 - f.l32*y2
	c3 = y3 * f.r3
	c2 = y2*f.r2 - f.l32*c3
	c1 = y1*f.r1 - f.l21*c2 - f.l31*c3
	c0 = b0*f.r0 - f.l10*c1 - f.l20*c2 - f.l30*c3
	return
}

// derivCacheMax caps the float64s a DerivativeCache holds (64 MB); runs
// beyond it are differentiated afresh each time.
const derivCacheMax = 1 << 23

// A DerivativeCache keeps the derivatives [Field] computes for each run
// (the states it regresses on and their slopes, per method and window),
// so that fits on overlapping sets of the same runs differentiate each
// run once: validate.Evaluate's folds share one. A run is known by its
// samples' storage (the same slices, as subsets of one data set share),
// so the samples must not change while the cache is in use. The
// derivatives are the ones Field would compute, bit for bit. The zero
// value is ready to use; it is safe for concurrent use.
type DerivativeCache struct {
	mu     sync.Mutex
	runs   map[derivKey]*derivEntry
	floats int
	hits   int // for the tests
}

// derivKey names one run's derivatives by a method and windows.
type derivKey struct {
	t      *float64 // the run's first time stamp
	length int
	method string
	half   string // the windows' half-widths, per state
}

// derivEntry is one run's derivatives, with the storage of its states
// (checked on every hit: same time stamps, same states).
type derivEntry struct {
	x      []*float64
	xs, dx [][]float64
}

func keyOf(run *ingest.Run, method string, half []int) (derivKey, bool) {
	if run.Len() == 0 || len(run.X) == 0 {
		return derivKey{}, false
	}
	var b strings.Builder
	for _, h := range half {
		b.WriteString(strconv.Itoa(h))
		b.WriteByte(',')
	}
	return derivKey{t: &run.T[0], length: run.Len(), method: method, half: b.String()}, true
}

// statesOf returns the storage of run's states; false when a state has
// no samples.
func statesOf(run *ingest.Run) ([]*float64, bool) {
	out := make([]*float64, len(run.X))
	for j, x := range run.X {
		if len(x) == 0 {
			return nil, false
		}
		out[j] = &x[0]
	}
	return out, true
}

func sameStates(e *derivEntry, run *ingest.Run) bool {
	x, ok := statesOf(run)
	return ok && slices.Equal(x, e.x)
}

// get returns the cached derivatives of run, and false when c is nil or
// has none. They are shared: read only. xs is nil when it was put nil.
func (c *DerivativeCache) get(run *ingest.Run, method string, half []int) (xs, dx [][]float64, ok bool) {
	if c == nil {
		return nil, nil, false
	}
	k, ok := keyOf(run, method, half)
	if !ok {
		return nil, nil, false
	}
	c.mu.Lock()
	defer c.mu.Unlock()
	e := c.runs[k]
	if e == nil || !sameStates(e, run) {
		return nil, nil, false
	}
	c.hits++
	return e.xs, e.dx, true
}

// put keeps a copy of run's derivatives xs (nil when they are the states
// themselves), dx, within derivCacheMax.
func (c *DerivativeCache) put(run *ingest.Run, method string, half []int, xs, dx [][]float64) {
	if c == nil {
		return
	}
	k, ok := keyOf(run, method, half)
	if !ok {
		return
	}
	size := 0
	for j := range dx {
		size += len(dx[j])
		if xs != nil {
			size += len(xs[j])
		}
	}
	c.mu.Lock()
	defer c.mu.Unlock()
	if c.runs == nil {
		c.runs = map[derivKey]*derivEntry{}
	}
	x, ok := statesOf(run)
	if _, had := c.runs[k]; had || !ok || c.floats+size > derivCacheMax {
		return
	}
	e := &derivEntry{x: x}
	for j := range dx {
		if xs != nil {
			e.xs = append(e.xs, slices.Clone(xs[j]))
		}
		e.dx = append(e.dx, slices.Clone(dx[j]))
	}
	c.runs[k] = e
	c.floats += size
}
