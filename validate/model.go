package validate

import (
	"math"
	"sort"

	"basin.example/fit"
	"basin.example/ingest"
)

// Limits of the model checks (not user-facing): derivative error is taken
// at up to derivPoints samples a run with a Savitzky–Golay window of
// 2·derivHalf+1 samples (degree 2, common practice); simulations report
// at up to simPoints times a run.
const (
	derivPoints = 1000
	derivHalf   = 5
	simPoints   = 2000
)

// modelChecks fills val's model figures on the held-out runs of ds:
// normalised derivative error and simulation error per state, the median
// departure time and the count of simulations that blew up.
func modelChecks(m *fit.Model, ds *ingest.Dataset, val *fit.Validation, o Options) {
	n := len(m.States)
	if len(ds.Runs) == 0 || len(ds.States) != n {
		return
	}
	fe := fit.NewFieldEvaluator(m)
	// Spread per state over the held-out samples.
	lo, hi := make([]float64, n), make([]float64, n)
	for j := range lo {
		lo[j], hi[j] = math.Inf(1), math.Inf(-1)
	}
	for _, r := range ds.Runs {
		for j, x := range r.X {
			for _, v := range x {
				lo[j], hi[j] = math.Min(lo[j], v), math.Max(hi[j], v)
			}
		}
	}
	spread := make([]float64, n)
	for j := range spread {
		spread[j] = hi[j] - lo[j]
		if !(spread[j] > 0) {
			spread[j] = 1
		}
	}

	// Derivative error: sqrt(sum (f - d)^2 / sum (d - mean d)^2) per state.
	x := make([]float64, n)
	f := make([]float64, n)
	w := make([]float64, 2*derivHalf+1)
	nodes := make([]float64, 2*derivHalf+1)
	var sse, sd, sd2 = make([]float64, n), make([]float64, n), make([]float64, n)
	cnt := 0
	for _, r := range ds.Runs {
		mr := r.Len()
		if mr < 2*derivHalf+1 {
			continue
		}
		stride := max(1, (mr-2*derivHalf)/derivPoints)
		for i := derivHalf; i < mr-derivHalf; i += stride {
			copy(nodes, r.T[i-derivHalf:i+derivHalf+1])
			if fit.SavitzkyGolayTo(w, nodes, r.T[i], 2, 1) == nil {
				continue
			}
			for j := range x {
				x[j] = r.X[j][i]
			}
			fe.EvalTo(f, x)
			for j := range x {
				d := 0.0
				for k, wk := range w {
					d += wk * r.X[j][i-derivHalf+k]
				}
				sse[j] += (f[j] - d) * (f[j] - d)
				sd[j] += d
				sd2[j] += d * d
			}
			cnt++
		}
	}
	if cnt > 0 {
		val.DerivativeError = make([]float64, n)
		for j := range sse {
			v := sd2[j] - sd[j]*sd[j]/float64(cnt)
			val.DerivativeError[j] = clampFinite(math.Sqrt(sse[j] / math.Max(v, 1e-300)))
		}
	}

	// Simulation from each run's first sample.
	ode := func(dst []float64, _ float64, y []float64) { fe.EvalTo(dst, y) }
	maxNorm := 0.0
	for j := range lo {
		maxNorm = math.Max(maxNorm, 1e3*(math.Abs(lo[j])+math.Abs(hi[j])+spread[j]))
	}
	trj := make([]float64, n)
	var departs []float64
	runsSim := 0
	for _, r := range ds.Runs {
		mr := r.Len()
		if mr < 2 {
			continue
		}
		stride := max(1, mr/simPoints)
		var idx []int
		for i := 0; i < mr; i += stride {
			idx = append(idx, i)
		}
		ts := make([]float64, len(idx))
		for k, i := range idx {
			ts[k] = r.T[i]
		}
		dst := make([][]float64, n)
		for j := range dst {
			dst[j] = make([]float64, len(ts))
		}
		x0 := make([]float64, n)
		for j := range x0 {
			x0[j] = r.X[j][0]
		}
		st := Integrate(ode, x0, ts, dst, &DopriOptions{RelTol: 1e-6, AbsTol: 1e-9 * maxNorm / 1e3, MaxNorm: maxNorm, MaxSteps: 200000})
		if st.Diverged {
			val.Diverged++
		}
		runsSim++
		depart := ts[len(ts)-1] - ts[0]
		departed := false
		e2 := make([]float64, n)
		for k, i := range idx {
			worst := 0.0
			for j := 0; j < n; j++ {
				d := (dst[j][k] - r.X[j][i]) / spread[j]
				if math.IsNaN(d) || math.IsInf(d, 0) {
					d = 1e6 // a blown-up simulation counts as far off
				}
				e2[j] += d * d
				worst = math.Max(worst, math.Abs(d))
			}
			if !departed && worst > o.DepartTol {
				depart, departed = ts[k]-ts[0], true
			}
		}
		for j := range trj {
			trj[j] += math.Sqrt(e2[j] / float64(len(idx)))
		}
		departs = append(departs, depart)
	}
	if runsSim > 0 {
		for j := range trj {
			trj[j] = clampFinite(trj[j] / float64(runsSim))
		}
		val.TrajectoryError = trj
		sort.Float64s(departs)
		val.DepartureTime = departs[len(departs)/2]
	}
}
