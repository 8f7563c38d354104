package validate

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"strings"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"

	"basin.example/fit"
	"basin.example/ingest"
)

// Rest points that scatter.
//
// A model of the logged states alone has one rest point at each
// equilibrium: every run that settles there settles at the same point,
// up to the noise. When a state that is not logged (a slowly drifting
// temperature, a slow mode) or an input sets where the logged states come
// to rest, runs settle at points that differ from run to run; the fit
// averages over them, V falls along every run, and the held-out checks
// pass. But nothing then says where the runs end up: the unlogged state
// may die out or may grow and carry them away, on a time scale longer
// than the runs, and the logged data cannot tell which.
//
// restScatter tests the runs for a common rest point. Over each run's
// final quarter (times a..b) it takes the unexplained drive
//
//	r = (∫ w x' dt - ∫ w f(x) dt) / ∫ w dt,
//
// with w a trapezoid (rising over the quarter's first quarter, falling
// over its last) and ∫ w x' dt = -∫ w' x dt by parts, the difference of
// the means over the trapezoid's two ramps: the weak form of the model's
// equations, which needs no derivative of noisy data. Along a run that
// obeys the model, r is noise alone, and the transient that has not
// quite died by the final quarter cancels (it is in both terms); at a
// rest point displaced by a constant unmodelled drive r, the run rests at
// x* - J⁻¹ r. Linearised in the samples' noise ε_k (white, per state the
// run's own noise, [fit.RunNoise]), r - E r = Σ_k c_k ε_k / W with
// c_k = h_k(-w'(t_k) I - w(t_k) J), h_k the quadrature weights, which
// gives r's covariance C exactly. The runs' drives are then tested for a
// common mean: Q = Σ_i (r_i - r̄)ᵀ C_i⁻¹ (r_i - r̄), r̄ the
// precision-weighted mean, is chi-square on (N - 1)·n degrees of
// freedom when they share one (the test of homogeneity of several
// estimates with known variances: Cochran, The combination of estimates
// from different experiments, Biometrics 10, 1954, [Cochran1954]; any
// statistics text, from memory). The common mean, not zero, is the reference, so a model
// whose constant term is slightly off does not fail it.
//
// Only runs at rest over their final quarter are tested (quiet): where a
// run still moves, the model's own error along the motion would count.
// When they scatter, the runs' offsets from the common rest point are
// followed from the quarter before the final one to the final one (on
// the runs at rest over both, at least restMinRuns of them): the
// change of each run's drive, projected on its own offset and pooled
// over the runs, says whether the rest points draw together along the
// runs (what dies out shows it) or not. Only the first keeps a
// certificate, and then at the stable strength: the runs are not shown
// to settle at the equilibrium.

// restQuarter is the share of a run, at its end, over which its rest
// drive is taken.
const restQuarter = 0.25

// restMinSamples is the fewest samples of a run's final quarter (and of
// the quarter before it) for the run to be tested.
const restMinSamples = 40

// restMinRuns is the fewest runs settling at the equilibrium for the test.
const restMinRuns = 3

// restAlpha is the test's level: the rest points are said to scatter
// when the chi-square tail probability of Q is below it. On stable data
// with a common rest point the test fires at about this rate when the
// noise is white and the model is right (TestRestScatterFalseAlarm
// measures it on noisy stable systems).
const restAlpha = 1e-3

// restShrinkZ is how far below zero (in standard errors) the pooled
// change of the runs' offsets must lie for them to be said to draw
// together: a one-sided normal tail of 3.2e-5 under a normal model.
// Below zero is the only way this check lets a scattered data set keep
// its certificate, so the bar is high. Measured on the rig of
// TestRestScatterRig (20 runs, 1% noise, 30 data sets each): with 12 s
// runs the drift was made in 8 data sets of 30 each (too few runs at
// rest over both quarters in the others), z from -0.55 to +0.96 for a
// growing z (1/50 s), -1.1 to +0.7 for a constant one, -1.5 to +0.55 for
// a decaying one; with 60 s runs a decaying z gave -8.3 to -2.9 (23 of
// 30 below -4) and a growing one +3.1 to +25 (the 8 data sets where
// enough runs were at rest).
const restShrinkZ = 4

