package validate

import (
	"context"
	"math"

	"basin.example/fit"
	"basin.example/fit/lyapunov"
	"basin.example/fit/poly"
	"basin.example/ingest"
	"basin.example/internal/parallel"
)

// tailMax is the largest number of samples averaged at each end of a run
// to judge settling; tailShare the share of the run used when shorter.
const (
	tailMax   = 50
	tailShare = 20 // one twentieth of the run
)

// Screener screens runs against one certificate. V is compiled once: a V
// of degree at most 2 is evaluated as z'Pz + q'z + r, any other through a
// compiled monomial recipe. It holds scratch space: make one per
// goroutine.
//
// The flags mean:
//   - rises: between two consecutive samples that are both inside the
//     region, with the first outside the noise ball (|z| > NoiseRadius), V
//     rose by more than the tolerance. Excess is the worst rise minus the
//     tolerance.
//   - leaves: after a sample inside the region, a sample outside it by
//     more than the noise: V above Level plus the tolerance, or outside
//     the box widened per state by NoiseRadius times the state's scale.
//     Excess is the worst V - Level after entering (0 when only the box
//     was left); Distance how far the worst sample lies past the
//     boundary, per state in the states' units (along the ray from the
//     equilibrium, or past the box when that is more).
//   - unsettled: the run's last sample is outside the region, or its end
//     is neither settled (mean V over the last samples at most the settle
//     level, the largest V on the noise ball) nor nearer the equilibrium
//     than its start (mean V over the last samples below the mean over the
//     first by more than the tolerance). Time is the run's last time,
//     Excess the end's mean V minus the settle level. A run that never
//     enters the region is flagged so too: runs that leave a basin start
//     outside any sound region. The settle level is scaled by the square
//     of the run's noise ratio (tolerance over the certificate's), and a
//     run still on its way must also end below every earlier chunk of
//     tailMax samples (counted from the first, ending before the last
//     samples) by more than a margin: that level, or ¼·√(end's mean V ·
//     that level) when less (an end below 16 times the level), so a
//     healthy run decaying slowly towards the noise ball is on its way
//     while a run at rest off the equilibrium, its chunks as low as its
//     end, is flagged. A piece with no such chunk whose two ends lie
//     within the tolerance is not. The held-out check (see [Evaluate])
//     judges settling from entry by the same rule, from V at the
//     run's first sample inside the region in place of its start.
//   - rises also when, after entering, the end's mean V exceeds the
//     least earlier chunk's by more than the tolerance and the largest V
//     over the last samples exceeds the settle level (a slow growth; a
//     run that undershot its rest point and rests in the noise ball has
//     not grown).
//   - stuck: a state whose certificate noise is positive held one
//     reading over the run's last tailMax samples or more, the held
//     stretch having begun away from rest: V at its first sample above
//     the run's settle level (noise-scaled, as for unsettled). A
//     quantised sensor at rest holds its reading for long stretches and
//     is not flagged; a reading that freezes mid-approach is (one that
//     dies after the run has settled is not told from a quantised one).
//     State names it, Time is where the value began to hold, Excess how
//     long (s).
//   - slow: the run's decay rate is below the certificate's
//     validation.decay.lower_bound (see [DecayOf]). The rate is minus the
//     least-squares slope of log V against time over the run's approach:
//     its samples inside the region and outside the noise ball (decay
//     samples) up to its first sample inside the noise ball, or, when
//     that stretch holds fewer than DecayMinSamples decay samples (a
//     noise excursion of a run at rest), over the first stretch between
//     noise-ball samples that holds enough. Once a run has settled, its
//     noise's excursions just outside the ball over a long rest would
//     flatten the slope to nothing; the approach is where V decays.
//     Excess is the bound minus the rate, in 1/s. Certificates without
//     the bound give no slow flag.
//
// A certificate of strength stable claims that V does not rise and runs
// stay inside, not that they settle: against it no run is flagged
// unsettled or slow (RunScreen.Settled still says whether it settled).
//
// A rises flag's Distance is the smallest move of the worst rise's sample,
// to first order in the scaled coordinates, that accounts for the excess.
//
// A certificate without a V or with a level that is not positive has an
// empty region (every run then ends outside it).
type Screener struct {
	cert *fit.Certificate
	opts ScreenOptions
	n    int
	tol  float64
	// baseTol is the tolerance before a run's own noise widens it (see
	// runNoise.go).
	baseTol float64
	noise   runNoise
	r2      float64 // NoiseRadius squared
	// settle is the largest V on the ball |z| <= NoiseRadius.
	settle float64

	// quadratic form, when V has degree <= 2
	quad bool
	p    []float64 // n*n, symmetric
	q    []float64
	r    float64
	comp *poly.Compiled
	inv  []float64 // 1/scale
	eq   []float64
	lo   []float64 // box
	hi   []float64
	z    []float64
	x    []float64
	// spacing is the time between scenario samples (see Check); worstX
	// the state at the worst rise of the last run screened.
	spacing float64
	worstX  []float64
	// per-block V, |z|^2 and out-of-box flags
	vbuf [screenBlock]float64
	rbuf [screenBlock]float64
	obuf [screenBlock]bool
	// wbuf: outside the box widened by the noise radius (loW, hiW)
	wbuf [screenBlock]bool
	// evalQuadCols' scratch: the block's z per state
	zcol []float64
	loW  []float64
	hiW  []float64
	g    []float64
	// level is the certificate's level, or -Inf for an empty region.
	level float64
	// slowBound is the decay rate below which a run is slow (0: none).
	slowBound float64
	// noSettle: the certificate claims no settling (strength stable), so
	// runs get no unsettled and no slow flag (Check still judges
	// settling: it decides the strength).
	noSettle bool
	st       runState
	// tols and stream: ScreenFile's per-run tolerances and noise
	tols   []float64
	known  []bool // the run's tolerance in tols is its own
	done   []bool // the run's result from the first Scan stands
	stream streamNoise
	tap    noiseTap
	// generic disables the specialised kernels (benchmarks compare)
	generic bool
}

