package lyapunov

import (
	"math"
	"sort"
)

// Poly is a polynomial in n variables: the sum over k of C[k] times the
// monomial with exponent vector E[k]. Terms are unique and sorted by their
// packed exponents; a Poly is not modified after it is made, so it is safe
// for concurrent use.
type Poly struct {
	N int
	E [][]int
	C []float64
}

// maxExp bounds each exponent, so that an exponent vector packs into one
// uint64 (8 bits a variable, up to 8 variables).
const maxExp = 255

func pack(e []int) uint64 {
	var k uint64
	for _, p := range e {
		k = k<<8 | uint64(p)
	}
	return k
}

// NewPoly returns the polynomial with the given terms in n variables,
// merging repeated exponent vectors and dropping zero coefficients. It
// panics if n is not 1..8, an exponent vector has the wrong length or an
// exponent is out of 0..255.
func NewPoly(n int, exps [][]int, coef []float64) *Poly {
	if n < 1 || n > 8 || len(exps) != len(coef) {
		panic("lyapunov: NewPoly: bad shape")
	}
	acc := map[uint64]float64{}
	keep := map[uint64][]int{}
	for k, e := range exps {
		if len(e) != n {
			panic("lyapunov: NewPoly: exponent vector length")
		}
		for _, p := range e {
			if p < 0 || p > maxExp {
				panic("lyapunov: NewPoly: exponent out of range")
			}
		}
		key := pack(e)
		acc[key] += coef[k]
		if _, ok := keep[key]; !ok {
			keep[key] = append([]int(nil), e...)
		}
	}
	return fromMap(n, acc, keep)
}

func fromMap(n int, acc map[uint64]float64, keep map[uint64][]int) *Poly {
	keys := make([]uint64, 0, len(acc))
	for k, c := range acc {
		if c != 0 {
			keys = append(keys, k)
		}
	}
	sort.Slice(keys, func(a, b int) bool { return keys[a] < keys[b] })
	p := &Poly{N: n, E: make([][]int, len(keys)), C: make([]float64, len(keys))}
	for i, k := range keys {
		p.E[i], p.C[i] = keep[k], acc[k]
	}
	return p
}

// Degree returns the total degree (0 for the zero polynomial).
func (p *Poly) Degree() int {
	d := 0
	for _, e := range p.E {
		s := 0
		for _, q := range e {
			s += q
		}
		d = max(d, s)
	}
	return d
}

// Eval returns p(z).
func (p *Poly) Eval(z []float64) float64 {
	s := 0.0
	for k, e := range p.E {
		v := p.C[k]
		for j, q := range e {
			for ; q > 0; q-- {
				v *= z[j]
			}
		}
		s += v
	}
	return s
}

// Mul returns a·b.
func Mul(a, b *Poly) *Poly {
	n := a.N
	acc := map[uint64]float64{}
	keep := map[uint64][]int{}
	e := make([]int, n)
	for i, ea := range a.E {
		for k, eb := range b.E {
			for j := range e {
				e[j] = ea[j] + eb[j]
			}
			key := pack(e)
			acc[key] += a.C[i] * b.C[k]
			if _, ok := keep[key]; !ok {
				keep[key] = append([]int(nil), e...)
			}
		}
	}
	return fromMap(n, acc, keep)
}

// Sum returns the sum of w[i]·ps[i].
func Sum(w []float64, ps ...*Poly) *Poly {
	n := ps[0].N
	acc := map[uint64]float64{}
	keep := map[uint64][]int{}
	for i, p := range ps {
		for k, e := range p.E {
			key := pack(e)
			acc[key] += w[i] * p.C[k]
			if _, ok := keep[key]; !ok {
				keep[key] = e
			}
		}
	}
	return fromMap(n, acc, keep)
}

// Deriv returns dp/dz_j.
func Deriv(p *Poly, j int) *Poly {
	var exps [][]int
	var coef []float64
	for k, e := range p.E {
		if e[j] == 0 {
			continue
		}
		d := append([]int(nil), e...)
		d[j]--
		exps = append(exps, d)
		coef = append(coef, p.C[k]*float64(e[j]))
	}
	if len(exps) == 0 {
		return &Poly{N: p.N}
	}
	return NewPoly(p.N, exps, coef)
}

// Affine returns q(z) = p(shift + scale∘z) (each variable x_j of p is
// replaced by shift_j + scale_j z_j), by the binomial expansion.
func Affine(p *Poly, shift, scale []float64) *Poly {
	n := p.N
	acc := map[uint64]float64{}
	keep := map[uint64][]int{}
	b := make([]int, n)
	for k, e := range p.E {
		// every b <= e
		for j := range b {
			b[j] = 0
		}
		for {
			c := p.C[k]
			for j, q := range e {
				c *= binom(q, b[j]) * math.Pow(shift[j], float64(q-b[j])) * math.Pow(scale[j], float64(b[j]))
			}
			key := pack(b)
			acc[key] += c
			if _, ok := keep[key]; !ok {
				keep[key] = append([]int(nil), b...)
			}
			if !nextBelow(b, e) {
				break
			}
		}
	}
	return fromMap(n, acc, keep)
}

