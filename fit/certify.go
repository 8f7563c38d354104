package fit

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"sort"
	"strings"

	"basin.example/fit/lp"
	"basin.example/fit/lyapunov"
	"basin.example/ingest"
	"gonum.org/v1/gonum/mat"
)

// CertifyOptions controls Certify. A nil *CertifyOptions means all defaults.
type CertifyOptions struct {
	// Degree is the even total degree D of V (monomials of degree 2..D);
	// 0 means 2.
	Degree int
	// Seed seeds the fill points and Monte-Carlo shares; 0 means 1.
	Seed uint64
	// Growth caps the rounds that re-solve the LP on a larger level set;
	// 0 means 14.
	Growth int
	// LPSamples caps the recorded samples (and their pairs) put into each
	// LP, taken evenly along the runs; 0 means 3000. The level search
	// always checks every sample.
	LPSamples int
	// Fill is the number of fill points drawn in the trust region for each
	// LP (and, for V of degree above 2, of positivity and exclusion points);
	// 0 means 1500.
	Fill int
	// Kappa multiplies the noise standard deviation of a V difference to
	// give the tolerance on recorded pairs; 0 means 5.
	Kappa float64
	// ShareSamples is the number of Monte-Carlo points for the trust region
	// share; 0 means 20000.
	ShareSamples int
	// Trace, when set, receives one line of text per growth round and one
	// for the bound check, to follow the search; nil means none.
	Trace io.Writer `json:"-"`
}

func (o *CertifyOptions) get() CertifyOptions {
	var c CertifyOptions
	if o != nil {
		c = *o
	}
	if c.Degree == 0 {
		c.Degree = 2
	}
	if c.Seed == 0 {
		c.Seed = 1
	}
	if c.Growth <= 0 {
		c.Growth = 14
	}
	if c.LPSamples <= 0 {
		c.LPSamples = 3000
	}
	if c.Fill <= 0 {
		c.Fill = 1500
	}
	if c.Kappa <= 0 {
		c.Kappa = 5
	}
	if c.ShareSamples <= 0 {
		c.ShareSamples = 20000
	}
	return c
}

// Errors of Certify for bad input.
var (
	// ErrMismatch: the data and the model do not describe the same states.
	ErrMismatch = errors.New("data and model disagree")
	// ErrOptions: an option is out of range.
	ErrOptions = errors.New("bad certify option")
)

// Tunables of the search (not user-facing).
const (
	// noiseRadiusSigmas: the noise ball has radius noiseRadiusSigmas·|σ_z|
	// (3σ of the measurement noise, common practice), at least
	// minNoiseRadius in z (1% of the data's spread).
	noiseRadiusSigmas = 3
	minNoiseRadius    = 0.01
	// growStart: a growth round solves the LP with targets V_best <=
	// gamma·c_best (gamma starts at growStart and halves its excess over 1
	// after a round that gains nothing) and decrease rows on V_best <=
	// growOuter·gamma·c_best; growStale failed rounds in a row end it.
	growStart = 1.6
	growOuter = 1.0
	growStale = 5
	// minGain: a round must add this share of the best volume to count.
	minGain = 0.01
	// unstableTol: a Jacobian eigenvalue with real part above
	// -unstableTol·(1+|A|) is not asymptotically stable.
	unstableTol = 1e-9
	// nonRiseShift: the non-rise path starts from the Lyapunov equation of
	// A - delta·I, delta = nonRiseShift·(1+|A|): for a centre this tends to
	// the conserved quadratic form as delta -> 0 (its V-dot is O(delta)).
	nonRiseShift = 1e-3
	// nonRiseStartShare: the non-rise path's first target holds this
	// share of the samples outside the noise ball.
	nonRiseStartShare = 0.1
)