// screenBlock is the number of samples evaluated per block.
const screenBlock = 256

// evalBlock stores V, |z|^2 and the out-of-box flag of samples i0..i1-1
// in the block buffers.
func (s *Screener) evalBlock(X [][]float64, i0, i1 int) {
	vb, rb, ob, wb := s.vbuf[:i1-i0], s.rbuf[:i1-i0], s.obuf[:i1-i0], s.wbuf[:i1-i0]
	if s.quad && s.n == 2 && !s.generic {
		x0, x1 := X[0][i0:i1], X[1][i0:i1]
		x1 = x1[:len(x0)]
		e0, e1, c0, c1 := s.eq[0], s.eq[1], s.inv[0], s.inv[1]
		l0, h0, l1, h1 := s.lo[0], s.hi[0], s.lo[1], s.hi[1]
		wl0, wh0, wl1, wh1 := s.loW[0], s.hiW[0], s.loW[1], s.hiW[1]
		p00, p01, p11 := s.p[0], 2*s.p[1], s.p[3]
		q0, q1, r := s.q[0], s.q[1], s.r
		for k := range x0 {
			a, b := x0[k], x1[k]
			z0, z1 := (a-e0)*c0, (b-e1)*c1
			vb[k] = z0*(p00*z0+p01*z1+q0) + z1*(p11*z1+q1) + r
			rb[k] = z0*z0 + z1*z1
			ob[k] = a < l0 || a > h0 || b < l1 || b > h1
			wb[k] = a < wl0 || a > wh0 || b < wl1 || b > wh1
		}
		return
	}
	if s.quad && !s.generic {
		if !s.evalQuadUnrolled(X, i0, i1) {
			s.evalQuadCols(X, i0, i1)
		}
		return
	}
	z := s.z
	n := s.n
	for k := range vb {
		i := i0 + k
		r2 := 0.0
		out, wide := false, false
		for j := 0; j < n; j++ {
			xj := X[j][i]
			if xj < s.lo[j] || xj > s.hi[j] {
				out = true
			}
			if xj < s.loW[j] || xj > s.hiW[j] {
				wide = true
			}
			zj := (xj - s.eq[j]) * s.inv[j]
			z[j] = zj
			r2 += zj * zj
		}
		if s.quad {
			vb[k] = s.quadV(z)
		} else {
			vb[k] = s.comp.Eval(z)
		}
		rb[k], ob[k], wb[k] = r2, out, wide
	}
}

//go:generate go run gen_quadkern.go

// evalQuadCols is evalBlock's loop for a quadratic V of 1 or more than
// maxUnrolled states (evalQuadUnrolled takes 3 to maxUnrolled), turned
// inside out: each state's column of the block at a time. Every sample
// gets the same operations in the same order as quadV and the per-sample
// loop (|z|² summed over j ascending; V = r, then + (q_i + Σ_j p_ij z_j)
// z_i over i ascending), so the values are the same to the bit; the
// samples' independent sums keep the pipeline full.
func (s *Screener) evalQuadCols(X [][]float64, i0, i1 int) {
	m := i1 - i0
	vb, rb, ob, wb := s.vbuf[:m], s.rbuf[:m], s.obuf[:m], s.wbuf[:m]
	n := s.n
	if len(s.zcol) < n*screenBlock {
		s.zcol = make([]float64, n*screenBlock)
	}
	clear(rb)
	clear(ob)
	clear(wb)
	for j := 0; j < n; j++ {
		zc := s.zcol[j*screenBlock : j*screenBlock+m]
		xs := X[j][i0:i1]
		xs = xs[:len(zc)]
		lo, hi, loW, hiW, e, c := s.lo[j], s.hi[j], s.loW[j], s.hiW[j], s.eq[j], s.inv[j]
		for k, xj := range xs {
			if xj < lo || xj > hi {
				ob[k] = true
			}
			if xj < loW || xj > hiW {
				wb[k] = true
			}
			zj := (xj - e) * c
			zc[k] = zj
			rb[k] += zj * zj
		}
	}
	for k := range vb {
		vb[k] = s.r
	}
	zcol := s.zcol
	k := 0
	// four samples at a time, their sums in registers
	for ; k+4 <= m; k += 4 {
		v0, v1, v2, v3 := vb[k], vb[k+1], vb[k+2], vb[k+3]
		for i := 0; i < n; i++ {
			qi := s.q[i]
			a0, a1, a2, a3 := qi, qi, qi, qi
			for j, pj := range s.p[i*n : i*n+n] {
				z := zcol[j*screenBlock+k : j*screenBlock+k+4]
				a0 += pj * z[0]
				a1 += pj * z[1]
				a2 += pj * z[2]
				a3 += pj * z[3]
			}
			zi := zcol[i*screenBlock+k : i*screenBlock+k+4]
			v0 += a0 * zi[0]
			v1 += a1 * zi[1]
			v2 += a2 * zi[2]
			v3 += a3 * zi[3]
		}
		vb[k], vb[k+1], vb[k+2], vb[k+3] = v0, v1, v2, v3
	}
	for ; k < m; k++ {
		v := vb[k]
		for i := 0; i < n; i++ {
			a := s.q[i]
			for j, pj := range s.p[i*n : i*n+n] {
				a += pj * zcol[j*screenBlock+k]
			}
			v += a * zcol[i*screenBlock+k]
		}
		vb[k] = v
	}
}

