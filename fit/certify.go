package fit

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"strings"

	"basin.example/fit/lyapunov"
	"basin.example/ingest"
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

// search returns the options of the certificate search, defaults filled
// in (see [lyapunov.Options]).
func (o *CertifyOptions) search() lyapunov.Options {
	var s lyapunov.Options
	if o != nil {
		s = lyapunov.Options{Degree: o.Degree, Seed: o.Seed, Growth: o.Growth, LPSamples: o.LPSamples,
			Fill: o.Fill, Kappa: o.Kappa, ShareSamples: o.ShareSamples, Trace: o.Trace}
	}
	return s.Defaults()
}

// Errors of Certify for bad input.
var (
	// ErrMismatch: the data and the model do not describe the same states.
	ErrMismatch = errors.New("data and model disagree")
	// ErrOptions: an option is out of range.
	ErrOptions = errors.New("bad certify option")
)

// Limits of a region, as reported in Region.Limit (the strings of
// [lyapunov.Limit]).
const (
	// LimitTrust: the level set reaches where the model is not trusted
	// (regression leverage above the fit samples' largest, or the edge of
	// the samples' box).
	LimitTrust = string(lyapunov.LimitTrust)
	// LimitEnvelope is the former name of the data's edge (older files).
	LimitEnvelope = "envelope edge"
	LimitOther    = string(lyapunov.LimitOther)
	LimitViolated = string(lyapunov.LimitViolated)
	// LimitDecrease: the model's robust decrease fails at a point that is
	// not a recorded sample.
	LimitDecrease = string(lyapunov.LimitDecrease)
	LimitGrowth   = string(lyapunov.LimitGrowth)
	LimitNone     = string(lyapunov.LimitNone)
)

// Certify fits a Lyapunov function for m's primary equilibrium on the runs
// of ds and finds the largest certified level set. The verdict is
// Inconclusive until package validate has checked it on held-out runs.
//
// V is a polynomial in z = (x - equilibrium)/scale, scale = m.Spread (or
// the data's standard deviation) rebalanced, within a factor 2, towards
// equal measurement noise in every state of z (see balanceNoise), of the
// family of [CertifyOptions.Degree];
// the search is [lyapunov.Certify], which Certify feeds with the model
// and the runs in z and whose result it turns into the certificate, in
// the states' units.
//
// When no V is found (unstable linearisation, equilibrium outside the
// trust region, a degenerate trust region, infeasible or failed LP, too
// few samples for the degree) the result has Found = false, a Reason with
// a plain first sentence and a next step, and a ReasonKind; that is not
// an error. Errors are for bad input only (wrapping [ErrMismatch] or
// [ErrOptions]) and for a cancelled ctx.
func Certify(ctx context.Context, m *Model, ds *ingest.Dataset, opts *CertifyOptions) (*Certificate, error) {
	return certify(ctx, m, ds, opts.search())
}

// certify is Certify with the search's options.
func certify(ctx context.Context, m *Model, ds *ingest.Dataset, o lyapunov.Options) (*Certificate, error) {
	if o.Degree < 2 || o.Degree > 8 || o.Degree%2 != 0 {
		return nil, fmt.Errorf("%w: V degree must be even, 2..8, got %d", ErrOptions, o.Degree)
	}
	m, ds, err := certModel(m, ds)
	if err != nil {
		return nil, err
	}
	in, err := newCertInputs(ctx, m, ds)
	if err != nil {
		return nil, err
	}
	res, err := lyapunov.Certify(ctx, &in.data, &in.sys, &o)
	if err != nil {
		return nil, err
	}
	return in.certificate(res, m, o), nil
}

