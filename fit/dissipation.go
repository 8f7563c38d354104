package fit

import (
	"errors"
	"math"

	"basin.example/fit/lp"
	"basin.example/ingest"
	"gonum.org/v1/gonum/mat"
)

// InputGain is a dissipation inequality fitted on recorded samples:
//
//	dV/dt <= -Lambda·V + Gamma·|u - u_rest|²
//
// with V(z) = z'Pz, z = (x - equilibrium)/spread per state, P the solution
// of A'P + PA = -I for A the Jacobian of the at-rest model in z, dV/dt
// from the fitted field f(x, u) at each sample, and |u - u_rest| the
// Euclidean norm of the inputs' departure from rest in their own units.
//
// It bounds how far an input can push the state. Write rho = Gamma/Lambda
// and U = sup |u - u_rest|. Then d/dt (V - rho U²) <= -Lambda (V - rho U²),
// so V(t) - rho U² <= e^(-Lambda t) (V(0) - rho U²) (the comparison lemma)
// and V ends within rho U²: the ultimate bound. On {z'Pz <= c} the
// largest |z_j| is sqrt(c (P⁻¹)_jj), so state j ends within
// Bound[j]·U of the equilibrium, Bound[j] = spread_j sqrt(rho (P⁻¹)_jj),
// in state j's unit per input unit; and |z| within NormBound·U,
// NormBound = sqrt(rho / lambda_min(P)). For x' = -a x + b u this gives
// b/a, the steady-state gain.
//
// Like the certificate it is empirical: the inequality is checked on the
// recorded samples only (where the model is fitted), not proved.
type InputGain struct {
	Gamma     float64   `json:"gamma"`  // 1/s per input unit²
	Lambda    float64   `json:"lambda"` // 1/s
	Bound     []float64 `json:"bound_per_unit_input"`
	NormBound float64   `json:"norm_bound_per_unit_input"` // in z
	Samples   int       `json:"samples"`
	RestInput []float64 `json:"rest_input"`
}

// ErrNoGain: no dissipation inequality holds on the samples (dV/dt is
// not negative at some sample where the input rests, or the linearisation
// at rest is not stable).
var ErrNoGain = errors.New("no dissipation inequality holds on the samples")

// gainSamples caps the samples the dissipation LP uses (evenly strided).
const gainSamples = 2000

// FitInputGain fits the dissipation inequality of [InputGain] for a model
// with inputs on the samples of ds (which must carry the same inputs).
// The smallest rho = Gamma/Lambda is found by bisection over LPs (a
// quasi-linear program): for a fixed rho the LP in the one unknown
// Lambda in [0, lambdaMax],
//
//	maximise Lambda  s.t.  Lambda (V_i - rho w_i) <= -dV/dt_i   (each sample i)
//
// with w_i = |u_i - u_rest|², is feasible with Lambda > 0 exactly when
// rho is attainable; rho is bisected to a relative 1e-5 (the bound, its square root, to 5e-6), and Gamma =
// rho·Lambda at the smallest attainable rho.
func FitInputGain(m *Model, ds *ingest.Dataset) (*InputGain, error) {
	q := len(m.Inputs)
	if q == 0 || len(ds.Inputs) != q || len(m.RestInput) != q {
		return nil, ErrMismatch
	}
	sm := m.AtRest()
	n := len(m.States)
	xe, s := sm.Equilibrium, m.Spread
	if len(xe) != n || len(s) != n {
		return nil, ErrMismatch
	}
	fe := NewFieldEvaluator(sm)
	jac := fe.JacobianTo(make([]float64, n*n), nil, xe)
	az := make([]float64, n*n)
	anorm := 0.0
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			az[i*n+j] = jac[i*n+j] * s[j] / s[i]
			anorm = math.Max(anorm, math.Abs(az[i*n+j]))
		}
	}
	P, err := Lyapunov(az, eye(n), n)
	if err != nil {
		return nil, ErrNoGain
	}
	ev := symEigen(P, n)
	if len(ev) != n || !(ev[0] > 0) {
		return nil, ErrNoGain
	}
	total := ds.Samples()
	stride := max(1, total/gainSamples)
	var V, dV, w []float64
	x, u, f, z, fz := make([]float64, n), make([]float64, q), make([]float64, n), make([]float64, n), make([]float64, n)
	k := 0
	for _, r := range ds.Runs {
		if len(r.U) != q {
			return nil, ErrMismatch
		}
		for i := 0; i < r.Len(); i++ {
			if k++; (k-1)%stride != 0 {
				continue
			}
			for j := range x {
				x[j] = r.X[j][i]
				z[j] = (x[j] - xe[j]) / s[j]
			}
			ww := 0.0
			for c := range u {
				u[c] = r.U[c][i]
				d := u[c] - m.RestInput[c]
				ww += d * d
			}
			m.EvalInputTo(f, x, u)
			for j := range fz {
				fz[j] = f[j] / s[j]
			}
			// V = z'Pz, dV/dt = 2 z'P z'.
			v, dv := 0.0, 0.0
			for a := 0; a < n; a++ {
				pz := 0.0
				for b := 0; b < n; b++ {
					pz += P[a*n+b] * z[b]
				}
				v += z[a] * pz
				dv += 2 * fz[a] * pz
			}
			if !finite(v, dv, ww) {
				continue
			}
			V, dV, w = append(V, v), append(dV, dv), append(w, ww)
		}
	}
	if len(V) == 0 {
		return nil, ErrTooFewSamples
	}
	// lambda's cap: dV/dt >= -2|A_z|·|P|·|z|² bounds the decay a V can
	// show, so a larger lambda is never needed.
	lamMax := 2 * float64(n) * anorm * ev[n-1] / ev[0]
	solve := func(rho float64) (float64, bool) {
		G, H := make([]float64, len(V)), make([]float64, len(V))
		for i := range V {
			G[i], H[i] = V[i]-rho*w[i], -dV[i]
		}
		res, err := lp.Solve(&lp.Problem{C: []float64{-1}, G: G, H: H, Lower: []float64{0}, Upper: []float64{lamMax}}, nil)
		if err != nil || res.Status != lp.Optimal || !(res.X[0] > 1e-9*lamMax) {
			return 0, false
		}
		return res.X[0], true
	}
	// A starting rho: the largest V_i/w_i makes every forced row's
	// coefficient non-positive; double until attainable.
	hi := 0.0
	for i := range V {
		if w[i] > 0 {
			hi = math.Max(hi, V[i]/w[i])
		}
	}
	if !(hi > 0) {
		return nil, ErrNoGain
	}
	lam, ok := solve(hi)
	for d := 0; !ok && d < 60; d++ {
		hi *= 2
		lam, ok = solve(hi)
	}
	if !ok {
		return nil, ErrNoGain
	}
	lo := 0.0
	for it := 0; it < 100 && hi-lo > 1e-5*hi; it++ {
		mid := (lo + hi) / 2
		if l, ok := solve(mid); ok {
			hi, lam = mid, l
		} else {
			lo = mid
		}
	}
	var pinv mat.Dense
	if err := pinv.Inverse(mat.NewDense(n, n, append([]float64(nil), P...))); err != nil {
		return nil, ErrNoGain
	}
	g := &InputGain{Gamma: hi * lam, Lambda: lam, Bound: make([]float64, n), NormBound: math.Sqrt(hi / ev[0]),
		Samples: len(V), RestInput: append([]float64(nil), m.RestInput...)}
	for j := range g.Bound {
		g.Bound[j] = s[j] * math.Sqrt(hi*pinv.At(j, j))
	}
	return g, nil
}
