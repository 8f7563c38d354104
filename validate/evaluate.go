package validate

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"path/filepath"
	"slices"
	"sort"
	"strings"

	"basin.example/fit"
	"basin.example/ingest"
	"basin.example/internal/parallel"
)

// Options controls Evaluate and Check. A nil *Options means defaults.
type Options struct {
	Folds int    // folds over runs; 0 means 5
	Seed  uint64 // 0 means 1
	// Beta is the scenario approach's confidence parameter; 0 means 1e-6.
	Beta float64
	// MinDecrease is the decrease_fraction a certified verdict needs; 0
	// means 0.99.
	MinDecrease float64
	// Tolerance overrides the certificate's noise tolerance on a rise of
	// V between consecutive samples, in units of V; 0 means the
	// certificate's.
	Tolerance float64
	// LinearTol: an eigenvalue whose real part exceeds LinearTol times its
	// own magnitude makes the linearisation unstable, and one within
	// ±LinearTol of it non-hyperbolic (stable strength at most); 0 means
	// 0.005.
	LinearTol float64
	// MinEntered is the fewest held-out runs that must enter the region
	// for a certified verdict (each is checked from its first sample
	// inside); 0 means 3, so that no single atypical run decides.
	MinEntered int
	// DepartTol is the normalised trajectory error (per state, in units of
	// the state's held-out spread) at which a simulation departs from its
	// run; 0 means 0.1.
	DepartTol float64
	// Equilibrium, when not nil, picks the fitted equilibrium nearest this
	// point (in the states' units) as the one to certify in every fold;
	// nil means the one the runs settle on.
	Equilibrium []float64
	// AllFolds is the default and kept for older callers: every fold is
	// held out once (see OneFold).
	AllFolds bool
	// OneFold fits only the released split (fold 0 held out), so the
	// verdict may depend on which runs the seed holds out; false means
	// every fold is held out once and the verdict is combined over the
	// folds (see combineFolds).
	OneFold bool
	// Workers is the most folds fitted and checked at once; 0 means
	// GOMAXPROCS. The result does not depend on it, bit for bit: each
	// fold's work is the same whichever goroutine does it, and the folds
	// are combined in fold order.
	Workers int
	Field   *fit.FieldOptions
	Certify *fit.CertifyOptions
	// Progress, when not nil, is called by Evaluate as each stage starts,
	// with the stage's name and the share of the whole job done before it
	// (0 to 1, by fixed weights per stage measured on logs of a million
	// samples: fitting about a third of a fold, certifying most of the
	// rest); and with 1 at the end. When folds run at once, done is the
	// sum of the folds' shares and stage is the latest fold's. It is
	// called from Evaluate's goroutine. Nil means no calls.
	Progress func(stage string, done float64)
	// Whole, when not nil, is the data set that Check's runs were cut
	// from by fit.RestSegments (the pieces where the inputs rest): a
	// piece that ends before its recording does ends where an input left
	// rest, so it is not judged on settling (no unsettled flag, RunScreen.Cut
	// says why, and fit.Validation.CutShort counts it when it did not
	// settle); its rises and leaves are still checked. Nil means Check's
	// runs are whole recordings. Evaluate ignores it and sets it for its
	// own held-out pieces.
	//
	// Either way, a run that ends where a gap or a one-sample jump split
	// its recording (every piece of a split recording but the last; see
	// [SplitCuts]) is not judged on settling either: the recordings'
	// splits are read from Whole when it is set, else from Check's data
	// set, whose Events must then be the readers' (ingest.Dataset.Events).
	Whole *ingest.Dataset

	// splits, when not nil, are the gap and jump cuts of the runs of the
	// data set Evaluate was given (SplitCuts), found before the folds
	// took their subsets (which keep neither the other pieces of a
	// recording nor its events).
	splits map[RunKey]*Cut
}

// Weights of the stages of one fold in Evaluate's progress.
const (
	progressField   = 0.3
	progressCertify = 0.65
)

func (o *Options) progress(stage string, done float64) {
	if o.Progress != nil {
		o.Progress(stage, done)
	}
}

func (o *Options) get() Options {
	var r Options
	if o != nil {
		r = *o
	}
	if r.Folds <= 0 {
		r.Folds = 5
	}
	if r.Seed == 0 {
		r.Seed = 1
	}
	if r.Beta <= 0 || r.Beta >= 1 {
		r.Beta = 1e-6
	}
	if r.MinDecrease <= 0 || r.MinDecrease > 1 {
		r.MinDecrease = 0.99
	}
	if r.LinearTol <= 0 {
		r.LinearTol = 0.005
	}
	if r.MinEntered <= 0 {
		r.MinEntered = 3
	}
	if r.DepartTol <= 0 {
		r.DepartTol = 0.1
	}
	return r
}

// farEquilibrium: a requested equilibrium more than this many spreads
// (robust scale per state, Euclidean over states) from every fitted one
// names none of them.
const farEquilibrium = 0.5

// MinRuns is the fewest runs that allow a held-out verdict.
const MinRuns = 3

// ErrOptions is returned for an option out of range.
var ErrOptions = errors.New("bad validate option")

// Result is the whole evaluation: model and certificate fitted on the fit
// runs, checked on the held-out runs.
type Result struct {
	Model       *fit.Model
	Certificate *fit.Certificate
	// Heldout[i] says run i of the data set was held out.
	Heldout []bool
	// Runs holds the per-run checks of the held-out runs.
	Runs []RunScreen
	// FoldVerdicts holds the verdict with each fold held out (fold 0 is
	// the released one) when Options.AllFolds is set, else only fold 0's.
	FoldVerdicts []fit.Verdict
}

// Split assigns each run a fold in 0..folds-1 by a permutation seeded
// with seed (runs are dealt round robin in permuted order, so fold sizes
// differ by at most one). A manifest wins: when some run has Split
// "holdout", those runs get fold 0 and all others -1 (always fitted);
// otherwise runs marked "fit" get -1 and the rest are dealt. It panics if
// folds < 1.
func Split(runs []ingest.Run, folds int, seed uint64) []int {
	if folds < 1 {
		panic("validate: Split: folds < 1")
	}
	out := make([]int, len(runs))
	manual := false
	for i := range runs {
		if runs[i].Split == "holdout" {
			manual = true
		}
	}
	var auto []int
	for i := range runs {
		switch {
		case manual && runs[i].Split == "holdout":
			out[i] = 0
		case manual || runs[i].Split == "fit":
			out[i] = -1
		default:
			auto = append(auto, i)
		}
	}
	rng := rand.New(rand.NewPCG(seed, 0))
	rng.Shuffle(len(auto), func(a, b int) { auto[a], auto[b] = auto[b], auto[a] })
	for k, i := range auto {
		out[i] = k % folds
	}
	return out
}