// restMaterial is the share of a state's noise (its sample-to-sample
// standard deviation) that some run's rest offset must reach for
// scattered rest points to hold the verdict back. Tested on thousands of
// samples, the final quarters' means are known to a small fraction of
// the noise, so the test finds offsets far below it: per-run sensor
// offsets of a tenth of the noise (0.1% of the range at 1% noise), which
// every rig with a re-zeroed or drifting sensor shows, gave p < 1e-10 on
// a stable 4-state gimbal. Offsets under half the noise lie deep inside
// the certificate's noise ball (three noise radii), where the claim is
// not contradicted over the runs' time; they cap the strength at stable.
// The unlogged growing state of TestRestScatterRig offsets its runs by
// about one noise, and is held back.
const restMaterial = 0.5

// restNoiseFloor is the smallest noise, as a share of a state's span
// over the runs, that the test assumes: noise-free or coarsely quantised
// logs would otherwise give standard errors of zero, and round-off or the
// fit's own error would count as a scatter.
const restNoiseFloor = 1e-4

// restDrive is one run's unexplained drive over a stretch.
type restDrive struct {
	r []float64 // the drive, per state, in state units per second
	p *mat.Dense
	c *mat.SymDense
}

// restQuietZ: a stretch is at rest when every state's variance about
// its mean is within this many standard errors of the noise's variance
// (a sample variance of k white samples has a relative standard error of
// √(2/(k-1)); 3, common practice). Where a run still moves, the model's
// own error along the motion (its coefficients' error times the
// transient) enters the drive: on a damped oscillator 8 s long at noise
// 1e-4 it made 33 times the noise's variance, with every run sharing one
// rest point.
const restQuietZ = 3

// quiet reports whether run's samples lo..hi-1 are at rest: no state
// varies about its mean by more than its noise sd allows (restQuietZ).
func quiet(run *ingest.Run, lo, hi int, sd []float64) bool {
	k := float64(hi - lo)
	for j, x := range run.X {
		mean := 0.0
		for _, v := range x[lo:hi] {
			mean += v / k
		}
		ss := 0.0
		for _, v := range x[lo:hi] {
			ss += (v - mean) * (v - mean)
		}
		if !(ss/(k-1) <= sd[j]*sd[j]*(1+restQuietZ*math.Sqrt(2/(k-1)))) {
			return false
		}
	}
	return true
}