// Certify fits a Lyapunov function for m's primary equilibrium on the runs
// of ds and finds the largest certified level set. The verdict is
// Inconclusive until package validate has checked it on held-out runs.
//
// V is a polynomial in z = (x - equilibrium)/scale, scale = m.Spread (or
// the data's standard deviation), of the family of [CertifyOptions.Degree].
// The start is the quadratic from the Lyapunov equation of the scaled
// Jacobian with Q = I; each growth round solves the LP of [certRows] on
// the samples and fill points of a larger level set and keeps the V whose
// level set (by the sampled search of checker.level) covers the largest
// share of the trust region. The chosen V's level is then bounded over
// the level set's box with lyapunov.Verify, and only the bounded level is
// certified.
//
// When no V is found (unstable linearisation, equilibrium outside the
// trust region, a degenerate trust region, infeasible or failed LP, too
// few samples for the degree) the result has Found = false, a Reason with
// a plain first sentence and a next step, and a ReasonKind; that is not
// an error. Errors are for bad input only (wrapping [ErrMismatch] or
// [ErrOptions]) and for a cancelled ctx.
func Certify(ctx context.Context, m *Model, ds *ingest.Dataset, opts *CertifyOptions) (*Certificate, error) {
	o := opts.get()
	if o.Degree < 2 || o.Degree > 8 || o.Degree%2 != 0 {
		return nil, fmt.Errorf("%w: V degree must be even, 2..8, got %d", ErrOptions, o.Degree)
	}
	if m == nil || ds == nil {
		return nil, fmt.Errorf("%w: nil model or data", ErrMismatch)
	}
	if err := m.validate(); err != nil {
		return nil, fmt.Errorf("%w: model: %v", ErrMismatch, err)
	}
	if len(m.Inputs) > 0 { // a model with inputs is certified at its rest input
		if len(ds.Inputs) != len(m.Inputs) {
			return nil, fmt.Errorf("%w: model has %d inputs, data %d; name the same input columns", ErrMismatch, len(m.Inputs), len(ds.Inputs))
		}
		ds = RestSegments(ds, m.RestInput)
		if ds.Samples() == 0 {
			return nil, fmt.Errorf("%w: no samples with the inputs at rest", ErrTooFewSamples)
		}
		m = m.AtRest()
	}
	n := len(m.States)
	if len(ds.States) != n {
		return nil, fmt.Errorf("%w: model has %d states, data %d", ErrMismatch, n, len(ds.States))
	}
	for j, c := range ds.States {
		if c.Name != m.States[j] {
			return nil, fmt.Errorf("%w: state %d is %q in the model but %q in the data", ErrMismatch, j+1, m.States[j], c.Name)
		}
	}
	if ds.Samples() == 0 {
		return nil, fmt.Errorf("%w: no samples", ErrTooFewSamples)
	}
	xe := append([]float64(nil), m.Equilibrium...)
	scale := certScale(m, ds)
	cert := &Certificate{
		Format: CertificateFormat, Verdict: Inconclusive, Strength: NoClaim,
		Empirical: true, Caveat: Caveat,
		States: append([]string(nil), m.States...), Units: append([]string(nil), m.Units...),
		Equilibrium: xe, Scale: scale,
		Settings: map[string]any{"v_degree": o.Degree, "seed": o.Seed, "growth": o.Growth,
			"lp_samples": o.LPSamples, "fill": o.Fill, "kappa": o.Kappa},
	}
	cert.Region.Limit = LimitNone
	noFind := func(kind ReasonKind, reason string) (*Certificate, error) {
		cert.Found = false
		cert.ReasonKind = kind
		cert.Reason = reason
		return cert, nil
	}

	// The linearisation, in z.
	fe := NewFieldEvaluator(m)
	jac := fe.JacobianTo(make([]float64, n*n), nil, xe)
	az := make([]float64, n*n)
	anorm := 0.0
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			az[i*n+j] = jac[i*n+j] * scale[j] / scale[i]
			anorm = math.Max(anorm, math.Abs(az[i*n+j]))
		}
	}
	var eig mat.Eigen
	if !eig.Factorize(mat.NewDense(n, n, append([]float64(nil), az...)), mat.EigenNone) {
		return noFind(ReasonEigenvalues, "No V was fitted: the Jacobian's eigenvalues could not be computed. Check the model for extreme coefficients.")
	}
	maxRe := math.Inf(-1)
	for _, v := range eig.Values(nil) {
		maxRe = math.Max(maxRe, real(v))
	}
	if maxRe > unstableTol*(1+anorm) {
		cert.Contradicted = true
		cert.Contradiction = fmt.Sprintf("the fitted linearisation at the equilibrium is unstable (an eigenvalue has real part %+.3g 1/s)", maxRe)
		return noFind(ReasonUnstableLinearisation, "No V was fitted: "+cert.Contradiction+". The data contradict stability there; if that is unexpected, check the model's terms and record runs that settle on the equilibrium.")
	}
	// Non-hyperbolic but not unstable (an eigenvalue on the imaginary
	// axis, as for a lossless oscillator): V can at best be shown not to
	// rise, so the search runs on the non-rise conditions (see
	// checker.nonRise) and claims at most stability.
	nonRise := maxRe > -unstableTol*(1+anorm)

	// The runs in z, the trust region and the checker.
	ck, _, err := newChecker(ctx, m, ds, xe, scale, o)
	if errors.Is(err, lyapunov.ErrDegenerate) {
		return noFind(ReasonTrustDegenerate, fmt.Sprintf("No V was fitted: the model's trust region cannot be computed (%v), so nothing tells where the model holds. Record runs that start at different states and move every state.", err))
	}
	if err != nil {
		return nil, err
	}
	ck.az = az
	if nonRise {
		ck.setNonRise()
	}
	cert.NoiseRadius = ck.r0
	fam := ck.fam
	if nMin := 3 * fam.Len(); ds.Samples() < nMin {
		return noFind(ReasonTooFewSamples, fmt.Sprintf("No V was fitted: V of degree %d has %d coefficients, and %d samples are too few for it (at least %d needed); try a lower --v-degree.",
			o.Degree, fam.Len(), ds.Samples(), nMin))
	}
	if !ck.inside(make([]float64, n)) {
		return noFind(ReasonOutsideData, fmt.Sprintf("No V was fitted: the equilibrium lies outside the trust region of the model (where the data make it believable). Record runs that settle at %s.", formatPoint(xe, m.States, m.Units)))
	}

	// Start: the Lyapunov equation, Q = I (of A - delta·I on the
	// non-rise path, where A's own equation is singular).
	a0 := az
	if nonRise {
		a0 = append([]float64(nil), az...)
		for i := 0; i < n; i++ {
			a0[i*n+i] -= nonRiseShift * (1 + anorm)
		}
	}
	p, err := Lyapunov(a0, eye(n), n)
	if err != nil {
		return noFind(ReasonLyapunovSingular, "No V was fitted: the Lyapunov equation of the linearisation is singular (two eigenvalues sum to zero). Record runs that settle, so that the damping shows in the fit.")
	}
	c0 := fam.quadratic(p)
	tr := fam.trace(c0)
	for k := range c0 {
		c0[k] /= tr
	}
	type cand struct {
		c      []float64
		g      float64
		res    levelResult
		source string
	}
	best := cand{c: c0, res: ck.level(c0), source: "Lyapunov equation"}
	best.g = best.res.margin
	rng := rand.New(rand.NewPCG(o.Seed, 0))
	solves, rounds, rowsUsed := 0, 0, 0
	var lastErr string
	var lastKind ReasonKind
	capped := false
	stale := 0
	firstContra := false
	gamma := growStart
	for round := 0; round < o.Growth; round++ {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		base := best.res.level
		if !best.res.ok {
			// Start from a small ellipse a few noise radii wide.
			base = math.Max(best.res.vball*9, best.res.level)
		}
		if nonRise && round == 0 {
			// Runs of a lossless system circle the equilibrium and rarely
			// pass near it: start from at least the level set of the
			// start V that holds the innermost tenth of the samples.
			base = math.Max(base, ck.quantile(best.c, nonRiseStartShare, 6*fam.Len()))
		}
		target := gamma * base
		lambda := math.Max(best.g, 0) / target
		if nonRise {
			lambda = 0 // no decrease to relax outside the target set
		}
		rows := ck.lpRows(best.c, target, growOuter*target, lambda, o, rng)
		improved := false
		if len(rows.targets) < 3*fam.Len() {
			lastErr = "too few samples in the level set for the LP"
			lastKind = ReasonTooFewSamples
		} else {
			out := solveCertLP(fam, rows)
			solves++
			rounds += out.rounds
			rowsUsed = max(rowsUsed, out.rows)
			switch {
			case out.err != nil:
				lastErr = out.err.Error()
				lastKind = ReasonLPFailed
				if errors.Is(out.err, lp.ErrInfeasible) {
					lastKind = ReasonLPInfeasible
				}
			case !(out.g > 0) && !(nonRise && out.g > -lpMarginBound):
				if solves == 1 && out.g < 0 && !best.res.ok {
					firstContra = true
					cert.Margin = out.g
				}
				lastErr = fmt.Sprintf("best margin %.3g <= 0", out.g)
			default:
				res := ck.level(out.c)
				tracef(o.Trace, "round %d gamma %.3g target %.4g np %d g %.4g -> ok %v level %.4g share %.4f limit %s at %v (best %.4f)", round, gamma, target, rows.np, out.g, res.ok, res.level, res.share, res.limit, res.limitZ, best.res.share)
				if res.ok && (!best.res.ok || res.share > best.res.share*(1+minGain)+1e-12) {
					best = cand{c: out.c, g: out.g, res: res, source: "LP"}
					improved = true
				}
			}
			if !improved {
				tracef(o.Trace, "round %d gamma %.3g: no gain: %v", round, gamma, lastErr)
			}
		}
		if improved {
			stale = 0
			capped = round == o.Growth-1
			continue
		}
		capped = false
		stale++
		gamma = 1 + (gamma-1)/2
		if stale >= growStale {
			break
		}
	}
	cert.Region.LPRounds = rounds
	cert.Region.LPRows = rowsUsed
	cert.Region.Solves = solves
	if !best.res.ok {
		if firstContra {
			cert.Contradicted = true
			cert.Contradiction = fmt.Sprintf("no V of degree %d falls along the recorded runs near the equilibrium (the LP's best margin is %.3g < 0, so V must rise)", o.Degree, cert.Margin)
			return noFind(ReasonLPInfeasible, "No V was found: "+cert.Contradiction+". Record runs nearer the equilibrium, or with less noise, to tell a real rise from noise.")
		}
		reason := best.res.reason
		kind := ReasonNoLevel
		if lastErr != "" {
			reason += "; the LP found none either (" + lastErr + ")"
			if lastKind != "" {
				kind = lastKind
			}
		}
		next := " Record more runs that start near the equilibrium, or try another --v-degree."
		if kind == ReasonTooFewSamples {
			next = " Record more runs near the equilibrium, or try a lower --v-degree."
		}
		return noFind(kind, "No V was found: "+reason+"."+next)
	}

	// The bound over the piece of the level set.
	r := best.res
	if !skipBound {
		r = ck.verify(best.c, best.res)
	}
	if !r.ok {
		return noFind(ReasonNoLevel, "No V was found: "+r.reason+". Record more runs near the equilibrium.")
	}

	// The certificate.
	cert.Found = true
	cert.V = fam.poly(best.c)
	cert.Level = r.level
	cert.Margin = best.g
	if nonRise {
		// No positive margin is claimed on the non-rise path.
		cert.NonRise = true
		cert.Margin = math.Min(best.g, 0)
	}
	cert.Tolerance = r.tolerance
	cert.Noise = append([]float64(nil), m.Noise...)
	cert.Box = make([][2]float64, n)
	cert.Region.Extent = make([][2]float64, n)
	for j := 0; j < n; j++ {
		cert.Box[j] = [2]float64{xe[j] + scale[j]*r.lo[j], xe[j] + scale[j]*r.hi[j]}
	}
	ext := ck.extent(best.c, r)
	for j := 0; j < n; j++ {
		cert.Region.Extent[j] = [2]float64{xe[j] + scale[j]*ext[0][j], xe[j] + scale[j]*ext[1][j]}
	}
	cert.Region.EnvelopeShare = r.share
	vol := 1.0
	for _, s := range scale {
		vol *= s
	}
	boxVol := 1.0
	for j := 0; j < n; j++ {
		boxVol *= ck.trust.Hi[j] - ck.trust.Lo[j]
	}
	cert.Region.EnvelopeVolume = ck.poolShare * boxVol * vol
	cert.Region.Volume = r.share * cert.Region.EnvelopeVolume
	cert.Region.Limit = r.limit
	if capped {
		cert.Region.Limit = LimitGrowth
	}
	if r.limitZ != nil {
		cert.Region.LimitPoint = make([]float64, n)
		for j := range r.limitZ {
			cert.Region.LimitPoint[j] = xe[j] + scale[j]*r.limitZ[j]
		}
	}
	cert.Region.LimitRun = r.limitRun
	cert.RadiallyUnbounded = fam.radiallyUnbounded(best.c, rand.New(rand.NewPCG(o.Seed, 1)))
	cert.InSample = InSample{Pairs: r.pairs, DecreaseFraction: r.decrease, FillPoints: o.Fill}
	limit := r.limit
	where := ""
	if cert.Region.LimitPoint != nil {
		where = " at " + formatPoint(cert.Region.LimitPoint, m.States, m.Units)
		if r.limitRun != "" {
			where += " (run " + r.limitRun + ")"
		}
	}
	if capped {
		limit = LimitGrowth + " (still gaining; this V's level set stops at " + r.limit + where + ")"
		where = ""
	}
	claim := "decreases"
	if nonRise {
		claim = "does not rise beyond the noise tolerance (the linearisation has an eigenvalue on the imaginary axis, so at most stability is claimed)"
	}
	cert.ReasonKind = ReasonRegion
	cert.Reason = fmt.Sprintf("V of degree %d (from the %s, margin %.3g) %s on the fit runs; its level set V <= %.4g covers %.1f%% of the model's trust region, limited by %s%s; not yet checked on held-out runs. %s",
		o.Degree, best.source, cert.Margin, claim, r.level, 100*r.share, limit, where, nextStep(r.limit, cert, m))
	return cert, nil
}