// certModel checks m and ds for Certify and returns them at the model's
// rest input (a model with inputs is certified there).
func certModel(m *Model, ds *ingest.Dataset) (*Model, *ingest.Dataset, error) {
	if m == nil || ds == nil {
		return nil, nil, fmt.Errorf("%w: nil model or data", ErrMismatch)
	}
	if err := m.validate(); err != nil {
		return nil, nil, fmt.Errorf("%w: model: %v", ErrMismatch, err)
	}
	if len(m.Inputs) > 0 {
		if len(ds.Inputs) != len(m.Inputs) {
			return nil, nil, fmt.Errorf("%w: model has %d inputs, data %d; name the same input columns", ErrMismatch, len(m.Inputs), len(ds.Inputs))
		}
		ds = RestSegments(ds, m.RestInput)
		if ds.Samples() == 0 {
			return nil, nil, fmt.Errorf("%w: no samples with the inputs at rest", ErrTooFewSamples)
		}
		m = m.AtRest()
	}
	n := len(m.States)
	if len(ds.States) != n {
		return nil, nil, fmt.Errorf("%w: model has %d states, data %d", ErrMismatch, n, len(ds.States))
	}
	for j, c := range ds.States {
		if c.Name != m.States[j] {
			return nil, nil, fmt.Errorf("%w: state %d is %q in the model but %q in the data", ErrMismatch, j+1, m.States[j], c.Name)
		}
	}
	if ds.Samples() == 0 {
		return nil, nil, fmt.Errorf("%w: no samples", ErrTooFewSamples)
	}
	return m, ds, nil
}

// certInputs are the search's inputs: the model and the runs in z, and
// the map back to the states' units.
type certInputs struct {
	xe, scale []float64
	data      lyapunov.Data
	sys       lyapunov.System
}

// newCertInputs converts m and the runs of ds to z, z_j = (x_j -
// equilibrium_j)/scale_j: the field, its Jacobian, the noise and the
// field's residual spread, the other equilibria and the samples.
func newCertInputs(ctx context.Context, m *Model, ds *ingest.Dataset) (*certInputs, error) {
	n := len(m.States)
	xe := append([]float64(nil), m.Equilibrium...)
	scale := certScale(m, ds)
	in := &certInputs{xe: xe, scale: scale}
	// One buffer holds every run's z, so the samples are stored once
	// (memory grows with the data, not twice it).
	all := make([]float64, 0, n*ds.Samples())
	for i := range ds.Runs {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		r := &ds.Runs[i]
		if len(r.X) != n {
			return nil, fmt.Errorf("%w: run %s has %d states, want %d", ErrMismatch, r.Name, len(r.X), n)
		}
		off := len(all)
		all = all[:off+n*len(r.T)]
		z := all[off:]
		for k := range r.T {
			for j := 0; j < n; j++ {
				z[k*n+j] = (r.X[j][k] - xe[j]) / scale[j]
			}
		}
		in.data.Runs = append(in.data.Runs, lyapunov.Run{Name: r.Name, T: r.T})
	}
	in.data.Z = all

	jac := NewFieldEvaluator(m).JacobianTo(make([]float64, n*n), nil, xe)
	az := make([]float64, n*n)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			az[i*n+j] = jac[i*n+j] * scale[j] / scale[i]
		}
	}
	sigma := make([]float64, n)
	for j := 0; j < n; j++ {
		if j < len(m.Noise) && m.Noise[j] > 0 && !math.IsInf(m.Noise[j], 0) {
			sigma[j] = m.Noise[j] / scale[j]
		}
	}
	var others [][]float64
	for _, e := range m.Equilibria {
		if len(e.Point) != n {
			continue
		}
		z := make([]float64, n)
		d := 0.0
		for j := range z {
			z[j] = (e.Point[j] - xe[j]) / scale[j]
			d += z[j] * z[j]
		}
		if d < 1e-12 {
			continue // the primary one
		}
		others = append(others, z)
	}
	var terms [][]int
	for _, e := range m.Equations {
		terms = append(terms, e.Exponents...)
	}
	zf := newZField(m, xe, scale)
	in.sys = lyapunov.System{
		N: n, Field: zf.evalTo, Poly: fieldZ(m, xe, scale), Jacobian: az, Terms: terms,
		Noise: sigma, FieldSigma: fieldSigma(m, zf, all), Others: others,
	}
	return in, nil
}