// NewScreener prepares cert for screening. It panics if cert is nil or its
// V has exponent vectors of the wrong length (ReadCertificate refuses
// such files).
func NewScreener(cert *fit.Certificate, opts *ScreenOptions) *Screener {
	n := len(cert.States)
	s := &Screener{cert: cert, n: n}
	if opts != nil {
		s.opts = *opts
	}
	s.tol = s.opts.Tolerance
	if s.tol <= 0 {
		s.tol = cert.Tolerance
	}
	if s.tol < 0 || math.IsNaN(s.tol) {
		s.tol = 0
	}
	s.baseTol = s.tol
	s.initRunNoise()
	s.r2 = cert.NoiseRadius * cert.NoiseRadius
	s.inv = make([]float64, n)
	s.eq = append([]float64(nil), cert.Equilibrium...)
	for j := range s.inv {
		s.inv[j] = 1 / cert.Scale[j]
	}
	s.lo = make([]float64, n)
	s.hi = make([]float64, n)
	for j := range s.lo {
		s.lo[j], s.hi[j] = math.Inf(-1), math.Inf(1)
		if j < len(cert.Box) {
			s.lo[j], s.hi[j] = cert.Box[j][0], cert.Box[j][1]
		}
	}
	// The box widened by the noise radius, per state in its units: a
	// sample just past the box by noise has not left.
	s.loW = make([]float64, n)
	s.hiW = make([]float64, n)
	for j := range s.lo {
		w := 0.0
		if r := cert.NoiseRadius; r > 0 && !math.IsInf(r, 0) {
			w = r * math.Abs(cert.Scale[j])
		}
		s.loW[j], s.hiW[j] = s.lo[j]-w, s.hi[j]+w
	}
	s.level = cert.Level
	if len(cert.V.Exponents) == 0 || !(s.level > 0) {
		s.level = math.Inf(-1) // no V or no level: the region is empty
	}
	if v := cert.Validation; v != nil && v.Decay != nil && v.Decay.LowerBound > 0 && !s.opts.NoSlow {
		s.slowBound = v.Decay.LowerBound
	}
	s.noSettle = cert.Strength == fit.Stable
	s.z = make([]float64, n)
	s.g = make([]float64, n)
	s.x = make([]float64, n)
	s.worstX = make([]float64, n)
	s.quad = true
	for _, e := range cert.V.Exponents {
		d := 0
		for _, p := range e {
			d += p
		}
		if d > 2 || len(e) != n {
			s.quad = false
		}
	}
	if s.quad {
		s.p = make([]float64, n*n)
		s.q = make([]float64, n)
		for k, e := range cert.V.Exponents {
			c := cert.V.Coefficients[k]
			var idx [2]int
			m := 0
			for j, p := range e {
				for ; p > 0; p-- {
					idx[m] = j
					m++
				}
			}
			switch m {
			case 0:
				s.r += c
			case 1:
				s.q[idx[0]] += c
			case 2:
				i, j := idx[0], idx[1]
				if i == j {
					s.p[i*n+i] += c
				} else {
					s.p[i*n+j] += c / 2
					s.p[j*n+i] += c / 2
				}
			}
		}
	} else {
		s.comp = cert.V.Compile(n)
	}
	s.settle = s.ballMax(cert.NoiseRadius)
	return s
}

// V returns V at the scaled point z. It does not allocate.
func (s *Screener) V(z []float64) float64 {
	if !s.quad {
		return s.comp.Eval(z)
	}
	return s.quadV(z)
}

func (s *Screener) quadV(z []float64) float64 {
	n := s.n
	v := s.r
	for i := 0; i < n; i++ {
		zi := z[i]
		row := s.p[i*n : i*n+n]
		a := s.q[i]
		for j, pj := range row {
			a += pj * z[j]
		}
		v += a * zi
	}
	return v
}

// Inside says the state x (in the states' units) lies in the region:
// inside the box and V <= level. It panics if len(x) is not the number of
// states.
func (s *Screener) Inside(x []float64) bool {
	if len(x) != s.n {
		panic("validate: Inside with the wrong number of states")
	}
	for j, xj := range x {
		if !(xj >= s.lo[j] && xj <= s.hi[j]) {
			return false
		}
		s.z[j] = (xj - s.eq[j]) * s.inv[j]
	}
	return s.V(s.z) <= s.level
}

