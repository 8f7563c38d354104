package lp_test

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"
	"time"

	"gonum.org/v1/gonum/floats/scalar"

	"basin.example/fit/lp"
	"basin.example/fit/poly"
)

// certLP is the sampled Lyapunov LP of the benchmarks: V = sum_k c_k m_k
// over the monomials m_k of degree 2..D in n states, unknowns (c, g) with
// c in [-1, 1] and g <= 10, maximise g subject to, at every sample x_i,
//
//	V(x_i) >= 1e-3 |x_i|^2            (row 2i)
//	grad V(x_i) . f(x_i) <= -g |x_i|^2 (row 2i+1)
//
// Rows are generated on demand from the samples, so memory is the samples
// plus per-clone scratch space.
type certLP struct {
	lib  *poly.Library
	n, k int
	x    []float64 // samples, row-major N x n
	f    func(dst, x []float64)
	// scratch
	val, work, grad, gwork, fx []float64
}

func newCertLP(n, degree, samples int, box float64, f func(dst, x []float64), seed uint64) *certLP {
	rng := rand.New(rand.NewPCG(seed, 0))
	c := &certLP{lib: poly.NewLibrary(n, 2, degree), n: n, f: f}
	c.k = c.lib.Len()
	c.x = make([]float64, samples*n)
	for i := range c.x {
		c.x[i] = box * (2*rng.Float64() - 1)
	}
	return c.init()
}

func (c *certLP) init() *certLP {
	c.val = make([]float64, c.k)
	c.work = make([]float64, c.lib.WorkLen())
	c.grad = make([]float64, c.k*c.n)
	c.gwork = make([]float64, c.lib.GradWorkLen())
	c.fx = make([]float64, c.n)
	return c
}

func (c *certLP) Len() int { return 2 * len(c.x) / c.n }

func (c *certLP) Clone() lp.Rows {
	d := *c
	return d.init()
}

func (c *certLP) RowTo(dst []float64, i int) float64 {
	n, k := c.n, c.k
	x := c.x[(i/2)*n : (i/2+1)*n]
	r2 := 0.0
	for _, v := range x {
		r2 += v * v
	}
	if i%2 == 0 {
		c.lib.EvalWorkTo(c.val, c.work, x)
		for j, v := range c.val {
			dst[j] = -v
		}
		dst[k] = 0
		return -1e-3 * r2
	}
	c.lib.GradWorkTo(c.grad, nil, c.gwork, x)
	c.f(c.fx, x)
	for j := 0; j < k; j++ {
		s := 0.0
		for l, fl := range c.fx {
			s += c.grad[j*n+l] * fl
		}
		dst[j] = s
	}
	dst[k] = r2
	return 0
}

// bounds returns the objective (maximise g) and the bounds c in [-1, 1],
// g <= 10.
func (c *certLP) bounds() (obj, lower, upper []float64) {
	obj = make([]float64, c.k+1)
	lower = make([]float64, c.k+1)
	upper = make([]float64, c.k+1)
	for j := 0; j < c.k; j++ {
		lower[j], upper[j] = -1, 1
	}
	obj[c.k] = -1
	lower[c.k], upper[c.k] = math.Inf(-1), 10
	return obj, lower, upper
}

// The benchmark systems. n = 2 is fixed by the task: x1' = x2,
// x2' = -x1 - 0.5 x2 - 0.3 x1^3 on [-2, 2]^2. For n = 3 and n = 6 any
// stable polynomial system on [-1, 1]^n will do; these are invented, with
// Jacobians at 0 whose eigenvalues have negative real parts.
func duffing2(dst, x []float64) {
	dst[0] = x[1]
	dst[1] = -x[0] - 0.5*x[1] - 0.3*x[0]*x[0]*x[0]
}

// poly3: x1' = -x1 + 0.5 x2 x3, x2' = -x2 + x3 - 0.2 x1^2,
// x3' = -x2 - x3 - 0.2 x3^3 (eigenvalues -1, -1 ± i at 0).
func poly3(dst, x []float64) {
	dst[0] = -x[0] + 0.5*x[1]*x[2]
	dst[1] = -x[1] + x[2] - 0.2*x[0]*x[0]
	dst[2] = -x[1] - x[2] - 0.2*x[2]*x[2]*x[2]
}

// chain6: three damped cubic oscillators (p, q) in a ring, each driven by
// 0.1 times the next one's position: p' = q, q' = -p - 0.5 q - 0.3 p^3 +
// 0.1 p_next.
func chain6(dst, x []float64) {
	for k := 0; k < 3; k++ {
		p, q := x[2*k], x[2*k+1]
		dst[2*k] = q
		dst[2*k+1] = -p - 0.5*q - 0.3*p*p*p + 0.1*x[(2*k+2)%6]
	}
}