// nextStep says, in the states' units, what to record to grow a region
// stopped by limit.
func nextStep(limit string, cert *Certificate, m *Model) string {
	wide := make([]string, len(cert.Box))
	for j, b := range cert.Box {
		e := cert.Equilibrium[j]
		w := 1.5 * math.Max(math.Abs(b[0]-e), math.Abs(b[1]-e))
		u := ""
		if j < len(m.Units) && m.Units[j] != "" {
			u = " " + m.Units[j]
		}
		wide[j] = fmt.Sprintf("%s %.4g ±%.3g%s", m.States[j], e, w, u)
	}
	within := strings.Join(wide, ", ")
	switch limit {
	case LimitTrust:
		return "The model is uncertain beyond here (too few samples there); to grow the region, record runs that start within " + within + "."
	case LimitOther:
		return "The region stops at another equilibrium: it cannot grow past it."
	case LimitViolated:
		return "A recorded run does not fall there: record more runs through that point to tell noise from a real rise."
	case LimitDecrease:
		return "The model does not fall there (or is too uncertain to tell); record runs that pass through that point."
	case LimitGrowth:
		return "The search was still growing: raise the growth rounds to go further."
	}
	return "Record runs that start within " + within + " to check and grow the region."
}

// tracef writes one line of the search's trace to w (nothing when w is nil).
func tracef(w io.Writer, format string, a ...any) {
	if w != nil {
		fmt.Fprintf(w, format+"\n", a...)
	}
}

