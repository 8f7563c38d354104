package fit

import (
	"context"
	"math"
	"math/rand/v2"
	"slices"

	"basin.example/fit/internal/gram"
	"basin.example/internal/order"
	"basin.example/internal/parallel"
	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/lapack/lapack64"
	"gonum.org/v1/gonum/mat"
)

// Streaming least squares.
//
// The regression rows (library values, derivative targets) are never
// stored: each group of samples (a run, or a contiguous block of one when
// there are too few runs to cross-validate by run) is reduced to its
// normal equations G = ΦᵀΦ (p×p), B = ΦᵀY (p×n) and the sums of y and y²,
// accumulated 512 rows at a time by one rank-k update (gram.AddRows). Normal equations
// rather than a tall-skinny QR because every later step — K-fold
// cross-validation by run, the threshold path, the bootstrap over runs —
// needs the Gram matrix of an arbitrary union of groups, which for normal
// equations is a plain sum (and a held-out error is a quadratic form in
// the held-out group's sums), so the data are read once. The price is
// that the condition number is squared; the columns are centred, scaled
// and normalised first, the condition of the normalised normal matrix is
// reported (Model.Condition), and a library past [collinearCond] is
// refused. Memory is O(groups·p²) beyond the data.

// blockRows is how many rows are buffered before a rank-k update.
const blockRows = 512

// groupSums holds the normal equations of one group of rows.
type groupSums struct {
	G    []float64 // p×p row-major, full after finish
	B    []float64 // p×n row-major: B[k*n+i] = sum phi_k y_i
	yy   []float64 // sum y_i^2
	ys   []float64 // sum y_i
	rows int
}

func newGroupSums(p, n int) *groupSums {
	return &groupSums{G: make([]float64, p*p), B: make([]float64, p*n), yy: make([]float64, n), ys: make([]float64, n)}
}

// finish copies the upper triangle (what syrk fills) into the lower.
func (g *groupSums) finish(p int) {
	for i := 0; i < p; i++ {
		for j := i + 1; j < p; j++ {
			g.G[j*p+i] = g.G[i*p+j]
		}
	}
}

// rowBuffer batches rows for one target group. Each buffered row is the
// library values followed by the targets, [phi | y], so that one rank-k
// update of the augmented Gram matrix gives ΦᵀΦ, ΦᵀY and the sums of y²
// together (one syrk on p+n columns was faster than a syrk on p plus a
// skinny gemm: the gemm took half the syrk's time in a CPU profile of
// BenchmarkFit).
type rowBuffer struct {
	p, n int
	ws   int       // row stride: p+n rounded up to a multiple of 8 (the Gram kernel's tile), the padding zero
	rows []float64 // blockRows×ws
	aug  []float64 // ws² scratch for one flush
	cnt  int
	dst  *groupSums
}

func newRowBuffer(p, n int) *rowBuffer {
	ws := (p + n + 7) &^ 7
	return &rowBuffer{p: p, n: n, ws: ws, rows: make([]float64, blockRows*ws), aug: make([]float64, ws*ws)}
}

// row returns the slices to fill for the next row of group g.
func (rb *rowBuffer) row(g *groupSums) (phi, y []float64) {
	if rb.dst != g || rb.cnt == blockRows {
		rb.flush()
		rb.dst = g
	}
	r := rb.rows[rb.cnt*rb.ws : (rb.cnt+1)*rb.ws]
	rb.cnt++
	return r[:rb.p], r[rb.p : rb.p+rb.n]
}

// unrow drops the last row (one that turned out non-finite).
func (rb *rowBuffer) unrow() { rb.cnt-- }

func (rb *rowBuffer) flush() {
	if rb.cnt == 0 || rb.dst == nil {
		rb.cnt = 0
		return
	}
	p, n, c := rb.p, rb.n, rb.cnt
	w := rb.ws
	g := rb.dst
	clear(rb.aug)
	gram.AddRows(rb.aug, rb.rows[:c*w], w, c, w)
	for k := 0; k < p; k++ {
		row := rb.aug[k*w:]
		gk := g.G[k*p:]
		for l := k; l < p; l++ {
			gk[l] += row[l]
		}
		for i := 0; i < n; i++ {
			g.B[k*n+i] += row[p+i]
		}
	}
	for i := 0; i < n; i++ {
		g.yy[i] += rb.aug[(p+i)*w+p+i]
	}
	for r := 0; r < c; r++ {
		for i, v := range rb.rows[r*w+p : r*w+p+n] {
			g.ys[i] += v
		}
	}
	g.rows += c
	rb.cnt = 0
}

