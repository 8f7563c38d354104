// Package poly evaluates multivariate monomials and polynomials.
//
// A [Library] is the list of all monomials of n variables with total degree
// in [lo, hi], in graded order: by total degree, then by descending
// exponent of the first variable, then the second, and so on. For two
// variables and degrees 0..2 that is 1, x0, x1, x0², x0·x1, x1². Exponent
// vectors are []int of length n, as in model.json and certificate.json.
//
// Evaluation costs one multiplication a monomial: every monomial of degree
// k > lo is a monomial of degree k-1 (its parent) times one variable, so
// the whole library is built up in graded order without math.Pow.
package poly

import (
	"fmt"
	"strings"
)

// Library is an ordered set of monomials. It is safe for concurrent use.
type Library struct {
	vars  int
	terms [][]int
	// Evaluation recipe over the closed set of monomials (all degrees
	// 0..hi that are needed), then a selection of the library's own.
	full    int     // number of monomials in the recipe
	parent  []int32 // parent[k] index in the recipe; -1 for the constant
	factor  []int32 // variable multiplied into the parent
	pick    []int32 // library term k is recipe entry pick[k]
	steps   []step  // parent and factor together, for the kernels
	off     int     // pick[k] == off+k for every k, or -1
	scratch int
}

// A step makes recipe entry k from entry parent times variable factor.
type step struct{ parent, factor int32 }

// NewLibrary returns all monomials of vars variables with total degree
// lo..hi in graded order. It panics if vars < 1, lo < 0 or hi < lo.
func NewLibrary(vars, lo, hi int) *Library {
	if vars < 1 || lo < 0 || hi < lo {
		panic(fmt.Sprintf("poly: bad library vars=%d degrees %d..%d", vars, lo, hi))
	}
	var terms [][]int
	for d := lo; d <= hi; d++ {
		terms = append(terms, Monomials(vars, d)...)
	}
	return FromExponents(vars, terms)
}

// Monomials returns the exponent vectors of all monomials of vars variables
// with total degree exactly d, in descending lexicographic order.
func Monomials(vars, d int) [][]int {
	var out [][]int
	e := make([]int, vars)
	var rec func(j, left int)
	rec = func(j, left int) {
		if j == vars-1 {
			e[j] = left
			out = append(out, append([]int(nil), e...))
			return
		}
		for p := left; p >= 0; p-- {
			e[j] = p
			rec(j+1, left-p)
		}
	}
	rec(0, d)
	return out
}

// Count returns the number of monomials of vars variables with total
// degree lo..hi, that is C(vars+hi, hi) - C(vars+lo-1, lo-1).
func Count(vars, lo, hi int) int {
	c := func(d int) int { // monomials of degree <= d
		if d < 0 {
			return 0
		}
		r := 1
		for i := 1; i <= vars; i++ {
			r = r * (d + i) / i
		}
		return r
	}
	return c(hi) - c(lo-1)
}

// FromExponents returns a library of the given monomials, in the given
// order. It panics if an exponent vector has the wrong length or a
// negative entry. The slices are copied.
func FromExponents(vars int, exps [][]int) *Library {
	lib := &Library{vars: vars}
	index := map[string]int{}
	key := func(e []int) string { return fmt.Sprint(e) }
	var add func(e []int) int
	add = func(e []int) int {
		if i, ok := index[key(e)]; ok {
			return i
		}
		deg := 0
		last := -1
		for j, p := range e {
			if p < 0 {
				panic("poly: negative exponent")
			}
			deg += p
			if p > 0 {
				last = j
			}
		}
		par, fac := int32(-1), int32(-1)
		if deg > 0 {
			pe := append([]int(nil), e...)
			pe[last]--
			par = int32(add(pe))
			fac = int32(last)
		}
		i := len(lib.parent)
		lib.parent = append(lib.parent, par)
		lib.factor = append(lib.factor, fac)
		index[key(e)] = i
		return i
	}
	for _, e := range exps {
		if len(e) != vars {
			panic("poly: exponent vector length mismatch")
		}
		lib.terms = append(lib.terms, append([]int(nil), e...))
		lib.pick = append(lib.pick, int32(add(e)))
	}
	lib.full = len(lib.parent)
	lib.order()
	return lib
}

// order renumbers the recipe so that the library's own terms come last,
// in their order, when that keeps every parent before its children (all
// monomials of degrees lo..hi in graded order qualify): the kernels then
// copy the results out in one piece. Each entry keeps its parent and
// factor, so every value is computed by the same operations.
func (lib *Library) order() {
	lib.off = -1
	full := lib.full
	picked := make([]bool, full)
	for _, p := range lib.pick {
		if picked[p] {
			lib.finish()
			return // a repeated term
		}
		picked[p] = true
	}
	perm := make([]int32, 0, full) // new position -> old index
	for k := range full {
		if !picked[k] {
			perm = append(perm, int32(k))
		}
	}
	perm = append(perm, lib.pick...)
	pos := make([]int32, full) // old index -> new position
	for i, k := range perm {
		pos[k] = int32(i)
	}
	for i, k := range perm {
		if p := lib.parent[k]; p >= 0 && pos[p] >= int32(i) {
			lib.finish()
			return
		}
	}
	parent, factor := make([]int32, full), make([]int32, full)
	for i, k := range perm {
		parent[i], factor[i] = lib.parent[k], lib.factor[k]
		if parent[i] >= 0 {
			parent[i] = pos[parent[i]]
		}
	}
	lib.parent, lib.factor = parent, factor
	lib.off = full - len(lib.pick)
	for k := range lib.pick {
		lib.pick[k] = int32(lib.off + k)
	}
	lib.finish()
}