// formatPoint prints a point with state names and units.
func formatPoint(x []float64, names, units []string) string {
	parts := make([]string, len(x))
	for j, v := range x {
		u := ""
		if j < len(units) && units[j] != "" {
			u = " " + units[j]
		}
		parts[j] = fmt.Sprintf("%s=%.4g%s", names[j], v, u)
	}
	return strings.Join(parts, ", ")
}

// certScale returns the per-state scale of z: the model's Spread when it
// is usable, else the data's standard deviation (1 for a constant state).
func certScale(m *Model, ds *ingest.Dataset) []float64 {
	n := len(m.States)
	s := make([]float64, n)
	ok := len(m.Spread) == n
	for j := 0; ok && j < n; j++ {
		ok = m.Spread[j] > 0 && !math.IsInf(m.Spread[j], 0) && !math.IsNaN(m.Spread[j])
	}
	if ok {
		copy(s, m.Spread)
		return s
	}
	for j := 0; j < n; j++ {
		cols := make([][]float64, len(ds.Runs))
		for i := range ds.Runs {
			cols[i] = ds.Runs[i].X[j]
		}
		sd := popSD(cols...)
		if !(sd > 0) {
			sd = 1
		}
		s[j] = sd
	}
	return s
}

// newChecker converts the runs to z and builds the trust region and the
// checker. Its error wraps lyapunov.ErrDegenerate for a collinear library.
func newChecker(ctx context.Context, m *Model, ds *ingest.Dataset, xe, scale []float64, o CertifyOptions) (*checker, []float64, error) {
	n := len(xe)
	// One buffer holds every run's z; each run's slice aliases it, so the
	// samples are stored once (memory grows with the data, not twice it).
	all := make([]float64, 0, n*ds.Samples())
	runs := make([]zRun, 0, len(ds.Runs))
	for i := range ds.Runs {
		if err := ctx.Err(); err != nil {
			return nil, nil, err
		}
		r := &ds.Runs[i]
		if len(r.X) != n {
			return nil, nil, fmt.Errorf("%w: run %s has %d states, want %d", ErrMismatch, r.Name, len(r.X), n)
		}
		off := len(all)
		all = all[:off+n*len(r.T)]
		zr := zRun{name: r.Name, t: r.T, z: all[off:len(all):len(all)]}
		for k := range r.T {
			for j := 0; j < n; j++ {
				zr.z[k*n+j] = (r.X[j][k] - xe[j]) / scale[j]
			}
		}
		runs = append(runs, zr)
	}
	sigma := make([]float64, n)
	s2 := 0.0
	for j := 0; j < n; j++ {
		if j < len(m.Noise) && m.Noise[j] > 0 && !math.IsInf(m.Noise[j], 0) {
			sigma[j] = m.Noise[j] / scale[j]
		}
		s2 += sigma[j] * sigma[j]
	}
	var others [][]float64
	for i, e := range m.Equilibria {
		if len(e.Point) != n {
			continue
		}
		z := make([]float64, n)
		d := 0.0
		for j := range z {
			z[j] = (e.Point[j] - xe[j]) / scale[j]
			d += z[j] * z[j]
		}
		if i == 0 && d < 1e-12 {
			continue // the primary one
		}
		if d < 1e-12 {
			continue
		}
		others = append(others, z)
	}
	ck := &checker{
		fam: newVFamily(n, o.Degree), zf: newZField(m, xe, scale), runs: runs,
		others: others, sigma: sigma,
		r0:    math.Max(noiseRadiusSigmas*math.Sqrt(s2), minNoiseRadius),
		kappa: o.Kappa, trace: o.Trace,
	}
	// The trust region: leverage over the model's terms.
	var terms [][]int
	for _, e := range m.Equations {
		terms = append(terms, e.Exponents...)
	}
	tr, err := lyapunov.NewTrust(n, terms, all)
	if err != nil {
		return nil, nil, err
	}
	ck.trust = tr
	off := 0
	for i := range ck.runs {
		k := len(ck.runs[i].t)
		ck.runs[i].h = tr.HSamples[off : off+k]
		off += k
	}
	ck.inside = tr.Inside
	if trustBalls {
		ck.inside = ballsTrust(all, runs, n)
	}
	ck.sigmaF = fieldSigma(m, ck, all)
	ck.fz = fieldZ(m, xe, scale)
	ck.makeRays(rand.New(rand.NewPCG(o.Seed, 4)))
	ck.makePool(o.ShareSamples, rand.New(rand.NewPCG(o.Seed, 2)))
	return ck, all, nil
}