// transformSums replaces g's sums by those of the basis Φ·T: G <- TᵀGT,
// B <- TᵀB. T is p×p row-major.
func transformSums(g *groupSums, T []float64, p, n int) {
	tm := mat.NewDense(p, p, T)
	gm := mat.NewDense(p, p, g.G)
	var tmp, out mat.Dense
	tmp.Mul(tm.T(), gm)
	out.Mul(&tmp, tm)
	copy(g.G, out.RawMatrix().Data)
	bm := mat.NewDense(p, n, g.B)
	var ob mat.Dense
	ob.Mul(tm.T(), bm)
	copy(g.B, ob.RawMatrix().Data)
	// Symmetrise against round-off.
	for i := 0; i < p; i++ {
		for j := i + 1; j < p; j++ {
			v := (g.G[i*p+j] + g.G[j*p+i]) / 2
			g.G[i*p+j], g.G[j*p+i] = v, v
		}
	}
}

// problem is the normalised regression: columns scaled to unit root mean
// square (colScale), each target to unit standard deviation (ySD).
type problem struct {
	p, n     int
	groups   []*groupSums
	total    *groupSums
	colScale []float64 // D_k = sqrt(G_kk/N)
	ySD      []float64
}

func newProblem(groups []*groupSums, p, n int) *problem {
	pr := &problem{p: p, n: n, groups: groups, total: newGroupSums(p, n)}
	for _, g := range groups {
		addSums(pr.total, g, 1)
	}
	N := float64(pr.total.rows)
	pr.colScale = make([]float64, p)
	for k := 0; k < p; k++ {
		pr.colScale[k] = math.Sqrt(pr.total.G[k*p+k] / N)
	}
	pr.ySD = make([]float64, n)
	for i := 0; i < n; i++ {
		m := pr.total.ys[i] / N
		v := pr.total.yy[i]/N - m*m
		if v <= 1e-300 {
			v = pr.total.yy[i] / N
		}
		if v <= 1e-300 {
			v = 1
		}
		pr.ySD[i] = math.Sqrt(v)
	}
	return pr
}

func addSums(dst, g *groupSums, w float64) {
	for i, v := range g.G {
		dst.G[i] += w * v
	}
	for i, v := range g.B {
		dst.B[i] += w * v
	}
	for i := range g.yy {
		dst.yy[i] += w * g.yy[i]
		dst.ys[i] += w * g.ys[i]
	}
	dst.rows += int(w) * g.rows
}

// normalised returns Ĝ = D⁻¹GD⁻¹/N and b̂ (p×n, column i divided by ySD_i)
// of s, where N = s.rows.
func (pr *problem) normalised(gh, bh []float64, s *groupSums) {
	p, n := pr.p, pr.n
	N := float64(s.rows)
	for k := 0; k < p; k++ {
		for l := 0; l < p; l++ {
			gh[k*p+l] = s.G[k*p+l] / (pr.colScale[k] * pr.colScale[l] * N)
		}
		for i := 0; i < n; i++ {
			bh[k*n+i] = s.B[k*n+i] / (pr.colScale[k] * pr.ySD[i] * N)
		}
	}
}

// condition returns the 2-norm condition number of the normalised normal
// matrix of s (+Inf when it is singular).
func (pr *problem) condition(s *groupSums) float64 {
	p := pr.p
	gh := make([]float64, p*p)
	bh := make([]float64, p*pr.n)
	pr.normalised(gh, bh, s)
	var es mat.EigenSym
	if !es.Factorize(mat.NewSymDense(p, gh), false) {
		return math.Inf(1)
	}
	v := es.Values(nil)
	lo, hi := v[0], v[len(v)-1]
	if lo <= hi*1e-300 || lo <= 0 {
		return math.Inf(1)
	}
	return hi / lo
}

// solver runs sequentially thresholded least squares on one normalised
// problem; it holds scratch space.
type solver struct {
	p   int
	a   []float64
	r   []float64
	idx []int
	act []bool
}

func newSolver(p int) *solver {
	return &solver{p: p, a: make([]float64, p*p), r: make([]float64, p), idx: make([]int, p), act: make([]bool, p)}
}

// maxSweeps bounds the threshold-and-refit sweeps; supports settle in
// a handful (Brunton, Proctor & Kutz use 10).
const maxSweeps = 20

// refitJitter is the ridge of the final refit on the chosen support,
// relative to the unit diagonal: only there to keep the Cholesky factor
// defined, far below the noise in any real log.
const refitJitter = 1e-12

// thresholdRefit fits one equation: sequentially thresholded ridge
// regression on the normalised normal equations (gh p×p, b a column of
// p), threshold tau on the normalised coefficients, ridge lam; then
// refits by least squares on the final support. It stores the coefficients in dst (zero outside
// the support) and returns the support size.
// supportRefit is the least-squares fit on the columns support holds
// (of those with a positive diagonal), as thresholdRefit's last solve:
// the coefficients of a fixed structure, the others zero.
func (s *solver) supportRefit(dst, gh, b []float64, support []bool) {
	p := s.p
	for k := 0; k < p; k++ {
		s.act[k] = support[k] && gh[k*p+k] > 0
	}
	if !s.solve(dst, gh, b, refitJitter) {
		s.solve(dst, gh, b, 1e-8)
	}
	for k := 0; k < p; k++ {
		if !s.act[k] {
			dst[k] = 0
		}
	}
}

