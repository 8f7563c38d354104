package fit

import (
	"fmt"
	"math"

	"basin.example/ingest"
	"basin.example/internal/order"
)

// Input is a measured column of the fit that is not a state (a drive, a
// setpoint): it enters the library but has no equation of its own.
type Input struct {
	Name string `json:"name"`
	Unit string `json:"unit"`
}

// A HeldInput is an input that held one value throughout the data the
// model was fitted on ([ingest.Options.HoldConstantInputs]): its effect
// is folded into the equations, which hold at that value only.
type HeldInput struct {
	Name  string  `json:"name"`
	Unit  string  `json:"unit"`
	Value float64 `json:"value"`
}

// Vars is the names of the library's variables: the states, then the
// inputs. Each equation's exponent vectors have one entry per name.
func (m *Model) Vars() []string {
	if len(m.Inputs) == 0 {
		return m.States
	}
	out := append([]string(nil), m.States...)
	for _, in := range m.Inputs {
		out = append(out, in.Name)
	}
	return out
}

// AtRest returns the state-only model obtained by substituting u =
// m.RestInput into every equation: each term c·x^e·u^g becomes
// (c·Π u_rest^g)·x^e, and terms with equal state exponents are merged.
// Certification, equilibria and the Jacobian work on this model, so the
// certificate is that of the system held at its rest input. A model
// without inputs is returned as it is.
func (m *Model) AtRest() *Model {
	if len(m.Inputs) == 0 {
		return m
	}
	n := len(m.States)
	r := *m
	r.Inputs, r.RestInput = nil, nil
	r.Equations = make([]Equation, len(m.Equations))
	for i, e := range m.Equations {
		eq := e
		eq.Exponents, eq.Coefficients, eq.Terms = [][]int{}, []float64{}, nil
		at := map[string]int{}
		for k, x := range e.Exponents {
			c := e.Coefficients[k]
			for j, p := range x[n:] {
				u := 0.0
				if j < len(m.RestInput) {
					u = m.RestInput[j]
				}
				c *= ipowf(u, p)
			}
			if c == 0 {
				continue
			}
			key := fmt.Sprint(x[:n])
			if l, ok := at[key]; ok {
				eq.Coefficients[l] += c
				continue
			}
			at[key] = len(eq.Exponents)
			eq.Exponents = append(eq.Exponents, append([]int(nil), x[:n]...))
			eq.Coefficients = append(eq.Coefficients, c)
		}
		r.Equations[i] = eq
	}
	return &r
}

// restInput is the default rest input: per input, the median of its
// samples in the settled tails of the runs (the last settleShare of each
// run whose states there move no more than the noise and a tenth of
// their spread explain: the rig idle), or, when no run settles, the
// median over every sample (for a drive symmetric about its idle value,
// that value).
func restInput(m *Model, runs []*ingest.Run, q int) []float64 {
	n := len(m.States)
	settled := make([][]float64, q)
	all := make([][]float64, q)
	for _, r := range runs {
		L := r.Len()
		k := min(L, max(3, int(math.Ceil(settleShare*float64(L)))))
		still := true
		for j := 0; j < n; j++ {
			lo, hi := math.Inf(1), math.Inf(-1)
			for _, v := range r.X[j][L-k:] {
				lo, hi = math.Min(lo, v), math.Max(hi, v)
			}
			if hi-lo > 0.1*m.Spread[j]+8*m.Noise[j] {
				still = false
			}
		}
		stride := max(1, L/2000)
		for j := 0; j < q; j++ {
			if still {
				settled[j] = append(settled[j], r.U[j][L-k:]...)
			}
			for i := 0; i < L; i += stride {
				all[j] = append(all[j], r.U[j][i])
			}
		}
	}
	out := make([]float64, q)
	var w []float64
	for j := range out {
		src := settled[j]
		if len(src) == 0 {
			src = all[j]
		}
		// the upper median of the samples that are not NaN (0 when none
		// is): always an observed value
		if w = order.Sorted(w, src); len(w) > 0 {
			out[j] = order.HighMedian(w)
		}
	}
	return out
}