// SettleLevel returns the largest V on the noise ball: a run whose end has
// V at most this is settled.
func (s *Screener) SettleLevel() float64 { return s.settle }

// ballMax returns the largest V on the ball |z| <= r, or a sound upper
// bound of it: [lyapunov.BallMax], exactly r²·max(lambda_max(P), 0) +
// V(0) for a quadratic V z'Pz + V(0) (the Rayleigh quotient's maximum over
// the sphere), plus |q|·r for a linear part q'z, and for higher degrees
// the sum of each degree's bound. A V that lyapunov cannot hold (more
// than eight states) is bounded by the largest Gershgorin disc edge of P
// when quadratic, else by sampling the sphere (the axes, their
// diagonals, a fixed quasi-random set). A NaN radius gives NaN: nothing
// is settled.
func (s *Screener) ballMax(r float64) float64 {
	n := s.n
	z := make([]float64, n)
	switch {
	case math.IsNaN(r):
		return math.NaN()
	case r <= 0:
		return s.V(z)
	case n <= 8 && len(s.cert.V.Exponents) > 0:
		return lyapunov.BallMax(lyapunov.NewPoly(n, s.cert.V.Exponents, s.cert.V.Coefficients), r)
	case s.quad:
		// max over |z|<=r of z'Pz + q'z + c <= lambda_max r^2 + |q| r + c,
		// with lambda_max bounded by Gershgorin.
		lam := math.Inf(-1)
		for i := 0; i < n; i++ {
			g := s.p[i*n+i]
			for j := 0; j < n; j++ {
				if j != i {
					g += math.Abs(s.p[i*n+j])
				}
			}
			lam = max(lam, g)
		}
		qn := 0.0
		for _, v := range s.q {
			qn += v * v
		}
		return max(lam, 0)*r*r + math.Sqrt(qn)*r + s.r
	}
	best := s.V(z)
	// Halton-like directions from a fixed additive recurrence.
	const dirs = 512
	for k := 0; k < dirs+2*n; k++ {
		nrm := 0.0
		for j := range z {
			var u float64
			if k < 2*n {
				u = 0
				if j == k/2 {
					u = 1 - 2*float64(k%2)
				}
			} else {
				a := math.Mod(float64(k)*(0.5+math.Sqrt(float64(j+2))), 1)
				u = 2*a - 1
			}
			z[j] = u
			nrm += u * u
		}
		if nrm == 0 {
			continue
		}
		f := r / math.Sqrt(nrm)
		for j := range z {
			z[j] *= f
		}
		best = max(best, s.V(z))
	}
	return best
}

// Screen screens run and stores the result in dst, reusing dst.Flags'
// storage. It does not allocate once dst.Flags has room for four flags,
// unless a rises or leaves flag is raised (each carries its Distance). A
// run with no samples gives an unflagged result with Samples 0. Screen is
// Begin, one Feed per block of screenBlock samples, and End.
func (s *Screener) Screen(dst *RunScreen, file string, run *ingest.Run) {
	s.Begin(dst, file, run.Name)
	if len(run.X) != s.n {
		s.st.bad = true
	} else {
		s.tol = s.runTol(run)
	}
	m := run.Len()
	for i0 := 0; i0 < m && !s.st.bad; i0 += screenBlock {
		i1 := min(i0+screenBlock, m)
		s.feed(run.X, run.T, i0, i1)
	}
	s.End()
}

// runState carries one run's screening from block to block.
type runState struct {
	dst       *RunScreen
	bad       bool // wrong number of state columns: the result stays empty
	m         int  // samples seen
	prevV     float64
	prevIn    bool
	prevOut   bool // previous sample outside the noise ball
	entered   bool
	lastT     float64
	lastScen  float64
	rise      Flag
	leave     Flag
	hasRise   bool
	hasLeave  bool
	leaveWrst float64 // worst leave measure (V - level, or box excess)
	leaveX    []float64
	// head holds V of the first tailMax samples; tail is a ring of the
	// last tailMax.
	head [tailMax]float64
	tail [tailMax]float64
	// decay fit: log V against t - t0 over the approach, the first
	// stretch between samples inside the noise ball that holds at least
	// DecayMinSamples samples inside the region and outside the noise
	// ball with V > 0 (decay samples); dDone once that stretch has ended
	dn                      int
	dDone                   bool
	t0, dt, dy, dtt, dty, d float64
	// chunks: csum sums V over the current chunk of tailMax samples
	// (chunks aligned at the run's first sample); lowBefore is the least
	// mean V of the full chunks before the last one, lastChunk the last
	// full chunk's (+Inf: none)
	csum, lowBefore, lastChunk float64
	// stuck: per state, the index and time from which its reading has
	// held the value stuckVal, and V at that sample (see
	// [Screener.stuckScan])
	stuckFrom []int
	stuckT    []float64
	stuckVal  []float64
	stuckV    []float64
}