// subset returns a data set with the runs where keep is true; the runs
// share storage with ds.
func subset(ds *ingest.Dataset, keep func(i int) bool) *ingest.Dataset {
	out := &ingest.Dataset{States: ds.States, Inputs: ds.Inputs, Held: ds.Held, Average: ds.Average, Time: ds.Time}
	for i := range ds.Runs {
		if keep(i) {
			out.Runs = append(out.Runs, ds.Runs[i])
		}
	}
	return out
}

// Check runs the certificate checks and the scenario bound on the runs
// of ds, which the certificate must not have seen. It returns the figures
// (Folds is left 0) and the per-run results in run order. Errors are for
// a data set whose states differ from the certificate's and a done ctx.
func Check(ctx context.Context, cert *fit.Certificate, ds *ingest.Dataset, opts *Options) (*fit.Validation, []RunScreen, error) {
	o := opts.get()
	if len(ds.States) != len(cert.States) {
		return nil, nil, fmt.Errorf("certificate has %d states, data %d: %w", len(cert.States), len(ds.States), fit.ErrMismatch)
	}
	for j, c := range ds.States {
		if c.Name != cert.States[j] {
			return nil, nil, fmt.Errorf("state %d is %q in the certificate but %q in the data: %w", j+1, cert.States[j], c.Name, fit.ErrMismatch)
		}
	}
	tau := Decorrelation(ds.Runs)
	s := NewScreener(cert, &ScreenOptions{Tolerance: o.Tolerance})
	s.spacing = tau
	s.noSettle = false // settling decides the strength, whatever the certificate claimed
	runs := make([]RunScreen, len(ds.Runs))
	vp := cert.V.Compile(len(cert.States))
	val := &fit.Validation{HeldoutRuns: len(ds.Runs), Decorrelation: tau, Confidence: 1 - o.Beta}
	var scen, viol, started, entered, stayed int
	worst := math.Inf(-1)
	settleRatio := 0.0
	var cuts []*Cut
	var parents map[RunKey]*ingest.Run // the recordings of the pieces, by file and name
	splits := o.splits
	if o.Whole != nil {
		cuts = InputCuts(o.Whole, ds)
		parents = make(map[RunKey]*ingest.Run, len(o.Whole.Runs))
		for i := range o.Whole.Runs {
			r := &o.Whole.Runs[i]
			parents[RunKey{r.Source.File, r.Name}] = r
		}
		if splits == nil {
			splits = SplitCuts(o.Whole)
		}
	} else if splits == nil {
		splits = SplitCuts(ds)
	}
	for i := range ds.Runs {
		if err := ctx.Err(); err != nil {
			return nil, nil, err
		}
		r := &runs[i]
		s.Screen(r, ds.Runs[i].Source.File, &ds.Runs[i])
		if k := slices.IndexFunc(r.Flags, func(f Flag) bool { return f.Kind == FlagUnsettled }); k >= 0 {
			// came to rest outside the region: at another rest point
			// (without a region, nowhere is outside it: a run at rest on
			// the equilibrium is not elsewhere)
			hasRegion := len(cert.V.Exponents) > 0 && cert.Level > 0
			if ok, pt := ingest.Settles(&ds.Runs[i]); ok && hasRegion && !s.Inside(pt) {
				r.Flags[k].RestPoint = pt
			}
		}
		var cut *Cut
		if cuts != nil {
			cut = cuts[i]
		}
		if cut == nil {
			cut = splitCutOf(splits, parents, &ds.Runs[i])
		}
		if cut != nil {
			// cut by a gap, a jump or an input's onset: no chance to
			// settle, so no unsettled flag
			r.Cut = cut
			r.Flags = slices.DeleteFunc(r.Flags, func(f Flag) bool { return f.Kind == FlagUnsettled })
			r.Flagged = len(r.Flags) > 0
		}
		if r.EverInside {
			r.lateRate, r.lateOK = lateRate(cert, vp, &ds.Runs[i], r.enter)
		}
		val.Pairs += r.Pairs
		dec := r.Decreased
		val.DecreaseFraction += float64(dec)
		scen += r.scen
		viol += r.scenViol
		if r.Pairs > 0 && r.worstExcess > 0 && r.worstExcess > worst {
			worst = r.worstExcess
			val.Worst = &fit.Violation{Run: r.Run, Time: r.worstTime, State: append([]float64(nil), s.worstX...),
				Excess: clampFinite(r.worstExcess), Kind: FlagRises}
		}
		if r.StartInside {
			started++
		}
		if r.EverInside {
			// Validation from entry: from its first sample inside, the run
			// must not leave (beyond the tolerance) and must settle when
			// the rest of it is long enough to tell.
			entered++
			if !hasFlag(r, FlagLeaves) || flagOf(r, FlagLeaves).Excess <= s.tol {
				stayed++ // leaving within the noise tolerance is staying
			}
			if f := flagOf(r, FlagLeaves); hasFlag(r, FlagLeaves) && (val.Worst == nil || val.Worst.Kind != FlagLeaves || f.Excess > val.Worst.Excess) {
				// leaving after entering outranks any rise
				val.Worst = &fit.Violation{Run: r.Run, Time: f.Time, State: stateAt(&ds.Runs[i], f.Time), Excess: f.Excess, Kind: FlagLeaves}
				worst = math.Inf(1)
			}
			if r.settledEntry {
				val.Settled++
			} else if r.Cut != nil {
				val.CutShort++
				if val.CutShortBy == nil {
					val.CutShortBy = map[string]int{}
				}
				val.CutShortBy[r.Cut.Reason]++
			}
			if r.vEnter > 0 {
				settleRatio = max(settleRatio, r.VEnd/r.vEnter)
			}
		}
	}
	val.StartInside = started
	val.EnteredRuns = entered
	if val.Pairs > 0 {
		val.DecreaseFraction /= float64(val.Pairs)
	}
	if entered > 0 {
		val.InvarianceFraction = float64(stayed) / float64(entered)
	}
	val.SettleRatio = clampFinite(settleRatio)
	val.Decay = DecayOf(runs)
	val.ScenarioSamples = scen
	val.DecisionVars = len(cert.V.Exponents) + 1
	val.ScenarioViolations = viol
	val.ViolationBound = ViolationBound(scen, val.DecisionVars+viol, o.Beta)
	val.Note = fmt.Sprintf("scenario bound: N = %d held-out pairs inside the region at least %.3g s apart "+
		"(decorrelation time: lag where the states' autocorrelation falls below 1/e, median over runs); "+
		"d = %d LP decision variables + %d violations among them", scen, tau, val.DecisionVars, viol)
	return val, runs, nil
}