// restScatter tests the runs of ds that settle near eq (ingest.Settles,
// within ingest.RestLink of each state's span) for a common rest point
// under m, leaving out the pieces in cut (split by a gap, a jump or an
// input, they need not rest). It returns nil when the test cannot be
// made: m has inputs (runs at rest under different inputs rest at
// different points), m's Jacobian at eq is singular or not finite, or
// fewer than restMinRuns runs tell.
func restScatter(m *fit.Model, ds *ingest.Dataset, eq []float64, cut map[RunKey]*Cut) *fit.RestScatter {
	n := len(m.States)
	if n == 0 || len(m.Inputs) > 0 || len(eq) != n || ds == nil || len(ds.States) != n {
		return nil
	}
	fe := fit.NewFieldEvaluator(m)
	jac := mat.NewDense(n, n, fe.JacobianTo(make([]float64, n*n), nil, eq))
	var jinv mat.Dense
	if err := jinv.Inverse(jac); err != nil {
		return nil
	}
	for _, v := range jinv.RawMatrix().Data {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil
		}
	}
	span := make([]float64, n)
	for j := range n {
		lo, hi := math.Inf(1), math.Inf(-1)
		for i := range ds.Runs {
			for _, v := range ds.Runs[i].X[j] {
				lo, hi = math.Min(lo, v), math.Max(hi, v)
			}
		}
		span[j] = hi - lo
		if !(span[j] > 0) || math.IsInf(span[j], 0) {
			return nil
		}
	}
	var names []string
	var sds [][]float64 // each run's noise sd per state, as tested
	var late, early []restDrive
	var noise fit.NoiseEstimator
	sd := make([]float64, n)
	for i := range ds.Runs {
		run := &ds.Runs[i]
		if cut[RunKey{run.Source.File, run.Name}] != nil || run.Len() < 2*restMinSamples {
			continue
		}
		ok, pt := ingest.Settles(run)
		if !ok {
			continue
		}
		near := true
		for j := range n {
			near = near && math.Abs(pt[j]-eq[j]) <= ingest.RestLink*span[j]
		}
		if !near {
			continue
		}
		noise.RunTo(sd, run)
		for j := range sd {
			sd[j] = math.Max(sd[j], restNoiseFloor*span[j])
		}
		mr := run.Len()
		k := max(restMinSamples, int(math.Ceil(restQuarter*float64(mr))))
		if 2*k > mr {
			continue
		}
		if !quiet(run, mr-k, mr, sd) {
			continue // still moving: its end is no rest point
		}
		a, okA := driveOver(fe, run, mr-k, mr, sd)
		b, okB := driveOver(fe, run, mr-2*k, mr-k, sd)
		if !okA {
			continue
		}
		if !okB || !quiet(run, mr-2*k, mr-k, sd) {
			b = restDrive{} // no part in the drift
		}
		names = append(names, run.Name)
		sds = append(sds, slices.Clone(sd))
		late = append(late, a)
		early = append(early, b)
	}
	if len(late) < restMinRuns {
		return nil
	}
	// The precision-weighted common drive and Cochran's Q about it.
	var psum mat.Dense
	psum.CloneFrom(late[0].p)
	pr := mat.NewVecDense(n, nil)
	for i, d := range late {
		if i > 0 {
			psum.Add(&psum, d.p)
		}
		var t mat.VecDense
		t.MulVec(d.p, mat.NewVecDense(n, d.r))
		pr.AddVec(pr, &t)
	}
	var rbar mat.VecDense
	if err := rbar.SolveVec(&psum, pr); err != nil {
		return nil
	}
	q := make([]float64, len(late))
	dev := make([]*mat.VecDense, len(late))
	total := 0.0
	for i, d := range late {
		v := mat.NewVecDense(n, append([]float64(nil), d.r...))
		v.SubVec(v, &rbar)
		dev[i] = v
		q[i] = mat.Inner(v, d.p, v)
		total += q[i]
	}
	dof := (len(late) - 1) * n
	p := distuv.ChiSquared{K: float64(dof)}.Survival(total)
	rs := &fit.RestScatter{Runs: len(late), ChiSquare: total, Dof: dof, PValue: p, Alpha: restAlpha,
		Scattered: p < restAlpha, Ratio: total / float64(dof)}
	if math.IsNaN(total) || math.IsInf(total, 0) {
		return nil
	}
	if !rs.Scattered {
		return rs
	}
	// The change of each run's drive from the earlier quarter to the
	// final one, along the run's own deviation: s_i = d_iᵀ P_i (r_i -
	// r_i'), whose variance (the two stretches share no sample) is
	// d_iᵀ P_i (C_i + C_i') P_i d_i. d_i carries r_i's own noise, so
	// s_i has the mean E[(ε_i - ε̄)ᵀ P_i ε_i] = n - tr(S⁻¹ P_i) under no
	// change (S the sum of the P_i), taken off.
	var sinv mat.Dense
	if err := sinv.Inverse(&psum); err != nil {
		return nil
	}
	var s, vs float64
	drifts := 0
	for i := range late {
		if early[i].r == nil {
			continue
		}
		drifts++
		var sp mat.Dense
		sp.Mul(&sinv, late[i].p)
		s -= float64(n) - mat.Trace(&sp)
		diff := mat.NewVecDense(n, append([]float64(nil), late[i].r...))
		diff.SubVec(diff, mat.NewVecDense(n, early[i].r))
		var u mat.VecDense
		u.MulVec(late[i].p, dev[i]) // P_i d_i (P symmetric)
		s += mat.Dot(&u, diff)
		var cs mat.SymDense
		cs.AddSym(late[i].c, early[i].c)
		vs += mat.Inner(&u, &cs, &u)
	}
	if vs > 0 && drifts >= restMinRuns {
		rs.DriftZ, rs.DriftRuns = s/math.Sqrt(vs), drifts
	}
	// each run's rest offset in the states' units, and its largest
	// component over the run's noise
	offs := make([][]float64, len(late))
	share := make([]float64, len(late))
	for i := range late {
		var off mat.VecDense
		off.MulVec(&jinv, dev[i])
		off.ScaleVec(-1, &off)
		offs[i] = append([]float64(nil), off.RawVector().Data...)
		for j, v := range offs[i] {
			share[i] = math.Max(share[i], math.Abs(v)/sds[i][j])
		}
		rs.Largest = math.Max(rs.Largest, share[i])
	}
	rs.Material = rs.Largest >= restMaterial
	order := make([]int, len(late))
	for i := range order {
		order[i] = i
	}
	slices.SortStableFunc(order, func(a, b int) int { return cmp.Compare(q[b], q[a]) })
	for _, i := range order[:min(3, len(order))] {
		rs.Widest = append(rs.Widest, fit.RestOffset{Run: names[i], Offset: offs[i], Sigmas: math.Sqrt(q[i]), NoiseShare: share[i]})
	}
	return rs
}

