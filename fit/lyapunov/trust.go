package lyapunov

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// ErrDegenerate is returned by [NewTrust] when the library's columns are
// linearly dependent over the samples (a collinear library: a state that
// never moves, all runs from one point), so leverage is undefined.
var ErrDegenerate = errors.New("the library is collinear over the samples")

// trustCondMax is the condition number of the normalised normal matrix
// above which leverage is refused (about 1/sqrt(machine epsilon)·1e4:
// beyond it h loses its leading digits).
const trustCondMax = 1e12

// Trust is the part of state space where a least-squares model is
// trusted, by regression leverage: with Phi the library matrix over the
// fit samples (one row a sample, one column a term),
//
//	h(z) = phi(z)' (Phi'Phi)^-1 phi(z),
//
// and the model is trusted where h(z) <= HMax, the largest h over the
// samples themselves: a point beyond it is an extrapolation (the hidden
// extrapolation rule of regression diagnostics; Montgomery, Peck & Vining,
// Introduction to Linear Regression Analysis, on leverage and the hat
// matrix). sigma·sqrt(h(z)) is also the standard error of the fitted
// value at z for a residual standard deviation sigma. The region is also
// cut to the samples' bounding box (Lo, Hi).
//
// Coordinates are the scaled z of the certificate. A raw monomial x^e of
// the library (x = shift + scale∘z) is a combination of the monomials z^b
// with b <= e, so the columns are the monomials of z over the downward
// closure of the library's exponents: they span every raw term (the
// leverage over a larger span is at least as large, so the region errs
// on the small side), and being centred on the equilibrium they stay well
// conditioned when the states sit far from zero. Each column is
// normalised by its root mean square over the samples (leverage does not
// change under a column scaling; only the conditioning does). The
// constant is always included. Trust is not modified after NewTrust: safe for concurrent
// use except through its Bounder (see [Trust.Bounder]).
type Trust struct {
	N        int
	HMax     float64
	Lo, Hi   []float64 // samples' bounding box, z
	H        *Poly     // h as a polynomial in z (for bounds)
	cols     []*Poly   // normalised library columns in z
	fast     []column  // the same columns, for evaluation
	m        []float64 // (Phi'Phi)^-1, p×p row-major
	Samples  int
	Terms    int
	Cond     float64 // condition number of the normalised normal matrix
	HSamples []float64
}

