package fit

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"sort"
	"strconv"

	"basin.example/fit/poly"
	"basin.example/ingest"
	"basin.example/internal/order"
	"basin.example/internal/parallel"
	"gonum.org/v1/gonum/mat"
)

// FieldOptions controls Field. A nil *FieldOptions means all defaults.
type FieldOptions struct {
	Degree int // total degree of the monomial library; 0 means 3
	// InputDegree is the highest total degree of the inputs
	// (Dataset.Inputs) in a library term; 0 means 1, the control-affine
	// form f(x) + g(x)·u: input terms u and x^e·u with |e| < Degree.
	// A logged drive or setpoint most often takes a few levels (steps,
	// pulses), and on a few levels u, u², u³ are nearly collinear, so
	// the full polynomial in (x, u) is singular on ordinary rig logs.
	// Raise it (at most Degree) for a response that is nonlinear in u
	// and logs that sweep u over many levels. Without inputs it does
	// nothing.
	InputDegree int
	Folds       int    // cross-validation folds over runs; 0 means 5
	Seed        uint64 // random seed for folds and bootstrap; 0 means 1
	// Derivative is DerivAuto, DerivFornberg, DerivSavitzkyGolay or
	// DerivIntegral; empty means DefaultDerivative.
	Derivative string
	// Window fixes the derivative window half-width in samples (the
	// Savitzky–Golay window is 2·Window+1, the integral window 2·Window
	// steps); 0 means chosen per state from the noise estimate.
	Window int
	// Bootstrap is the number of bootstrap refits over runs; 0 means 100,
	// negative means none (Equation.Terms is then left empty).
	Bootstrap int
	// Thresholds and Ridges are the cross-validation grid (chosen per
	// equation), thresholds on
	// coefficients normalised by their column's and target's spread (so
	// 0.01 drops a term worth under 1% of its equation); nil means the
	// default grids.
	Thresholds []float64
	Ridges     []float64
	// SkipShort skips runs shorter than the derivative window instead of
	// failing; false means such a run is an error.
	SkipShort bool
	// MaxMemory is the memory budget in bytes, checked in closed form
	// before the library is built (see [FieldMemory]); 0 means
	// DefaultMaxMemory.
	MaxMemory int64
	// RestInput is the value of each input (Dataset.Inputs) the model is
	// certified at; nil means the median of each input over the runs'
	// settled tails (the rig idle), or over every sample when no run
	// settles (see restInput).
	RestInput []float64
	// Derivatives, when not nil, keeps each run's derivatives for the
	// next Field on the same runs (see [DerivativeCache]); nil means
	// none kept. It changes no result.
	Derivatives *DerivativeCache `json:"-"`
}

// DefaultDerivative is the derivative method used when
// FieldOptions.Derivative is empty: DerivAuto, every method tried and the
// one with the least held-out error kept (see selectModel). Of the
// methods alone, Savitzky–Golay slopes recovered the true support on
// damped Duffing and Van der Pol at 0, 0.5 and 2% noise with the smallest
// coefficient errors (under 1%), and on a fast softening oscillator at
// 0.5% noise where the other two failed (TestDerivativeTable), but
// dropped the damping of a two-well oscillator that the integral form
// kept.
const DefaultDerivative = DerivAuto

// MinRunSamples is the fewest samples a run must have for its
// derivatives (the derivative window): [Field] refuses a shorter run
// (ErrShortRun), and readers can leave out shorter pieces of split
// recordings with it (ingest.Options.MinPiece).
const MinRunSamples = minWindow

// constantShare: an equation whose held-out error is at least this share
// of its rate's spread explains under 1 - 0.95² ≈ 10% of the variance:
// no better than a constant, and it is flagged.
const constantShare = 0.95

var (
	defaultThresholds = []float64{0, 0.001, 0.002, 0.005, 0.01, 0.02, 0.035, 0.05, 0.075, 0.1, 0.15, 0.2, 0.3, 0.5}
	defaultRidges     = []float64{1e-8, 1e-4, 1e-2}
)

func (o *FieldOptions) withDefaults() FieldOptions {
	var r FieldOptions
	if o != nil {
		r = *o
	}
	if r.Degree == 0 {
		r.Degree = 3
	}
	if r.InputDegree == 0 {
		r.InputDegree = 1
	}
	if r.Folds == 0 {
		r.Folds = 5
	}
	if r.Seed == 0 {
		r.Seed = 1
	}
	if r.Derivative == "" {
		r.Derivative = DefaultDerivative
	}
	if r.Bootstrap == 0 {
		r.Bootstrap = 100
	}
	if r.Thresholds == nil {
		r.Thresholds = defaultThresholds
	}
	if r.Ridges == nil {
		r.Ridges = defaultRidges
	}
	return r
}

// Errors Field can return (wrapped with the numbers).
var (
	ErrTooFewSamples = errors.New("too few samples")
	ErrConstant      = errors.New("constant state")
	ErrCollinear     = errors.New("library terms nearly collinear")
	ErrShortRun      = errors.New("run shorter than the derivative window")
)

// CollinearError reports a library whose normal matrix is too ill
// conditioned to solve. It unwraps to ErrCollinear and to gonum's
// mat.Condition carrying the number.
type CollinearError struct {
	Condition float64
	Degree    int
	// InputDegree is the library's degree in the inputs when it has
	// inputs and that degree is above 1; 0 otherwise.
	InputDegree int
}

func (e *CollinearError) Error() string {
	try := fmt.Sprintf("try a lower FieldOptions.Degree than %d", e.Degree)
	if e.InputDegree > 1 {
		// a logged input on a few levels makes u, u², ... collinear
		try = fmt.Sprintf("try a lower FieldOptions.InputDegree than %d (an input logged on a few levels cannot tell its powers apart), or a lower FieldOptions.Degree than %d", e.InputDegree, e.Degree)
	}
	if e.Condition >= math.MaxFloat64 {
		return fmt.Sprintf("library terms collinear (normal matrix singular); %s, or fewer states", try)
	}
	return fmt.Sprintf("library terms nearly collinear (condition %.1e); %s", e.Condition, try)
}

// inputErr is an error whose text is msg and which unwraps to a sentinel
// whose own text would repeat it.
type inputErr struct {
	msg string
	err error
}

func (e *inputErr) Error() string { return e.msg }
func (e *inputErr) Unwrap() error { return e.err }