// TestCertLPCutsMatchWhole solves a small certificate LP both whole and by
// cutting planes: the optima must agree (the whole LP is the reference).
func TestCertLPCutsMatchWhole(t *testing.T) {
	for _, tc := range []struct {
		n, d, samples int
		box           float64
		f             func(dst, x []float64)
	}{
		{2, 2, 2000, 2, duffing2},
		{2, 4, 2000, 2, duffing2},
		{3, 4, 1000, 1, poly3},
	} {
		t.Run(fmt.Sprintf("n%d_d%d", tc.n, tc.d), func(t *testing.T) {
			c := newCertLP(tc.n, tc.d, tc.samples, tc.box, tc.f, 1)
			obj, lo, up := c.bounds()
			m, w := c.Len(), c.k+1
			p := &lp.Problem{C: obj, G: make([]float64, m*w), H: make([]float64, m), Lower: lo, Upper: up}
			for i := 0; i < m; i++ {
				p.H[i] = c.RowTo(p.G[i*w:(i+1)*w], i)
			}
			whole, err := lp.Solve(p, nil)
			if err != nil {
				t.Fatal(err)
			}
			r, err := lp.SolveCuts(obj, c, lo, up, nil)
			if err != nil {
				t.Fatal(err)
			}
			// Both optimal to the default 1e-8 relative gap.
			if !scalar.EqualWithinAbs(r.Objective, whole.Objective, 1e-7*(1+math.Abs(whole.Objective))) {
				t.Errorf("cuts %.10g, whole %.10g", r.Objective, whole.Objective)
			}
			checkKKT(t, p, r, 1e-7)
			t.Logf("g = %.6g; whole: %d iterations; cuts: %d rounds, %d of %d rows, %d iterations",
				-r.Objective, whole.Iterations, r.Rounds, len(r.Active), m, r.Iterations)
		})
	}
}

// BenchmarkCertificateLP runs SolveCuts on the certificate LP shapes of the
// task, against the time HiGHS took inside a row-generation loop on the
// same shapes (the task's table; "xHiGHS" is our time over that anchor),
// and the whole LP solved at once by Solve. SetBytes is the size of the
// whole dense LP, so MB/s compares shapes.
func BenchmarkCertificateLP(b *testing.B) {
	for _, bc := range []struct {
		n, d, samples int
		box           float64
		f             func(dst, x []float64)
		highs         time.Duration
	}{
		{2, 2, 10000, 2, duffing2, 26 * time.Millisecond},
		{2, 4, 100000, 2, duffing2, 310 * time.Millisecond},
		{3, 4, 100000, 1, poly3, 990 * time.Millisecond},
		{6, 2, 100000, 1, chain6, 280 * time.Millisecond},
		{6, 4, 10000, 1, chain6, 16200 * time.Millisecond},
	} {
		name := fmt.Sprintf("n%d_d%d_N%d", bc.n, bc.d, bc.samples)
		c := newCertLP(bc.n, bc.d, bc.samples, bc.box, bc.f, 1)
		obj, lo, up := c.bounds()
		size := int64(c.Len()) * int64(c.k+1) * 8
		b.Run(name+"/cuts", func(b *testing.B) {
			b.SetBytes(size)
			b.ReportAllocs()
			var r *lp.Result
			start := time.Now()
			for b.Loop() {
				var err error
				if r, err = lp.SolveCuts(obj, c, lo, up, nil); err != nil {
					b.Fatal(err)
				}
			}
			per := time.Since(start).Seconds() / float64(b.N)
			b.ReportMetric(float64(r.Rounds), "rounds")
			b.ReportMetric(float64(r.Iterations), "iters")
			b.ReportMetric(float64(len(r.Active)), "active")
			b.ReportMetric(per/bc.highs.Seconds(), "xHiGHS")
			b.ReportMetric(-r.Objective, "g")
		})
		// The whole LP at once with Solve, for the side-by-side ratio (the
		// rows are generated outside the timed loop).
		b.Run(name+"/whole", func(b *testing.B) {
			if testing.Short() {
				b.Skip("whole LP is large")
			}
			m, w := c.Len(), c.k+1
			p := &lp.Problem{C: obj, G: make([]float64, m*w), H: make([]float64, m), Lower: lo, Upper: up}
			for i := 0; i < m; i++ {
				p.H[i] = c.RowTo(p.G[i*w:(i+1)*w], i)
			}
			b.SetBytes(size)
			b.ReportAllocs()
			var r *lp.Result
			start := time.Now()
			for b.Loop() {
				var err error
				if r, err = lp.Solve(p, nil); err != nil {
					b.Fatal(err)
				}
			}
			per := time.Since(start).Seconds() / float64(b.N)
			b.ReportMetric(float64(r.Iterations), "iters")
			b.ReportMetric(per/bc.highs.Seconds(), "xHiGHS")
			b.ReportMetric(-r.Objective, "g")
		})
	}
}