func hasFlag(r *RunScreen, kind string) bool {
	for _, f := range r.Flags {
		if f.Kind == kind {
			return true
		}
	}
	return false
}

func flagOf(r *RunScreen, kind string) Flag {
	for _, f := range r.Flags {
		if f.Kind == kind {
			return f
		}
	}
	return Flag{}
}

// stateAt returns run's state at the first sample with time >= t.
func stateAt(run *ingest.Run, t float64) []float64 {
	i := sort.SearchFloat64s(run.T, t)
	i = min(i, run.Len()-1)
	out := make([]float64, len(run.X))
	for j := range out {
		out[j] = run.X[j][i]
	}
	return out
}

// linear classifies a linearisation.
type linear int

const (
	linUnknown  linear = iota
	linStable          // every real part below -tol·|λ|
	linMarginal        // none above +tol·|λ|, some within
	linUnstable        // some real part above +tol·|λ|
)

func classify(eig [][2]float64, tol float64) (linear, float64) {
	if len(eig) == 0 {
		return linUnknown, 0
	}
	cls, top := linStable, math.Inf(-1)
	for _, e := range eig {
		if math.IsNaN(e[0]) || math.IsNaN(e[1]) {
			return linUnknown, math.NaN()
		}
		top = max(top, e[0])
		mag := math.Hypot(e[0], e[1])
		switch {
		case e[0] > tol*mag:
			return linUnstable, e[0]
		case e[0] >= -tol*mag:
			cls = linMarginal
		}
	}
	return cls, top
}

// Decide sets cert's Verdict, Strength and Reason from the held-out
// figures val, the runs checked and the linearisation's eigenvalues (nil
// when unknown: then the certificate's own strength stands in for it).
// See the package doc for the rules. Two more hold for the stable
// strength: a certificate marked fit.Certificate.NonRise (V fitted only
// not to rise, at a non-hyperbolic linearisation) is never asymptotic,
// and no run that entered may end with its mean V above V at entry by
// more than the tolerance (slow growth: inconclusive). The certificate's
// ReasonKind is set with the Reason.
func Decide(cert *fit.Certificate, val *fit.Validation, runs []RunScreen, eig [][2]float64, opts *Options) {
	o := opts.get()
	v, s, kind, why := decide(cert, val, runs, eig, o)
	cert.Verdict, cert.Strength, cert.ReasonKind, cert.Reason = v, s, kind, why
	cert.Empirical, cert.Caveat = true, fit.Caveat
	cert.Validation = val
}

// trendsUp reports whether decay rates say V trends up: at least three
// rates, most of them below zero, and their mean more than growthSE
// standard errors below zero. It returns how many are below zero, how
// many there are, their mean and its standard error.
func trendsUp(rates []float64) (neg, n int, mean, se float64, up bool) {
	n = len(rates)
	if n < 3 {
		return 0, n, 0, 0, false
	}
	for _, x := range rates {
		if x < 0 {
			neg++
		}
		mean += x / float64(n)
	}
	ss := 0.0
	for _, x := range rates {
		ss += (x - mean) * (x - mean)
	}
	se = math.Sqrt(ss / float64(n-1) / float64(n))
	return neg, n, mean, se, 2*neg > n && mean+growthSE*se < 0
}

// clearGrowthSE is how many standard errors below zero the held-out
// runs' mean decay rate must lie for the reason to say V grows rather
// than that slow growth cannot be told from stability: a z-score of -5,
// the "five sigma" convention (one-sided normal tail 2.9e-7; common
// practice). With few runs the mean's t distribution has heavier tails
// (3 runs, 2 degrees of freedom: P(t < -5) = 0.019; 6 runs: 0.0021), so
// it is still far stronger evidence than growthSE's. The verdict stays
// inconclusive either way: growth of this V along the runs shows that
// V is no Lyapunov function there, not that every V must rise, so it is
// not the contract's rejected.
const clearGrowthSE = 5

// trendWords is the reason for a trend up of V (trendsUp's figures):
// "along" the whole runs or "over the later half of" them, where says
// " there" for the latter. Below clearGrowthSE standard errors the data
// show growth; nearer zero slow growth cannot be told from stability.
func trendWords(span, where string, neg, n int, mean, se float64) string {
	if mean < -clearGrowthSE*se {
		return fmt.Sprintf("V grows %s %d of the %d held-out runs that entered the region (mean decay rate%s %.3g ± %.2g 1/s, %s standard errors below zero): the data show growth, not stability. This V is no Lyapunov function there, and the runs may be leaving the equilibrium, as a growing oscillation does: look at those runs before recording more.", span, neg, n, where, mean, se, zText(mean, se))
	}
	return fmt.Sprintf("V trends up %s %d of the %d held-out runs that entered the region (mean decay rate%s %.3g ± %.2g 1/s, below zero): slow growth cannot be told from stability. Record longer runs to tell.", span, neg, n, where, mean, se)
}

// zText writes how many standard errors se the mean lies below zero, to
// two significant digits, or "over 100" beyond that (every rate alike
// gives a standard error at round-off, and a z-score of 10^14 says no
// more than 100 does).
func zText(mean, se float64) string {
	if z := -mean / se; z <= 100 {
		return fmt.Sprintf("%.2g", z)
	}
	return "over 100"
}

// growthSE is how many standard errors below zero the held-out runs'
// mean decay rate must lie for V to be said to trend up (about a one-sided
// 5% level for a handful of runs under a normal model; common practice).
const growthSE = 2