func (s *solver) thresholdRefit(dst, gh, b []float64, tau, lam float64) int {
	p := s.p
	for k := 0; k < p; k++ {
		s.act[k] = gh[k*p+k] > 0
	}
	for sweep := 0; sweep < maxSweeps; sweep++ {
		s.solve(dst, gh, b, lam)
		changed := false
		for k := 0; k < p; k++ {
			if s.act[k] && math.Abs(dst[k]) < tau {
				s.act[k] = false
				changed = true
			}
		}
		if !changed {
			break
		}
	}
	if !s.solve(dst, gh, b, refitJitter) {
		s.solve(dst, gh, b, math.Max(lam, 1e-8))
	}
	cnt := 0
	for k := 0; k < p; k++ {
		if s.act[k] {
			cnt++
		} else {
			dst[k] = 0
		}
	}
	return cnt
}

// solve solves (gh_SS + lam I) x_S = b_S on the active set by Cholesky
// (gonum's lapack64.Potrf and Potrs on the lower triangle, in s's
// buffers: no allocation), storing x in dst (zero elsewhere). It reports
// false when the matrix was not positive definite (then dst holds zeros
// on the active set).
func (s *solver) solve(dst, gh, b []float64, lam float64) bool {
	p := s.p
	m := 0
	for k := 0; k < p; k++ {
		dst[k] = 0
		if s.act[k] {
			s.idx[m] = k
			m++
		}
	}
	if m == 0 {
		return true
	}
	a := s.a[:m*m]
	for i := 0; i < m; i++ {
		ki := s.idx[i]
		for j := 0; j <= i; j++ {
			a[i*m+j] = gh[ki*p+s.idx[j]]
		}
		a[i*m+i] += lam
		s.r[i] = b[ki]
	}
	l, ok := lapack64.Potrf(blas64.Symmetric{Uplo: blas.Lower, N: m, Stride: m, Data: a})
	if !ok {
		return false
	}
	r := s.r[:m]
	lapack64.Potrs(l, blas64.General{Rows: m, Cols: 1, Stride: 1, Data: r})
	for i := 0; i < m; i++ {
		dst[s.idx[i]] = r[i]
	}
	return true
}

// seFloor is the least rise in held-out error a threshold may always
// cost, in shares of the derivative variance: held-out errors that differ
// by less than one part in a million are equal for any logged data (on
// exact simulated data the dense model's error can be smaller still, and
// the rule would otherwise keep terms that fit only quadrature round-off).
const seFloor = 1e-6

// bootstrap refits at each equation's (taus[i], lams[i]) on B resamples
// of the groups (drawn with replacement) and returns each replicate's
// normalised coefficients (reps[b][i][k]). Replicate b uses its own generator seeded from (seed,
// b), so the result does not depend on scheduling.
func (pr *problem) bootstrap(ctx context.Context, B int, seed uint64, taus, lams []float64) ([][][]float64, error) {
	p, n := pr.p, pr.n
	R := len(pr.groups)
	reps := make([][][]float64, B)
	type work struct {
		sv          *solver
		gh, bh, col []float64
		s           *groupSums
		cnt         []int
	}
	newWork := func() *work {
		return &work{sv: newSolver(p), gh: make([]float64, p*p), bh: make([]float64, p*n), col: make([]float64, p),
			s: newGroupSums(p, n), cnt: make([]int, R)}
	}
	err := parallel.For(ctx, B, 0, newWork, func(_ context.Context, b int, w *work) error {
		s, cnt := w.s, w.cnt
		rng := rand.New(rand.NewPCG(seed, uint64(b)+1))
		for g := range cnt {
			cnt[g] = 0
		}
		for range R {
			cnt[rng.IntN(R)]++
		}
		clear(s.G)
		clear(s.B)
		clear(s.yy)
		clear(s.ys)
		s.rows = 0
		for g, c := range cnt {
			if c > 0 {
				addSums(s, pr.groups[g], float64(c))
			}
		}
		xi := make([][]float64, n)
		for i := range xi {
			xi[i] = make([]float64, p)
		}
		pr.fitEach(xi, w.sv, w.gh, w.bh, w.col, s, taus, lams)
		reps[b] = xi
		return nil
	})
	return reps, err
}

// quantile sorts xs in place and returns its p-quantile, Hyndman and
// Fan's definition 7 ([order.Quantile]).
func quantile(xs []float64, p float64) float64 {
	slices.Sort(xs)
	return order.Quantile(xs, p)
}