// fieldSigma returns the residual standard deviation of the fitted field
// per state in z units per second: the equation's cross-validated error
// (normalised by the spread of the state's derivative) times the spread
// of the fitted derivative over the samples; nil when the model carries
// no held-out errors (an exact model).
func fieldSigma(m *Model, ck *checker, all []float64) []float64 {
	n := len(m.States)
	any := false
	for _, e := range m.Equations {
		any = any || e.HeldoutError > 0
	}
	if !any {
		return nil
	}
	ns := len(all) / n
	stride := max(1, ns/5000)
	f := make([]float64, n)
	vals := make([][]float64, n)
	for i := 0; i < ns; i += stride {
		ck.zf.evalTo(f, all[i*n:(i+1)*n])
		for j, v := range f {
			vals[j] = append(vals[j], v)
		}
	}
	out := make([]float64, n)
	for j := range out {
		if e := m.Equations[j].HeldoutError; e > 0 && !math.IsInf(e, 0) {
			out[j] = e * popSD(vals[j])
		}
	}
	return out
}

// popSD returns the population standard deviation (divided by the count)
// of the values of every slice of xs taken together, 0 for none. It is
// the corrected two-pass form (the mean first, then the squared
// deviations less their sum's square over n, which removes the first
// order of the mean's rounding; Chan, Golub & LeVeque [ChanGolubLeVeque1983]),
// with no cancellation when the mean is large against the spread (a
// state logged with an offset), unlike sq/n - mean².
func popSD(xs ...[]float64) float64 {
	var sum, cnt float64
	for _, x := range xs {
		for _, v := range x {
			sum += v
		}
		cnt += float64(len(x))
	}
	if cnt == 0 {
		return 0
	}
	mean := sum / cnt
	var ss, sd float64
	for _, x := range xs {
		for _, v := range x {
			d := v - mean
			ss += d * d
			sd += d
		}
	}
	return math.Sqrt(math.Max(0, (ss-sd*sd/cnt)/cnt))
}