// NewTrust builds the trust region of the library terms (raw exponent
// vectors) over the samples z (n a point, flattened). It returns an error wrapping [ErrDegenerate] for a collinear
// library and for fewer samples than terms.
func NewTrust(n int, terms [][]int, z []float64) (*Trust, error) {
	// The downward closure of the terms (the constant included).
	all := [][]int{make([]int, n)}
	seen := map[uint64]bool{pack(all[0]): true}
	var add func(e []int)
	add = func(e []int) {
		k := pack(e)
		if seen[k] {
			return
		}
		seen[k] = true
		all = append(all, append([]int(nil), e...))
		for j := range e {
			if e[j] > 0 {
				d := append([]int(nil), e...)
				d[j]--
				add(d)
			}
		}
	}
	for _, e := range terms {
		add(e)
	}
	p := len(all)
	ns := len(z) / n
	if ns < 2*p {
		return nil, fmt.Errorf("%w: %d samples for %d library terms", ErrDegenerate, ns, p)
	}
	t := &Trust{N: n, Lo: make([]float64, n), Hi: make([]float64, n), Samples: ns, Terms: p}
	for j := range t.Lo {
		t.Lo[j], t.Hi[j] = math.Inf(1), math.Inf(-1)
	}
	one := []float64{1}
	cols := make([]*Poly, p)
	fast := make([]column, p)
	for k, e := range all {
		cols[k] = NewPoly(n, [][]int{e}, one)
		fast[k] = newColumn(cols[k])
	}
	// Column norms, then the normal matrix.
	phi := make([]float64, p)
	norm := make([]float64, p)
	for i := 0; i < ns; i++ {
		zi := z[i*n : (i+1)*n]
		for j, v := range zi {
			t.Lo[j], t.Hi[j] = math.Min(t.Lo[j], v), math.Max(t.Hi[j], v)
		}
		for k := range fast {
			v := fast[k].eval(zi)
			norm[k] += v * v
		}
	}
	for k := range norm {
		norm[k] = math.Sqrt(norm[k] / float64(ns))
		if !(norm[k] > 0) || math.IsInf(norm[k], 0) {
			return nil, fmt.Errorf("%w: library term %d is zero or not finite on every sample", ErrDegenerate, k)
		}
		cols[k] = Sum([]float64{1 / norm[k]}, cols[k])
		fast[k] = newColumn(cols[k])
	}
	ata := mat.NewSymDense(p, nil)
	raw := ata.RawSymmetric().Data
	// The columns at every sample, kept for the samples' leverage below
	// when they fit in pointCacheMax (the same numbers Leverage computes).
	var keep []float64
	if ns*p <= pointCacheMax {
		keep = make([]float64, ns*p)
	}
	for i := 0; i < ns; i++ {
		zi := z[i*n : (i+1)*n]
		if keep != nil {
			phi = keep[i*p : (i+1)*p]
		}
		for k := range fast {
			phi[k] = fast[k].eval(zi)
		}
		for a := 0; a < p; a++ {
			row := raw[a*p : (a+1)*p]
			for b := a; b < p; b++ {
				row[b] += phi[a] * phi[b]
			}
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(ata) {
		return nil, fmt.Errorf("%w: the normal matrix is not positive definite", ErrDegenerate)
	}
	t.Cond = ch.Cond()
	if !(t.Cond < trustCondMax) {
		return nil, fmt.Errorf("%w: condition number %.3g", ErrDegenerate, t.Cond)
	}
	var inv mat.SymDense
	if err := ch.InverseTo(&inv); err != nil {
		return nil, fmt.Errorf("%w: %v", ErrDegenerate, err)
	}
	t.m = make([]float64, p*p)
	for a := 0; a < p; a++ {
		for b := 0; b < p; b++ {
			t.m[a*p+b] = inv.At(a, b)
		}
	}
	t.cols, t.fast = cols, fast
	t.HSamples = make([]float64, ns)
	for i := 0; i < ns; i++ {
		var h float64
		if keep != nil {
			h = t.leverageOf(keep[i*p : (i+1)*p])
		} else {
			h = t.Leverage(z[i*n : (i+1)*n])
		}
		t.HSamples[i] = h
		t.HMax = math.Max(t.HMax, h)
	}
	// h as a polynomial: sum over a, b of m_ab phi_a phi_b.
	var ps []*Poly
	var ws []float64
	for a := 0; a < p; a++ {
		for b := a; b < p; b++ {
			w := t.m[a*p+b]
			if a != b {
				w *= 2
			}
			ps = append(ps, Mul(cols[a], cols[b]))
			ws = append(ws, w)
		}
	}
	t.H = Sum(ws, ps...)
	return t, nil
}

// Leverage returns h(z).
func (t *Trust) Leverage(z []float64) float64 {
	p := len(t.cols)
	var buf [64]float64
	phi := buf[:0]
	if p > len(buf) {
		phi = make([]float64, 0, p)
	}
	for k := range t.fast {
		phi = append(phi, t.fast[k].eval(z))
	}
	return t.leverageOf(phi)
}

// column is a one-term polynomial (a library column) for evaluation:
// its coefficient times z_j for each j in idx, in the order of
// [Poly.Eval], so the value is Eval's bit for bit.
type column struct {
	c   float64
	idx []int
}

// newColumn returns the column of p, which must have one term.
func newColumn(p *Poly) column {
	if len(p.E) != 1 {
		panic("lyapunov: newColumn: not one term")
	}
	col := column{c: p.C[0]}
	for j, q := range p.E[0] {
		for ; q > 0; q-- {
			col.idx = append(col.idx, j)
		}
	}
	return col
}

func (col *column) eval(z []float64) float64 {
	v := col.c
	for _, j := range col.idx {
		v *= z[j]
	}
	s := 0.0 // as Eval's sum: 0 + v (turns -0 into +0)
	s += v
	return s
}

// leverageOf returns h from the normalised columns phi at a point.
func (t *Trust) leverageOf(phi []float64) float64 {
	p := len(t.cols)
	h := 0.0
	for a := 0; a < p; a++ {
		s := 0.0
		row := t.m[a*p : (a+1)*p]
		for b, v := range phi {
			s += row[b] * v
		}
		h += phi[a] * s
	}
	return h
}

// Inside reports whether z is trusted: inside the samples' box with
// h(z) <= HMax.
func (t *Trust) Inside(z []float64) bool {
	for j, v := range z {
		if v < t.Lo[j] || v > t.Hi[j] {
			return false
		}
	}
	return t.Leverage(z) <= t.HMax
}