// nextBelow steps the multi-index b to the next one with b <= e
// componentwise (the first index fastest), and reports false when b has
// wrapped back to zero after the last one.
func nextBelow(b, e []int) bool {
	for j := range b {
		b[j]++
		if b[j] <= e[j] {
			return true
		}
		b[j] = 0
	}
	return false
}

func binom(n, k int) float64 {
	r := 1.0
	for i := 1; i <= k; i++ {
		r = r * float64(n-k+i) / float64(i)
	}
	return r
}

// Bounder bounds a polynomial over boxes by its Taylor form at the box's
// centre m: p(m + d) = sum over b of a_b d^b exactly (a finite expansion),
// so over |d_j| <= r_j, p lies within a_0 ± the sum over b != 0 of
// |a_b| r^b, each term with b all even being one-sided (d^b >= 0). The
// linear terms are then bounded exactly and the rest shrink with r²:
// the bound tightens quadratically as boxes are split. Rounding is not
// accounted for (the bounds are those of exact arithmetic). A Bounder
// holds scratch space: it is not safe for concurrent use.
type Bounder struct {
	n, deg int
	// plan: for each pair (term, b <= term's exponents): the source
	// coefficient, the destination index of b, the binomial factor and
	// the exponents term - b of the centre's powers.
	src, dst []int32
	fac      []float64
	gam      []uint8 // n per pair
	// per destination: whether every exponent is even, and its exponents
	even []bool
	dexp [][]int
	coef []float64
	a    []float64
	pw   []float64 // n*(deg+1) powers of the centre
	zero int       // index of b = 0, or -1
}

// NewBounder prepares p for bounding.
func NewBounder(p *Poly) *Bounder {
	n := p.N
	bd := &Bounder{n: n, deg: p.Degree(), coef: p.C, zero: -1}
	index := map[uint64]int32{}
	b := make([]int, n)
	for k, e := range p.E {
		for j := range b {
			b[j] = 0
		}
		for {
			key := pack(b)
			di, ok := index[key]
			if !ok {
				di = int32(len(bd.dexp))
				index[key] = di
				bd.dexp = append(bd.dexp, append([]int(nil), b...))
				ev := true
				nz := false
				for _, q := range b {
					ev = ev && q%2 == 0
					nz = nz || q != 0
				}
				bd.even = append(bd.even, ev)
				if !nz {
					bd.zero = int(di)
				}
			}
			f := 1.0
			for j, q := range e {
				f *= binom(q, b[j])
				bd.gam = append(bd.gam, uint8(q-b[j]))
			}
			bd.src = append(bd.src, int32(k))
			bd.dst = append(bd.dst, di)
			bd.fac = append(bd.fac, f*p.C[k])
			if !nextBelow(b, e) {
				break
			}
		}
	}
	bd.a = make([]float64, len(bd.dexp))
	bd.pw = make([]float64, n*(bd.deg+1))
	return bd
}

// Bounds returns lo <= p(z) <= hi over the box center ± half.
func (bd *Bounder) Bounds(center, half []float64) (lo, hi float64) {
	n, d1 := bd.n, bd.deg+1
	if len(bd.fac) == 0 {
		return 0, 0
	}
	for j := 0; j < n; j++ {
		pw := bd.pw[j*d1 : (j+1)*d1]
		pw[0] = 1
		for q := 1; q < d1; q++ {
			pw[q] = pw[q-1] * center[j]
		}
	}
	a := bd.a
	for i := range a {
		a[i] = 0
	}
	for i, f := range bd.fac {
		g := bd.gam[i*n : (i+1)*n]
		for j, q := range g {
			if q != 0 {
				f *= bd.pw[j*d1+int(q)]
			}
		}
		a[bd.dst[i]] += f
	}
	for i, e := range bd.dexp {
		if i == bd.zero {
			lo += a[i]
			hi += a[i]
			continue
		}
		r := math.Abs(a[i])
		for j, q := range e {
			for ; q > 0; q-- {
				r *= half[j]
			}
		}
		switch {
		case bd.even[i] && a[i] >= 0:
			hi += r
		case bd.even[i]:
			lo -= r
		default:
			lo -= r
			hi += r
		}
	}
	return lo, hi
}

// DegreeNorms returns, per total degree d, the sum of |coefficients| of
// p's terms of degree d (so that |p_d(z)| <= norms[d]·|z|^d, |z| the
// Euclidean norm, since |z^b| <= |z|^|b|).
func DegreeNorms(p *Poly) []float64 {
	out := make([]float64, p.Degree()+1)
	for k, e := range p.E {
		s := 0
		for _, q := range e {
			s += q
		}
		out[s] += math.Abs(p.C[k])
	}
	return out
}

// QuadMatrix returns the symmetric matrix Q of p's degree-2 part
// (p_2(z) = z'Qz), row-major.
func QuadMatrix(p *Poly) []float64 {
	n := p.N
	q := make([]float64, n*n)
	for k, e := range p.E {
		var idx []int
		s := 0
		for j, v := range e {
			s += v
			for r := 0; r < v; r++ {
				idx = append(idx, j)
			}
		}
		if s != 2 {
			continue
		}
		i, j := idx[0], idx[1]
		if i == j {
			q[i*n+i] += p.C[k]
		} else {
			q[i*n+j] += p.C[k] / 2
			q[j*n+i] += p.C[k] / 2
		}
	}
	return q
}