// Rays and Monte-Carlo points (not user-facing): raysPerState·n random
// directions plus the 2n axes; rayExitSteps steps to find a ray's exit
// from the trust region, then rayBisect halvings.
const (
	raysPerState = 100
	rayExitSteps = 64
	rayBisect    = 12
)

// makeRays draws the rays from the equilibrium and cuts each at the first
// point where the model is not trusted.
func (ck *checker) makeRays(rng *rand.Rand) {
	n := ck.fam.n
	tr := ck.trust
	rmax := 0.0
	for j := 0; j < n; j++ {
		rmax += math.Max(tr.Lo[j]*tr.Lo[j], tr.Hi[j]*tr.Hi[j])
	}
	rmax = math.Sqrt(rmax)
	u := make([]float64, n)
	z := make([]float64, n)
	at := func(t float64) []float64 {
		for j := range z {
			z[j] = t * u[j]
		}
		return z
	}
	count := raysPerState*n + 2*n
	for d := 0; d < count; d++ {
		if d < 2*n {
			for j := range u {
				u[j] = 0
			}
			u[d/2] = 1 - 2*float64(d%2)
		} else {
			r := 0.0
			for j := range u {
				u[j] = rng.NormFloat64()
				r += u[j] * u[j]
			}
			r = math.Sqrt(r)
			for j := range u {
				u[j] /= r
			}
		}
		// First untrusted step, then bisect between it and the last
		// trusted one.
		step := rmax / rayExitSteps
		t0, t1 := 0.0, math.Inf(1)
		for k := 1; k <= rayExitSteps+1; k++ {
			if !ck.inside(at(float64(k) * step)) {
				t1 = float64(k) * step
				break
			}
			t0 = float64(k) * step
		}
		ry := ray{z: make([]float64, rayPoints*n), f: make([]float64, rayPoints*n), h: make([]float64, rayPoints)}
		end := t0
		if !math.IsInf(t1, 1) {
			for b := 0; b < rayBisect; b++ {
				mid := (t0 + t1) / 2
				if ck.inside(at(mid)) {
					t0 = mid
				} else {
					t1 = mid
				}
			}
			end, ry.exit = t1, true
		}
		for k := 0; k < rayPoints; k++ {
			p := ry.z[k*n : (k+1)*n]
			copy(p, at(end*float64(k+1)/rayPoints))
			ck.zf.evalTo(ry.f[k*n:(k+1)*n], p)
			ry.h[k] = tr.Leverage(p)
		}
		ck.rays = append(ck.rays, ry)
	}
}

