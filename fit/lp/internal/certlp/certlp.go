// Package certlp generates the sampled Lyapunov LPs that the benchmarks of
// package lp solve, and reads and writes them as files so that another
// solver can be timed on exactly the same rows.
//
// The LP: V = sum_k c_k m_k over the monomials m_k of degree 2..D in n
// states, unknowns (c, g) with c in [-1, 1] and g <= 10, maximise g
// subject to, at every sample x_i drawn uniformly from a box,
//
//	V(x_i) >= 1e-3 |x_i|^2             (row 2i)
//	grad V(x_i) . f(x_i) <= -g |x_i|^2 (row 2i+1)
//
// in the form min c'x s.t. Gx <= h of package lp.
//
// # File format
//
// One file of little-endian float64 values: m and w (rows and unknowns,
// as numbers), the objective (w values), the lower and the upper bounds
// (w values each, ±Inf where unbounded), then each row's w coefficients
// followed by its right-hand side. NumPy reads it with
// numpy.fromfile(name, "<f8").
package certlp

import (
	"bufio"
	"encoding/binary"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"os"

	"basin.example/fit/lp"
	"basin.example/fit/poly"
)

// LP is one certificate LP whose rows are generated on demand from the
// samples. It implements the Rows and Cloner interfaces of package lp.
type LP struct {
	lib  *poly.Library
	n, k int
	x    []float64 // samples, row-major N x n
	f    func(dst, x []float64)
	// scratch
	val, work, grad, gwork, fx []float64
}

// New returns the LP for the field f on samples points drawn uniformly
// from [-box, box]^n with the given seed, V of degree 2..degree.
func New(n, degree, samples int, box float64, f func(dst, x []float64), seed uint64) *LP {
	rng := rand.New(rand.NewPCG(seed, 0))
	c := &LP{lib: poly.NewLibrary(n, 2, degree), n: n, f: f}
	c.k = c.lib.Len()
	c.x = make([]float64, samples*n)
	for i := range c.x {
		c.x[i] = box * (2*rng.Float64() - 1)
	}
	return c.init()
}

func (c *LP) init() *LP {
	c.val = make([]float64, c.k)
	c.work = make([]float64, c.lib.WorkLen())
	c.grad = make([]float64, c.k*c.n)
	c.gwork = make([]float64, c.lib.GradWorkLen())
	c.fx = make([]float64, c.n)
	return c
}

// Len returns the number of rows, twice the samples.
func (c *LP) Len() int { return 2 * len(c.x) / c.n }

// Unknowns returns the number of unknowns, the V coefficients and g.
func (c *LP) Unknowns() int { return c.k + 1 }

// Clone returns a copy with its own scratch space.
func (c *LP) Clone() lp.Rows {
	d := *c
	return d.init()
}