// driveOver returns the unexplained drive of run under fe over samples
// lo..hi-1 (see the comment at the top of this file), with its
// covariance under white noise of standard deviation sd per state; false
// when the stretch spans no time or the covariance is not positive
// definite. The stretch is at rest (quiet), so the field's Jacobian is
// taken once, at its mean: the covariance is then
// Σ_k h_k² (w'_k² D + w'_k w_k (D Jᵀ + J D) + w_k² J D Jᵀ) / W², D the
// noise variances (c_k's -w' and -w J: the cross term's sign is w'·w).
func driveOver(fe *fit.FieldEvaluator, run *ingest.Run, lo, hi int, sd []float64) (restDrive, bool) {
	n := len(run.X)
	t := run.T[lo:hi]
	k := len(t)
	ta, tb := t[0], t[k-1]
	ramp := (tb - ta) / 4
	if !(ramp > 0) {
		return restDrive{}, false
	}
	x := make([]float64, n)
	f := make([]float64, n)
	r := make([]float64, n)
	var w0, saa, saw, sww float64
	for i := range k {
		// trapezoid-rule weight of sample i
		h := 0.0
		if i > 0 {
			h += (t[i] - t[i-1]) / 2
		}
		if i < k-1 {
			h += (t[i+1] - t[i]) / 2
		}
		w := math.Min(1, math.Min((t[i]-ta)/ramp, (tb-t[i])/ramp))
		dw := 0.0 // -w'(t)
		switch {
		case t[i]-ta < ramp && tb-t[i] >= ramp:
			dw = -1 / ramp
		case tb-t[i] < ramp && t[i]-ta >= ramp:
			dw = 1 / ramp
		}
		for j := range n {
			x[j] = run.X[j][lo+i]
		}
		fe.EvalTo(f, x)
		for j := range n {
			r[j] += h * (dw*x[j] - w*f[j])
		}
		w0 += h * w
		saa += h * h * dw * dw
		saw += h * h * dw * w
		sww += h * h * w * w
	}
	if !(w0 > 0) {
		return restDrive{}, false
	}
	for j := range r {
		r[j] /= w0
		if math.IsNaN(r[j]) || math.IsInf(r[j], 0) {
			return restDrive{}, false
		}
	}
	for j := range n {
		x[j] = 0
		for _, v := range run.X[j][lo:hi] {
			x[j] += v / float64(k)
		}
	}
	jac := fe.JacobianTo(make([]float64, n*n), nil, x)
	// c_k = h_k(-w'_k I - w_k J) (dw holds -w'), so c_k D c_kᵀ =
	// h_k² (dw² D - dw·w (D Jᵀ + J D) + w² J D Jᵀ), with
	// (D Jᵀ + J D)_ab = D_a J_ba + J_ab D_b and (J D Jᵀ)_ab = Σ_l J_al D_l J_bl
	cov := mat.NewSymDense(n, nil)
	for a := range n {
		for b := a; b < n; b++ {
			v := -saw * (sd[a]*sd[a]*jac[b*n+a] + jac[a*n+b]*sd[b]*sd[b])
			if a == b {
				v += saa * sd[a] * sd[a]
			}
			jdj := 0.0
			for l := range n {
				jdj += jac[a*n+l] * sd[l] * sd[l] * jac[b*n+l]
			}
			v += sww * jdj
			cov.SetSym(a, b, v/(w0*w0))
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(cov) {
		return restDrive{}, false
	}
	var p mat.SymDense
	if err := ch.InverseTo(&p); err != nil {
		return restDrive{}, false
	}
	return restDrive{r: r, p: mat.DenseCopyOf(&p), c: cov}, true
}

// restScatterWords is the reason for a certificate held back by rs, on
// states with units.
func restScatterWords(rs *fit.RestScatter, states, units []string) string {
	runs := widestWords(rs, states, units)
	return fmt.Sprintf("The %d runs that settle at the equilibrium, at rest over their final quarter, do not come to rest at one point: the drive the model leaves unexplained over their final quarter scatters %.3g times the variance their noise allows (chi-square %.4g on %d degrees of freedom, p = %.2g), and %s. Farthest from the common rest point: %s. Something the model does not see sets where the runs come to rest: an unlogged state or input, whose fate (dying out or growing) the logged data cannot tell, or a sensor offset that changes from run to run (it shifts where a run seems to rest as much); so no stability is claimed. Log the missing state or input, zero the sensors the same way before every run, or record runs long enough to show where the rest points go.",
		rs.Runs, rs.Ratio, rs.ChiSquare, rs.Dof, rs.PValue, driftWords(rs), runs)
}

// driftWords says how the runs' offsets from the common rest point
// change along them (RestScatter.DriftZ).
func driftWords(rs *fit.RestScatter) string {
	z := rs.DriftZ
	if rs.DriftRuns < restMinRuns {
		return fmt.Sprintf("too few of them are at rest over the quarter before as well (%d, %d needed) to see whether their offsets shrink along them", rs.DriftRuns, restMinRuns)
	}
	if z > restShrinkZ {
		return fmt.Sprintf("the runs' offsets grow along them (drift z = %+.2g)", z)
	}
	return fmt.Sprintf("the runs' offsets are not seen to shrink along them (drift z = %+.2g, %d or below needed)", z, -restShrinkZ)
}

// ScatterWarning returns a one-line warning when the runs that settle at
// cert's equilibrium come to rest at scattered points
// (fit.Validation.RestScatter says so), naming the farthest runs with
// their offsets in the states' units and in standard errors, whatever
// the verdict; "" otherwise.
func ScatterWarning(cert *fit.Certificate) string {
	if cert == nil || cert.Validation == nil || cert.Validation.RestScatter == nil || !cert.Validation.RestScatter.Scattered {
		return ""
	}
	rs := cert.Validation.RestScatter
	runs := widestWords(rs, cert.States, cert.Units)
	return fmt.Sprintf("the %d runs that settle at the equilibrium come to rest at points that differ by more than their noise allows (%.3g times its variance, p = %.2g; farthest: %s): an unlogged state or input, or a sensor offset that changes between runs, sets where they rest; log it, zero the sensors alike before every run, or record longer runs",
		rs.Runs, rs.Ratio, rs.PValue, runs)
}

// widestWords lists rs's farthest runs: "run-08 (x +0.0475 m, v -0.002
// m/s; 13.8 standard errors), ...".
func widestWords(rs *fit.RestScatter, states, units []string) string {
	var runs []string
	for _, w := range rs.Widest {
		parts := make([]string, len(w.Offset))
		for j, v := range w.Offset {
			name, u := fmt.Sprint(j+1), ""
			if j < len(states) {
				name = states[j]
			}
			if j < len(units) && units[j] != "" {
				u = " " + units[j]
			}
			parts[j] = fmt.Sprintf("%s %+.3g%s", name, v, u)
		}
		runs = append(runs, fmt.Sprintf("%s (%s; %.3g standard errors)", w.Run, strings.Join(parts, ", "), w.Sigmas))
	}
	return strings.Join(runs, ", ")
}