// reasonKinds maps the search's outcomes to the certificate's kinds.
var reasonKinds = map[lyapunov.Outcome]ReasonKind{
	lyapunov.Found:            ReasonRegion,
	lyapunov.EigenFailed:      ReasonEigenvalues,
	lyapunov.Unstable:         ReasonUnstableLinearisation,
	lyapunov.TrustDegenerate:  ReasonTrustDegenerate,
	lyapunov.TooFewSamples:    ReasonTooFewSamples,
	lyapunov.OutsideTrust:     ReasonOutsideData,
	lyapunov.LyapunovSingular: ReasonLyapunovSingular,
	lyapunov.LPInfeasible:     ReasonLPInfeasible,
	lyapunov.LPFailed:         ReasonLPFailed,
	lyapunov.NoLevel:          ReasonNoLevel,
	lyapunov.NoBound:          ReasonNoLevel,
}

// certificate turns the search's result into the certificate, in the
// states' units, with its reason.
func (in *certInputs) certificate(res *lyapunov.Result, m *Model, o lyapunov.Options) *Certificate {
	n := len(m.States)
	xe, scale := in.xe, in.scale
	cert := &Certificate{
		Format: CertificateFormat, Verdict: Inconclusive, Strength: NoClaim,
		Empirical: true, Caveat: Caveat,
		States: append([]string(nil), m.States...), Units: append([]string(nil), m.Units...),
		Equilibrium: xe, Scale: scale, Held: m.Held, Average: m.Average,
		Settings: &Settings{Search: searchSettings(o)},
	}
	cert.Region.Limit = LimitNone
	cert.NoiseRadius = res.NoiseRadius
	cert.Region.LPRounds, cert.Region.LPRows, cert.Region.Solves = res.LPRounds, res.LPRows, res.Solves
	cert.ReasonKind = reasonKinds[res.Outcome]
	cert.LPConflict = lpConflict(res.Conflict, xe, scale, o.Degree)
	if res.Outcome != lyapunov.Found {
		cert.Reason = noFindReason(cert, res, m, o, len(in.data.Z)/max(n, 1))
		return cert
	}

	cert.Found = true
	cert.V = res.V
	cert.Level = res.Level
	cert.Margin = res.Margin
	cert.NonRise = res.NonRise
	cert.Tolerance = res.Tolerance
	cert.Noise = append([]float64(nil), m.Noise...)
	cert.Box = make([][2]float64, n)
	cert.Region.Extent = make([][2]float64, n)
	for j := 0; j < n; j++ {
		cert.Box[j] = [2]float64{xe[j] + scale[j]*res.Lo[j], xe[j] + scale[j]*res.Hi[j]}
		cert.Region.Extent[j] = [2]float64{xe[j] + scale[j]*res.ExtentLo[j], xe[j] + scale[j]*res.ExtentHi[j]}
	}
	cert.Region.EnvelopeShare = res.Share
	vol := 1.0
	for _, s := range scale {
		vol *= s
	}
	cert.Region.EnvelopeVolume = res.TrustVolume * vol
	cert.Region.Volume = res.Share * cert.Region.EnvelopeVolume
	cert.Region.Limit = string(res.Limit)
	if res.Capped {
		cert.Region.Limit = LimitGrowth
	}
	if res.LimitZ != nil {
		cert.Region.LimitPoint = make([]float64, n)
		for j := range res.LimitZ {
			cert.Region.LimitPoint[j] = xe[j] + scale[j]*res.LimitZ[j]
		}
	}
	cert.Region.LimitRun = res.LimitRun
	cert.RadiallyUnbounded = res.RadiallyUnbounded
	cert.InSample = InSample{Pairs: res.Pairs, DecreaseFraction: res.Decrease, FillPoints: o.Fill}
	cert.Reason = regionReason(cert, res, m, o)
	return cert
}