// Begin starts screening a run named run of file into dst, reusing
// dst.Flags' storage; feed its samples with [Screener.Feed] in time
// order, then call [Screener.End]. A Screener screens one run at a time.
func (s *Screener) Begin(dst *RunScreen, file, run string) {
	s.tol = s.baseTol
	flags := dst.Flags[:0]
	*dst = RunScreen{File: file, Run: run, Flags: flags, enter: -1}
	dst.worstExcess = math.Inf(-1)
	st := &s.st
	lx, sf, stt, sv, svv := st.leaveX, st.stuckFrom, st.stuckT, st.stuckVal, st.stuckV
	*st = runState{dst: dst, leaveX: lx, stuckFrom: sf, stuckT: stt, stuckVal: sv, stuckV: svv, lastScen: math.Inf(-1),
		lowBefore: math.Inf(1), lastChunk: math.Inf(1),
		rise:  Flag{Kind: FlagRises, Time: math.NaN(), Excess: math.Inf(-1)},
		leave: Flag{Kind: FlagLeaves, Time: math.NaN(), Excess: math.Inf(-1)}, leaveWrst: math.Inf(-1)}
	if len(st.leaveX) != s.n {
		st.leaveX = make([]float64, s.n)
	}
	if len(st.stuckFrom) != s.n {
		st.stuckFrom, st.stuckT, st.stuckVal = make([]int, s.n), make([]float64, s.n), make([]float64, s.n)
		st.stuckV = make([]float64, s.n)
	}
}

// Feed screens the next samples of the run begun by [Screener.Begin]:
// T holds their times and X[j] the values of state j, each as long as T.
// It does not allocate. It panics if X does not have one column per state
// or a column is shorter than T.
func (s *Screener) Feed(X [][]float64, T []float64) {
	if len(X) != s.n {
		panic("validate: Feed with the wrong number of state columns")
	}
	for i0 := 0; i0 < len(T); i0 += screenBlock {
		s.feed(X, T, i0, min(i0+screenBlock, len(T)))
	}
}

// feed screens samples i0..i1-1 (at most screenBlock of them). The
// run's running sums and counts are held in locals over the block and
// stored back at its end: the same operations in the same order per
// sample as one sample at a time through the run's state.
func (s *Screener) feed(X [][]float64, T []float64, i0, i1 int) {
	if i1 <= i0 {
		return
	}
	st := &s.st
	dst := st.dst
	level := s.level
	tol := s.tol
	leaveLevel := level + s.tol
	r2lim, spacing := s.r2, s.spacing
	s.evalBlock(X, i0, i1)
	T = T[i0:i1]
	vb, rb, ob, wb := s.vbuf[:len(T)], s.rbuf[:len(T)], s.obuf[:len(T)], s.wbuf[:len(T)]
	m := st.m
	tp := m % tailMax // m's place in the tail ring
	prevV, prevIn, prevOut, entered := st.prevV, st.prevIn, st.prevOut, st.entered
	dn, dDone, t0, sdt, sdy, sdtt, sdty := st.dn, st.dDone, st.t0, st.dt, st.dy, st.dtt, st.dty
	pairs, decreased, scen, scenViol := dst.Pairs, dst.Decreased, dst.scen, dst.scenViol
	lastScen, worst := st.lastScen, dst.worstExcess
	csum := st.csum
	s.stuckScan(X, T, i0, i1)
	for k, t := range T {
		v, r2, inBox := vb[k], rb[k], !ob[k]
		in := inBox && v <= level // NaN V is outside
		if m < tailMax {
			st.head[m] = v
		}
		st.tail[tp] = v
		if m == 0 {
			dst.StartInside = in
		}
		if in {
			if !entered {
				dst.enter, dst.vEnter = m, v
			}
			entered = true
			if r2 > r2lim && v > 0 && !dDone {
				if dn == 0 {
					t0 = t
				}
				dt, y := t-t0, math.Log(v)
				dn++
				sdt += dt
				sdy += y
				sdtt += dt * dt
				sdty += dt * y
			}
			if prevIn && prevOut {
				d := v - prevV - tol
				pairs++
				bad := !(d <= 0)
				if !bad {
					decreased++
				}
				if t-lastScen >= spacing {
					scen++
					lastScen = t
					if bad {
						scenViol++
					}
				}
				if d > worst {
					worst, dst.worstTime = d, t
					for j := range s.worstX {
						s.worstX[j] = X[j][i0+k]
					}
				}
				if bad {
					if !st.hasRise {
						st.rise.Time = t
						st.hasRise = true
					}
					if !(d <= math.MaxFloat64) {
						d = math.MaxFloat64
					}
					st.rise.Excess = max(st.rise.Excess, d)
				}
			}
		} else if entered && (wb[k] || !(v <= leaveLevel)) {
			// Outside the region by more than the noise: V above the level
			// by more than the tolerance, or outside the box widened by
			// the noise radius.
			if !st.hasLeave {
				st.leave.Time = t
				st.hasLeave = true
			}
			e := 0.0
			if v > level {
				e = v - level
			}
			if !(e <= math.MaxFloat64) { // NaN or Inf: report the largest finite excess
				e = math.MaxFloat64
			}
			st.leave.Excess = max(st.leave.Excess, e)
			if w := s.leaveMeasure(X, i0+k, e); w > st.leaveWrst {
				st.leaveWrst = w
				for j := range st.leaveX {
					st.leaveX[j] = X[j][i0+k]
				}
			}
		}
		if r2 <= r2lim && !dDone {
			// A sample inside the noise ball ends a stretch: the approach
			// when it holds enough decay samples, else a noise excursion
			// (or a brief pass) that is dropped.
			if dn >= DecayMinSamples {
				dDone = true
			} else {
				dn, sdt, sdy, sdtt, sdty = 0, 0, 0, 0, 0
			}
		}
		prevV, prevIn, prevOut = v, in, r2 > r2lim
		m++
		csum += v
		if tp++; tp == tailMax {
			tp = 0
			if st.lastChunk < st.lowBefore { // false for NaN, and for +Inf (none yet)
				st.lowBefore = st.lastChunk
			}
			st.lastChunk, csum = csum/tailMax, 0
			if !(st.lastChunk <= math.MaxFloat64) { // NaN or +Inf: no level known
				st.lastChunk = math.Inf(1)
			}
		}
	}
	st.m, st.lastT, st.csum = m, T[len(T)-1], csum
	st.prevV, st.prevIn, st.prevOut, st.entered = prevV, prevIn, prevOut, entered
	st.dn, st.dDone, st.t0, st.dt, st.dy, st.dtt, st.dty = dn, dDone, t0, sdt, sdy, sdtt, sdty
	dst.Pairs, dst.Decreased, dst.scen, dst.scenViol = pairs, decreased, scen, scenViol
	st.lastScen, dst.worstExcess = lastScen, worst
}