// varScale is the centring and scaling of the library's variables: the
// states' (Model.Centre, Model.Spread) followed by the inputs'.
type varScale struct {
	centre, spread []float64
}

// inputScale is the robust centre and spread of input k over the runs,
// as scaleStates computes them for a state (a spread of a quarter of the
// range when the robust one is zero), and its range [lo, hi].
// A constant input (lo == hi) is refused by the caller.
func inputScale(runs []*ingest.Run, k int) (centre, spread, lo, hi float64) {
	sub, lo, hi := subsample(runs, func(r *ingest.Run) []float64 { return r.U[k] })
	centre, spread = robustScale(sub)
	if !(spread > 0) {
		spread = (hi - lo) / 4
	}
	return centre, spread, lo, hi
}

// EvalInputTo stores f(x, u) in dst and returns dst: the field at state x
// and input u (len(u) == len(m.Inputs)), for simulating the model under a
// recorded or chosen input. It allocates; it is safe for concurrent use.
func (m *Model) EvalInputTo(dst, x, u []float64) []float64 {
	v := append(append(make([]float64, 0, len(x)+len(u)), x...), u...)
	for i, e := range m.Equations {
		s := 0.0
		for k, ex := range e.Exponents {
			c := e.Coefficients[k]
			for j, p := range ex {
				c *= ipowf(v[j], p)
			}
			s += c
		}
		dst[i] = s
	}
	return dst
}

// Coefficient returns the coefficient of the monomial with exponents e
// (one per state, then one per input) in equation i, 0 when absent.
func (m *Model) Coefficient(i int, e []int) float64 {
	s := 0.0
	for k, x := range m.Equations[i].Exponents {
		if fmt.Sprint(x) == fmt.Sprint(e) {
			s += m.Equations[i].Coefficients[k]
		}
	}
	return s
}

// RestSegments returns the parts of ds's runs where every input is at
// rest: within 5 noise standard deviations (estimated per input as for a
// state, see noiseStd) of rest (a Gaussian sample strays beyond that
// once in 1.7 million). Each maximal stretch of such samples at least
// minWindow long and a twentieth (settleShare) of its run becomes a run
// of its own (shorter ones are a drive passing through its rest value,
// not the rig idle), named "run@t" by its
// first time; the samples share storage with ds. Only there does the
// system obey the at-rest model ([Model.AtRest]), so certification and
// the held-out checks use these samples; the forced ones obey f(x, u).
// A data set without inputs is returned as it is.
func RestSegments(ds *ingest.Dataset, rest []float64) *ingest.Dataset {
	q := len(ds.Inputs)
	if q == 0 {
		return ds
	}
	tol := make([]float64, q)
	for k := range tol {
		cols := make([][]float64, 0, len(ds.Runs))
		for _, r := range ds.Runs {
			if len(r.U) == q {
				cols = append(cols, r.U[k])
			}
		}
		tol[k] = 5*noiseStd(cols, sampleCap) + 1e-12*(1+math.Abs(rest[k]))
	}
	out := *ds
	out.Runs = nil
	for _, r := range ds.Runs {
		if len(r.U) != q {
			continue
		}
		L := r.Len()
		for i := 0; i < L; {
			at := func(i int) bool {
				for k := range tol {
					if !(math.Abs(r.U[k][i]-rest[k]) <= tol[k]) {
						return false
					}
				}
				return true
			}
			if !at(i) {
				i++
				continue
			}
			j := i
			for j < L && at(j) {
				j++
			}
			if j-i >= max(minWindow, int(math.Ceil(settleShare*float64(L)))) {
				s := r
				s.T = r.T[i:j]
				s.X = make([][]float64, len(r.X))
				for c := range r.X {
					s.X[c] = r.X[c][i:j]
				}
				s.U = make([][]float64, q)
				for c := range r.U {
					s.U[c] = r.U[c][i:j]
				}
				if i > 0 || j < L {
					s.Name = fmt.Sprintf("%s@%g", r.Name, r.T[i])
				}
				out.Runs = append(out.Runs, s)
			}
			i = j
		}
	}
	return &out
}
