// Package validate checks a fitted certificate on held-out runs, bounds the
// chance of a violation by the scenario approach, gives the verdict, and
// screens new logs against a saved certificate.
//
// # Folds by run
//
// [Split] deals the runs (never single samples) into K folds by a seeded
// permutation; a manifest's split column wins: with any run marked
// "holdout", exactly those are held out and every other run is fitted on.
// [Evaluate] fits the released model and certificate on the fit runs of
// fold 0's split (about 1/K of the runs held out) and checks them on the
// held-out runs only. With [Options.AllFolds] it also refits with each
// other fold held out and reports how many folds reach the same verdict
// (fit.Validation.FoldsAgree). With fewer than 3 runs there is no held-out
// verdict: the result is inconclusive and says why. The folds are fitted
// and checked at once ([Options.Workers] at a time, on internal/parallel)
// and share one fit.DerivativeCache, so each run is differentiated once;
// the result is the same, bit for bit, whatever the number of workers.
//
// [EvaluateAll] evaluates every stable rest point the runs settle at
// (clusters of ingest.RestPoints), one Evaluate each, the one most runs
// settle at first.
//
// # Checks
//
// On the held-out runs: the model's derivative error (normalised per state
// by the spread of the data's derivative, estimated by Savitzky–Golay) and
// a simulation from each run's first sample with the adaptive
// Dormand–Prince 5(4) integrator [Integrate] (trajectory error per state,
// normalised by the state's spread, and the time until it departs by more
// than [Options.DepartTol]); a model that blows up is counted, not crashed
// on. The certificate checks ([Check]): decrease_fraction over consecutive
// pairs inside the region whose first sample lies outside the noise ball,
// where V may rise by at most the certificate's noise tolerance;
// and, from entry, each held-out run from its first sample inside the
// region: entered_runs counts the runs with a sample inside,
// invariance_fraction the share of them that never left again by more
// than the noise tolerance, runs_settled those that settled from there
// (ended inside, at the run's settle level, or still on its way: below V
// at entry by more than the tolerance and below every earlier chunk by
// the margin of screen's unsettled; see [Screener]); runs that never
// enter lie outside the claim
// and are only counted. A piece cut short before its recording ends
// (every piece of a recording split at a gap or a one-sample jump but
// the last, [SplitCuts]; or one that ends where an input left rest,
// [InputCuts]) had no chance to settle: it carries a [Cut] and no
// unsettled flag, runs_cut_short counts those that entered and had not
// settled, and its rises and leaves are still checked. The worst violation is given with run, time and
// state.
//
// # Scenario bound
//
// The chance that a new sample violates the decrease condition is at
// most epsilon with confidence 1 - beta, epsilon from the exact binomial
// tail of Campi & Garatti (SIAM J. Optim. 2008) ([ViolationBound]). N
// counts only held-out pairs inside the region spaced at least one
// decorrelation time apart ([Decorrelation]: the lag where the state's
// autocorrelation falls below 1/e). d is the number of LP decision
// variables (V's coefficients plus the margin); each violation among the N
// samples adds one to d, which for d = 1 is exactly the one-sided
// Clopper–Pearson bound and otherwise errs on the safe side.
//
// # Verdict
//
// certified needs a V, at least [Options.MinEntered] held-out runs that
// entered the region, decrease_fraction >= [Options.MinDecrease],
// invariance 1 and a linearisation that is not unstable; its strength is
// asymptotic when V has a positive decrease margin, every run that
// entered with at least two tail windows of samples after entry settled
// (and there is one; pieces cut short are left out) and the linearisation is strictly stable, else stable (stability without convergence, as for a
// lossless oscillator). The stable strength also needs V not to trend up
// along the held-out runs that entered: neither over whole runs nor over
// the later half of each from entry (where a slow growth shows once an
// early transient has died) may most decay rates lie below zero with
// their mean two standard errors below it. rejected when the data contradict stability: an
// unstable linearisation, or a held-out run that starts inside and leaves
// by more than the noise tolerance. Everything else is inconclusive. The
// verdict is evidence from recorded samples, never a proof: see
// fit.Caveat. Whether V is radially unbounded is information only.
package validate

// Flag kinds of the contract.
const (
	FlagRises     = "rises"     // V rose beyond the tolerance inside the region
	FlagLeaves    = "leaves"    // the run left the region after entering it
	FlagUnsettled = "unsettled" // the run did not settle
	FlagSlow      = "slow"      // V decayed slower than the held-out runs allow
	FlagStuck     = "stuck"     // a state's reading held one value over the run's end
)

