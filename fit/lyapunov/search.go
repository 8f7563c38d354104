package lyapunov

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"sort"

	"basin.example/fit/lp"
	"basin.example/fit/poly"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// Field evaluates a model's field in the scaled coordinates z: it stores
// dz/dt at z in dst and returns dst. Certify calls it from one goroutine
// at a time, so it may keep scratch space.
type Field func(dst, z []float64) []float64

// System is a fitted model at one of its equilibria, in the scaled
// coordinates z of the certificate (the equilibrium at z = 0).
type System struct {
	// N is the number of states.
	N int
	// Field is the model's field in z.
	Field Field
	// Poly is the same field as polynomials in z, one per state, for the
	// bound of the final level.
	Poly []*Poly
	// Jacobian is the field's Jacobian at z = 0, N×N row-major.
	Jacobian []float64
	// Terms are the model's library terms (exponent vectors of the raw
	// states), which decide the trust region (see [NewTrust]).
	Terms [][]int
	// Noise is the measurement noise standard deviation per state, in z;
	// 0 for none.
	Noise []float64
	// FieldSigma is the residual standard deviation of the fitted field
	// per state, in z per second; nil for an exact model (no robust
	// decrease term).
	FieldSigma []float64
	// Others are the model's other equilibria, in z.
	Others [][]float64
}

// Run is one recorded run: len(T) consecutive samples of [Data].Z.
type Run struct {
	Name string
	T    []float64 // sample times, s
}

// Data holds the recorded runs in z.
type Data struct {
	// Z holds every sample, N values a sample, the runs one after another.
	Z    []float64
	Runs []Run
}

// Options controls Certify. A nil *Options means all defaults.
type Options struct {
	// Degree is the even total degree D of V (monomials of degree 2..D),
	// 2..8; 0 means 2.
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
	// BallsTrust replaces, in the sampled search only, the leverage trust
	// region by a union of balls around the samples (radius twice the
	// median gap between runs), the alternative it was compared with;
	// false means leverage. For that comparison only.
	BallsTrust bool `json:"-"`
	// SampledOnly keeps the sampled search's level without the bound
	// check, to compare trust regions on equal terms; false means the
	// level is bounded. For that comparison only: the sampled level is
	// not a bound.
	SampledOnly bool `json:"-"`
}