// RowTo stores row i in dst (Unknowns entries) and returns its
// right-hand side.
func (c *LP) RowTo(dst []float64, i int) float64 {
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

// Bounds returns the objective (maximise g) and the bounds c in [-1, 1],
// g <= 10.
func (c *LP) Bounds() (obj, lower, upper []float64) {
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

// Dense is an LP held in memory as a dense matrix: min C'x s.t. Gx <= H,
// Lower <= x <= Upper, G row-major with len(H) rows.
type Dense struct {
	C, Lower, Upper []float64
	G, H            []float64
}

// Dense generates every row.
func (c *LP) Dense() *Dense {
	obj, lo, up := c.Bounds()
	m, w := c.Len(), c.Unknowns()
	d := &Dense{C: obj, Lower: lo, Upper: up, G: make([]float64, m*w), H: make([]float64, m)}
	for i := 0; i < m; i++ {
		d.H[i] = c.RowTo(d.G[i*w:(i+1)*w], i)
	}
	return d
}

// Write writes d in the file format of the package doc.
func (d *Dense) Write(w io.Writer) error {
	bw := bufio.NewWriterSize(w, 1<<20)
	n := len(d.C)
	m := len(d.H)
	var buf [8]byte
	put := func(v float64) {
		binary.LittleEndian.PutUint64(buf[:], math.Float64bits(v))
		bw.Write(buf[:])
	}
	put(float64(m))
	put(float64(n))
	for _, s := range [][]float64{d.C, d.Lower, d.Upper} {
		for _, v := range s {
			put(v)
		}
	}
	for i := 0; i < m; i++ {
		for _, v := range d.G[i*n : (i+1)*n] {
			put(v)
		}
		put(d.H[i])
	}
	return bw.Flush()
}

// WriteFile writes d to the named file.
func (d *Dense) WriteFile(name string) error {
	f, err := os.Create(name)
	if err != nil {
		return err
	}
	if err := d.Write(f); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}

// ReadFile reads an LP written by Write.
func ReadFile(name string) (*Dense, error) {
	b, err := os.ReadFile(name)
	if err != nil {
		return nil, err
	}
	if len(b)%8 != 0 || len(b) < 16 {
		return nil, fmt.Errorf("%s: not an LP file (%d bytes)", name, len(b))
	}
	v := make([]float64, len(b)/8)
	for i := range v {
		v[i] = math.Float64frombits(binary.LittleEndian.Uint64(b[8*i:]))
	}
	m, n := int(v[0]), int(v[1])
	if float64(m) != v[0] || float64(n) != v[1] || m < 0 || n < 1 || len(v) != 2+3*n+m*(n+1) {
		return nil, fmt.Errorf("%s: not an LP file (header %g x %g, %d values)", name, v[0], v[1], len(v))
	}
	d := &Dense{C: v[2 : 2+n], Lower: v[2+n : 2+2*n], Upper: v[2+2*n : 2+3*n], G: make([]float64, m*n), H: make([]float64, m)}
	rows := v[2+3*n:]
	for i := 0; i < m; i++ {
		copy(d.G[i*n:(i+1)*n], rows[i*(n+1):i*(n+1)+n])
		d.H[i] = rows[i*(n+1)+n]
	}
	return d, nil
}

// The benchmark systems. Duffing2 on [-2, 2]^2: x1' = x2,
// x2' = -x1 - 0.5 x2 - 0.3 x1^3. Poly3 and Chain6 on [-1, 1]^n are
// invented stable polynomial systems, with Jacobians at 0 whose
// eigenvalues have negative real parts.
func Duffing2(dst, x []float64) {
	dst[0] = x[1]
	dst[1] = -x[0] - 0.5*x[1] - 0.3*x[0]*x[0]*x[0]
}

// Poly3: x1' = -x1 + 0.5 x2 x3, x2' = -x2 + x3 - 0.2 x1^2,
// x3' = -x2 - x3 - 0.2 x3^3 (eigenvalues -1, -1 ± i at 0).
func Poly3(dst, x []float64) {
	dst[0] = -x[0] + 0.5*x[1]*x[2]
	dst[1] = -x[1] + x[2] - 0.2*x[0]*x[0]
	dst[2] = -x[1] - x[2] - 0.2*x[2]*x[2]*x[2]
}

// Chain6: three damped cubic oscillators (p, q) in a ring, each driven by
// 0.1 times the next one's position: p' = q, q' = -p - 0.5 q - 0.3 p^3 +
// 0.1 p_next.
func Chain6(dst, x []float64) {
	for k := 0; k < 3; k++ {
		p, q := x[2*k], x[2*k+1]
		dst[2*k] = q
		dst[2*k+1] = -p - 0.5*q - 0.3*p*p*p + 0.1*x[(2*k+2)%6]
	}
}

// Case is one benchmark shape: n states, V degree D, N samples.
type Case struct {
	N, D, Samples int
	Box           float64
	F             func(dst, x []float64)
}

// Name is "n2_d4_N100000".
func (c Case) Name() string { return fmt.Sprintf("n%d_d%d_N%d", c.N, c.D, c.Samples) }

// LP returns the case's LP (seed 1).
func (c Case) LP() *LP { return New(c.N, c.D, c.Samples, c.Box, c.F, 1) }

// Cases are the benchmark shapes.
var Cases = []Case{
	{2, 4, 100000, 2, Duffing2},
	{3, 4, 100000, 1, Poly3},
	{6, 2, 100000, 1, Chain6},
	{2, 2, 10000, 2, Duffing2},
	{6, 4, 10000, 1, Chain6},
}
