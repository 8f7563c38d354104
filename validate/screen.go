package validate

import (
	"context"
	"math"
	"runtime"
	"sync"

	"basin.example/fit"
	"basin.example/fit/poly"
	"basin.example/ingest"
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
//   - leaves: a sample outside the region after one inside it. Excess is
//     the worst V - Level after entering (0 when only the box was left).
//   - unsettled: the run's last sample is outside the region, or its end
//     is neither settled (mean V over the last samples at most the settle
//     level, the largest V on the noise ball) nor nearer the equilibrium
//     than its start (mean V over the last samples below the mean over the
//     first by more than the tolerance). Time is the run's last time,
//     Excess the end's mean V minus the settle level. A run that never
//     enters the region is flagged so too: runs that leave a basin start
//     outside any sound region.
//
// A certificate without a V or with a level that is not positive has an
// empty region (every run then ends outside it).
type Screener struct {
	cert *fit.Certificate
	opts ScreenOptions
	n    int
	tol  float64
	r2   float64 // NoiseRadius squared
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
	// generic disables the specialised kernels (benchmarks compare)
	generic bool
}

// screenBlock is the number of samples evaluated per block.
const screenBlock = 256

// evalBlock stores V, |z|^2 and the out-of-box flag of samples i0..i1-1
// in the block buffers.
func (s *Screener) evalBlock(X [][]float64, i0, i1 int) {
	vb, rb, ob := s.vbuf[:i1-i0], s.rbuf[:i1-i0], s.obuf[:i1-i0]
	if s.quad && s.n == 2 && !s.generic {
		x0, x1 := X[0][i0:i1], X[1][i0:i1]
		x1 = x1[:len(x0)]
		e0, e1, c0, c1 := s.eq[0], s.eq[1], s.inv[0], s.inv[1]
		l0, h0, l1, h1 := s.lo[0], s.hi[0], s.lo[1], s.hi[1]
		p00, p01, p11 := s.p[0], 2*s.p[1], s.p[3]
		q0, q1, r := s.q[0], s.q[1], s.r
		for k := range x0 {
			a, b := x0[k], x1[k]
			z0, z1 := (a-e0)*c0, (b-e1)*c1
			vb[k] = z0*(p00*z0+p01*z1+q0) + z1*(p11*z1+q1) + r
			rb[k] = z0*z0 + z1*z1
			ob[k] = a < l0 || a > h0 || b < l1 || b > h1
		}
		return
	}
	z := s.z
	n := s.n
	for k := range vb {
		i := i0 + k
		r2 := 0.0
		out := false
		for j := 0; j < n; j++ {
			xj := X[j][i]
			if xj < s.lo[j] || xj > s.hi[j] {
				out = true
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
		rb[k], ob[k] = r2, out
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
	s.z = make([]float64, n)
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

// SettleLevel returns the largest V on the noise ball: a run whose end has
// V at most this is settled.
func (s *Screener) SettleLevel() float64 { return s.settle }

// ballMax returns the largest V on the ball |z| <= r, by deterministic
// sampling of the sphere (the axes, their diagonals and a fixed
// quasi-random set) and of the centre; exact for a V with V(0) = 0 that
// is a positive semidefinite quadratic form only when the largest
// eigenvector is sampled, so for the quadratic case the eigenvalue bound
// (the largest Gershgorin disc edge, an upper bound) is used instead.
func (s *Screener) ballMax(r float64) float64 {
	n := s.n
	z := make([]float64, n)
	if r <= 0 {
		return s.V(z)
	}
	if s.quad {
		// max over |z|<=r of z'Pz + q'z + c <= lambda_max+ r^2 + |q| r + c,
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
// storage. It does not allocate once dst.Flags has room for three flags.
// A run with no samples gives an unflagged result with Samples 0.
func (s *Screener) Screen(dst *RunScreen, file string, run *ingest.Run) {
	*dst = RunScreen{File: file, Run: run.Name, Samples: run.Len(), Flags: dst.Flags[:0], enter: -1}
	m := run.Len()
	if m == 0 || len(run.X) != s.n {
		return
	}
	X := run.X
	T := run.T
	level := s.cert.Level
	if len(s.cert.V.Exponents) == 0 || !(level > 0) {
		level = math.Inf(-1) // no V or no level: the region is empty
	}
	tol := s.tol
	w := min(max(m/tailShare, 1), tailMax)

	var (
		prevV     float64
		prevIn    bool
		prevOut   bool // previous sample outside the noise ball
		entered   bool
		rise      = Flag{Kind: FlagRises, Time: math.NaN(), Excess: math.Inf(-1)}
		leave     = Flag{Kind: FlagLeaves, Time: math.NaN(), Excess: math.Inf(-1)}
		headSum   float64
		tailStart = m - w
		tailSum   float64
		hasRise   bool
		hasLeave  bool
		lastScen  = math.Inf(-1)
	)
	dst.worstExcess = math.Inf(-1)
	vb, rb, ob := s.vbuf[:], s.rbuf[:], s.obuf[:]
	for i0 := 0; i0 < m; i0 += screenBlock {
		i1 := min(i0+screenBlock, m)
		s.evalBlock(X, i0, i1)
		for i := i0; i < i1; i++ {
			v, r2, inBox := vb[i-i0], rb[i-i0], !ob[i-i0]
			in := inBox && v <= level // NaN V is outside
			if i < w {
				headSum += v
			}
			if i >= tailStart {
				tailSum += v
			}
			if i == 0 {
				dst.StartInside = in
			}
			if in {
				if !entered {
					dst.enter, dst.vEnter = i, v
				}
				entered = true
				if prevIn && prevOut {
					d := v - prevV - tol
					dst.Pairs++
					bad := !(d <= 0)
					if !bad {
						dst.Decreased++
					}
					if T[i]-lastScen >= s.spacing {
						dst.scen++
						lastScen = T[i]
						if bad {
							dst.scenViol++
						}
					}
					if d > dst.worstExcess {
						dst.worstExcess, dst.worstTime = d, T[i]
						for j := range s.worstX {
							s.worstX[j] = X[j][i]
						}
					}
					if bad {
						if !hasRise {
							rise.Time = T[i]
							hasRise = true
						}
						if !(d <= math.MaxFloat64) {
							d = math.MaxFloat64
						}
						rise.Excess = max(rise.Excess, d)
					}
				}
			} else if entered {
				if !hasLeave {
					leave.Time = T[i]
					hasLeave = true
				}
				e := 0.0
				if v > level {
					e = v - level
				}
				if !(e <= math.MaxFloat64) { // NaN or Inf: report the largest finite excess
					e = math.MaxFloat64
				}
				leave.Excess = max(leave.Excess, e)
			}
			prevV, prevIn, prevOut = v, in, r2 > s.r2
		}
	}
	dst.EverInside = entered
	head := headSum / float64(w)
	tail := tailSum / float64(w)
	dst.VStart, dst.VEnd = clampFinite(head), clampFinite(tail)
	dst.Settled = tail <= s.settle || tail < head-tol
	if hasRise {
		dst.Flags = append(dst.Flags, rise)
	}
	if hasLeave {
		dst.Flags = append(dst.Flags, leave)
	}
	// A run that ends outside the region has not settled, whether or not
	// it ever entered: a run that leaves the basin starts outside any
	// sound region and must still be flagged.
	if !prevIn {
		dst.Settled = false
	}
	if entered {
		dst.longAfter = m-dst.enter >= 2*w
		dst.settledEntry = prevIn && (tail <= s.settle || tail < dst.vEnter-tol)
	}
	if !dst.Settled {
		dst.Flags = append(dst.Flags, Flag{Kind: FlagUnsettled, Time: T[m-1], Excess: clampFinite(tail - s.settle)})
	}
	dst.Flagged = len(dst.Flags) > 0
}

// ScreenRuns screens every run of ds against cert on up to GOMAXPROCS
// goroutines and returns the results in run order. It stops early with
// ctx's error when ctx is done.
func ScreenRuns(ctx context.Context, cert *fit.Certificate, ds *ingest.Dataset, opts *ScreenOptions) ([]RunScreen, error) {
	out := make([]RunScreen, len(ds.Runs))
	workers := min(runtime.GOMAXPROCS(0), len(ds.Runs))
	if workers <= 1 {
		s := NewScreener(cert, opts)
		for i := range ds.Runs {
			if err := ctx.Err(); err != nil {
				return nil, err
			}
			s.Screen(&out[i], ds.Runs[i].Source.File, &ds.Runs[i])
		}
		return out, nil
	}
	var wg sync.WaitGroup
	next := make(chan int)
	for k := 0; k < workers; k++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			s := NewScreener(cert, opts)
			for i := range next {
				s.Screen(&out[i], ds.Runs[i].Source.File, &ds.Runs[i])
			}
		}()
	}
	var err error
	for i := range ds.Runs {
		if err = ctx.Err(); err != nil {
			break
		}
		next <- i
	}
	close(next)
	wg.Wait()
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