func decide(cert *fit.Certificate, val *fit.Validation, runs []RunScreen, eig [][2]float64, o Options) (fit.Verdict, fit.Strength, fit.ReasonKind, string) {
	lin, top := classify(eig, o.LinearTol)
	if eig == nil {
		switch {
		case cert.Verdict == fit.Certified && cert.Strength == fit.Asymptotic:
			lin = linStable
		case cert.Verdict == fit.Certified:
			lin = linMarginal
		case cert.Verdict == fit.Rejected && (cert.ReasonKind == fit.ReasonUnstableLinearisation || cert.Contradicted):
			lin = linUnstable
		}
	}
	if lin == linUnstable {
		if eig == nil {
			return fit.Rejected, fit.NoClaim, fit.ReasonUnstableLinearisation, cert.Reason
		}
		return fit.Rejected, fit.NoClaim, fit.ReasonUnstableLinearisation, fmt.Sprintf("The linearisation at the equilibrium is unstable (largest eigenvalue real part %+.3g 1/s).", top)
	}
	if !cert.Found || len(cert.V.Exponents) == 0 || !(cert.Level > 0) {
		if cert.ReasonKind == fit.ReasonUnstableLinearisation && lin == linMarginal {
			// The search saw a real part above zero, but within LinearTol
			// of the eigenvalue's size: too near the imaginary axis for
			// the fit to tell slow growth from light damping, so the data
			// do not contradict stability and the verdict says so.
			cert.Contradicted, cert.Contradiction = false, ""
			return fit.Inconclusive, fit.NoClaim, fit.ReasonLinearMarginal, fmt.Sprintf("No V was fitted: the fitted linearisation at the equilibrium has an eigenvalue with real part %+.3g 1/s, within %.2g%% of its size, too near the imaginary axis to tell slow growth from light damping. Record longer runs, or runs that settle, to tell.", top, 100*o.LinearTol)
		}
		why := cert.Reason
		if why == "" {
			why = "No Lyapunov function was found on the fit runs."
		}
		return fit.Inconclusive, fit.NoClaim, cert.ReasonKind, why
	}
	tol := o.Tolerance
	if tol <= 0 {
		tol = cert.Tolerance
	}
	for _, r := range runs {
		if r.StartInside && hasFlag(&r, FlagLeaves) {
			if f := flagOf(&r, FlagLeaves); f.Excess > tol {
				return fit.Rejected, fit.NoClaim, fit.ReasonLeft, fmt.Sprintf("Held-out run %s started inside the region and left it at t = %.4g s (V above the level by %.3g).", runLabel(r), f.Time, f.Excess)
			}
		}
	}
	for _, r := range runs {
		if !r.StartInside && hasFlag(&r, FlagLeaves) {
			// entered later and left: the region is not invariant on this
			// run; not a contradiction of the equilibrium's stability.
			if f := flagOf(&r, FlagLeaves); f.Excess > tol {
				return fit.Inconclusive, fit.NoClaim, fit.ReasonLeft, fmt.Sprintf("Held-out run %s entered the region and left it again at t = %.4g s (V above the level by %.3g). Record more runs through that part of the state space, or expect a smaller region.", runLabel(r), f.Time, f.Excess)
			}
		}
	}
	where := regionWords(cert)
	switch {
	case val.HeldoutRuns == 0:
		return fit.Inconclusive, fit.NoClaim, fit.ReasonNoHeldout, "No held-out runs to check the certificate on. Record more runs so that some can be held out."
	case val.EnteredRuns == 0:
		return fit.Inconclusive, fit.NoClaim, fit.ReasonNoneEntered, fmt.Sprintf("None of the %d held-out runs entered the certified region, so nothing checks it. Record runs that start or pass within %s.", val.HeldoutRuns, where)
	case val.EnteredRuns < o.MinEntered:
		return fit.Inconclusive, fit.NoClaim, fit.ReasonFewEntered, fmt.Sprintf("Only %d of the %d held-out runs entered the certified region (%d needed). Record more runs that start or pass within %s.", val.EnteredRuns, val.HeldoutRuns, o.MinEntered, where)
	case val.Pairs == 0:
		return fit.Inconclusive, fit.NoClaim, fit.ReasonNoHeldoutPairs, fmt.Sprintf("No held-out sample pairs lie inside the region outside the noise ball. Record runs that pass within %s, away from the equilibrium.", where)
	case val.DecreaseFraction < o.MinDecrease:
		return fit.Inconclusive, fit.NoClaim, fit.ReasonHeldoutRise, fmt.Sprintf("V did not rise beyond the noise tolerance on only %s of %d held-out pairs inside the region (%.1f%% needed). The model or V does not hold there; try more runs or a different fit.CertifyOptions.Degree.", sharePct(val.DecreaseFraction), val.Pairs, 100*o.MinDecrease)
	case val.InvarianceFraction < 1:
		return fit.Inconclusive, fit.NoClaim, fit.ReasonLeft, fmt.Sprintf("%d of %d held-out runs that entered the region left it again beyond the noise tolerance. Record more runs near the region's edge.", val.EnteredRuns-int(math.Round(val.InvarianceFraction*float64(val.EnteredRuns))), val.EnteredRuns)
	case lin == linUnknown && eig != nil:
		return fit.Inconclusive, fit.NoClaim, fit.ReasonLinearUnknown, "The linearisation at the equilibrium could not be classified. Record runs that settle on the equilibrium."
	}
	// Settling is judged on the runs that entered with enough samples
	// after entry to tell (two tail windows); at least one must.
	long, settled := 0, 0
	for _, r := range runs {
		if r.EverInside && r.longAfter && r.Cut == nil { // a piece cut short had no chance to settle
			long++
			if r.settledEntry {
				settled++
			}
		}
	}
	if long > 0 && settled == long && cert.Margin > 0 && !cert.NonRise && lin == linStable {
		return fit.Certified, fit.Asymptotic, fit.ReasonCertified, fmt.Sprintf("V did not rise beyond the noise tolerance on %s of %d held-out pairs inside the region; %s.", sharePct(val.DecreaseFraction), val.Pairs, settledWords(val.EnteredRuns, long))
	}
	// The weaker claim still needs V not to drift up: a run that entered
	// and ends with V higher than at entry by more than the tolerance
	// grows (slowly enough to stay inside this time).
	for _, r := range runs {
		if r.EverInside && r.VEnd-r.vEnter > tol {
			return fit.Inconclusive, fit.NoClaim, fit.ReasonHeldoutRise, fmt.Sprintf("V rose along held-out run %s from %.4g where it entered the region to %.4g at its end (tolerance %.3g): growth, not stability, so this V is no Lyapunov function along that run. Look at that run (a growing oscillation, a drift, a fault) before recording more.", runLabel(r), r.vEnter, r.VEnd, tol)
		}
	}
	// Nor may V trend up along the runs: a slowly growing oscillation
	// rises by less than the tolerance over a run, but its decay rate
	// (minus the slope of log V over many samples) is below zero on most
	// of them, with their mean more than two standard errors below zero;
	// a stable one's scatter about zero or above.
	var rates, late []float64
	for _, r := range runs {
		if r.EverInside && r.DecaySamples > 0 {
			rates = append(rates, r.DecayRate)
		}
		if r.EverInside && r.lateOK {
			late = append(late, r.lateRate)
		}
	}
	if neg, n, mean, se, up := trendsUp(rates); up {
		return fit.Inconclusive, fit.NoClaim, fit.ReasonHeldoutRise, trendWords("along", "", neg, n, mean, se)
	}
	// The same over the later half of each run from entry: a transient
	// that dies early (V falling fast at first) can hide a slow rise that
	// goes on to the end.
	if neg, n, mean, se, up := trendsUp(late); up {
		return fit.Inconclusive, fit.NoClaim, fit.ReasonHeldoutRise, trendWords("over the later half of", " there", neg, n, mean, se)
	}
	why := "not all settled"
	switch {
	case cert.NonRise:
		why = "V was only fitted not to rise (the linearisation has an eigenvalue on the imaginary axis)"
	case long == 0:
		why = "no run was long enough after entering to show settling"
	case settled == long && lin != linStable:
		why = "settled, but the linearisation is not strictly stable"
	case settled == long:
		why = "settled, but V has no positive decrease margin"
	}
	return fit.Certified, fit.Stable, fit.ReasonCertified, fmt.Sprintf("V did not rise beyond the noise tolerance on %s of %d held-out pairs and %s stayed inside but %s: stability without shown convergence.", sharePct(val.DecreaseFraction), val.Pairs, enteredRuns(val.EnteredRuns), why)
}

