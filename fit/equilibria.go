package fit

import (
	"math"
	"math/cmplx"
	"sort"

	"gonum.org/v1/gonum/mat"
)

// Newton's method on the fitted field.
const (
	newtonIters = 80
	// newtonStepTol: stop when the step, in units of each state's spread,
	// is below this (a few hundred ulps of unit-scaled coordinates).
	newtonStepTol = 1e-11
	// newtonResTol: accept a point when |f_j|/spread_j, in 1/s, is below
	// this times the field's typical size there (relative round-off level).
	newtonResTol = 1e-8
	// dedupTol: two equilibria closer than this in every state (in units of
	// its spread) are the same.
	dedupTol = 1e-5
	// reachFactor: Newton iterates further than this many box widths from
	// the data box are abandoned: the polynomial means nothing there.
	reachFactor = 3
	// hyperbolicTol: an eigenvalue with |Re| below this share of the
	// largest modulus counts as on the imaginary axis.
	hyperbolicTol = 1e-6
)

// Equilibrium classes.
const (
	ClassStableNode      = "stable node"
	ClassStableFocus     = "stable focus"
	ClassSaddle          = "saddle"
	ClassUnstableNode    = "unstable node"
	ClassUnstableFocus   = "unstable focus"
	ClassNonHyperbolic   = "non-hyperbolic"
	ClassOutsideEnvelope = "outside envelope"
)

// newton runs damped Newton from x0 on fe; it returns the point and
// whether it converged to a zero of the field.
func newton(fe *FieldEvaluator, x0, lower, upper, spread []float64) ([]float64, bool) {
	n := len(x0)
	x := append([]float64(nil), x0...)
	f := make([]float64, n)
	jac := make([]float64, n*n)
	trial := make([]float64, n)
	ft := make([]float64, n)
	norm := func(v []float64) float64 {
		s := 0.0
		for j, a := range v {
			a /= spread[j]
			s += a * a
		}
		return math.Sqrt(s)
	}
	scaleF := 0.0 // typical field magnitude, for the residual test
	for it := 0; it < newtonIters; it++ {
		fe.JacobianTo(jac, f, x)
		r := norm(f)
		if it == 0 {
			scaleF = math.Max(r, 1e-300)
			// also the Jacobian's size times a spread, so a start that is
			// already an equilibrium is recognised.
			js := 0.0
			for _, v := range jac {
				js = math.Max(js, math.Abs(v))
			}
			scaleF = math.Max(scaleF, js)
		}
		J := mat.NewDense(n, n, jac)
		var step mat.VecDense
		if err := step.SolveVec(J, mat.NewVecDense(n, f)); err != nil {
			var c mat.Condition
			if !asCondition(err, &c) {
				return x, false
			}
		}
		lam := 1.0
		accepted := false
		for ls := 0; ls < 30; ls++ {
			for j := range trial {
				trial[j] = x[j] - lam*step.AtVec(j)
			}
			fe.EvalTo(ft, trial)
			if norm(ft) < r || r == 0 {
				accepted = true
				break
			}
			lam /= 2
		}
		if !accepted {
			break
		}
		sn := 0.0
		for j := range x {
			d := (trial[j] - x[j]) / spread[j]
			sn = math.Max(sn, math.Abs(d))
			x[j] = trial[j]
			w := upper[j] - lower[j]
			if !finite(x[j]) || x[j] < lower[j]-reachFactor*w || x[j] > upper[j]+reachFactor*w {
				return x, false
			}
		}
		if sn < newtonStepTol {
			break
		}
	}
	fe.EvalTo(f, x)
	return x, finite(x...) && norm(f) <= newtonResTol*scaleF
}

func asCondition(err error, c *mat.Condition) bool {
	v, ok := err.(mat.Condition)
	if ok {
		*c = v
	}
	return ok
}