// finish fills steps from parent and factor.
func (lib *Library) finish() {
	lib.steps = make([]step, lib.full)
	for k := range lib.steps {
		lib.steps[k] = step{lib.parent[k], lib.factor[k]}
	}
}

// Vars returns the number of variables.
func (lib *Library) Vars() int { return lib.vars }

// Len returns the number of monomials in the library.
func (lib *Library) Len() int { return len(lib.terms) }

// Exponents returns the exponent vector of term k. It must not be modified.
func (lib *Library) Exponents(k int) []int { return lib.terms[k] }

// Terms returns a copy of all exponent vectors.
func (lib *Library) Terms() [][]int {
	out := make([][]int, len(lib.terms))
	for k, e := range lib.terms {
		out[k] = append([]int(nil), e...)
	}
	return out
}

// Degree returns the total degree of term k.
func (lib *Library) Degree(k int) int {
	d := 0
	for _, p := range lib.terms[k] {
		d += p
	}
	return d
}

// Name returns a readable name of term k using the given variable names,
// such as "theta^2 omega"; the constant is "1".
func (lib *Library) Name(k int, names []string) string {
	return MonomialName(lib.terms[k], names)
}

// MonomialName formats an exponent vector with the given variable names.
func MonomialName(e []int, names []string) string {
	var parts []string
	for j, p := range e {
		switch {
		case p == 1:
			parts = append(parts, names[j])
		case p > 1:
			parts = append(parts, fmt.Sprintf("%s^%d", names[j], p))
		}
	}
	if len(parts) == 0 {
		return "1"
	}
	return strings.Join(parts, " ")
}

// WorkLen returns the length of the scratch slice EvalWorkTo needs.
func (lib *Library) WorkLen() int { return lib.full }

// EvalTo stores each monomial of lib at x in dst and returns dst. It
// allocates a scratch slice when the library is not closed under taking
// parents; use EvalWorkTo in loops. It panics on a length mismatch.
func (lib *Library) EvalTo(dst, x []float64) []float64 {
	return lib.EvalWorkTo(dst, make([]float64, lib.full), x)
}

// EvalWorkTo is EvalTo with a caller-provided scratch slice of length
// WorkLen. It does not allocate.
func (lib *Library) EvalWorkTo(dst, work, x []float64) []float64 {
	if len(dst) != len(lib.terms) || len(x) != lib.vars || len(work) != lib.full {
		panic("poly: length mismatch")
	}
	for k, st := range lib.steps {
		if st.parent < 0 {
			work[k] = 1
		} else {
			work[k] = work[st.parent] * x[st.factor]
		}
	}
	if lib.off >= 0 { // a loop: copy's memmove call costs more on a few terms
		src := work[lib.off:]
		src = src[:len(dst)]
		for k := range dst {
			dst[k] = src[k]
		}
		return dst
	}
	for k, p := range lib.pick {
		dst[k] = work[p]
	}
	return dst
}

// GradWorkLen returns the length of the scratch slice GradWorkTo needs.
func (lib *Library) GradWorkLen() int { return lib.full * (lib.vars + 1) }

// GradWorkTo stores the gradient of each monomial at x in grad, row-major
// (grad[k*vars+j] = d term_k / d x_j), the values in val (which may be
// nil), and returns grad. work must have length GradWorkLen. It does not
// allocate and panics on a length mismatch.
func (lib *Library) GradWorkTo(grad, val, work, x []float64) []float64 {
	n := lib.vars
	if len(grad) != len(lib.terms)*n || len(x) != n || len(work) != lib.GradWorkLen() ||
		(val != nil && len(val) != len(lib.terms)) {
		panic("poly: length mismatch")
	}
	w := work[:lib.full]
	g := work[lib.full:]
	if n == 2 {
		lib.grad2(w, g, x)
	} else {
		for k, st := range lib.steps {
			gk := g[k*n : (k+1)*n]
			if st.parent < 0 {
				w[k] = 1
				clear(gk)
				continue
			}
			p, f := int(st.parent), int(st.factor)
			xf := x[f]
			w[k] = w[p] * xf
			gp := g[p*n : (p+1)*n]
			for j := range gk {
				gk[j] = gp[j] * xf
			}
			gk[f] += w[p]
		}
	}
	if lib.off >= 0 { // loops: copy's memmove call costs more on a few terms
		src := g[lib.off*n:]
		src = src[:len(grad)]
		for k := range grad {
			grad[k] = src[k]
		}
		if val != nil {
			w = w[lib.off:]
			w = w[:len(val)]
			for k := range val {
				val[k] = w[k]
			}
		}
		return grad
	}
	for k, p := range lib.pick {
		copy(grad[k*n:(k+1)*n], g[int(p)*n:(int(p)+1)*n])
		if val != nil {
			val[k] = w[p]
		}
	}
	return grad
}