// regionWords describes the certified region's box per state in the
// states' units, for a reason's next step: "theta within -0.3..0.4 rad".
func regionWords(cert *fit.Certificate) string {
	box := cert.Region.Extent
	if len(box) != len(cert.States) {
		box = cert.Box
	}
	if len(box) != len(cert.States) {
		return "the certified region"
	}
	parts := make([]string, len(box))
	for j, b := range box {
		u := ""
		if j < len(cert.Units) && cert.Units[j] != "" {
			u = " " + cert.Units[j]
		}
		e := 0.0
		if j < len(cert.Equilibrium) {
			e = cert.Equilibrium[j]
		}
		lo, hi := b[0]-e, b[1]-e
		if math.Abs(e) < 1e-9*math.Max(-lo, hi) {
			e = 0 // rounding left by the equilibrium's solve, not a place
		}
		if scalarClose(-lo, hi) {
			parts[j] = fmt.Sprintf("%s %.4g ±%.3g%s", cert.States[j], e, hi, u)
		} else {
			parts[j] = fmt.Sprintf("%s %.4g..%.4g%s", cert.States[j], b[0], b[1], u)
		}
	}
	return strings.Join(parts, ", ")
}

// scalarClose says a and b agree to 5% (a symmetric box prints as ±).
func scalarClose(a, b float64) bool { return math.Abs(a-b) <= 0.05*math.Max(math.Abs(a), math.Abs(b)) }

// enteredRuns names the held-out runs that entered, by count.
func enteredRuns(k int) string {
	if k == 1 {
		return "the one held-out run that entered"
	}
	return fmt.Sprintf("all %d held-out runs that entered", k)
}

// runLabel names a run in a verdict's reason: its name, and its file
// when the file lies in a folder (a fleet's partitions hold many a
// "log.csv": the name alone does not say which).
func runLabel(r RunScreen) string {
	if r.File != "" && filepath.Dir(r.File) != "." {
		return fmt.Sprintf("%s (%s)", r.Run, r.File)
	}
	return r.Run
}

// settledWords says that the entered held-out runs stayed inside and
// that the long ones of them settled: "all 10 held-out runs that entered
// stayed inside and settled", or, when only long of the entered were
// long enough after entry (or not cut short) to judge, "all 10 held-out
// runs that entered stayed inside; the 9 long enough after entry to judge
// settled (the other was too short or cut short)".
func settledWords(entered, long int) string {
	if long >= entered {
		return enteredRuns(entered) + " stayed inside and settled"
	}
	other := "the other was"
	if entered-long > 1 {
		other = fmt.Sprintf("the other %d were", entered-long)
	}
	judged := fmt.Sprintf("the %d long enough after entry to judge settled", long)
	if long == 1 {
		judged = "the one long enough after entry to judge settled"
	}
	return fmt.Sprintf("%s stayed inside; %s (%s too short or cut short)", enteredRuns(entered), judged, other)
}