// Flag is one finding on a run.
type Flag struct {
	Kind   string  `json:"kind"`
	Time   float64 `json:"time"`   // first time it happened, seconds
	Excess float64 `json:"excess"` // worst excess, in units of V (slow: 1/s)
	// Distance is, for rises and leaves, the excess per state in the
	// states' units: for leaves how far the worst sample lies past the
	// region's boundary, for rises the smallest move of the worst
	// sample that accounts for the rise (see [Screener]).
	Distance []float64 `json:"distance,omitempty"`
	// State names, for stuck, the state whose reading held one value
	// (the first in the certificate's order when several did).
	State string `json:"state,omitempty"`
	// RestPoint is, for unsettled, where the run came to rest when it
	// did so outside the region (per state in the states' units: the
	// median of its tail, by ingest.Settles' rule): it settled at
	// another rest point, not this certificate's equilibrium, and so
	// lies outside the certificate's claim. Set by [Check]; nil when the
	// run did not come to rest, or came to rest inside the region (at
	// rest off the equilibrium). RestName, when not empty, names that
	// rest point (see [NameRests]).
	RestPoint []float64 `json:"rest_point,omitempty"`
	RestName  string    `json:"rest_name,omitempty"`
}

// RunScreen is the result of screening one run.
type RunScreen struct {
	File    string `json:"file"`
	Run     string `json:"run"`
	Samples int    `json:"samples"`
	Flagged bool   `json:"flagged"`
	Flags   []Flag `json:"flags"`
	// StartInside says the run's first sample is in the region;
	// EverInside that some sample is; Settled that it ended settled.
	StartInside bool `json:"start_inside"`
	EverInside  bool `json:"ever_inside"`
	Settled     bool `json:"settled"`
	// Pairs counts consecutive sample pairs both inside the region with
	// the first outside the noise ball; Decreased those where V did not
	// rise by more than the tolerance.
	Pairs     int `json:"pairs"`
	Decreased int `json:"pairs_decreased"`
	// VStart and VEnd are the mean V over the first and the last samples
	// (a twentieth of the run, 1 to 50 samples) used to judge settling.
	VStart float64 `json:"v_start"`
	VEnd   float64 `json:"v_end"`
	// DecayRate is minus the least-squares slope of log V against time
	// over the run's approach (see [Screener]: the samples inside the
	// region and outside the noise ball up to the first sample inside the
	// ball), in 1/s; DecaySamples counts them, and is 0 when there were fewer than
	// DecayMinSamples (the rate is then 0 and unknown).
	DecayRate    float64 `json:"decay_rate"`
	DecaySamples int     `json:"decay_samples"`
	// Cut, when not nil, says the run is a piece of a recording that
	// ends before the recording does: where a gap or a one-sample jump
	// (a hit) split it, or where an input left rest (see
	// [Options.Whole]). It had no chance to settle, so it carries no
	// unsettled flag; the last piece of a recording never has a Cut.
	Cut *Cut `json:"cut,omitempty"`

	// From the first sample inside the region (validation from entry):
	// its index (-1 when the run never enters) and V there; whether the
	// part after it is long enough to judge settling (at least two tail
	// windows); and whether the run settled from there by screen's
	// unsettled rule with V at entry for its start (ends inside with its
	// end at the run's settle level, or below V at entry by more than the
	// tolerance and below every earlier chunk by the margin).
	enter        int
	vEnter       float64
	longAfter    bool
	settledEntry bool
	// lateRate is the decay rate over the later half of the run from
	// entry (see lateRate); lateOK says it is known.
	lateRate float64
	lateOK   bool

	// scenario samples (pairs at least the decorrelation time apart) and
	// the violations among them; worst rise and where.
	scen, scenViol int
	worstExcess    float64
	worstTime      float64
}

// Cut says why a run was cut short before it could settle.
type Cut struct {
	// Reason is CutInput, CutJump or CutGap.
	//
	// CutInput: an input left rest at Time, right after the piece's
	// last sample; Input names it (the one farthest from rest, relative
	// to its spread over the recording, when several did).
	//
	// CutJump: a one-sample jump far beyond the noise (ingest.Event: a
	// hit, a relay) split the recording at Time, the event's time (the
	// first sample after a step, or a spike's dropped sample); State
	// names the state that jumped (the one that stood out most, when
	// several did at that sample), empty when not known.
	//
	// CutGap: the recording stops after the piece's last sample, at
	// Time, and resumes at Until (0 when no later piece of it was kept):
	// a time gap, or samples with a missing cell.
	Reason string  `json:"reason"`
	Time   float64 `json:"time"`
	Input  string  `json:"input,omitempty"`
	State  string  `json:"state,omitempty"`
	Until  float64 `json:"until,omitempty"`
}

// Cut reasons.
const (
	CutInput = "input" // an input left rest
	CutJump  = "jump"  // a one-sample jump split the recording
	CutGap   = "gap"   // a gap split the recording
)

// ScreenOptions controls screening. A nil *ScreenOptions means defaults.
type ScreenOptions struct {
	// Tolerance on a rise of V between consecutive samples, in units of V;
	// 0 means the certificate's Tolerance.
	Tolerance float64
	// NoSlow turns off the slow flag even when the certificate records
	// the held-out decay rates; false means flag slow runs when it can.
	NoSlow bool
}