// stuckScan updates, per state, where the run's trailing stretch of one
// repeated reading began and V there, from samples i0..i1-1 (T holds
// their times, from i0; the block buffers hold their V). It scans each
// block's column back from its end to the first change: one comparison a
// block for a moving reading.
func (s *Screener) stuckScan(X [][]float64, T []float64, i0, i1 int) {
	st := &s.st
	for j := range st.stuckFrom {
		xs := X[j][i0:i1]
		last := xs[len(xs)-1]
		k := len(xs) - 1
		for k > 0 && xs[k-1] == last {
			k--
		}
		if k > 0 || st.m == 0 || st.stuckVal[j] != last {
			st.stuckFrom[j], st.stuckT[j], st.stuckV[j] = st.m+k, T[k], s.vbuf[k]
		}
		st.stuckVal[j] = last
	}
}

// stuckOn says state j can be found stuck: the certificate records a
// positive noise for it (its sensor's readings moved on the fit runs).
func (s *Screener) stuckOn(j int) bool {
	return len(s.cert.Noise) == s.n && s.cert.Noise[j] > 0
}

// leaveMeasure orders leaving samples: by V's excess e, then by how far
// outside the box.
func (s *Screener) leaveMeasure(X [][]float64, i int, e float64) float64 {
	if e > 0 {
		return 1 + e
	}
	w := 0.0
	for j := range s.lo {
		x := X[j][i]
		w = max(w, (s.lo[j]-x)*s.inv[j], (x-s.hi[j])*s.inv[j])
	}
	return min(w, 1) // below any V excess
}