// Evaluate splits ds by run, fits the model and certificate on the fit
// runs, checks them on the held-out runs and sets the verdict. Errors are
// those of fit.Field and fit.Certify (bad input) and a done ctx; a
// verdict of any kind is a result.
func Evaluate(ctx context.Context, ds *ingest.Dataset, opts *Options) (*Result, error) {
	o := opts.get()
	if o.Folds < 2 {
		return nil, fmt.Errorf("%w: folds must be at least 2, got %d", ErrOptions, o.Folds)
	}
	res := &Result{Heldout: make([]bool, len(ds.Runs))}
	defer o.progress("done", 1)
	o.splits = SplitCuts(ds)
	o.Whole = nil // Evaluate's held-out pieces are its own (see one below)
	if len(ds.Runs) < MinRuns {
		o.progress("fitting the field", 0)
		m, err := fit.Field(ctx, ds, o.Field)
		if err != nil {
			return nil, err
		}
		o.progress("certifying", progressField)
		cert, err := fit.Certify(ctx, m, ds, o.Certify)
		if err != nil {
			return nil, err
		}
		cert.Verdict, cert.Strength = fit.Inconclusive, fit.NoClaim
		cert.ReasonKind = fit.ReasonFewRuns
		cert.Reason = fmt.Sprintf("Only %d run(s): at least %d are needed to hold runs out, so there is no held-out verdict. Record at least %d runs.", len(ds.Runs), MinRuns, MinRuns*2)
		cert.Validation = &fit.Validation{Note: "no held-out runs", Confidence: 1 - o.Beta}
		res.Model, res.Certificate = m, cert
		recordSettings(cert, &o)
		return res, nil
	}
	fold := Split(ds.Runs, o.Folds, o.Seed)
	// The folds share the runs, so each run is differentiated once.
	var fo fit.FieldOptions
	if o.Field != nil {
		fo = *o.Field
	}
	if fo.Derivatives == nil {
		fo.Derivatives = &fit.DerivativeCache{}
	}
	every := o.AllFolds || !o.OneFold
	nFits := 1
	if every {
		nFits = o.Folds
	}
	// one fits and checks fold f, reporting its progress through
	// report(stage, w), w the share of the fold done (0 to 1).
	one := func(ctx context.Context, f int, report func(stage string, w float64)) (*fit.Model, *fit.Certificate, []RunScreen, error) {
		of := ""
		if nFits > 1 {
			of = fmt.Sprintf(" (fold %d of %d)", f+1, nFits)
		}
		progress := func(stage string, w float64) { report(stage+of, w) }
		fitDS := subset(ds, func(i int) bool { return fold[i] != f })
		hoDS := subset(ds, func(i int) bool { return fold[i] == f })
		progress("fitting the field", 0)
		m, err := fit.Field(ctx, fitDS, &fo)
		if err != nil {
			return nil, nil, nil, err
		}
		if o.Equilibrium != nil {
			k, d := m.Nearest(o.Equilibrium)
			if k < 0 || d > farEquilibrium {
				return nil, nil, nil, fmt.Errorf("%w: no equilibrium of the fitted model near %v (the nearest is %.3g spreads away)", ErrOptions, o.Equilibrium, d)
			}
			if k > 0 {
				m = m.AtEquilibrium(k)
			}
		}
		do := &o               // the verdict's options: o, or a copy naming the recordings of the pieces
		if len(m.Inputs) > 0 { // held-out runs are checked where the inputs rest
			whole := hoDS
			hoDS = fit.RestSegments(hoDS, m.RestInput)
			fo := o
			fo.Whole = whole
			do = &fo
		}
		progress("certifying", progressField)
		cert, err := fit.Certify(ctx, m, fitDS, o.Certify)
		if err != nil {
			return nil, nil, nil, err
		}
		if len(m.Inputs) > 0 {
			if g, err := fit.FitInputGain(m, fitDS); err == nil {
				cert.InputGain = g
			}
		}
		progress("checking held-out runs", progressField+progressCertify)
		val, runs, err := Check(ctx, cert, hoDS, do)
		if err != nil {
			return nil, nil, nil, err
		}
		val.Folds = o.Folds
		modelChecks(m, hoDS, val, o)
		Decide(cert, val, runs, eigenvalues(m), do)
		if cert.Verdict == fit.Certified {
			if why := centreGrowth(m, hoDS, o.LinearTol); why != "" {
				cert.Verdict, cert.Strength, cert.ReasonKind, cert.Reason = fit.Inconclusive, fit.NoClaim, fit.ReasonHeldoutRise, why
			}
		}
		if why := m.Misfit(); why != "" && cert.Verdict == fit.Certified {
			cert.Verdict, cert.Strength, cert.ReasonKind, cert.Reason = fit.Inconclusive, fit.NoClaim, fit.ReasonLackOfFit, why
		}
		if rs := restScatter(m, ds, m.Equilibrium, o.splits); rs != nil {
			// every run of ds that settles here, fit and held out: the
			// test is of the data against a model of the logged states
			val.RestScatter = rs
			if rs.Scattered && cert.Verdict == fit.Certified {
				if rs.DriftZ < -restShrinkZ {
					cert.Strength = fit.Stable
					cert.Reason += fmt.Sprintf(" The runs come to rest at points that differ by more than their noise allows (%.3g times, p = %.2g), but draw together along the runs (drift z = %+.2g): something unlogged sets where they rest and dies out, so only stability is claimed, not settling at the equilibrium.", rs.Ratio, rs.PValue, rs.DriftZ)
				} else if rs.Material {
					cert.Verdict, cert.Strength, cert.ReasonKind = fit.Inconclusive, fit.NoClaim, fit.ReasonRestScatter
					cert.Reason = restScatterWords(rs, m.States, m.Units)
				} else {
					if cert.Strength == fit.Asymptotic {
						cert.Strength = fit.Stable
					}
					cert.Reason += fmt.Sprintf(" The runs come to rest at points that differ by more than their noise allows (%.3g times, p = %.2g) but by at most %.2g of it (a sensor offset that changes between runs, or something unlogged that sets where they rest): too little to contradict the region over the runs' time, but settling at one point is not shown, so only stability is claimed.", rs.Ratio, rs.PValue, rs.Largest)
				}
			}
		}
		if sameStart(ds) && cert.Verdict == fit.Certified {
			cert.Verdict, cert.Strength, cert.ReasonKind = fit.Inconclusive, fit.NoClaim, fit.ReasonSameStart
			cert.Reason = "Every run starts at the same state, so the held-out runs repeat the fit runs and check nothing new. Record runs that start from different states."
		}
		return m, cert, runs, nil
	}
	folds := []int{0}
	if every {
		for f := 1; f < o.Folds; f++ {
			if slices.Contains(fold, f) {
				folds = append(folds, f)
			}
		}
	}
	outs, err := evaluateFolds(ctx, folds, &o, nFits, one)
	if err != nil {
		return nil, err
	}
	m, cert, runs := outs[0].m, outs[0].cert, outs[0].runs
	for i := range ds.Runs {
		res.Heldout[i] = fold[i] == 0
	}
	res.FoldVerdicts = []fit.Verdict{cert.Verdict}
	if every {
		certs := []*fit.Certificate{cert}
		for _, out := range outs[1:] {
			res.FoldVerdicts = append(res.FoldVerdicts, out.cert.Verdict)
			certs = append(certs, out.cert)
		}
		combineFolds(cert, certs)
	}
	res.Model, res.Certificate, res.Runs = m, cert, runs
	recordSettings(cert, &o)
	return res, nil
}

// foldOut is one fold's model, certificate and held-out checks.
type foldOut struct {
	m    *fit.Model
	cert *fit.Certificate
	runs []RunScreen
}

// evaluateFolds runs one for each fold of folds, at most o.Workers at
// once (internal/parallel), and returns their outputs in the order of
// folds. The error is that of the first failing fold in that order (or a
// recovered panic, *parallel.PanicError), whatever the timing. Progress
// reaches o.Progress on the calling goroutine only: the folds send their
// shares over a channel that this goroutine drains while they run.
func evaluateFolds(ctx context.Context, folds []int, o *Options, nFits int,
	one func(ctx context.Context, f int, report func(string, float64)) (*fit.Model, *fit.Certificate, []RunScreen, error)) ([]foldOut, error) {
	type step struct {
		k     int // index into folds
		stage string
		w     float64
	}
	// The channel never blocks a fold for long: the loop below drains it
	// until every fold has returned.
	steps := make(chan step, 4*len(folds))
	type result struct {
		outs []foldOut
		err  error
	}
	done := make(chan result, 1)
	go func() {
		outs, err := parallel.Map(ctx, len(folds), o.Workers, func(ctx context.Context, k int) (foldOut, error) {
			m, cert, runs, err := one(ctx, folds[k], func(stage string, w float64) { steps <- step{k, stage, w} })
			return foldOut{m, cert, runs}, err
		})
		done <- result{outs, err}
	}()
	share := make([]float64, len(folds))
	for {
		select {
		case s := <-steps:
			share[s.k] = s.w
			total := 0.0
			for _, w := range share {
				total += w
			}
			o.progress(s.stage, total/float64(nFits))
		case r := <-done:
			return r.outs, r.err
		}
	}
}

// sameStartShare: runs whose starting states spread less than this share
// of the data's spread, in every state, all start at one point.
const sameStartShare = 0.02