// maxOutside caps the untrusted points kept for the LP's exclusion rows.
const maxOutside = 2000

// makePool draws draws points uniformly from the samples' box and keeps
// the trusted ones (and up to maxOutside untrusted ones).
func (ck *checker) makePool(draws int, rng *rand.Rand) {
	n := ck.fam.n
	tr := ck.trust
	z := make([]float64, n)
	kept := 0
	for s := 0; s < draws; s++ {
		for j := range z {
			z[j] = tr.Lo[j] + rng.Float64()*(tr.Hi[j]-tr.Lo[j])
		}
		if ck.inside(z) {
			ck.pool = append(ck.pool, z...)
			kept++
		} else if len(ck.outside) < n*maxOutside {
			ck.outside = append(ck.outside, z...)
		}
	}
	ck.poolShare = float64(kept) / float64(max(draws, 1))
}

// lpRows builds the LP of one growth round on the recorded samples
// (every stride-th) and fill points with V_prev(z) <= outer, outside the
// noise ball; those with V_prev(z) <= target are targets. V_prev is
// rescaled by 1/target so that its pair tolerances match the new V's
// scale (V <= 1 on the targets).
func (ck *checker) lpRows(prev []float64, target, outer, lambda float64, o CertifyOptions, rng *rand.Rand) *certRows {
	n := ck.fam.n
	ve := newVEval(ck.fam, prev)
	hq := ck.quadMax(prev)
	rows := newCertRows(ck.fam, lambda)
	total := 0
	for i := range ck.runs {
		total += len(ck.runs[i].t)
	}
	stride := max(1, total/o.LPSamples)
	f := make([]float64, n)
	g := make([]float64, n)
	r02 := ck.r0 * ck.r0
	idx := 0
	for ri := range ck.runs {
		r := &ck.runs[ri]
		m := len(r.t)
		for k := 0; k < m; k++ {
			idx++
			if idx%stride != 0 {
				continue
			}
			z := r.z[k*n : (k+1)*n]
			if norm2(z) <= r02 {
				continue
			}
			v := ve.valueGrad(g, z)
			if !(v <= outer) {
				continue
			}
			in := v <= target
			rows.addPoint(z, ck.zf.evalTo(f, z), in)
			if in && k+1 < m {
				rows.addPair(z, r.z[(k+1)*n:(k+2)*n], r.t[k+1]-r.t[k], ck.pairTolAt(g, hq, v)/target)
			}
		}
	}
	np := len(ck.pool) / n
	for tries, added := 0, 0; np > 0 && tries < 20*o.Fill && added < o.Fill; tries++ {
		k := rng.IntN(np)
		z := ck.pool[k*n : (k+1)*n]
		if norm2(z) <= r02 {
			continue
		}
		v := ve.value(z)
		if !(v <= outer) {
			continue
		}
		rows.addPoint(z, ck.zf.evalTo(f, z), v <= target)
		added++
	}
	if ck.fam.deg > 2 {
		// Positivity across the samples' box (a quadratic V's is decided
		// by its matrix).
		tr := ck.trust
		z := make([]float64, n)
		for k := 0; k < o.Fill; k++ {
			for j := range z {
				z[j] = tr.Lo[j] + rng.Float64()*(tr.Hi[j]-tr.Lo[j])
			}
			if norm2(z) > r02 {
				rows.addPositive(z)
			}
		}
		for k := 0; k+n <= len(ck.outside); k += n {
			rows.addExcluded(ck.outside[k : k+n])
		}
	}
	return rows
}