func errorf(sentinel error, format string, a ...any) error {
	return &inputErr{msg: fmt.Sprintf(format, a...), err: sentinel}
}

func (e *CollinearError) Unwrap() []error { return []error{ErrCollinear, mat.Condition(e.Condition)} }

const (
	// rawCondMax: the raw-monomial basis is used for thresholding when its
	// normalised normal matrix has condition at most this; past it the
	// solve would lose more than about 7 of 16 digits, and the centred
	// basis is used instead.
	rawCondMax = 1e9
	// collinearCond: a centred, normalised normal matrix worse than this
	// leaves fewer than 3 correct digits (16 - 13); such a library is
	// refused.
	collinearCond = 1e13
	// stateCorrMax: two states correlated beyond this move as one (two
	// sensors of one quantity); the field cannot tell them apart.
	stateCorrMax = 0.999
	// rowsPerTerm: at least this many regression rows per library term.
	rowsPerTerm = 3
	// sampleCap bounds the samples used for quantiles and noise estimates.
	sampleCap = 200000
	// settleShare is the share of a run at its end that tells where it
	// settles.
	settleShare = 0.05
)

// Field fits a sparse polynomial vector field to the runs of ds.
//
// The steps: robust centring and scaling per state; derivatives by
// FieldOptions.Derivative; the library's normal equations accumulated run
// by run in parallel; sequentially thresholded ridge regression whose
// derivative method, threshold and ridge are chosen by K-fold
// cross-validation over runs, every candidate scored on the held-out
// runs' integral form (the same yardstick whatever the method); per
// equation, the sparsest candidate whose held-out error is close enough to
// the best candidate's, in standard errors over the held-out runs, is kept
// (see selectModel), refitted by
// least squares on its support; a bootstrap over runs for per-term kept
// shares and intervals; and Newton's method on
// the fitted field for its equilibria.
//
// Field uses every run of ds, whatever its Split: leave held-out runs out
// before calling it (basin fit drops the runs a manifest holds out).
//
// Bad input gives an error wrapping ErrTooFewSamples, ErrConstant,
// ErrCollinear (as a *CollinearError) or ErrShortRun, with the numbers.
func Field(ctx context.Context, ds *ingest.Dataset, opts *FieldOptions) (*Model, error) {
	o := opts.withDefaults()
	if o.Degree < 0 || o.Degree > 8 {
		return nil, fmt.Errorf("fit: degree %d outside 0..8", o.Degree)
	}
	if o.Folds < 2 {
		return nil, fmt.Errorf("fit: %d cross-validation folds, need at least 2", o.Folds)
	}
	switch o.Derivative {
	case DerivAuto, DerivFornberg, DerivSavitzkyGolay, DerivIntegral:
	default:
		return nil, fmt.Errorf("fit: unknown derivative method %q", o.Derivative)
	}
	if ds == nil || len(ds.States) == 0 {
		return nil, fmt.Errorf("fit: %w", ingest.ErrNoStates)
	}
	n := len(ds.States)
	names := make([]string, n)
	for j, c := range ds.States {
		names[j] = c.Name
	}
	var runs []*ingest.Run
	for i := range ds.Runs {
		r := &ds.Runs[i]
		if r.Len() == 0 {
			continue
		}
		if r.Len() < minWindow {
			if o.SkipShort {
				continue
			}
			noun := "samples"
			if r.Len() == 1 {
				noun = "sample"
			}
			return nil, errorf(ErrShortRun, "%s: run %q has %d %s, fewer than the derivative window of %d; drop the run or the gap that split it",
				r.Source.File, r.Name, r.Len(), noun, minWindow)
		}
		runs = append(runs, r)
	}
	samples := 0
	for _, r := range runs {
		samples += r.Len()
	}
	if samples == 0 {
		return nil, errorf(ErrTooFewSamples, "no usable samples: every cell missing, or no runs")
	}
	if o.InputDegree < 1 || o.InputDegree > o.Degree && len(ds.Inputs) > 0 {
		return nil, fmt.Errorf("fit: input degree %d outside 1..%d (the library's degree)", o.InputDegree, o.Degree)
	}
	if err := o.checkBudget(n, len(ds.Inputs), samples, len(runs)); err != nil {
		return nil, err
	}
	// The library is over the states and the inputs together: x' =
	// f(x, u) with the inputs' total degree at most o.InputDegree in each
	// term (1: the control-affine form f(x) + g(x)·u, every x^e·u term
	// with |e| < degree); terms in u that the data do not support are
	// dropped by the thresholding like any other.
	q := len(ds.Inputs)
	for _, r := range runs {
		if len(r.U) != q {
			return nil, fmt.Errorf("fit: run %q has %d input columns, want %d", r.Name, len(r.U), q)
		}
	}
	if o.RestInput != nil && len(o.RestInput) != q {
		return nil, fmt.Errorf("fit: %d rest input values for %d inputs", len(o.RestInput), q)
	}
	if !finite(o.RestInput...) {
		return nil, fmt.Errorf("fit: non-finite rest input")
	}
	lib := fieldLibrary(n, q, o.Degree, o.InputDegree)
	p := lib.Len()
	vnames := append([]string(nil), names...)
	for _, c := range ds.Inputs {
		vnames = append(vnames, c.Name)
	}

	m := &Model{Format: ModelFormat, States: names, Units: make([]string, n), Degree: o.Degree,
		Derivative: o.Derivative, Runs: len(runs), Samples: samples}
	for j, c := range ds.States {
		m.Units[j] = c.Unit
	}
	if err := scaleStates(m, runs); err != nil {
		return nil, err
	}
	sc := &varScale{centre: append([]float64(nil), m.Centre...), spread: append([]float64(nil), m.Spread...)}
	for k, c := range ds.Inputs {
		m.Inputs = append(m.Inputs, Input{Name: c.Name, Unit: c.Unit})
		ce, sp, lo, hi := inputScale(runs, k)
		if !(hi > lo) { // its column would repeat the constant term's
			v := strconv.FormatFloat(lo, 'g', -1, 64)
			if c.Unit != "" {
				v += " " + c.Unit
			}
			return nil, errorf(ErrConstant, "input %q is constant (%s in every sample of the %d runs fitted): its effect cannot be told from a constant term; leave it out of ingest.Options.Inputs, or record more runs in which it changes", c.Name, v, len(runs))
		}
		sc.centre, sc.spread = append(sc.centre, ce), append(sc.spread, sp)
	}
	for _, h := range ds.Held {
		m.Held = append(m.Held, HeldInput{Name: h.Name, Unit: h.Unit, Value: h.Value})
	}
	m.Average = ds.Average
	if q > 0 {
		for k, share := range inputExplained(m, runs, q, o.Degree) {
			if share >= feedbackShare {
				return nil, errorf(ErrFeedback, "input %q follows the states: a degree-%d polynomial in them explains %.4g%% of its variance, as a feedback controller's command does; the field with the input held at rest cannot be told from the controller's part in these logs. Give the states alone (ingest.Options.States, without %q) and no inputs to certify the loop as logged, controller included, or log runs with a test signal added to the input",
					ds.Inputs[k].Name, o.Degree, 100*share, ds.Inputs[k].Name)
			}
		}
	}
	cols := make([][][]float64, n) // cols[j][r] = runs[r].X[j]
	for j := range cols {
		cols[j] = make([][]float64, len(runs))
		for r, run := range runs {
			cols[j][r] = run.X[j]
		}
	}
	m.Noise = make([]float64, n)
	for j := range cols {
		m.Noise[j] = noiseStd(cols[j], sampleCap)
	}
	for j := range cols {
		if lag, ratio := ingest.CorrelatedNoise(cols[j], sampleCap); ratio >= ingest.CorrelatedRatio {
			m.CorrelatedNoise = append(m.CorrelatedNoise, NoiseCorrelation{State: names[j], Samples: lag, Ratio: ratio, Block: lag})
		}
	}
	var upper []float64
	m.NoiseRange, upper = noiseRange(runs, n)
	base := make([]int, n) // the smoothing window the noise explains, per state
	for j := range cols {
		base[j] = chooseWindow(cols[j], m.Noise[j], 20000)
	}
	names3 := []string{o.Derivative}
	if o.Derivative == DerivAuto {
		names3 = []string{DerivSavitzkyGolay, DerivIntegral, DerivFornberg}
	}
	need := rowsPerTerm * p
	// Groups for cross-validation and the bootstrap.
	groupOf, nGroups, by := makeGroups(runs, o.Folds)
	m.CVBy, m.CVGroups = by, nGroups
	var ms []*method
	var score *method // the integral-form yardstick
	var firstErr error
	for _, name := range append(names3, "") {
		md := prepareMethod(name, o, cols, m.Noise, base)
		if name == "" { // the yardstick: the integral method's rows
			for _, c := range ms {
				if c.name == DerivIntegral {
					score = c
				}
			}
			if score != nil {
				break
			}
			md.name = DerivIntegral
		}
		rows := samples
		if md.steps > 0 {
			rows = 0
			for _, r := range runs {
				rows += (r.Len() - 1) / md.steps
			}
		}
		if rows < need {
			if firstErr == nil && name != "" {
				per := max(1, md.steps)
				firstErr = errorf(ErrTooFewSamples, "too few samples: %d, need at least %d for a degree-%d library of %d terms in %d states",
					samples, need*per, o.Degree, p, n)
			}
			continue
		}
		groups := make([]*groupSums, nGroups)
		for g := range groups {
			groups[g] = newGroupSums(p, n)
		}
		if err := accumulate(ctx, groups, groupOf, runs, lib, m, sc, md.half, md.steps, md.name, o.Derivatives); err != nil {
			return nil, err
		}
		for _, g := range groups {
			g.finish(p)
		}
		md.groups = groups
		if name == "" {
			score = md
		} else {
			ms = append(ms, md)
		}
	}
	if len(ms) == 0 {
		return nil, firstErr
	}
	// Only groups with rows in every method and the yardstick take part
	// (all are aligned by index).
	keep := make([]bool, nGroups)
	kept := 0
	for g := range keep {
		keep[g] = true
		for _, md := range append(ms, score) {
			if md != nil && md.groups[g].rows == 0 {
				keep[g] = false
			}
		}
		if keep[g] {
			kept++
		}
	}
	if kept < 2 {
		return nil, errorf(ErrTooFewSamples, "too few samples: %d usable group of samples, need at least 2 to cross-validate", kept)
	}
	filter := func(gs []*groupSums) []*groupSums {
		var out []*groupSums
		for g, s := range gs {
			if keep[g] {
				out = append(out, s)
			}
		}
		return out
	}

	// Basis: scaled raw monomials when well enough conditioned (judged on
	// the first method), else centred.
	a := make([]float64, n+q)
	for j := range a {
		a[j] = sc.centre[j] / sc.spread[j]
	}
	T := shiftMatrix(lib, a)
	toRawBasis := func(gs []*groupSums) []*groupSums {
		out := make([]*groupSums, len(gs))
		for g, s := range gs {
			c := newGroupSums(p, n)
			addSums(c, s, 1)
			transformSums(c, T, p, n)
			out[g] = c
		}
		return out
	}
	m.Basis = "raw"
	shift := make([]float64, n+q)
	raw0 := newProblem(toRawBasis(filter(ms[0].groups)), p, n)
	if cond := raw0.condition(raw0.total); !(cond <= rawCondMax) {
		m.Basis = "centred"
		copy(shift, sc.centre)
	}
	for mi, md := range append(ms, score) {
		if md == nil || (mi == len(ms) && md.pr != nil) {
			continue
		}
		gs := filter(md.groups)
		if m.Basis == "raw" {
			if mi == 0 {
				md.pr = raw0
			} else {
				md.pr = newProblem(toRawBasis(gs), p, n)
			}
		} else {
			md.pr = newProblem(gs, p, n)
		}
		md.groups = md.pr.groups
		md.cond = md.pr.condition(md.pr.total)
		if m.Basis == "centred" && !(md.cond <= collinearCond) {
			cond := md.cond
			if math.IsInf(cond, 0) || math.IsNaN(cond) {
				cond = math.MaxFloat64
			}
			ce := &CollinearError{Condition: cond, Degree: o.Degree}
			if q > 0 && o.InputDegree > 1 {
				ce.InputDegree = o.InputDegree
			}
			return nil, ce
		}
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	if score == nil { // runs too short for the integral form: each method on its own rows
		score = ms[0]
	}

	rng := rand.New(rand.NewPCG(o.Seed, 0))
	sel, err := selectModel(ctx, ms, score.pr, o.Thresholds, o.Ridges, o.Folds, rng)
	if err != nil {
		return nil, err
	}
	md := ms[sel.method]
	pr := md.pr
	m.Derivative, m.Window, m.Condition = md.name, md.window, md.cond
	for k, c := range ms {
		m.DerivativeScores = append(m.DerivativeScores, MethodScore{Method: c.name, HeldoutError: sel.scores[k]})
	}
	taus, lams := make([]float64, n), make([]float64, n)
	for i, c := range sel.eq {
		taus[i], lams[i] = c.tau, c.lam
		m.Threshold, m.Ridge = math.Max(m.Threshold, c.tau), math.Max(m.Ridge, c.lam)
	}

	xi := make([][]float64, n)
	for i := range xi {
		xi[i] = make([]float64, p)
	}
	pr.fitEach(xi, newSolver(p), make([]float64, p*p), make([]float64, p*n), make([]float64, p), pr.total, taus, lams)
	toRaw := func(dst []float64, i int, x []float64) []float64 {
		beta := make([]float64, p)
		for k := range beta {
			if x[k] != 0 {
				beta[k] = x[k] * pr.ySD[i] / pr.colScale[k]
			}
		}
		return rawCoefTo(dst, lib, beta, shift, sc.spread, m.Spread[i])
	}
	raw := make([][]float64, n)
	m.Equations = make([]Equation, n)
	var floor [][]float64
	var runOf []int
	ad := &adequacy{runs: runs, lib: lib, m: m, vs: sc, steps: score.steps, groupOf: groupOf, kept: make([]int, nGroups)}
	for g, k := 0, 0; g < nGroups; g++ {
		ad.kept[g] = -1
		if keep[g] {
			ad.kept[g], k = k, k+1
		}
	}
	if score.steps > 0 {
		floor, runOf, ad.sigma = yardstickFloor(runs, groupOf, keep, score.steps, m.Spread, score.pr.ySD)
	}
	// foldBeta refits equation i on fold f's fitted groups with the
	// final model's terms (support, from xi) fixed, and returns its
	// unnormalised coefficients; nil when the fold fitted nothing. The
	// lack-of-fit check judges the final structure, so its fold models
	// keep that structure: a fold that the threshold would give other
	// terms (on a rig with few runs, one fold in five did, and its
	// held-out runs missed by five times the noise though every final
	// equation was exact) says how stable the selection is, not whether
	// the structure lacks something.
	// foldSys[f] holds fold f's normalised normal matrix and right-hand
	// sides (every equation's), made once; nil gh: the fold fitted nothing
	type normal struct{ gh, bh []float64 }
	foldSys := make([]*normal, sel.folds)
	foldBeta := func(i, f int, support []bool) []float64 {
		if foldSys[f] == nil {
			train := newGroupSums(p, n)
			for g, gs := range md.groups {
				if sel.foldOf[g] != f {
					addSums(train, gs, 1)
				}
			}
			foldSys[f] = &normal{}
			if train.rows > 0 {
				foldSys[f].gh, foldSys[f].bh = make([]float64, p*p), make([]float64, p*n)
				pr.normalised(foldSys[f].gh, foldSys[f].bh, train)
			}
		}
		gh, bh := foldSys[f].gh, foldSys[f].bh
		if gh == nil {
			return nil
		}
		col, x, beta := make([]float64, p), make([]float64, p), make([]float64, p)
		for k := range col {
			col[k] = bh[k*n+i]
		}
		newSolver(p).supportRefit(x, gh, col, support)
		pr.unnormalise(beta, x, i)
		return beta
	}
	supportOf := func(i int) []bool {
		sup := make([]bool, p)
		for k, v := range xi[i] {
			sup[k] = v != 0
		}
		return sup
	}
	// foldCoef is foldBeta in the centred basis of the yardstick's
	// windows (β_c = T·β in the raw basis, whose columns are the centred
	// ones times T).
	foldCoef := func(i, f int) []float64 {
		beta := foldBeta(i, f, supportOf(i))
		if beta == nil || m.Basis != "raw" {
			return beta
		}
		bc := make([]float64, p)
		for l := range bc {
			for k, b := range beta {
				bc[l] += T[l*p+k] * b
			}
		}
		return bc
	}
	// fixedChoice is c with its held-out errors those of the fold models
	// of the final structure (foldBeta) on the yardstick's groups.
	fixedChoice := func(i int, c choice) choice {
		if len(c.groupErr) != len(score.pr.groups) {
			return c
		}
		sup := supportOf(i)
		ge := make([]float64, len(c.groupErr))
		for f := 0; f < sel.folds; f++ {
			beta := foldBeta(i, f, sup)
			if beta == nil {
				continue
			}
			for g, gs := range score.pr.groups {
				if sel.foldOf[g] == f {
					ge[g] = score.pr.scoreErr(beta, i, gs)
				}
			}
		}
		c.err = 0
		for g, w := range sel.weight {
			c.err += w * ge[g]
		}
		c.groupErr = ge
		return c
	}
	for i := range m.Equations {
		raw[i] = toRaw(make([]float64, p), i, xi[i])
		c := sel.eq[i]
		// The yardstick's target is the window-mean slope of z = x/Spread.
		sd := score.pr.ySD[i] * m.Spread[i]
		eq := Equation{State: names[i], HeldoutError: c.err, Exponents: [][]int{}, Coefficients: []float64{},
			HeldoutRMS: math.Sqrt(c.err) * sd, HeldoutShare: math.Sqrt(c.err), DenseError: c.dense,
			Threshold: c.tau, Ridge: c.lam}
		for k, c := range raw[i] {
			if c != 0 {
				eq.Exponents = append(eq.Exponents, append([]int(nil), lib.Exponents(k)...))
				eq.Coefficients = append(eq.Coefficients, c)
			}
		}
		switch {
		case len(eq.Coefficients) == 0:
			eq.Warning = "empty: no term explains this state's rate of change"
		case eq.HeldoutShare >= constantShare:
			eq.Warning = fmt.Sprintf("no better than a constant on held-out runs (error %.0f%% of the spread of d%s/dt)", 100*eq.HeldoutShare, names[i])
		}
		var in *interp
		if score.steps > 0 && len(floor) > 0 {
			in = ad.interpolation(i, func(f int) []float64 { return foldCoef(i, f) }, sel.foldOf, sel.folds, sel.weight, score.pr.ySD[i])
		}
		if w := lackOfFit(&eq, ad, score.pr, fixedChoice(i, c), sel.weight, floor, runOf, runs, in, i, sd, m.Units[i]); w != "" {
			if eq.Warning != "" {
				w = eq.Warning + "; " + w
			}
			eq.Warning = w
		}
		for _, nc := range m.CorrelatedNoise {
			if nc.State == names[i] {
				w := noiseCorrWords(nc, meanStep(runs))
				if eq.Warning != "" {
					w += "; " + eq.Warning
				}
				eq.Warning = w
			}
		}
		m.Equations[i] = eq
		m.HeldoutError += c.err / float64(n)
	}

	if o.Bootstrap > 0 {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		reps, err := pr.bootstrap(ctx, o.Bootstrap, o.Seed, taus, lams)
		if err != nil {
			return nil, err
		}
		m.Bootstrap = o.Bootstrap
		rc := make([][][]float64, len(reps)) // rc[b][i] raw coefficients
		for b, rep := range reps {
			rc[b] = make([][]float64, n)
			for i := range rep {
				rc[b][i] = toRaw(make([]float64, p), i, rep[i])
			}
		}
		vals := make([]float64, len(reps))
		for i := range m.Equations {
			eq := &m.Equations[i]
			for k, c := range raw[i] {
				if c == 0 {
					continue
				}
				in := 0
				for b := range rc {
					vals[b] = rc[b][i][k]
					if vals[b] != 0 {
						in++
					}
				}
				inc := float64(in) / float64(len(rc))
				slices.Sort(vals)
				eq.Terms = append(eq.Terms, Term{Name: lib.Name(k, vnames),
					Interval:  [2]float64{order.Quantile(vals, 0.025), order.Quantile(vals, 0.975)},
					KeptShare: inc, RarelyKept: inc < RarelyKeptShare})
			}
		}
	}
	if q > 0 {
		m.RestInput = o.RestInput
		if m.RestInput == nil {
			m.RestInput = restInput(m, runs, q)
		}
		m.RestInput = append([]float64(nil), m.RestInput...)
		// Equilibria and eigenvalues are those of the system at rest input.
		sm := m.AtRest()
		equilibria(sm, runs)
		m.Equilibria, m.Equilibrium, m.JacobianEigenvalues = sm.Equilibria, sm.Equilibrium, sm.JacobianEigenvalues
		m.Settle, m.SettledRuns, m.Note = sm.Settle, sm.SettledRuns, sm.Note
	} else {
		equilibria(m, runs)
	}
	// The tolerances built on Noise must hold for the louder runs too:
	// take the upper end of the runs' own figures.
	for j := range m.Noise {
		m.Noise[j] = math.Max(m.Noise[j], upper[j])
	}
	if !modelFinite(m) {
		return nil, errors.New("fit: non-finite value in the fitted model")
	}
	return m, nil
}

// prepareMethod sets the windows of one derivative method (name "" is the
// integral-form yardstick) from the per-state smoothing windows base.
func prepareMethod(name string, o FieldOptions, cols [][][]float64, noise []float64, base []int) *method {
	n := len(cols)
	md := &method{name: name, half: make([]int, n), window: make([]int, n)}
	meth := name
	if meth == "" {
		meth = DerivIntegral
	}
	for j := range cols {
		h := o.Window
		if h == 0 {
			h = windowCandidates[0]
			if meth != DerivFornberg {
				h = base[j]
			}
		}
		switch meth {
		case DerivFornberg:
			md.window[j] = minWindow
		case DerivSavitzkyGolay:
			if o.Window == 0 {
				// The discrepancy window suits smoothing; a slope is
				// biased sooner. Half of it was best on every noisy case
				// of TestDerivativeTable's systems (measured over fixed
				// half-widths 3..60; see the report).
				h = max(windowCandidates[0], h/2)
			}
			md.window[j] = 2*h + 1
		case DerivIntegral:
			md.window[j] = 2*h + 1
		}
		md.half[j] = h
	}
	if meth == DerivIntegral {
		for _, h := range md.half {
			md.steps = max(md.steps, 2*h)
		}
		md.steps = max(md.steps, 4)
	}
	return md
}

// subsample returns every stride-th value of one column of the runs
// (col(r), the count running on across runs), the stride keeping at most
// about sampleCap of them, with the smallest and largest of all the
// values.
func subsample(runs []*ingest.Run, col func(*ingest.Run) []float64) (sub []float64, lo, hi float64) {
	total := 0
	for _, r := range runs {
		total += r.Len()
	}
	stride := max(1, total/sampleCap)
	sub = make([]float64, 0, total/stride+1)
	lo, hi = math.Inf(1), math.Inf(-1)
	i := 0
	for _, r := range runs {
		for _, v := range col(r) {
			lo, hi = math.Min(lo, v), math.Max(hi, v)
			if i%stride == 0 {
				sub = append(sub, v)
			}
			i++
		}
	}
	return sub, lo, hi
}

// scaleStates fills Centre, Spread, Lower and Upper, and refuses constant
// or collinear states.
func scaleStates(m *Model, runs []*ingest.Run) error {
	n := len(m.States)
	m.Centre, m.Spread = make([]float64, n), make([]float64, n)
	m.Lower, m.Upper = make([]float64, n), make([]float64, n)
	var tmp []float64
	sub := make([][]float64, n)
	for j := 0; j < n; j++ {
		var lo, hi float64
		sub[j], lo, hi = subsample(runs, func(r *ingest.Run) []float64 { return r.X[j] })
		m.Lower[j], m.Upper[j] = lo, hi
		if !(hi > lo) {
			val := strconv.FormatFloat(lo, 'g', -1, 64)
			if j < len(m.Units) && m.Units[j] != "" {
				val += " " + m.Units[j]
			}
			return errorf(ErrConstant, "state %q is constant (%s in every sample): it has no dynamics to fit; name the states that move in ingest.Options.States, or, if %q is a setting held fixed (a supply, a drive), name it in ingest.Options.Inputs", m.States[j], val, m.States[j])
		}
		tmp = append(tmp[:0], sub[j]...) // robustScale reorders; sub[j] stays in time order
		m.Centre[j], m.Spread[j] = robustScale(tmp)
		if !(m.Spread[j] > 0) {
			m.Spread[j] = (hi - lo) / 4
		}
	}
	for a := 0; a < n; a++ {
		for b := a + 1; b < n; b++ {
			if r := correlation(sub[a], sub[b]); math.Abs(r) > stateCorrMax {
				return errorf(ErrCollinear, "states %q and %q move together (correlation %.5f): two sensors of one quantity, or runs that never move them apart; keep one in ingest.Options.States",
					m.States[a], m.States[b], r)
			}
		}
	}
	return nil
}

func correlation(x, y []float64) float64 {
	mx, my := 0.0, 0.0
	for i := range x {
		mx += x[i]
		my += y[i]
	}
	mx /= float64(len(x))
	my /= float64(len(y))
	sxy, sxx, syy := 0.0, 0.0, 0.0
	for i := range x {
		dx, dy := x[i]-mx, y[i]-my
		sxy += dx * dy
		sxx += dx * dx
		syy += dy * dy
	}
	if sxx == 0 || syy == 0 {
		return 0
	}
	return sxy / math.Sqrt(sxx*syy)
}

// makeGroups assigns samples to cross-validation groups: one per run when
// there are at least folds runs, otherwise each run is cut into
// ceil(2·folds/runs) contiguous blocks. groupOf(r, i) is the group of
// sample i of run r.
func makeGroups(runs []*ingest.Run, folds int) (func(r, i int) int, int, string) {
	R := len(runs)
	if R >= folds {
		return func(r, _ int) int { return r }, R, "run"
	}
	nb := (2*folds + R - 1) / R
	return func(r, i int) int {
		return r*nb + min(nb-1, i*nb/runs[r].Len())
	}, R * nb, "block"
}

// accumulate differentiates every run and adds its rows to the groups, in
// parallel over runs (internal/parallel, one worker per core with its own
// buffers; each run's rows go to groups only that run feeds, so no
// locking, and the sums do not depend on scheduling). The error is ctx's
// or a worker's recovered panic (*parallel.PanicError).
func accumulate(ctx context.Context, groups []*groupSums, groupOf func(r, i int) int, runs []*ingest.Run,
	lib *poly.Library, m *Model, sc *varScale, half []int, steps int, method string, cache *DerivativeCache) error {
	n, p := len(m.States), lib.Len()
	type work struct {
		rb      *rowBuffer
		dw      *derivWork
		work, z []float64
		theta   []float64
		xs, dx  [][]float64
		steps   []int // the run's input steps (see inputSteps)
	}
	newWork := func() *work {
		return &work{rb: newRowBuffer(p, n), dw: newDerivWork(), work: make([]float64, lib.WorkLen()),
			z: make([]float64, len(sc.centre)), theta: make([]float64, p)}
	}
	return parallel.For(ctx, len(runs), 0, newWork, func(_ context.Context, r int, w *work) error {
		// The rows of run r go only to run r's groups: flushing at the
		// end of the run adds exactly what flushing when the next run's
		// first row changes the group would.
		// A panicking run flushes nothing: its half-added rows are
		// dropped (the fit fails anyway), and two panicking workers
		// must not add to shared groups at once.
		defer func() {
			if p := recover(); p != nil {
				w.rb.cnt = 0
				panic(p)
			}
			w.rb.flush()
		}()
		rb, dw, work, z, theta := w.rb, w.dw, w.work, w.z, w.theta
		run := runs[r]
		L := run.Len()
		if len(w.xs) == 0 || cap(w.xs[0]) < L {
			w.xs, w.dx = make([][]float64, n), make([][]float64, n)
			for j := range w.xs {
				w.xs[j], w.dx[j] = make([]float64, L), make([]float64, L)
			}
		}
		xs, dx := w.xs, w.dx
		for j := range xs {
			xs[j], dx[j] = xs[j][:L], dx[j][:L]
		}
		lo, hi := 0, L
		reach := minWindow / 2 // the samples a row's derivative reads on each side
		for _, h := range half {
			reach = max(reach, h)
		}
		if method == DerivIntegral {
			reach = 0
		}
		w.steps = inputSteps(w.steps[:0], run, reach, steps)
		switch method {
		case DerivFornberg:
			if _, cd, ok := cache.get(run, method, half); ok {
				xs, dx = run.X, cd // the states themselves: read only
				break
			}
			for j := 0; j < n; j++ {
				copy(xs[j], run.X[j])
				dw.fornbergRun(dx[j], run.T, run.X[j])
			}
			cache.put(run, method, half, nil, dx) // xs is a copy of run.X
		case DerivSavitzkyGolay:
			if cx, cd, ok := cache.get(run, method, half); ok {
				xs, dx = cx, cd
			} else {
				dw.sgRuns(xs, dx, run.T, run.X, half)
				cache.put(run, method, half, xs, dx)
			}
			// Only samples with a full centred window: the slid
			// windows at a run's ends extrapolate, and a run that
			// starts with a kick puts its largest errors there (on
			// the demo they added two spurious terms).
			edge := 0
			for _, h := range half {
				edge = max(edge, h)
			}
			lo, hi = min(edge, (L-1)/2), max(L-edge, (L+1)/2)
		case DerivIntegral:
			// Raw states: smoothing them first (the widest window
			// noise explains) made Duffing and Van der Pol at 0.5-2%
			// noise worse (measured).
			for j := 0; j < n; j++ {
				copy(xs[j], run.X[j])
			}
			integralRows(rb, groups, groupOf, r, run, xs, lib, m, sc, steps, work, z, theta, w.steps)
			return nil
		}
		st := w.steps
		for i := lo; i < hi; i++ {
			// a row whose derivative window holds an input step: the
			// state's slope jumps there and the window smears it
			for len(st) > 0 && st[0] <= i-reach {
				st = st[1:]
			}
			if len(st) > 0 && st[0] <= i+reach {
				continue
			}
			phi, y := rb.row(groups[groupOf(r, i)])
			for j := 0; j < n; j++ {
				z[j] = (xs[j][i] - m.Centre[j]) / m.Spread[j]
				y[j] = dx[j][i] / m.Spread[j]
			}
			for k, u := range run.U {
				z[n+k] = (u[i] - sc.centre[n+k]) / sc.spread[n+k]
			}
			lib.EvalWorkTo(phi, work, z)
			if !finite(y...) || !finite(phi...) {
				rb.unrow()
			}
		}
		return nil
	})
}

// integralRows adds the integral-form rows of one run: for consecutive
// windows [a, b] of steps steps, y = (x(b) - x(a))/(s·(t_b - t_a)) and phi
// the mean of the library over [t_a, t_b] (composite Simpson, uneven steps
// allowed: see simpsonWeights). A last window of at least 2 steps is kept.
//
// The trapezoid rule on uneven (jittered) time stamps left a quadrature
// error of order h² that spurious terms fitted: scored with it, the demo's
// dθ/dt = ω gained four terms of a few parts in a thousand each.
func integralRows(rb *rowBuffer, groups []*groupSums, groupOf func(r, i int) int, r int, run *ingest.Run, xs [][]float64,
	lib *poly.Library, m *Model, sc *varScale, steps int, work, z, theta []float64, inSteps []int) {
	n := len(m.States)
	L := run.Len()
	var qw []float64 // the window's quadrature weights
	for a := 0; a+2 <= L-1; a += steps {
		b := min(a+steps, L-1)
		// a window with an input step inside: Simpson's rule on a
		// jump is off by a share of the jump (see inputSteps)
		for len(inSteps) > 0 && inSteps[0] <= a {
			inSteps = inSteps[1:]
		}
		if len(inSteps) > 0 && inSteps[0] <= b {
			if b == L-1 {
				break
			}
			continue
		}
		phi, y := rb.row(groups[groupOf(r, a)])
		for k := range phi {
			phi[k] = 0
		}
		qw = simpsonWeights(qw[:0], run.T[a:b+1])
		for i := a; i <= b; i++ {
			w := qw[i-a]
			for j := 0; j < n; j++ {
				z[j] = (xs[j][i] - m.Centre[j]) / m.Spread[j]
			}
			for k, u := range run.U {
				z[n+k] = (u[i] - sc.centre[n+k]) / sc.spread[n+k]
			}
			lib.EvalWorkTo(theta, work, z)
			for k, v := range theta {
				phi[k] += w * v
			}
		}
		// Rows divided by the window's duration: y is the window-mean
		// slope and phi the window mean of the library, so a residual is
		// in the state's unit per second (over Spread).
		dur := run.T[b] - run.T[a]
		for k := range phi {
			phi[k] /= dur
		}
		for j := 0; j < n; j++ {
			y[j] = (xs[j][b] - xs[j][a]) / (m.Spread[j] * dur)
		}
		if !finite(y...) || !finite(phi...) {
			rb.unrow()
		}
		if b == L-1 {
			break
		}
	}
}

// equilibria finds where the runs settle and the fitted field's
// equilibria, and fills the model's equilibrium fields.
func equilibria(m *Model, runs []*ingest.Run) {
	n := len(m.States)
	var tails, settled [][]float64
	for _, r := range runs {
		L := r.Len()
		k := max(3, int(math.Ceil(settleShare*float64(L))))
		k = min(k, L)
		med := make([]float64, n)
		for j := 0; j < n; j++ {
			seg := append([]float64(nil), r.X[j][L-k:]...)
			sort.Float64s(seg)
			med[j] = seg[len(seg)/2]
		}
		tails = append(tails, med)
		// Settled by ingest's rule, the one inspect counts by: judged
		// against the run's noise, not a share of the spread.
		if ok, pt := ingest.Settles(r); ok {
			settled = append(settled, pt)
		}
	}
	m.SettledRuns = len(settled)
	src := settled
	if len(src) == 0 {
		src = tails
	}
	m.Settle = make([]float64, n)
	for j := 0; j < n; j++ {
		v := make([]float64, len(src))
		for i, s := range src {
			v[i] = s[j]
		}
		slices.Sort(v)
		m.Settle[j] = order.Quantile(v, 0.5)
	}
	starts := [][]float64{m.Settle}
	stride := max(1, len(tails)/50)
	for i := 0; i < len(tails); i += stride {
		starts = append(starts, tails[i])
	}
	starts = append(starts, m.Centre)
	starts = append(starts, gridStarts(m.Lower, m.Upper)...)
	eqs := findEquilibria(m, starts, m.Lower, m.Upper, m.Spread)
	best, bestD := -1, math.Inf(1)
	for i, e := range eqs {
		d := 0.0
		for j := range e.Point {
			v := (e.Point[j] - m.Settle[j]) / m.Spread[j]
			d += v * v
		}
		if d < bestD {
			best, bestD = i, d
		}
	}
	if best < 0 {
		m.Equilibria = []Equilibrium{}
		m.Equilibrium = append([]float64(nil), m.Settle...)
		_, eig, _ := linearise(NewFieldEvaluator(m), m.Settle)
		m.JacobianEigenvalues = eig
		m.Note = "no equilibrium of the fitted field found; equilibrium and eigenvalues are at the settle point"
		return
	}
	eqs[0], eqs[best] = eqs[best], eqs[0]
	m.Equilibria = eqs
	m.Equilibrium = append([]float64(nil), eqs[0].Point...)
	m.JacobianEigenvalues = eqs[0].Eigenvalues
	if !eqs[0].InEnvelope {
		m.Note = "the equilibrium nearest where the runs settle lies outside the data's box"
	}
}

// modelFinite reports whether every number in m is finite.
func modelFinite(m *Model) bool {
	ok := finite(m.Equilibrium...) && finite(flattenPairs(m.JacobianEigenvalues)...) &&
		finite(m.Threshold, m.Ridge, m.Condition, m.HeldoutError) &&
		finite(m.Centre...) && finite(m.Spread...) && finite(m.Lower...) && finite(m.Upper...) &&
		finite(m.Noise...) && finite(m.Settle...)
	for _, e := range m.Equations {
		ok = ok && finite(e.Coefficients...) && finite(e.HeldoutError, e.NoiseFloorRMS, e.LackOfFit, e.InsideLackOfFit, e.InsideShare)
		for _, t := range e.Terms {
			ok = ok && finite(t.Interval[0], t.Interval[1], t.KeptShare)
		}
	}
	for _, e := range m.Equilibria {
		ok = ok && finite(e.Point...) && finite(flatten(e.Jacobian)...) && finite(flattenPairs(e.Eigenvalues)...)
	}
	return ok
}

// simpsonWeights appends to dst the weights of composite Simpson's rule
// on the nodes t (at least 3, increasing, spacing uneven allowed), one per
// node, and returns it: each pair of intervals integrates the parabola
// through its three nodes; an odd last interval integrates the parabola
// through the last three nodes over that interval alone; steps more
// than a factor 2 apart take the trapezoid rule. The rule is exact for
// quadratics on any such spacing, and on even uniform spacing it is
// the textbook composite rule (h/3, 4h/3, 2h/3, ..., h/3), exact for
// cubics. It panics when t has fewer than 3 nodes.
func simpsonWeights(dst, t []float64) []float64 {
	N := len(t) - 1
	if N < 2 {
		panic("fit: Simpson weights on fewer than 3 nodes")
	}
	for range t {
		dst = append(dst, 0)
	}
	// even reports whether steps h0, h1 are close enough for the
	// parabola (every weight of a pair stays non-negative); else the
	// trapezoid rule takes them.
	even := func(h0, h1 float64) bool { return h0 > 0 && h1 > 0 && h1 <= 2*h0 && h0 <= 2*h1 }
	for i := 0; i+2 <= N; i += 2 {
		h0, h1 := t[i+1]-t[i], t[i+2]-t[i+1]
		if !even(h0, h1) {
			dst[i] += h0 / 2
			dst[i+1] += (h0 + h1) / 2
			dst[i+2] += h1 / 2
			continue
		}
		s := h0 + h1
		dst[i] += s / 6 * (2 - h1/h0)
		dst[i+1] += s / 6 * s * s / (h0 * h1)
		dst[i+2] += s / 6 * (2 - h0/h1)
	}
	if N%2 == 1 {
		h0, h1 := t[N-1]-t[N-2], t[N]-t[N-1]
		if !even(h0, h1) {
			dst[N-1] += h1 / 2
			dst[N] += h1 / 2
		} else {
			dst[N] += (2*h1*h1 + 3*h0*h1) / (6 * (h0 + h1))
			dst[N-1] += (h1*h1 + 3*h0*h1) / (6 * h0)
			dst[N-2] -= h1 * h1 * h1 / (6 * h0 * (h0 + h1))
		}
	}
	return dst
}

// fieldLibrary returns the monomials of n states and q inputs (the last
// q variables) of total degree at most degree whose degree in the inputs
// is at most inDeg, in graded order. The set is closed under division
// (a divisor of a term has no more degree in anything), as shiftMatrix
// needs.
func fieldLibrary(n, q, degree, inDeg int) *poly.Library {
	all := poly.NewLibrary(n+q, 0, degree)
	if q == 0 || inDeg >= degree {
		return all
	}
	var keep [][]int
	for _, e := range all.Terms() {
		d := 0
		for _, x := range e[n:] {
			d += x
		}
		if d <= inDeg {
			keep = append(keep, e)
		}
	}
	return poly.FromExponents(n+q, keep)
}

// stepFactor: an input's change between two samples is a step when it
// exceeds stepFactor times the run's median absolute change of that
// input (a drive logged as levels, steps and pulses has median change 0,
// so every change is a step; a swept drive's steady change is not).
// Eight medians of a noisy input's |Δu| is about 7.5 of its noise's
// standard deviations (median |Δu| = 0.954 σ for Gaussian noise; common
// practice for an outlier cut).
const stepFactor = 8

// inputSteps appends to dst, ascending, the sample indices k of run at
// which an input steps between samples k-1 and k (see stepFactor): the
// state's slope jumps there, so a derivative whose window holds a step
// (k-reach <= i-1 and i+reach >= k for row i, or an integral window
// (a, b] that holds k) is biased by a share of the jump times the
// input's gain, and on a rig log of pulses that bias fitted spurious
// x·u terms and cut the drive's gain by a quarter (TestInputDegreePulse).
// Rows are left out only while that keeps at least half of the run: an
// input switching every few samples leaves no clean window, and then
// every row is kept and its bias with it. reach and steps (the
// integral form's window) size the rows a step spoils.
func inputSteps(dst []int, run *ingest.Run, reach, steps int) []int {
	L := run.Len()
	if len(run.U) == 0 || L < 3 {
		return dst
	}
	var d []float64
	for _, u := range run.U {
		if len(u) != L {
			continue
		}
		d = d[:0]
		for k := 1; k < L; k++ {
			if c := math.Abs(u[k] - u[k-1]); c == c {
				d = append(d, c)
			}
		}
		if len(d) == 0 {
			continue
		}
		cut := stepFactor * order.HighMedian(order.Sorted(d, d))
		for k := 1; k < L; k++ {
			if c := math.Abs(u[k] - u[k-1]); c > cut {
				dst = append(dst, k)
			}
		}
	}
	slices.Sort(dst)
	dst = slices.Compact(dst)
	// the rows left out, at most (2·reach+1 rows a step, or one integral
	// window of steps+1 samples)
	span := 2*reach + 1
	if reach == 0 {
		span = max(steps, 1)
	}
	if len(dst)*span > L/2 {
		return dst[:0]
	}
	// Nor may the rows left out be most of those where an input is away
	// from its usual value (its run's median): a pulse shorter than a
	// derivative window would leave the fit no row with the input on,
	// and its terms no data at all (a 0.5 s pulse against windows of
	// 0.6 s made the library singular). Such a run keeps every row, and
	// the edges' bias with it.
	active, kept := 0, 0
	for _, u := range run.U {
		if len(u) != L {
			continue
		}
		med := order.HighMedian(order.Sorted(d, u))
		for i := range L {
			if u[i] == med || u[i] != u[i] {
				continue
			}
			active++
			if !spoils(dst, i, reach, span) {
				kept++
			}
		}
	}
	if 2*kept < active {
		return dst[:0]
	}
	return dst
}

// spoils says a step in steps (ascending) lies in row i's window: k in [i-reach+1, i+reach] for a
// derivative of reach samples each side, or, for the integral form
// (reach 0), in the window of span steps that holds i.
func spoils(steps []int, i, reach, span int) bool {
	for _, k := range steps {
		if reach > 0 {
			if k > i+reach {
				return false
			}
			if k >= i-reach+1 {
				return true
			}
			continue
		}
		a := i - i%span // the integral window (a, a+span] holding sample i
		if k > a+span {
			return false
		}
		if k > a {
			return true
		}
	}
	return false
}