// classify returns the class of an equilibrium from its eigenvalues.
func classify(eig []complex128) string {
	big := 0.0
	for _, e := range eig {
		big = math.Max(big, cmplx.Abs(e))
	}
	tol := hyperbolicTol * math.Max(big, 1e-300)
	neg, pos, osc := 0, 0, false
	for _, e := range eig {
		switch {
		case real(e) < -tol:
			neg++
		case real(e) > tol:
			pos++
		default:
			return ClassNonHyperbolic
		}
		if math.Abs(imag(e)) > tol {
			osc = true
		}
	}
	switch {
	case pos == 0 && osc:
		return ClassStableFocus
	case pos == 0:
		return ClassStableNode
	case neg == 0 && osc:
		return ClassUnstableFocus
	case neg == 0:
		return ClassUnstableNode
	}
	return ClassSaddle
}

// linearise returns the Jacobian (rows) and eigenvalues ([re, im], sorted
// by real part then imaginary part) of the field at x.
func linearise(fe *FieldEvaluator, x []float64) ([][]float64, [][2]float64, []complex128) {
	n := len(x)
	jac := make([]float64, n*n)
	fe.JacobianTo(jac, nil, x)
	rows := make([][]float64, n)
	for i := range rows {
		rows[i] = append([]float64(nil), jac[i*n:(i+1)*n]...)
	}
	var eg mat.Eigen
	var vals []complex128
	if eg.Factorize(mat.NewDense(n, n, jac), mat.EigenNone) {
		vals = eg.Values(nil)
	}
	sort.Slice(vals, func(a, b int) bool {
		if real(vals[a]) != real(vals[b]) {
			return real(vals[a]) < real(vals[b])
		}
		return imag(vals[a]) < imag(vals[b])
	})
	out := make([][2]float64, len(vals))
	for i, v := range vals {
		out[i] = [2]float64{real(v), imag(v)}
	}
	return rows, out, vals
}

// findEquilibria runs Newton from every start and returns the distinct
// equilibria found, each linearised and classified.
func findEquilibria(m *Model, starts [][]float64, lower, upper, spread []float64) []Equilibrium {
	fe := NewFieldEvaluator(m)
	var found []Equilibrium
	for _, s := range starts {
		x, ok := newton(fe, s, lower, upper, spread)
		if !ok {
			continue
		}
		dup := false
		for _, e := range found {
			same := true
			for j := range x {
				if math.Abs(x[j]-e.Point[j]) > dedupTol*spread[j] {
					same = false
					break
				}
			}
			if same {
				dup = true
				break
			}
		}
		if dup {
			continue
		}
		jac, eig, vals := linearise(fe, x)
		if len(vals) != len(x) {
			continue
		}
		in := true
		for j := range x {
			w := upper[j] - lower[j]
			if x[j] < lower[j]-1e-9*w || x[j] > upper[j]+1e-9*w {
				in = false
			}
		}
		class := classify(vals)
		if !in {
			class = ClassOutsideEnvelope
		}
		if !finite(flatten(jac)...) || !finite(flattenPairs(eig)...) {
			continue
		}
		found = append(found, Equilibrium{Point: x, Jacobian: jac, Eigenvalues: eig, Class: class, InEnvelope: in})
	}
	return found
}

func flatten(a [][]float64) []float64 {
	var out []float64
	for _, r := range a {
		out = append(out, r...)
	}
	return out
}

func flattenPairs(a [][2]float64) []float64 {
	var out []float64
	for _, r := range a {
		out = append(out, r[0], r[1])
	}
	return out
}

// gridStarts returns Newton starting points on a regular grid inside the
// box: g points per state at the cell centres, with g^n at most about 256.
func gridStarts(lower, upper []float64) [][]float64 {
	n := len(lower)
	g := 2
	for k := 5; k > 2; k-- {
		if math.Pow(float64(k), float64(n)) <= 256 {
			g = k
			break
		}
	}
	if math.Pow(2, float64(n)) > 4096 {
		return nil
	}
	var out [][]float64
	idx := make([]int, n)
	for {
		x := make([]float64, n)
		for j := range x {
			x[j] = lower[j] + (float64(idx[j])+0.5)/float64(g)*(upper[j]-lower[j])
		}
		out = append(out, x)
		j := 0
		for j < n {
			idx[j]++
			if idx[j] < g {
				break
			}
			idx[j] = 0
			j++
		}
		if j == n {
			return out
		}
	}
}