// extent returns the bounds, in z, of the checked points (samples and
// cell centres) inside the region.
func (ck *checker) extent(c []float64, r levelResult) [2][]float64 {
	n := ck.fam.n
	ve := newVEval(ck.fam, c)
	lo, hi := make([]float64, n), make([]float64, n)
	for j := range lo {
		lo[j], hi[j] = math.Inf(1), math.Inf(-1)
	}
	add := func(z []float64) {
		for j, v := range z {
			if v < r.lo[j] || v > r.hi[j] {
				return
			}
		}
		if ve.value(z) > r.level {
			return
		}
		for j, v := range z {
			lo[j], hi[j] = math.Min(lo[j], v), math.Max(hi[j], v)
		}
	}
	for ri := range ck.runs {
		zs := ck.runs[ri].z
		for k := 0; k+n <= len(zs); k += n {
			add(zs[k : k+n])
		}
	}
	for k := 0; k+n <= len(ck.pool); k += n {
		add(ck.pool[k : k+n])
	}
	for j := range lo {
		if lo[j] > hi[j] {
			lo[j], hi[j] = 0, 0
		}
	}
	return [2][]float64{lo, hi}
}

// quantile returns the value of V (coefficients c) below which the given
// share of the recorded samples outside the noise ball lie, at least the atLeast-th smallest such value (0 when there
// are none).
func (ck *checker) quantile(c []float64, share float64, atLeast int) float64 {
	n := ck.fam.n
	ve := newVEval(ck.fam, c)
	r02 := ck.r0 * ck.r0
	var vs []float64
	for ri := range ck.runs {
		zs := ck.runs[ri].z
		for k := 0; k+n <= len(zs); k += n {
			z := zs[k : k+n]
			if norm2(z) > r02 {
				vs = append(vs, ve.value(z))
			}
		}
	}
	if len(vs) == 0 {
		return 0
	}
	sort.Float64s(vs)
	i := max(int(share*float64(len(vs))), atLeast)
	return vs[min(i, len(vs)-1)]
}