// End finishes the run begun by [Screener.Begin] and completes its
// result: settling, the flags with their distances, the decay rate.
func (s *Screener) End() {
	st := &s.st
	dst := st.dst
	m := st.m
	dst.Samples = m
	if m == 0 || st.bad {
		dst.Samples = m
		if st.bad {
			dst.Samples = 0
		}
		return
	}
	tol := s.tol
	w := min(max(m/tailShare, 1), tailMax)
	headSum, tailSum := 0.0, 0.0
	for i := 0; i < w; i++ {
		headSum += st.head[i]
	}
	tailTop := math.Inf(-1) // the largest V over the tail window
	for i := m - w; i < m; i++ {
		v := st.tail[i%tailMax]
		tailSum += v
		if v > tailTop || v != v {
			tailTop = v
		}
	}
	dst.EverInside = st.entered
	head := headSum / float64(w)
	tail := tailSum / float64(w)
	dst.VStart, dst.VEnd = clampFinite(head), clampFinite(tail)
	// The settle level follows the run's noise: V is quadratic to lowest
	// order at the equilibrium, so the noise ball's V scales with the
	// square of the ratio that widened the tolerance.
	settle := s.settle
	if tol > s.baseTol && settle > 0 {
		rho := tol / s.baseTol
		settle = settle * rho * rho
	}
	// lowPre: the least mean V over the full chunks of tailMax samples
	// that end before the tail window (+Inf: none).
	lowPre := st.lowBefore
	if tailMax*(m/tailMax) <= m-w && st.lastChunk < lowPre {
		lowPre = st.lastChunk
	}
	hasPre := lowPre <= math.MaxFloat64
	// Still on its way (a run cut short): its end is below its start by
	// more than the tolerance and below every earlier chunk by more than
	// a margin (a run at rest off the equilibrium is not: its end is as
	// low as its chunks before). The margin is the settle level, or
	// ¼·√(tail·settle) when less (an end below 16 times the settle
	// level): a healthy run decaying slowly towards the noise ball ends
	// below its last chunk by less than the settle level, while a rest's
	// chunks differ by the noise of their means, far less than either.
	// Written as tail < lowPre - settle, or tail < lowPre and
	// 16(lowPre - tail)² > tail·settle, in the SQL query's order of
	// operations. A piece too short to hold a chunk before its tail
	// whose both ends lie within the tolerance has not shown anything
	// but rest.
	approaching := func(from float64) bool {
		return tail < from-tol && (!hasPre || tail < lowPre-settle ||
			(tail < lowPre && 16*(lowPre-tail)*(lowPre-tail) > tail*settle))
	}
	quiet := !hasPre && head <= tol && tail <= tol
	dst.Settled = tail <= settle || approaching(head) || quiet
	// V grew over the run: its end above its lowest chunk by more than
	// the tolerance (a slow growth no pair's rise shows), and V over the
	// tail window reaching above the settle level. A healthy run whose
	// underdamped mode undershot its rest point, with V in some chunk
	// below the rest's, ends in the noise ball and has not grown.
	if st.entered && hasPre && tail-lowPre > tol && tailTop > settle {
		d := clampFinite(tail - lowPre - tol)
		if !st.hasRise {
			st.rise.Time = st.lastT
			st.hasRise = true
			for j := range s.worstX {
				s.worstX[j] = st.stuckVal[j] // the last sample
			}
		}
		st.rise.Excess = max(st.rise.Excess, d)
	}
	dst.DecaySamples = st.dn
	if rate, ok := st.rate(); ok {
		dst.DecayRate = rate
	} else {
		dst.DecaySamples = 0
	}
	if st.hasRise {
		st.rise.Distance = s.riseDistance(st.rise.Excess)
		dst.Flags = append(dst.Flags, st.rise)
	}
	if st.hasLeave {
		st.leave.Distance = s.leaveDistance(st.leaveX)
		dst.Flags = append(dst.Flags, st.leave)
	}
	// A run that ends outside the region has not settled, whether or not
	// it ever entered: a run that leaves a basin starts outside any sound
	// region and must still be flagged.
	if !st.prevIn {
		dst.Settled = false
	}
	if st.entered {
		dst.longAfter = m-dst.enter >= 2*w
		// settled from entry by screen's rule, from V at entry
		dst.settledEntry = st.prevIn && (tail <= settle || approaching(dst.vEnter))
	}
	if !dst.Settled && !s.noSettle {
		dst.Flags = append(dst.Flags, Flag{Kind: FlagUnsettled, Time: st.lastT, Excess: clampFinite(tail - s.settle)})
	}
	if s.slowBound > 0 && !s.noSettle && dst.DecaySamples > 0 && dst.DecayRate < s.slowBound {
		dst.Flags = append(dst.Flags, Flag{Kind: FlagSlow, Time: st.lastT, Excess: s.slowBound - dst.DecayRate})
	}
	// A reading held at rest is a quantised sensor's, not a dead one's:
	// stuck needs the held stretch to begin away from rest, with V at its
	// first sample above the run's settle level.
	for j, from := range st.stuckFrom {
		if s.stuckOn(j) && m-from >= tailMax && st.stuckV[j] > settle {
			dst.Flags = append(dst.Flags, Flag{Kind: FlagStuck, Time: st.stuckT[j], Excess: clampFinite(st.lastT - st.stuckT[j]), State: s.cert.States[j]})
			break
		}
	}
	dst.Flagged = len(dst.Flags) > 0
	st.dst = nil
}

// rate returns the decay rate: minus the least-squares slope of log V
// against time over the run's approach (see [Screener]), in 1/s; ok is false with
// fewer than DecayMinSamples of them or no spread in time.
func (st *runState) rate() (float64, bool) {
	if st.dn < DecayMinSamples {
		return 0, false
	}
	n := float64(st.dn)
	den := n*st.dtt - st.dt*st.dt
	if !(den > 0) {
		return 0, false
	}
	r := -(n*st.dty - st.dt*st.dy) / den
	if math.IsNaN(r) || math.IsInf(r, 0) {
		return 0, false
	}
	return r, true
}

// riseDistance returns, per state in the states' units, the smallest
// displacement (to first order, in the scaled coordinates) of the worst
// rise's sample that accounts for the excess e of V: e ∇V/|∇V|² in z,
// times the scale.
func (s *Screener) riseDistance(e float64) []float64 {
	z := s.z
	for j := range z {
		z[j] = (s.worstX[j] - s.eq[j]) * s.inv[j]
	}
	g := s.grad(z)
	g2 := 0.0
	for _, gj := range g {
		g2 += gj * gj
	}
	d := make([]float64, s.n)
	if !(g2 > 0) || !(e > 0) {
		return d
	}
	for j := range d {
		d[j] = clampFinite(math.Abs(e * g[j] / g2 * s.cert.Scale[j]))
	}
	return d
}

// leaveDistance returns, per state in the states' units, how far the
// worst leaving sample x lies past the region's boundary: along the ray
// from the equilibrium to x, the distance from the boundary (the point
// where V reaches the level, found by bisection) to x, or how far x lies
// outside the box in that state when that is larger.
func (s *Screener) leaveDistance(x []float64) []float64 {
	n := s.n
	d := make([]float64, n)
	z := s.z
	vAt := func(f float64) float64 {
		for j := range z {
			z[j] = f * (x[j] - s.eq[j]) * s.inv[j]
		}
		return s.V(z)
	}
	level := s.level
	if vx := vAt(1); vx > level && vAt(0) <= level {
		lo, hi := 0.0, 1.0
		for range 60 {
			mid := (lo + hi) / 2
			if vAt(mid) <= level {
				lo = mid
			} else {
				hi = mid
			}
		}
		for j := range d {
			d[j] = math.Abs(x[j]-s.eq[j]) * (1 - lo)
		}
	}
	for j := range d {
		d[j] = clampFinite(max(d[j], s.lo[j]-x[j], x[j]-s.hi[j]))
	}
	return d
}

