package fit

import (
	"math"
	"sort"

	"basin.example/fit/poly"
)

// Scaling.
//
// The normal equations are accumulated in centred, scaled coordinates
// z_j = (x_j - c_j)/s_j, where c_j is the median of state j over all
// samples and s_j the larger of the interquartile range over 1.349 (the
// standard deviation of a normal with that IQR) and the standard
// deviation: logs of settling runs pile most samples at the equilibrium,
// where the IQR alone collapses and the transients, which carry the
// dynamics, would sit at tens of spreads. In z the monomials are well
// conditioned whatever the units and offsets of the logs.
//
// Sparsity, however, is a property of the basis in which terms are
// counted: a model that is sparse in raw monomials (Lorenz: x y, x z) is
// dense in centred ones, and the reverse. So the threshold works in the
// basis of scaled raw monomials u = x/s (u = z + c/s, an exact polynomial
// change of basis, [shiftMatrix]) whenever that basis is not too badly
// conditioned ([rawCondMax]), and in z otherwise (a thermal loop logged at
// 300 K: offsets dwarf the spread). The result is reported in raw
// coordinates either way, by exact expansion of the products ([rawPoly]).

// robustScale returns the median and the spread of xs (which it may
// reorder: pass a copy). It returns spread 0 for a constant sample.
func robustScale(xs []float64) (centre, spread float64) {
	if len(xs) == 0 {
		return 0, 0
	}
	sort.Float64s(xs)
	q := func(p float64) float64 {
		h := p * float64(len(xs)-1)
		i := int(h)
		if i+1 >= len(xs) {
			return xs[len(xs)-1]
		}
		return xs[i] + (h-float64(i))*(xs[i+1]-xs[i])
	}
	centre = q(0.5)
	spread = (q(0.75) - q(0.25)) / 1.349
	mean := 0.0
	for _, x := range xs {
		mean += x
	}
	mean /= float64(len(xs))
	ss := 0.0
	for _, x := range xs {
		ss += (x - mean) * (x - mean)
	}
	return centre, math.Max(spread, math.Sqrt(ss/float64(len(xs))))
}

// binom returns the binomial coefficient C(n, k) for small n.
func binom(n, k int) float64 {
	if k < 0 || k > n {
		return 0
	}
	r := 1.0
	for i := 1; i <= k; i++ {
		r = r * float64(n-k+i) / float64(i)
	}
	return r
}

// shiftMatrix returns T (row-major, p×p) with m_k(z + a) = sum_l T[l*p+k]
// m_l(z) for the monomials m_k of lib, which must contain every monomial
// that divides one of its terms (a full library of degrees 0..d does). It
// is exact polynomial algebra: prod_j (z_j + a_j)^e_j expanded by the
// binomial theorem.
func shiftMatrix(lib *poly.Library, a []float64) []float64 {
	p := lib.Len()
	index := make(map[string]int, p)
	for k := 0; k < p; k++ {
		index[expKey(lib.Exponents(k))] = k
	}
	T := make([]float64, p*p)
	n := lib.Vars()
	f := make([]int, n)
	for k := 0; k < p; k++ {
		e := lib.Exponents(k)
		// Enumerate every f <= e componentwise.
		for j := range f {
			f[j] = 0
		}
		for {
			c := 1.0
			for j := range f {
				c *= binom(e[j], f[j]) * ipowf(a[j], e[j]-f[j])
			}
			if c != 0 {
				l, ok := index[expKey(f)]
				if !ok {
					panic("fit: library not closed under division")
				}
				T[l*p+k] += c
			}
			j := 0
			for j < n {
				f[j]++
				if f[j] <= e[j] {
					break
				}
				f[j] = 0
				j++
			}
			if j == n {
				break
			}
		}
	}
	return T
}

// rawPoly expands out * sum_k coef[k] * prod_j ((x_j - shift_j)/scale_j)^e_kj,
// e_k the exponents of lib's term k, into raw monomials of x. The result
// lists every term with a nonzero coefficient, in lib's (graded) order;
// lib must be closed under division. Terms with coef[k] == 0 contribute
// nothing, so a sparse coef with zero shift stays exactly as sparse.
func rawPoly(lib *poly.Library, coef, shift, scale []float64, out float64) poly.Poly {
	p := lib.Len()
	raw := make([]float64, p)
	rawCoefTo(raw, lib, coef, shift, scale, out)
	var res poly.Poly
	for k, c := range raw {
		if c != 0 {
			res.Exponents = append(res.Exponents, append([]int(nil), lib.Exponents(k)...))
			res.Coefficients = append(res.Coefficients, c)
		}
	}
	return res
}

// rawCoefTo stores in dst (length lib.Len()) the raw-monomial coefficients
// of out * sum_k coef[k] prod_j ((x_j - shift_j)/scale_j)^e_kj and returns dst.
func rawCoefTo(dst []float64, lib *poly.Library, coef, shift, scale []float64, out float64) []float64 {
	p := lib.Len()
	n := lib.Vars()
	for i := range dst {
		dst[i] = 0
	}
	zeroShift := true
	for _, s := range shift {
		if s != 0 {
			zeroShift = false
		}
	}
	// (x - c)/s = x/s - c/s: first expand in u = x/s with a = -c/s, then
	// divide each monomial by prod s^e.
	var T []float64
	if !zeroShift {
		a := make([]float64, n)
		for j := range a {
			a[j] = -shift[j] / scale[j]
		}
		T = shiftMatrix(lib, a)
	}
	for k, c := range coef {
		if c == 0 {
			continue
		}
		if zeroShift {
			dst[k] += out * c
			continue
		}
		for l := 0; l < p; l++ {
			if t := T[l*p+k]; t != 0 {
				dst[l] += out * c * t
			}
		}
	}
	for l := 0; l < p; l++ {
		if dst[l] == 0 {
			continue
		}
		e := lib.Exponents(l)
		d := 1.0
		for j, q := range e {
			d *= ipowf(scale[j], q)
		}
		dst[l] /= d
	}
	return dst
}

func expKey(e []int) string {
	b := make([]byte, 0, 2*len(e))
	for _, q := range e {
		b = append(b, byte(q), ',')
	}
	return string(b)
}

func ipowf(x float64, p int) float64 {
	v := 1.0
	for ; p > 0; p-- {
		v *= x
	}
	return v
}