// grad2 is GradWorkTo's recipe for two variables, with the gradient of an
// entry kept in registers: the same operations in the same order.
func (lib *Library) grad2(w, g, x []float64) {
	g = g[:2*len(w)]
	x0, x1 := x[0], x[1]
	for k, st := range lib.steps {
		if st.parent < 0 {
			w[k] = 1
			g[2*k], g[2*k+1] = 0, 0
			continue
		}
		p := int(st.parent)
		wp := w[p]
		xf := x0
		if st.factor != 0 {
			xf = x1
		}
		g0, g1 := g[2*p]*xf, g[2*p+1]*xf
		if st.factor == 0 {
			g0 += wp
		} else {
			g1 += wp
		}
		w[k] = wp * xf
		g[2*k], g[2*k+1] = g0, g1
	}
}

// EvalColumnsTo evaluates the library at many points stored column-wise
// (X[j][i] is variable j at point i) and stores term k at point i in
// dst[k][i]. Every dst[k] must have len(X[0]). It returns dst.
func (lib *Library) EvalColumnsTo(dst, X [][]float64) [][]float64 {
	if len(X) != lib.vars || len(dst) != len(lib.terms) {
		panic("poly: length mismatch")
	}
	m := len(X[0])
	for _, c := range dst {
		if len(c) != m {
			panic("poly: length mismatch")
		}
	}
	work := make([]float64, lib.full)
	x := make([]float64, lib.vars)
	for i := 0; i < m; i++ {
		for j := range x {
			x[j] = X[j][i]
		}
		for k, p := range lib.parent {
			if p < 0 {
				work[k] = 1
			} else {
				work[k] = work[p] * x[lib.factor[k]]
			}
		}
		for k, p := range lib.pick {
			dst[k][i] = work[p]
		}
	}
	return dst
}

// Poly is a polynomial: the sum over k of Coefficients[k] times the
// monomial with exponent vector Exponents[k]. Its JSON form is the one in
// model.json and certificate.json.
type Poly struct {
	Exponents    [][]int   `json:"exponents"`
	Coefficients []float64 `json:"coefficients"`
}

// Vars returns the number of variables, or 0 for a polynomial with no terms.
func (p Poly) Vars() int {
	if len(p.Exponents) == 0 {
		return 0
	}
	return len(p.Exponents[0])
}

// Eval returns p at x. It panics on a length mismatch.
func (p Poly) Eval(x []float64) float64 {
	s := 0.0
	for k, e := range p.Exponents {
		if len(e) != len(x) {
			panic("poly: length mismatch")
		}
		v := p.Coefficients[k]
		for j, q := range e {
			v *= ipow(x[j], q)
		}
		s += v
	}
	return s
}

// GradTo stores the gradient of p at x in dst and returns dst.
func (p Poly) GradTo(dst, x []float64) []float64 {
	if len(dst) != len(x) {
		panic("poly: length mismatch")
	}
	for j := range dst {
		dst[j] = 0
	}
	for k, e := range p.Exponents {
		c := p.Coefficients[k]
		for j, q := range e {
			if q == 0 {
				continue
			}
			v := c * float64(q)
			for i, r := range e {
				if i == j {
					v *= ipow(x[i], r-1)
				} else {
					v *= ipow(x[i], r)
				}
			}
			dst[j] += v
		}
	}
	return dst
}

// Degree returns the largest total degree of a term with a nonzero
// coefficient, or -1 if there is none.
func (p Poly) Degree() int {
	d := -1
	for k, e := range p.Exponents {
		if p.Coefficients[k] == 0 {
			continue
		}
		s := 0
		for _, q := range e {
			s += q
		}
		d = max(d, s)
	}
	return d
}

// Compiled is a polynomial prepared for fast repeated evaluation.
type Compiled struct {
	lib  *Library
	coef []float64
	work []float64
	val  []float64
}

// Compile prepares p for fast evaluation. A Compiled value holds scratch
// space and is not safe for concurrent use; compile one per goroutine.
func (p Poly) Compile(vars int) *Compiled {
	lib := FromExponents(vars, p.Exponents)
	return &Compiled{lib: lib, coef: append([]float64(nil), p.Coefficients...),
		work: make([]float64, lib.WorkLen()), val: make([]float64, lib.Len())}
}

// Eval returns the polynomial at x without allocating.
func (c *Compiled) Eval(x []float64) float64 {
	c.lib.EvalWorkTo(c.val, c.work, x)
	s := 0.0
	for k, v := range c.val {
		s += c.coef[k] * v
	}
	return s
}

// ipow returns x^p for small non-negative p by repeated multiplication.
func ipow(x float64, p int) float64 {
	v := 1.0
	for ; p > 0; p-- {
		v *= x
	}
	return v
}