// regionReason is the reason of a certificate with a region.
func regionReason(cert *Certificate, res *lyapunov.Result, m *Model, o lyapunov.Options) string {
	limit := string(res.Limit)
	where := ""
	if cert.Region.LimitPoint != nil {
		where = " at " + formatPoint(cert.Region.LimitPoint, m.States, m.Units)
		if res.LimitRun != "" {
			where += " (run " + res.LimitRun + ")"
		}
	}
	if res.Capped {
		limit = LimitGrowth + " (still gaining; this V's level set stops at " + string(res.Limit) + where + ")"
		where = ""
	}
	claim := "decreases"
	if res.NonRise {
		claim = "does not rise beyond the noise tolerance (the linearisation has an eigenvalue on the imaginary axis, so at most stability is claimed)"
	}
	return fmt.Sprintf("V of degree %d (from the %s, margin %.3g) %s on the fit runs; its level set V <= %.4g covers %.1f%% of the model's trust region, limited by %s%s; not yet checked on held-out runs. %s",
		o.Degree, res.Source, cert.Margin, claim, res.Level, 100*res.Share, limit, where, nextStep(string(res.Limit), cert, m))
}

// noFindReason is the reason of a certificate without a V (and sets the
// contradiction when the data contradict stability).
// samples is the number of recorded samples.
func noFindReason(cert *Certificate, res *lyapunov.Result, m *Model, o lyapunov.Options, samples int) string {
	switch res.Outcome {
	case lyapunov.EigenFailed:
		return "No V was fitted: the Jacobian's eigenvalues could not be computed. Check the model for extreme coefficients."
	case lyapunov.Unstable:
		cert.Contradicted = true
		cert.Contradiction = fmt.Sprintf("the fitted linearisation at the equilibrium is unstable (an eigenvalue has real part %+.3g 1/s)", res.MaxRe)
		return "No V was fitted: " + cert.Contradiction + ". The data contradict stability there; if that is unexpected, check the model's terms and record runs that settle on the equilibrium."
	case lyapunov.TrustDegenerate:
		return fmt.Sprintf("No V was fitted: the model's trust region cannot be computed (%v), so nothing tells where the model holds. Record runs that start at different states and move every state.", res.Err)
	case lyapunov.OutsideTrust:
		return fmt.Sprintf("No V was fitted: the equilibrium lies outside the trust region of the model (where the data make it believable). Record runs that settle at %s.", formatPoint(cert.Equilibrium, m.States, m.Units))
	case lyapunov.LyapunovSingular:
		return "No V was fitted: the Lyapunov equation of the linearisation is singular (two eigenvalues sum to zero). Record runs that settle, so that the damping shows in the fit."
	}
	if res.Outcome == lyapunov.TooFewSamples && res.NeedSamples > 0 {
		return fmt.Sprintf("No V was fitted: V of degree %d has %d coefficients, and %d samples are too few for it (at least %d needed); try a lower CertifyOptions.Degree.",
			o.Degree, res.Coefficients, samples, res.NeedSamples)
	}
	if res.Contradicted {
		cert.Contradicted = true
		cert.Margin = res.Margin
		cert.Contradiction = fmt.Sprintf("no V of degree %d falls along the recorded runs near the equilibrium (the LP's best margin is %.3g < 0, so V must rise)", o.Degree, cert.Margin)
		return "No V was found: " + cert.Contradiction + ". Record runs nearer the equilibrium, or with less noise, to tell a real rise from noise."
	}
	next := " Record more runs that start near the equilibrium, or try another CertifyOptions.Degree."
	switch res.Outcome {
	case lyapunov.TooFewSamples:
		next = " Record more runs near the equilibrium, or try a lower CertifyOptions.Degree."
	case lyapunov.NoBound:
		next = " Record more runs near the equilibrium."
	}
	if res.BallShare >= 0.5 && (res.Outcome == lyapunov.NoLevel || res.Outcome == lyapunov.NoBound) {
		next = " Record with less noise, or runs that move farther from the equilibrium than the noise does."
	}
	return "No V was found: " + res.Detail + "." + next
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
// is usable, else the data's standard deviation (1 for a constant state),
// rebalanced by balanceNoise for the model's noise.
func certScale(m *Model, ds *ingest.Dataset) []float64 {
	n := len(m.States)
	s := make([]float64, n)
	ok := len(m.Spread) == n
	for j := 0; ok && j < n; j++ {
		ok = m.Spread[j] > 0 && !math.IsInf(m.Spread[j], 0) && !math.IsNaN(m.Spread[j])
	}
	if ok {
		copy(s, m.Spread)
		balanceNoise(s, m.Noise)
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
	balanceNoise(s, m.Noise)
	return s
}

// noiseBalanceMax caps how far balanceNoise moves a state's scale from
// its spread (a factor, either way): states measured far more precisely
// than others keep a z spread within noiseBalanceMax² of the rest, so
// the certificate's polynomials stay well conditioned (a degree-8 V's
// terms then span at most 2^8 more than with the spreads).
const noiseBalanceMax = 2

// noiseBalanceMin: noise within this factor across states (in spreads)
// is left as it is: the ball then reaches at most that far beyond the
// quieter states' noise, and a certificate of evenly noisy data keeps
// its spreads as scale.
const noiseBalanceMin = 2

// balanceNoise rescales scale (the states' spreads) so that the
// measurement noise noise (per state, the states' units) is the same in
// every direction of z, as far as noiseBalanceMax allows: scale_j is
// multiplied by r_j = (noise_j/scale_j) / g, g the geometric mean of the
// noise_j/scale_j, so the product of the scales (the size of z) is kept.
// The certificate's noise ball is a ball in z: with the noise balanced it
// is the noise's own ellipsoid in the states' units, not a ball as wide
// in every direction as the noisiest state's (in spreads) in one. It does
// nothing unless every state has a positive, finite noise.
func balanceNoise(scale, noise []float64) {
	n := len(scale)
	if len(noise) != n || n < 2 {
		return
	}
	logs := make([]float64, n)
	mean, lo, hi := 0.0, math.Inf(1), math.Inf(-1)
	for j := range scale {
		r := noise[j] / scale[j]
		if !(r > 0) || math.IsInf(r, 0) {
			return
		}
		logs[j] = math.Log(r)
		mean += logs[j] / float64(n)
		lo, hi = math.Min(lo, logs[j]), math.Max(hi, logs[j])
	}
	if hi-lo <= math.Log(noiseBalanceMin) {
		return
	}
	for j := range scale {
		f := math.Exp(logs[j] - mean)
		scale[j] *= math.Min(math.Max(f, 1/float64(noiseBalanceMax)), noiseBalanceMax)
	}
}

// fieldSigma returns the residual standard deviation of the fitted field
// per state in z units per second: the equation's cross-validated error
// (normalised by the spread of the state's derivative) times the spread
// of the fitted derivative over the samples; nil when the model carries
// no held-out errors (an exact model).
func fieldSigma(m *Model, zf *zField, all []float64) []float64 {
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
		zf.evalTo(f, all[i*n:(i+1)*n])
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

// zField evaluates the model's field in scaled coordinates:
// dz/dt = f(xe + s∘z) / s. Not safe for concurrent use.
type zField struct {
	fe    *FieldEvaluator
	xe, s []float64
	x     []float64
}

func newZField(m *Model, xe, s []float64) *zField {
	return &zField{fe: NewFieldEvaluator(m), xe: xe, s: s, x: make([]float64, len(xe))}
}

func (zf *zField) evalTo(dst, z []float64) []float64 {
	for j := range z {
		zf.x[j] = zf.xe[j] + zf.s[j]*z[j]
	}
	zf.fe.EvalTo(dst, zf.x)
	for j := range dst {
		dst[j] /= zf.s[j]
	}
	return dst
}

// fieldZ returns the model's field in z as polynomials: f_j(xe + s∘z)/s_j.
func fieldZ(m *Model, xe, scale []float64) []*lyapunov.Poly {
	n := len(xe)
	out := make([]*lyapunov.Poly, n)
	for j, e := range m.Equations {
		p := lyapunov.Affine(lyapunov.NewPoly(n, e.Exponents, e.Coefficients), xe, scale)
		out[j] = lyapunov.Sum([]float64{1 / scale[j]}, p)
	}
	return out
}