// sameStart reports whether every run of ds starts at about the same
// state: the standard deviation of the first samples over the runs is
// below sameStartShare of the data's standard deviation in every state.
func sameStart(ds *ingest.Dataset) bool {
	if len(ds.Runs) < 2 {
		return false
	}
	for j := range ds.States {
		var s0, q0, sa, qa, n0, na float64
		for i := range ds.Runs {
			x := ds.Runs[i].X[j]
			if len(x) == 0 {
				continue
			}
			s0 += x[0]
			q0 += x[0] * x[0]
			n0++
			for _, v := range x {
				sa += v
				qa += v * v
				na++
			}
		}
		if n0 < 2 || na < 2 {
			continue
		}
		sd0 := math.Sqrt(math.Max(0, q0/n0-(s0/n0)*(s0/n0)))
		sda := math.Sqrt(math.Max(0, qa/na-(sa/na)*(sa/na)))
		if sd0 > sameStartShare*sda {
			return false
		}
	}
	return true
}

// eigenvalues returns the primary equilibrium's eigenvalues, or nil when
// it lies outside the envelope (never called stable then).
func eigenvalues(m *fit.Model) [][2]float64 {
	if len(m.Equilibria) > 0 && !m.Equilibria[0].InEnvelope {
		return [][2]float64{{math.NaN(), 0}}
	}
	if len(m.JacobianEigenvalues) == 0 {
		return [][2]float64{{math.NaN(), 0}}
	}
	return m.JacobianEigenvalues
}

// sharePct writes a share as a percentage for a reason: one decimal, but
// never "100.0%" for a share below 1 nor "0.0%" for one above 0 (more
// decimals then, up to four).
func sharePct(p float64) string {
	if p >= 1 || p <= 0 || p != p {
		return fmt.Sprintf("%.0f%%", 100*p)
	}
	for dec := 1; dec < 4; dec++ {
		if s := fmt.Sprintf("%.*f", dec, 100*p); s != fmt.Sprintf("%.*f", dec, 100.0) && s != fmt.Sprintf("%.*f", dec, 0.0) {
			return s + "%"
		}
	}
	return fmt.Sprintf("%.4f%%", 100*p)
}

// combineFolds sets the released certificate's verdict from every fold's
// (certs[0] is the released one), so that the verdict does not hang on
// which runs a seed holds out. A fold that was inconclusive only for want
// of held-out evidence (too few of its held-out runs entered the region,
// or it held out none) abstains: small folds can never certify, and must
// not veto. Then: certified when every other fold certified and at least
// one did (with the weakest strength of any); rejected when more than
// half of the folds rejected (the released reason, or the first
// rejecting fold's); inconclusive otherwise, saying how many folds
// agreed. Validation.FoldsAgree counts the folds whose own verdict
// matches the combined one, and FoldVerdicts lists them.
func combineFolds(rel *fit.Certificate, certs []*fit.Certificate) {
	k := len(certs)
	verdicts := make([]string, k)
	for i, c := range certs {
		verdicts[i] = string(c.Verdict)
	}
	var cert, rej, abstain int
	var firstRej *fit.Certificate
	firstRejAt := 0
	strength := fit.Asymptotic
	weak := -1 // the first fold certified only as stable
	for i, c := range certs {
		switch c.Verdict {
		case fit.Certified:
			cert++
			if c.Strength == fit.Stable {
				strength = fit.Stable
				if weak < 0 {
					weak = i
				}
			}
		case fit.Rejected:
			rej++
			if firstRej == nil {
				firstRej, firstRejAt = c, i
			}
		default:
			switch c.ReasonKind {
			case fit.ReasonFewEntered, fit.ReasonNoneEntered, fit.ReasonNoHeldout, fit.ReasonNoHeldoutPairs:
				abstain++
			}
		}
	}
	note := ""
	if abstain > 0 {
		note = fmt.Sprintf(" %d of %d folds held out too few runs that entered the region to judge.", abstain, k)
	}
	switch {
	case cert > 0 && cert+abstain == k:
		// saysStable: the reason kept is that of a certified fold of
		// strength stable, which already says so (Decide's wording).
		saysStable := rel.Verdict == fit.Certified && rel.Strength == fit.Stable
		if rel.Verdict != fit.Certified {
			for i, c := range certs {
				if c.Verdict == fit.Certified {
					rel.Reason = fmt.Sprintf("In fold %d of %d: %s", i+1, k, c.Reason)
					saysStable = c.Strength == fit.Stable
					break
				}
			}
			rel.Verdict, rel.ReasonKind = fit.Certified, fit.ReasonCertified
		}
		rel.Strength = strength
		if strength == fit.Stable && !saysStable {
			// name the fold and its reason: the user cannot find it
			// elsewhere (FoldVerdicts records no strength)
			rel.Reason += fmt.Sprintf(" Fold %d of %d claims only stability (%s), so this one does too.", weak+1, k, strings.TrimSuffix(certs[weak].Reason, "."))
		}
	case 2*rej > k:
		if rel.Verdict != fit.Rejected {
			rel.Verdict, rel.Strength, rel.ReasonKind = fit.Rejected, fit.NoClaim, firstRej.ReasonKind
			// another fold's reason cites its own model (its
			// eigenvalues), not the released one in model.json
			rel.Reason = fmt.Sprintf("In fold %d of %d (a model fitted without that fold's held-out runs): %s", firstRejAt+1, k, firstRej.Reason)
		}
	default:
		if rel.Verdict != fit.Inconclusive || cert > 0 {
			rel.Reason = fmt.Sprintf("%d of %d folds certified and %d rejected; certified needs every fold that could judge to certify. This fold: %s", cert, k, rej, rel.Reason)
			rel.ReasonKind = fit.ReasonFoldsDisagree
		}
		rel.Verdict, rel.Strength = fit.Inconclusive, fit.NoClaim
	}
	agree := 0
	for _, v := range verdicts {
		if fit.Verdict(v) == rel.Verdict {
			agree++
		}
	}
	rel.Reason += fmt.Sprintf(" Folds: %d of %d agree.%s", agree, k, note)
	if rel.Validation != nil {
		rel.Validation.FoldsAgree = agree
		rel.Validation.FoldVerdicts = verdicts
	}
}

// RunKey names a run by its file (ingest.Source.File) and its name: two
// files of one base name (a partitioned fleet: rig=1/log.csv,
// rig=2/log.csv) give runs of one name.
type RunKey struct{ File, Name string }

