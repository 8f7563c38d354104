package validate

import (
	"fmt"
	"math"
	"math/cmplx"

	"gonum.org/v1/gonum/mat"

	"basin.example/fit"
	"basin.example/ingest"
)

// Slow growth behind a centre.
//
// A lightly damped mode whose small damping term the threshold dropped
// comes out of the fit as a centre: eigenvalues on the imaginary axis,
// and a V that is only fitted not to rise. When the mode in truth grows
// slowly, V along a held-out run can still fall, because a decaying
// second mode dominates it, and V's rise per sample pair stays far under
// the noise tolerance. The centre's own coordinates tell: for the
// linearisation x' = J x, a left eigenvector w of J (w^H J = λ w^H) gives
// the mode's coordinate c = w^H (x - x*), with c' = λ c exactly, so |c|²
// changes at the rate 2 Re λ whatever the other modes do (linear systems
// theory, e.g. the modal decomposition in any linear systems text; from
// memory). centreGrowth fits that rate along each held-out run; a centre
// whose modes' amplitude grows along most runs, significantly, is slow
// growth the model cannot show.

// centreMinSamples is the fewest samples, outside the noise, along which a
// run's centre amplitude is fitted.
const centreMinSamples = 50

// centreNoiseFactor: samples whose centre amplitude |c|² is within this
// many times its noise variance are left out (3 standard deviations in
// amplitude; common practice).
const centreNoiseFactor = 9

// centreGrowth returns why the held-out runs ds show the marginal modes of
// m's linearisation growing ("" when they do not, or when m has no
// marginal modes or too few runs tell). tol is Options.LinearTol: an
// eigenvalue λ with |Re λ| <= tol·|λ| is marginal.
func centreGrowth(m *fit.Model, ds *ingest.Dataset, tol float64) string {
	n := len(m.States)
	if n == 0 || len(m.Equilibrium) != n || ds == nil {
		return ""
	}
	jac := fit.NewFieldEvaluator(m).JacobianTo(make([]float64, n*n), nil, m.Equilibrium)
	for _, v := range jac {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return ""
		}
	}
	var eig mat.Eigen
	if !eig.Factorize(mat.NewDense(n, n, jac), mat.EigenLeft) {
		return ""
	}
	vals := eig.Values(nil)
	var left mat.CDense
	eig.LeftVectorsTo(&left)
	// The rows w^H of the marginal modes, with each mode's noise variance
	// sum_j |w_j|² σ_j².
	var modes [][]complex128
	var noiseVar []float64
	top := 0.0
	for k, l := range vals {
		if math.Abs(real(l)) > tol*cmplx.Abs(l) {
			continue
		}
		w := make([]complex128, n)
		nv := 0.0
		for j := 0; j < n; j++ {
			w[j] = cmplx.Conj(left.At(j, k))
			sd := 0.0
			if j < len(m.Noise) {
				sd = m.Noise[j]
			}
			nv += real(w[j]*cmplx.Conj(w[j])) * sd * sd
		}
		modes = append(modes, w)
		noiseVar = append(noiseVar, nv)
		top = math.Max(top, cmplx.Abs(l))
	}
	if len(modes) == 0 || len(modes) == n {
		// No centre, or nothing but one: a system that is all centre has
		// no decaying mode to hide growth behind, and V's own trend
		// (Decide) sees it.
		return ""
	}
	var rates []float64
	x := make([]float64, n)
	for ri := range ds.Runs {
		r := &ds.Runs[ri]
		var ts, ls []float64
		for i := 0; i < r.Len(); i++ {
			a, nv := 0.0, 0.0
			for k, w := range modes {
				c := complex(0, 0)
				for j := 0; j < n; j++ {
					x[j] = r.X[j][i] - m.Equilibrium[j]
					c += w[j] * complex(x[j], 0)
				}
				a += real(c * cmplx.Conj(c))
				nv += noiseVar[k]
			}
			if !(a > centreNoiseFactor*nv) || math.IsInf(a, 0) {
				continue
			}
			ts = append(ts, r.T[i])
			ls = append(ls, math.Log(a))
		}
		if len(ts) < centreMinSamples {
			continue
		}
		if b, ok := slope(ts, ls); ok {
			rates = append(rates, -b) // a decay rate, as trendsUp takes them
		}
	}
	grow, k, mean, se, up := trendsUp(rates)
	if !up {
		return ""
	}
	return fmt.Sprintf("The fitted linearisation has modes on the imaginary axis (a centre, about %.3g rad/s), and their amplitude grows along %d of the %d held-out runs that tell (|c|² at %.3g ± %.2g 1/s): slow growth a dropped damping term may hide, so no stability is claimed. Record longer runs, or runs with less noise, to tell.",
		top, grow, k, -mean, se)
}

// slope returns the least-squares slope of y against t (false when t
// does not vary).
func slope(t, y []float64) (float64, bool) {
	n := float64(len(t))
	mt, my := 0.0, 0.0
	for i := range t {
		mt += t[i] / n
		my += y[i] / n
	}
	stt, sty := 0.0, 0.0
	for i := range t {
		stt += (t[i] - mt) * (t[i] - mt)
		sty += (t[i] - mt) * (y[i] - my)
	}
	if !(stt > 0) {
		return 0, false
	}
	return sty / stt, true
}