// Defaults returns the options with every zero field set to its default.
func (o *Options) Defaults() Options {
	var c Options
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

// ErrDegree is returned by Certify for a V degree that is not even in
// 2..8.
var ErrDegree = errors.New("V degree must be even, 2..8")

// Outcome classifies what Certify found.
type Outcome string

// The outcomes of Certify.
const (
	// Found: a V and its bounded level set.
	Found Outcome = "found"
	// EigenFailed: the Jacobian's eigenvalues could not be computed.
	EigenFailed Outcome = "eigenvalues_failed"
	// Unstable: the Jacobian has an eigenvalue with positive real part
	// (Result.MaxRe).
	Unstable Outcome = "unstable_linearisation"
	// TrustDegenerate: the trust region cannot be computed (Result.Err
	// wraps [ErrDegenerate]).
	TrustDegenerate Outcome = "trust_region_degenerate"
	// TooFewSamples: too few samples for the V family (Result.Coefficients
	// and Result.NeedSamples), or in the level set for an LP.
	TooFewSamples Outcome = "too_few_samples"
	// OutsideTrust: the equilibrium lies outside the trust region.
	OutsideTrust Outcome = "equilibrium_outside_trust_region"
	// LyapunovSingular: the Lyapunov equation of the linearisation is
	// singular.
	LyapunovSingular Outcome = "lyapunov_singular"
	// LPInfeasible: the LP has no solution (Result.LPErr wraps
	// lp.ErrInfeasible), or, with Result.Contradicted, its best margin
	// near the equilibrium is negative: V must rise.
	LPInfeasible Outcome = "lp_infeasible"
	// LPFailed: the LP solver failed (Result.LPErr).
	LPFailed Outcome = "lp_failed"
	// NoLevel: no level set of V reaches beyond the noise ball while
	// passing the checks (Result.Detail says which).
	NoLevel Outcome = "no_level"
	// NoBound: the sampled search found a level, but the bound over the
	// level set found none beyond the noise ball (Result.Detail).
	NoBound Outcome = "no_bounded_level"
)

// Result is what Certify found. The figures of the search (NoiseRadius,
// Solves, LPRounds, LPRows) are set as far as the search got; the rest
// only for Found, unless said otherwise.
type Result struct {
	Outcome Outcome
	// Detail says, for NoLevel and the outcomes of the growth rounds, why
	// no level was found, in the search's words (a clause: no capital, no
	// final period).
	Detail string
	// LPErr is the last LP's error, when an LP failed or was infeasible;
	// it keeps the solver's type (errors.Is(err, lp.ErrInfeasible)). LP
	// is that LP's result, when the solver gave one: for an infeasible LP
	// it holds the Farkas certificate.
	LPErr error
	LP    *lp.Result
	// Conflict summarises, for LPInfeasible and for Unstable (whose one
	// LP is posed only for it), the LP's proof that no V of the family
	// falls along the rows; nil when there is none.
	Conflict *Conflict
	// Err is TrustDegenerate's cause, wrapping ErrDegenerate.
	Err error
	// MaxRe is the largest real part of the Jacobian's eigenvalues (set
	// once they are computed).
	MaxRe float64
	// NonRise says the linearisation has an eigenvalue on the imaginary
	// axis: V is shown only not to rise beyond the noise tolerance.
	NonRise bool
	// Contradicted says (with LPInfeasible) that the LP's best margin
	// near the equilibrium is negative: no V of the family falls along
	// the recorded runs there. Margin is that margin.
	Contradicted bool
	// Coefficients and NeedSamples are V's coefficients and the samples
	// the family needs (TooFewSamples before any LP).
	Coefficients, NeedSamples int
	// NoiseRadius is the radius, in z, of the noise ball.
	NoiseRadius float64
	// BallShare is, for NoLevel and NoBound, the radius of the ball
	// exempt from the decrease checks (noise, and the model's
	// uncertainty) over the distance from the equilibrium to the trust
	// region's nearest edge: at 0.5 or more Detail says the ball leaves
	// a level set little room (at 1 or more, none).
	BallShare float64
	// Solves counts the LPs solved, LPRounds their cutting-plane rounds,
	// LPRows the most active rows of one.
	Solves, LPRounds, LPRows int

	// V is the certified Lyapunov function, a polynomial in z (every
	// term of the family, zero coefficients included).
	V poly.Poly
	// Source says where V came from: "Lyapunov equation" or "LP".
	Source string
	// Level is the bounded level: the region is {V <= Level} in the box.
	Level float64
	// Margin is the LP's decrease margin (at most 0 when NonRise).
	Margin float64
	// Tolerance is the largest noise tolerance on V differences along
	// the recorded pairs in the region.
	Tolerance float64
	// Lo, Hi is the box, in z, of the piece of the level set holding the
	// equilibrium; ExtentLo, ExtentHi the bounds of the checked points
	// inside the region.
	Lo, Hi, ExtentLo, ExtentHi []float64
	// Share is the region's share of the trust region (Monte Carlo);
	// TrustVolume the trust region's volume in z.
	Share, TrustVolume float64
	// Limit says what stopped the region growing, LimitZ where (z) and
	// LimitRun in which run, when known. Capped says the growth rounds ran
	// out while it still grew (the region's limit is then LimitGrowth).
	Limit    Limit
	LimitZ   []float64
	LimitRun string
	Capped   bool
	// RadiallyUnbounded says V's top-degree part is positive on sampled
	// directions.
	RadiallyUnbounded bool
	// Pairs counts the recorded pairs inside the region; Decrease is the
	// share of them along which V fell within the tolerance.
	Pairs    int
	Decrease float64
}

// Tunables of the search (not user-facing).
const (
	// noiseContent: the noise ball holds this share of the measurement
	// noise (the two-sided 3σ share of one normal variable, 0.9973, the
	// "3 sigma" of common practice, now for the noise of all N states
	// at once; see noiseRadius), and is at least minNoiseRadius in z (1%
	// of the data's spread).
	noiseContent   = 0.9973
	minNoiseRadius = 0.01
	// growStart: a growth round solves the LP with targets V_best <=
	// gamma·c_best (gamma starts at growStart and halves its excess over 1
	// after a round that gains nothing) and decrease rows on V_best <=
	// growOuter·gamma·c_best; growStale failed rounds in a row end it.
	growStart = 1.6
	growOuter = 1.0
	growStale = 5
	// ballStart: with no level yet, a round's target set is the level
	// set at ballStart times V's largest value on the exempt ball (three
	// exempt radii for a round V), halved after each round that gains
	// nothing, down to ballMin: a set too wide for the LP (reaching a
	// saddle, say) shrinks towards the equilibrium.
	ballStart = 9.0
	ballMin   = 1.5
	// othersShare caps a round's target at this share of the level at
	// which another equilibrium joins the piece: decrease cannot hold at
	// an equilibrium, nor with a positive margin near it.
	othersShare = 0.5
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

// Certify fits a Lyapunov function for sys's equilibrium (z = 0) on the
// runs of d and finds the largest certified level set.
//
// V is a polynomial in z of the family of [Options.Degree]. The start is
// the quadratic from the Lyapunov equation of the Jacobian with Q = I;
// each growth round solves the LP of [certRows] on the samples and fill
// points of a larger level set and keeps the V whose level set (by the
// sampled search of checker.level) covers the largest share of the trust
// region. The chosen V's level is then bounded over the level set's box
// with [Verify], and only the bounded level is certified.
//
// When no V is found the Result says why in Outcome (with the figures
// its documentation names); that is not an error. Errors are for a
// degree outside 2..8 (wrapping [ErrDegree]) and a cancelled ctx. It
// panics if the lengths of d and sys disagree with sys.N.
func Certify(ctx context.Context, d *Data, sys *System, opts *Options) (*Result, error) {
	o := opts.Defaults()
	if o.Degree < 2 || o.Degree > 8 || o.Degree%2 != 0 {
		return nil, fmt.Errorf("%w, got %d", ErrDegree, o.Degree)
	}
	n := sys.N
	if len(sys.Jacobian) != n*n || len(d.Z)%max(n, 1) != 0 {
		panic("lyapunov: Certify: length mismatch")
	}
	lin, ok := linearise(sys.Jacobian, n)
	if !ok {
		return &Result{Outcome: EigenFailed}, nil
	}
	if lin.unstable() {
		conflict, err := unstableConflict(ctx, d, sys, o)
		if err != nil {
			return nil, err
		}
		return &Result{Outcome: Unstable, MaxRe: lin.maxRe, Conflict: conflict}, nil
	}
	ck, err := newChecker(ctx, d, sys, o, lin.nonRise)
	if errors.Is(err, ErrDegenerate) {
		return &Result{Outcome: TrustDegenerate, Err: err, MaxRe: lin.maxRe, NonRise: lin.nonRise}, nil
	}
	if err != nil {
		return nil, err
	}
	res := &Result{MaxRe: lin.maxRe, NonRise: lin.nonRise, NoiseRadius: ck.r0}
	fam := ck.fam
	if need := 3 * fam.Len(); len(d.Z)/n < need {
		res.Outcome, res.Coefficients, res.NeedSamples = TooFewSamples, fam.Len(), need
		return res, nil
	}
	if !ck.inside(make([]float64, n)) {
		res.Outcome = OutsideTrust
		return res, nil
	}
	c0, err := startV(fam, lin)
	if err != nil {
		res.Outcome = LyapunovSingular
		return res, nil
	}
	g, err := ck.grow(ctx, c0, lin.nonRise, o)
	if err != nil {
		return nil, err
	}
	res.Solves, res.LPRounds, res.LPRows = g.solves, g.rounds, g.rows
	if !g.best.res.ok {
		g.failure(res)
		return res, nil
	}
	r := g.best.res
	if !o.SampledOnly {
		r = ck.verify(g.best.c, g.best.res)
		// A bound that finds no level for the best V (its level set's
		// box reaching where V is not positive, say) falls back on the
		// V each round improved on, latest first.
		for i := len(g.prev) - 1; !r.ok && i >= 0; i-- {
			h := g.prev[i]
			ck.completeFigures(&h.res, h.c)
			if hr := ck.verify(h.c, h.res); hr.ok {
				tracef(o.Trace, "bound: fell back on the V of share %.4f", h.res.share)
				g.best, r = h, hr
			}
		}
	}
	if !r.ok {
		res.Outcome, res.Detail, res.BallShare = NoBound, r.reason, r.ballShare
		return res, nil
	}
	ck.found(res, g, r, o)
	return res, nil
}

// linearisation is the Jacobian at the equilibrium and what its
// eigenvalues say.
type linearisation struct {
	a       []float64 // n×n row-major
	n       int
	norm    float64 // largest |a_ij|
	maxRe   float64 // largest real part of an eigenvalue
	nonRise bool    // an eigenvalue on the imaginary axis (none to the right)
}

// linearise computes a's eigenvalues; ok is false when they cannot be
// computed.
func linearise(a []float64, n int) (lin linearisation, ok bool) {
	lin = linearisation{a: a, n: n, maxRe: math.Inf(-1)}
	for _, v := range a {
		lin.norm = math.Max(lin.norm, math.Abs(v))
	}
	var eig mat.Eigen
	if !eig.Factorize(mat.NewDense(n, n, append([]float64(nil), a...)), mat.EigenNone) {
		return lin, false
	}
	for _, v := range eig.Values(nil) {
		lin.maxRe = math.Max(lin.maxRe, real(v))
	}
	// Non-hyperbolic but not unstable (an eigenvalue on the imaginary
	// axis, as for a lossless oscillator): V can at best be shown not to
	// rise, so the search runs on the non-rise conditions (see
	// checker.setNonRise) and claims at most stability.
	lin.nonRise = !lin.unstable() && lin.maxRe > -unstableTol*(1+lin.norm)
	return lin, true
}

// unstable reports an eigenvalue with positive real part (beyond the
// rounding allowance unstableTol).
func (lin linearisation) unstable() bool {
	return lin.maxRe > unstableTol*(1+lin.norm)
}

// startV returns the first V: the quadratic of the Lyapunov equation with
// Q = I (of A - delta·I on the non-rise path, where A's own equation is
// singular), normalised to unit trace.
func startV(fam *vFamily, lin linearisation) ([]float64, error) {
	n := lin.n
	a0 := lin.a
	if lin.nonRise {
		a0 = append([]float64(nil), lin.a...)
		for i := 0; i < n; i++ {
			a0[i*n+i] -= nonRiseShift * (1 + lin.norm)
		}
	}
	p, err := Solve(a0, eye(n), n)
	if err != nil {
		return nil, err
	}
	c0 := fam.quadratic(p)
	tr := fam.trace(c0)
	for k := range c0 {
		c0[k] /= tr
	}
	return c0, nil
}

// cand is a candidate V with the sampled level search's result.
type cand struct {
	c      []float64
	g      float64 // LP margin (the start's: its level search's margin)
	res    levelResult
	source string
}

// growth is what the growth rounds found: the best candidate, the LP
// figures, and why the last round that gained nothing did not.
type growth struct {
	best                 cand
	solves, rounds, rows int
	capped               bool // the last round still gained
	// contra: an LP's margin was negative while no V had a level
	// (contraMargin, the latest such LP's): V must rise near the
	// equilibrium.
	contra       bool
	contraMargin float64
	lastErr      string     // why the last round failed
	lastKind     Outcome    // its kind, "" when it has none
	lpErr        error      // the last LP error
	lpRes        *lp.Result // its result
	conflict     *Conflict  // the infeasible or contradicted LP's proof
	degree       int
	// prev holds the candidates with a level that a later round
	// improved on, in the order they were replaced (the bound's
	// fallbacks).
	prev []cand
}

// grow runs the growth rounds from the start V c0.
func (ck *checker) grow(ctx context.Context, c0 []float64, nonRise bool, o Options) (growth, error) {
	fam := ck.fam
	best := cand{c: c0, res: ck.level(c0), source: "Lyapunov equation"}
	best.g = best.res.margin
	g := growth{degree: o.Degree}
	rng := rand.New(rand.NewPCG(o.Seed, 0))
	stale := 0
	gamma := growStart
	ballMul := float64(ballStart)
	for round := 0; round < o.Growth; round++ {
		if err := ctx.Err(); err != nil {
			return g, err
		}
		target := gamma * ck.roundBase(best.res, best.c, ballMul, nonRise && round == 0)
		if oth := ck.othersLevel(best.c); !best.res.ok && target > othersShare*oth {
			// Decrease cannot hold up to another equilibrium (V-dot is
			// zero there): a first target set reaching it makes every
			// margin negative. (A V with a level stops below the others
			// already; its rounds shrink gamma when they reach too far.)
			target = othersShare * oth
		}
		lambda := math.Max(best.g, 0) / target
		if nonRise {
			lambda = 0 // no decrease to relax outside the target set
		}
		rows := ck.lpRows(best.c, target, growOuter*target, lambda, o, rng)
		improved := false
		if len(rows.targets) < 3*fam.Len() {
			g.lastErr, g.lastKind = "too few samples in the level set for the LP", TooFewSamples
		} else {
			out := solveCertLP(fam, rows, nonRise)
			g.solves++
			g.rounds += out.rounds
			g.rows = max(g.rows, out.rows)
			switch {
			case out.err != nil:
				g.lastErr, g.lastKind, g.lpErr, g.lpRes = out.err.Error(), LPFailed, out.err, out.res
				if errors.Is(out.err, lp.ErrInfeasible) {
					g.lastKind, g.conflict = LPInfeasible, ck.conflict(rows, out)
				}
			case !(out.g > 0) && !(nonRise && out.g > -lpMarginBound):
				if out.g < 0 && !best.res.ok {
					// The latest such LP, on the smallest set tried so
					// far, is the one nearest the equilibrium.
					g.contra, g.contraMargin, g.conflict = true, out.g, ck.conflict(rows, out)
				}
				g.lastErr = fmt.Sprintf("best margin %.3g <= 0", out.g)
			default:
				res := ck.levelOf(out.c, false) // the in-sample figures only if kept
				tracef(o.Trace, "round %d gamma %.3g target %.4g np %d g %.4g -> ok %v level %.4g share %.4f limit %s at %v (best %.4f)", round, gamma, target, rows.np, out.g, res.ok, res.level, res.share, res.limit, res.limitZ, best.res.share)
				if res.ok && (!best.res.ok || res.share > best.res.share*(1+minGain)+1e-12) {
					if best.res.ok {
						g.prev = append(g.prev, best)
					}
					best = cand{c: out.c, g: out.g, res: res, source: "LP"}
					improved = true
				}
			}
			if !improved {
				tracef(o.Trace, "round %d gamma %.3g: no gain: %v", round, gamma, g.lastErr)
			}
		}
		if improved {
			stale = 0
			g.capped = round == o.Growth-1
			continue
		}
		g.capped = false
		stale++
		gamma = 1 + (gamma-1)/2
		if !best.res.ok {
			// No level yet: the next round tries a smaller set around the
			// noise ball, where the linearisation rules.
			ballMul = math.Max(ballMul/2, ballMin)
		}
		if stale >= growStale {
			break
		}
	}
	ck.completeFigures(&best.res, best.c)
	g.best = best
	return g, nil
}

// roundBase returns the level a growth round grows from: the best V's
// level, or, when it has none, ballMul times V's largest value on the
// exempt ball (a small ellipse a few noise radii wide);
// on the non-rise path's first round (first), at least the level set of
// V holding the innermost tenth of the samples (runs of a lossless
// system circle the equilibrium and rarely pass near it).
func (ck *checker) roundBase(res levelResult, c []float64, ballMul float64, first bool) float64 {
	base := res.level
	if !res.ok {
		base = math.Max(res.vball*ballMul, res.level)
	}
	if first {
		base = math.Max(base, ck.quantile(c, nonRiseStartShare, 6*ck.fam.Len()))
	}
	return base
}

// othersLevel returns the level of V (coefficients c) at which the
// first other equilibrium joins the piece of the level set holding the
// equilibrium (along the segment to it); +Inf when there is none.
func (ck *checker) othersLevel(c []float64) float64 {
	if len(ck.others) == 0 {
		return math.Inf(1)
	}
	ve := newVEval(ck.fam, c)
	buf := make([]float64, ck.fam.n)
	lv := math.Inf(1)
	for _, o := range ck.others {
		lv = math.Min(lv, rayMax(ve, o, buf))
	}
	return lv
}

// failure fills res for growth rounds that found no V with a level.
func (g *growth) failure(res *Result) {
	res.Conflict = g.conflict
	if g.contra {
		res.Outcome, res.Contradicted, res.Margin = LPInfeasible, true, g.contraMargin
		return
	}
	res.Outcome, res.Detail, res.BallShare = NoLevel, g.best.res.reason, g.best.res.ballShare
	if g.lastErr != "" {
		res.Detail += "; the LP found none either (" + g.lastErr + ")"
		if g.lastKind != "" {
			res.Outcome = g.lastKind
		}
	}
	res.LPErr, res.LP = g.lpErr, g.lpRes
}

// found fills res with the chosen V and its bounded level r.
func (ck *checker) found(res *Result, g growth, r levelResult, o Options) {
	best := g.best
	res.Outcome = Found
	res.V = ck.fam.poly(best.c)
	res.Source = best.source
	res.Level = r.level
	res.Margin = best.g
	if res.NonRise {
		// No positive margin is claimed on the non-rise path.
		res.Margin = math.Min(best.g, 0)
	}
	res.Tolerance = r.tolerance
	res.Lo, res.Hi = r.lo, r.hi
	ext := ck.extent(best.c, r)
	res.ExtentLo, res.ExtentHi = ext[0], ext[1]
	res.Share = r.share
	boxVol := 1.0
	for j := range ck.trust.Lo {
		boxVol *= ck.trust.Hi[j] - ck.trust.Lo[j]
	}
	res.TrustVolume = ck.poolShare * boxVol
	res.Limit, res.LimitZ, res.LimitRun = r.limit, r.limitZ, r.limitRun
	res.Capped = g.capped
	res.RadiallyUnbounded = ck.fam.radiallyUnbounded(best.c, rand.New(rand.NewPCG(o.Seed, 1)))
	res.Pairs, res.Decrease = r.pairs, r.decrease
}

// tracef writes one line of the search's trace to w (nothing when w is nil).
func tracef(w io.Writer, format string, a ...any) {
	if w != nil {
		fmt.Fprintf(w, format+"\n", a...)
	}
}

// newChecker builds the checker of the runs d: the trust region, the
// rays and the Monte-Carlo pool, with the non-rise conditions when
// nonRise is set (see checker.setNonRise). Its error wraps ErrDegenerate
// for a collinear library, or is ctx's.
func newChecker(ctx context.Context, d *Data, sys *System, o Options, nonRise bool) (*checker, error) {
	n := sys.N
	all := d.Z
	runs := make([]zRun, 0, len(d.Runs))
	off := 0
	for _, r := range d.Runs {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		k := len(r.T)
		runs = append(runs, zRun{name: r.Name, off: off, t: r.T, z: all[off*n : (off+k)*n : (off+k)*n]})
		off += k
	}
	if off*n != len(all) {
		panic("lyapunov: Certify: runs and samples disagree")
	}
	sigma := make([]float64, n)
	for j := 0; j < n; j++ {
		if j < len(sys.Noise) {
			sigma[j] = sys.Noise[j]
		}
	}
	ck := &checker{
		fam: newVFamily(n, o.Degree), field: sys.Field, runs: runs,
		others: sys.Others, sigma: sigma, sigmaF: sys.FieldSigma, az: sys.Jacobian,
		fz:    sys.Poly,
		r0:    noiseRadius(sigma),
		kappa: o.Kappa, trace: o.Trace,
	}
	// The trust region: leverage over the model's terms.
	tr, err := NewTrust(n, sys.Terms, all)
	if err != nil {
		return nil, err
	}
	ck.trust = tr
	off = 0
	for i := range ck.runs {
		k := len(ck.runs[i].t)
		ck.runs[i].h = tr.HSamples[off : off+k]
		off += k
	}
	ck.inside = tr.Inside
	if o.BallsTrust {
		ck.inside = ballsTrust(all, runs, n)
	}
	if nonRise {
		ck.setNonRise()
	}
	ck.makeRays(rand.New(rand.NewPCG(o.Seed, 4)))
	ck.makePool(o.ShareSamples, rand.New(rand.NewPCG(o.Seed, 2)))
	ck.samples = newPointCache(ck.fam, all, ck.field, true)
	rz := make([]float64, 0, len(ck.rays)*rayPoints*n)
	for i := range ck.rays {
		rz = append(rz, ck.rays[i].z...)
	}
	ck.rayPts = newPointCache(ck.fam, rz, nil, true)
	ck.poolPts = newPointCache(ck.fam, ck.pool, nil, false)
	return ck, nil
}

// noiseRadius returns the radius, in z, of the noise ball for
// independent normal measurement noise of standard deviation sigma[j] in
// state j: k·max_j sigma[j], k² the noiseContent quantile of the
// chi-square distribution with N degrees of freedom, so that the ball
// holds the ellipsoid sum_j (e_j/sigma_j)² <= k², which holds that share
// of the noise e (3 for one state, 3.44 for two, 4.27 for five), and at
// least minNoiseRadius. (Three times |sigma|, the norm over all states,
// grew as 3·sqrt(N) for equal noise: 6.7 sigma for five states, where
// noise beyond 4.27 sigma has chance 0.0027.)
func noiseRadius(sigma []float64) float64 {
	mx := 0.0
	for _, s := range sigma {
		if s > mx && !math.IsInf(s, 1) {
			mx = s
		}
	}
	if len(sigma) == 0 || !(mx > 0) {
		return minNoiseRadius
	}
	k := math.Sqrt(distuv.ChiSquared{K: float64(len(sigma))}.Quantile(noiseContent))
	return math.Max(k*mx, minNoiseRadius)
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
			randomUnit(u, rng)
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
			ck.field(ry.f[k*n:(k+1)*n], p)
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
func (ck *checker) lpRows(prev []float64, target, outer, lambda float64, o Options, rng *rand.Rand) *certRows {
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
	for ri := range ck.runs {
		r := &ck.runs[ri]
		m := len(r.t)
		for k := firstStrided(r.off, stride); k < m; k += stride {
			z := r.z[k*n : (k+1)*n]
			if ck.samples.norm2(r.off+k, z) <= r02 {
				continue
			}
			v := ck.samples.valueGrad(ve, g, r.off+k, z)
			if !(v <= outer) {
				continue
			}
			in := v <= target
			rows.addPoint(z, ck.samples.fieldAt(f, ck.field, r.off+k, z), in)
			if in && k+1 < m {
				rows.addPair(z, r.z[(k+1)*n:(k+2)*n], r.t[k+1]-r.t[k], ck.pairTolAt(g, hq, v)/target)
			}
		}
	}
	np := len(ck.pool) / n
	for tries, added := 0, 0; np > 0 && tries < 20*o.Fill && added < o.Fill; tries++ {
		k := rng.IntN(np)
		z := ck.pool[k*n : (k+1)*n]
		if ck.poolPts.norm2(k, z) <= r02 {
			continue
		}
		v := ck.poolPts.value(ve, k, z)
		if !(v <= outer) {
			continue
		}
		rows.addPoint(z, ck.field(f, z), v <= target)
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

// firstStrided returns the first k >= 0 such that off+k+1 is a multiple
// of stride: lpRows takes every stride-th sample over all runs (counted
// from 1), and a run's sample k is sample off+k overall.
func firstStrided(off, stride int) int {
	return (stride - (off+1)%stride) % stride
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
	add := func(pc *pointCache, i int, z []float64) {
		for j, v := range z {
			if v < r.lo[j] || v > r.hi[j] {
				return
			}
		}
		if pc.value(ve, i, z) > r.level {
			return
		}
		for j, v := range z {
			lo[j], hi[j] = math.Min(lo[j], v), math.Max(hi[j], v)
		}
	}
	for ri := range ck.runs {
		r := &ck.runs[ri]
		for i := range r.t {
			add(ck.samples, r.off+i, r.z[i*n:(i+1)*n])
		}
	}
	for k := 0; k+n <= len(ck.pool); k += n {
		add(ck.poolPts, k/n, ck.pool[k:k+n])
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
		r := &ck.runs[ri]
		for i := range r.t {
			z := r.z[i*n : (i+1)*n]
			if ck.samples.norm2(r.off+i, z) > r02 {
				vs = append(vs, ck.samples.value(ve, r.off+i, z))
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