// SplitCuts finds the runs of ds that end where a gap or a one-sample
// jump (a hit) split their recording: every piece but the last, by the
// readers' naming (the first piece keeps the recording's name, the n-th
// after it is name~n, and each piece carries its recording's counts of
// gap and jump splits; see ingest.Run). Such a piece stops before it
// could settle, so Check does not judge it on settling: a rig hit every
// few seconds would otherwise never show asymptotic stability. Decrease
// and invariance are still checked on it. The last piece of a recording
// runs to the recording's end and is judged as any run.
//
// A cut piece's Cut is CutJump when one of ds.Events of its recording
// lies after its last sample and no later than the next kept piece's
// first (State is the event's; of several at that time, the one of the
// most noise scales), else CutGap from its last sample to the next
// piece's first (Until 0 when no later piece was kept). The map holds
// the cut runs only.
func SplitCuts(ds *ingest.Dataset) map[RunKey]*Cut {
	type rec struct{ file, name string }
	type piece struct {
		k int
		r *ingest.Run
	}
	pieces := map[rec][]piece{}
	for i := range ds.Runs {
		r := &ds.Runs[i]
		if r.Gaps+r.Events == 0 || r.Len() == 0 {
			continue
		}
		name, k := ingest.PieceOf(r.Name)
		key := rec{r.Source.File, name}
		pieces[key] = append(pieces[key], piece{k, r})
	}
	out := map[RunKey]*Cut{}
	for key, ps := range pieces {
		for _, p := range ps {
			r := p.r
			if p.k >= r.Gaps+r.Events {
				continue // the last piece: it runs to the recording's end
			}
			end := r.T[r.Len()-1]
			next := math.Inf(1) // the next kept piece's first sample
			for _, q := range ps {
				if q.k > p.k && q.r.T[0] > end {
					next = min(next, q.r.T[0])
				}
			}
			var ev *ingest.Event
			for e := range ds.Events {
				x := &ds.Events[e]
				if x.Run != key.name || !(x.Time > end && x.Time <= next) {
					continue
				}
				if ev == nil || x.Time < ev.Time || (x.Time == ev.Time && x.Sigmas > ev.Sigmas) {
					ev = x
				}
			}
			c := &Cut{Reason: CutGap, Time: end}
			switch {
			case ev != nil:
				c = &Cut{Reason: CutJump, Time: ev.Time, State: ev.State}
			case r.Gaps == 0: // only jumps split it, but its events are not in ds
				c.Reason = CutJump
				if !math.IsInf(next, 1) {
					c.Time = next
				}
			case !math.IsInf(next, 1):
				c.Until = next
			}
			out[RunKey{r.Source.File, r.Name}] = c
		}
	}
	return out
}

// splitCutOf returns run's gap or jump cut from splits (SplitCuts of its
// data set), or, for a piece where the inputs rest (named "name@t" by
// fit.RestSegments, its recording in parents), its recording's cut when
// the piece runs to its recording's end. Nil when it was not cut.
func splitCutOf(splits map[RunKey]*Cut, parents map[RunKey]*ingest.Run, run *ingest.Run) *Cut {
	if c := splits[RunKey{run.Source.File, run.Name}]; c != nil {
		return c
	}
	j := strings.LastIndexByte(run.Name, '@')
	n := run.Len()
	if parents == nil || j < 0 || n == 0 {
		return nil
	}
	p := parents[RunKey{run.Source.File, run.Name[:j]}]
	if p == nil || p.Len() == 0 || run.T[n-1] < p.T[p.Len()-1] {
		return nil
	}
	return splits[RunKey{p.Source.File, p.Name}]
}

// NameRests names the rest points that runs' unsettled flags came to
// rest at (Flag.RestPoint): the nearest of points (per state, in the
// states' units, as the certificate's equilibrium) by the largest
// per-state distance in units of cert.Scale, named names[k], when it
// lies within RestLink of the distance from the flag's rest point to
// cert's equilibrium: a tenth, as ingest.RestLink tells two rest points
// apart. Flags already named keep their name.
func NameRests(runs []RunScreen, cert *fit.Certificate, names []string, points [][]float64) {
	dist := func(a, b []float64) float64 {
		d := 0.0
		for j := range a {
			if j < len(b) && j < len(cert.Scale) && cert.Scale[j] != 0 {
				d = max(d, math.Abs(a[j]-b[j])/math.Abs(cert.Scale[j]))
			}
		}
		return d
	}
	for i := range runs {
		for k := range runs[i].Flags {
			f := &runs[i].Flags[k]
			if f.RestPoint == nil || f.RestName != "" {
				continue
			}
			far := dist(f.RestPoint, cert.Equilibrium)
			best, at := math.Inf(1), -1
			for c, p := range points {
				if len(p) != len(f.RestPoint) || c >= len(names) {
					continue
				}
				if d := dist(f.RestPoint, p); d < best {
					best, at = d, c
				}
			}
			if at >= 0 && best <= ingest.RestLink*far {
				f.RestName = names[at]
			}
		}
	}
}

// InputCuts finds the pieces of seg (fit.RestSegments of whole: each
// named "run@t" by its recording's name and its first time) that end
// before their recording does: the recording's next sample has an input
// away from rest. It returns one entry per run of seg, nil for a run
// not cut: a cut piece's Cut is at that next sample's time and names
// the input that moved most there, relative to its spread over the
// recording. A piece that runs to its recording's last sample is not
// cut, whatever its recording's own gaps.
func InputCuts(whole, seg *ingest.Dataset) []*Cut {
	type key struct{ file, name string }
	byName := make(map[key]*ingest.Run, len(whole.Runs))
	for i := range whole.Runs {
		r := &whole.Runs[i]
		byName[key{r.Source.File, r.Name}] = r
	}
	out := make([]*Cut, len(seg.Runs))
	for i := range seg.Runs {
		p := &seg.Runs[i]
		j := strings.LastIndexByte(p.Name, '@')
		n := p.Len()
		if j < 0 || n == 0 {
			continue
		}
		r := byName[key{p.Source.File, p.Name[:j]}]
		if r == nil || r.Len() == 0 || !(p.T[n-1] < r.T[r.Len()-1]) {
			continue
		}
		k := sort.SearchFloat64s(r.T, p.T[n-1]) + 1 // the sample after the piece
		if k >= r.Len() || k < 1 {
			continue
		}
		c := &Cut{Reason: CutInput, Time: r.T[k]}
		best := -1.0
		for q, u := range r.U {
			if q >= len(whole.Inputs) || len(u) != r.Len() {
				continue
			}
			lo, hi := slices.Min(u), slices.Max(u)
			d := math.Abs(u[k] - u[k-1])
			if hi > lo {
				d /= hi - lo
			}
			if d > best {
				best, c.Input = d, whole.Inputs[q].Name
			}
		}
		out[i] = c
	}
	return out
}