// grad returns ∇V at z in s's scratch space.
func (s *Screener) grad(z []float64) []float64 {
	g := s.g
	if s.quad {
		for i := range g {
			a := s.q[i]
			for j := 0; j < s.n; j++ {
				a += 2 * s.p[i*s.n+j] * z[j]
			}
			g[i] = a
		}
		return g
	}
	return s.cert.V.GradTo(g, z)
}

// ScreenRuns screens every run of ds against cert on up to GOMAXPROCS
// goroutines (internal/parallel, a Screener each) and returns the results
// in run order. It stops early with ctx's error when ctx is done.
func ScreenRuns(ctx context.Context, cert *fit.Certificate, ds *ingest.Dataset, opts *ScreenOptions) ([]RunScreen, error) {
	out := make([]RunScreen, len(ds.Runs))
	err := parallel.For(ctx, len(ds.Runs), 0, func() *Screener { return NewScreener(cert, opts) },
		func(ctx context.Context, i int, s *Screener) error {
			s.Screen(&out[i], ds.Runs[i].Source.File, &ds.Runs[i])
			return nil
		})
	if err != nil {
		return nil, err
	}
	return out, nil
}

// clampFinite maps NaN and ±Inf to the largest finite float64 (of the
// same sign for -Inf), so results stay JSON-encodable.
func clampFinite(v float64) float64 {
	switch {
	case math.IsNaN(v), math.IsInf(v, 1):
		return math.MaxFloat64
	case math.IsInf(v, -1):
		return -math.MaxFloat64
	}
	return v
}

// Rules are the constants of a Screener's rules, for writing the same
// screening in another language (see package fit/export's SQL).
type Rules struct {
	// N is the number of states; Eq and Inv give z_j = (x_j - Eq[j])·Inv[j].
	N       int
	Eq, Inv []float64
	// Level is the region's level (-Inf: the region is empty); a sample
	// is inside when it lies in [Lo, Hi] (per state, ±Inf when unbounded)
	// and V <= Level. After entering, it has left when V > LeaveLevel or
	// it lies outside [LoWide, HiWide].
	Level, LeaveLevel      float64 // LeaveLevel is Level + Tolerance
	Lo, Hi, LoWide, HiWide []float64
	// Tolerance on a rise of V between consecutive samples; NoiseR2 the
	// noise ball's squared radius in z; Settle the largest V on the ball.
	Tolerance, NoiseR2, Settle float64
	// Quad says V is evaluated as a quadratic form with P (N×N, row-major,
	// symmetric), Q and R; TwoState that the two-state kernel is used:
	// z0·(P00·z0 + 2P01·z1 + Q0) + z1·(P11·z1 + Q1) + R. Otherwise V is
	// evaluated term by term as [poly.Poly.Eval] does.
	Quad, TwoState bool
	P, Q           []float64
	R              float64
	// SlowBound is the decay rate below which a run is slow (0: no slow
	// flag, and so when NoSettle); DecayMinSamples the samples a rate needs.
	SlowBound float64
	// NoSettle says the certificate claims no settling (strength
	// stable): no run is flagged unsettled or slow.
	NoSettle        bool
	DecayMinSamples int
	// TailMax and TailShare fix the samples w averaged at each end of a
	// run of m samples: w = min(max(m/TailShare, 1), TailMax).
	TailMax, TailShare int
	// Stuck says, per state, that its reading can be found stuck: one
	// value over the run's last TailMax samples or more, with V at the
	// held stretch's first sample above the run's settle level.
	Stuck []bool
	// NoiseRef, when not nil, is the certificate's noise per state: a run
	// of at least 5 samples whose own noise ([fit.RunNoise]) exceeds it
	// has Tolerance (and LeaveLevel's share of it) multiplied by the
	// largest ratio over states (see runNoise).
	NoiseRef []float64
}

// Rules returns the constants of s's rules. The slices are copies.
func (s *Screener) Rules() Rules {
	c := func(x []float64) []float64 { return append([]float64(nil), x...) }
	r := Rules{N: s.n, Eq: c(s.eq), Inv: c(s.inv), Level: s.level, LeaveLevel: s.level + s.baseTol,
		Lo: c(s.lo), Hi: c(s.hi), LoWide: c(s.loW), HiWide: c(s.hiW),
		Tolerance: s.baseTol, NoiseR2: s.r2, Settle: s.settle,
		Quad: s.quad, TwoState: s.quad && s.n == 2 && !s.generic, P: c(s.p), Q: c(s.q), R: s.r,
		SlowBound: s.slowBound, NoSettle: s.noSettle, DecayMinSamples: DecayMinSamples, TailMax: tailMax, TailShare: tailShare}
	if s.noSettle {
		r.SlowBound = 0
	}
	if s.noise.on {
		r.NoiseRef = c(s.noise.ref)
	}
	r.Stuck = make([]bool, s.n)
	for j := range r.Stuck {
		r.Stuck[j] = s.stuckOn(j)
	}
	return r
}
