package fit

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"

	"basin.example/fit/poly"
)

// Format strings of the JSON files; readers check them.
const (
	ModelFormat       = "basin.model/1"
	CertificateFormat = "basin.certificate/1"
)

// Caveat is the sentence every certificate and report carries.
const Caveat = "Empirical evidence from recorded samples only, not a proof of stability; " +
	"nothing is claimed outside the envelope the data cover, and safety-relevant decisions " +
	"defer to the applicable codes and to licensed engineering judgement."

// Equation is one fitted state equation d(State)/dt = sum of terms, in
// original units and raw coordinates. Exponents and Coefficients are the
// contract's fields; the rest is added information, index-aligned with
// them.
type Equation struct {
	State        string    `json:"state"`
	Exponents    [][]int   `json:"exponents"`
	Coefficients []float64 `json:"coefficients"`
	// Terms carries, per term, the bootstrap interval and the share of
	// bootstrap fits that kept it (in the fitting coordinates' support).
	Terms []Term `json:"terms,omitempty"`
	// HeldoutError is the cross-validated mean squared error of the
	// window-mean slope (the integral form over held-out runs, whatever
	// the derivative method), as a share of that slope's variance (1 = no
	// better than a constant).
	HeldoutError float64 `json:"heldout_error"`
	// HeldoutRMS is the same error's root mean square in the state's unit
	// per second, HeldoutShare its share of the slope's standard deviation
	// (the square root of HeldoutError).
	HeldoutRMS   float64 `json:"heldout_rms"`
	HeldoutShare float64 `json:"heldout_share"`
	// DenseError is HeldoutError of the unthresholded model (every library
	// term), for comparison; the sparsity rule compares candidates with
	// the best one, not with it (an overfitting dense model is far worse).
	DenseError float64 `json:"dense_error"`
	// Threshold and Ridge are this equation's chosen values.
	Threshold float64 `json:"threshold"`
	Ridge     float64 `json:"ridge"`
	// NoiseFloorRMS is the held-out RMS error (as HeldoutRMS, in the
	// state's unit per second) that a correct model would leave: the
	// measurement noise of the yardstick windows' end samples, from each
	// run's noise estimate. LackOfFit is HeldoutRMS over it (about 1 for a
	// correct model; see [Equation.Warning]). Both are 0 when unknown.
	NoiseFloorRMS float64 `json:"noise_floor_rms,omitempty"`
	LackOfFit     float64 `json:"lack_of_fit,omitempty"`
	// ExcessRuns names the runs a lack-of-fit warning names: those whose
	// yardstick windows a robust refit of the equation rejects as far
	// beyond the noise, while the windows it keeps fit to within 1.5
	// times theirs (at most half the runs); empty otherwise.
	ExcessRuns []string `json:"excess_runs,omitempty"`
	// OutsideWindows counts the held-out yardstick windows that lie
	// outside the envelope of the runs their fold was fitted on (a sample
	// of a leverage over those runs' samples above twice the largest of
	// theirs; beyond their range in some state or input where leverage
	// is not defined): there the fold's model extrapolates, and the
	// lack-of-fit check leaves them out. When it is not 0,
	// InsideLackOfFit and InsideShare are LackOfFit and HeldoutShare over
	// the windows inside, the figures the check judges; all three are 0
	// (absent) when every window is inside.
	OutsideWindows  int     `json:"outside_windows,omitempty"`
	InsideLackOfFit float64 `json:"inside_lack_of_fit,omitempty"`
	InsideShare     float64 `json:"inside_heldout_share,omitempty"`
	// OutsideRuns names the runs whose held-out windows outside their
	// fold's envelope miss by at least twice what the noise leaves (and
	// 5% of the rate's spread, and in all as much as one window 15 noise
	// sd beyond), largest first; Extrapolation says so,
	// naming the states or inputs whose range they leave: the model is
	// not checked there. Not a warning: an extrapolation is no evidence
	// of a lack of fit.
	OutsideRuns   []string `json:"outside_runs,omitempty"`
	Extrapolation string   `json:"extrapolation,omitempty"`
	// MisfitRuns names the runs a lack-of-fit warning names: ExcessRuns
	// when the misfit sits in a few runs, else the runs of the largest
	// held-out excess over their noise floor (inside the envelope); empty
	// when there is no lack-of-fit warning.
	MisfitRuns []string `json:"misfit_runs,omitempty"`
	// Warning says the equation is empty, no better than a constant, or
	// that it lacks something the data have: its held-out error is at
	// least twice what the noise leaves (LackOfFit >= 2, InsideLackOfFit
	// when OutsideWindows is not 0) and at least 5% of the rate's spread
	// (HeldoutShare, or InsideShare), or some runs' windows lie far
	// beyond the noise where the others fit; it names MisfitRuns.
	Warning string `json:"warning,omitempty"`
}

// MethodScore is one derivative method's held-out error (mean over
// equations of the least Equation.HeldoutError its candidates reached).
type MethodScore struct {
	Method       string  `json:"method"`
	HeldoutError float64 `json:"heldout_error"`
}

// Term is the uncertainty of one fitted term, from the bootstrap over runs.
//
// In JSON it also carries the deprecated keys "inclusion" (= kept_share)
// and "weak" (= rarely_kept), written for one release for readers of
// older files; reading accepts either spelling, the new one first.
type Term struct {
	Name      string     `json:"name"`
	Interval  [2]float64 `json:"interval"`   // coefficient interval, original units
	KeptShare float64    `json:"kept_share"` // share of bootstrap fits that kept it, 0..1
	// RarelyKept is KeptShare < [RarelyKeptShare]: most bootstrap fits
	// dropped the term.
	RarelyKept bool `json:"rarely_kept"`
}

// RarelyKeptShare is the kept share below which a term is rarely kept.
const RarelyKeptShare = 0.5

// termJSON is Term on the wire: the current keys and the deprecated ones.
type termJSON struct {
	Name       string     `json:"name"`
	Interval   [2]float64 `json:"interval"`
	KeptShare  *float64   `json:"kept_share,omitempty"`
	RarelyKept *bool      `json:"rarely_kept,omitempty"`
	Inclusion  *float64   `json:"inclusion,omitempty"` // deprecated: kept_share
	Weak       *bool      `json:"weak,omitempty"`      // deprecated: rarely_kept
}

// MarshalJSON writes the current keys and, for one release, the
// deprecated ones with the same values.
func (t Term) MarshalJSON() ([]byte, error) {
	share, rare := t.KeptShare, t.RarelyKept
	return json.Marshal(termJSON{Name: t.Name, Interval: t.Interval,
		KeptShare: &share, RarelyKept: &rare, Inclusion: &share, Weak: &rare})
}

// UnmarshalJSON reads kept_share and rarely_kept, or the deprecated
// inclusion and weak when the new keys are absent.
func (t *Term) UnmarshalJSON(b []byte) error {
	var w termJSON
	if err := json.Unmarshal(b, &w); err != nil {
		return err
	}
	*t = Term{Name: w.Name, Interval: w.Interval}
	switch {
	case w.KeptShare != nil:
		t.KeptShare = *w.KeptShare
	case w.Inclusion != nil:
		t.KeptShare = *w.Inclusion
	}
	switch {
	case w.RarelyKept != nil:
		t.RarelyKept = *w.RarelyKept
	case w.Weak != nil:
		t.RarelyKept = *w.Weak
	}
	return nil
}

// Equilibrium is a zero of the fitted field with its linearisation.
type Equilibrium struct {
	Point       []float64    `json:"point"`
	Jacobian    [][]float64  `json:"jacobian"`
	Eigenvalues [][2]float64 `json:"eigenvalues"` // [real, imaginary], 1/s
	// Class is one of "stable node", "stable focus", "saddle",
	// "unstable node", "unstable focus", "non-hyperbolic", or "outside
	// envelope" when Point is outside the data's envelope (never called
	// stable then).
	Class      string `json:"class"`
	InEnvelope bool   `json:"in_envelope"`
}

// Model is a fitted polynomial vector field: the content of model.json.
type Model struct {
	Format    string     `json:"format"`
	States    []string   `json:"states"`
	Units     []string   `json:"units"`
	Equations []Equation `json:"equations"`
	// Inputs are the measured non-state columns in the library (see
	// [FieldOptions] and [Model.AtRest]); each exponent vector then has one
	// entry per state followed by one per input. RestInput is the input
	// value the certificate assumes (the rig idle). Both absent without
	// inputs.
	Inputs []Input `json:"inputs,omitempty"`
	// CorrelatedNoise lists the states whose measurement noise is
	// correlated over many samples (logged faster than it changes), which
	// the white-noise figures and derivative windows misread; each such
	// state's equation warns. Absent when none.
	CorrelatedNoise []NoiseCorrelation `json:"correlated_noise,omitempty"`
	// Average is the block of samples the runs were averaged in before
	// the fit (ingest.Options.Average); 0 when they were not.
	Average   int       `json:"average,omitempty"`
	RestInput []float64 `json:"rest_input,omitempty"`
	// Held lists the inputs that held one value in every sample fitted
	// ([ingest.Options.HoldConstantInputs]): folded into the equations,
	// which hold at those values. Absent when none was.
	Held []HeldInput `json:"held_inputs,omitempty"`
	// Equilibrium is the primary equilibrium (the one nearest where the
	// runs settle, or end when none settles: an unstable one is not where
	// they settle);
	// JacobianEigenvalues its linearisation's eigenvalues.
	Equilibrium         []float64    `json:"equilibrium"`
	JacobianEigenvalues [][2]float64 `json:"jacobian_eigenvalues"`
	// Equilibria lists every equilibrium found, the primary one first.
	Equilibria []Equilibrium `json:"equilibria"`

	Degree     int     `json:"degree"`
	Threshold  float64 `json:"threshold"`  // largest of the equations', on coefficients normalised by their column's and target's spread
	Ridge      float64 `json:"ridge"`      // largest of the equations'
	Derivative string  `json:"derivative"` // derivative method used
	// DerivativeScores lists the methods tried with their held-out errors.
	DerivativeScores []MethodScore `json:"derivative_scores,omitempty"`
	Condition        float64       `json:"condition"` // of the normalised library's normal matrix
	// Centre and Spread define the fitting coordinates (x - Centre)/Spread.
	Centre []float64 `json:"centre"`
	Spread []float64 `json:"spread"`
	// Lower and Upper bound the recorded samples per state (the data's box).
	Lower []float64 `json:"lower"`
	Upper []float64 `json:"upper"`
	// Noise is the estimated measurement noise (standard deviation) per
	// state, in the state's unit: 1.4826·median|Δ⁴x|/√70 over the fourth
	// differences of the samples (white noise gives Δ⁴ a variance of 70σ²;
	// a smooth, densely sampled signal adds little), the larger of that
	// figure pooled over runs and the 90th percentile of the runs' own
	// ([RunNoise]): noise that is a share of each run's spread makes the
	// pooled figure the quiet runs', too low for the tolerances built on
	// it. A run louder still gets its own tolerance widened when checked
	// or screened (package validate).
	Noise []float64 `json:"noise"`
	// NoiseRange is, per state, the lowest and highest noise estimate of
	// one run ([RunNoise]) over the fit runs: how much the noise differs
	// between runs.
	NoiseRange [][2]float64 `json:"noise_range,omitempty"`
	Runs       int          `json:"runs"`
	Samples    int          `json:"samples"`

	// Basis says where the threshold counted terms: "raw" (monomials of
	// x/Spread, so the support is the raw equations' support) or
	// "centred" (monomials of (x - Centre)/Spread, when the raw basis was
	// too ill-conditioned; the raw equations are then their exact
	// expansion and may hold more terms).
	Basis string `json:"basis,omitempty"`
	// Window is the derivative window per state, in samples.
	Window []int `json:"window,omitempty"`
	// CVGroups is how many groups cross-validation and the bootstrap
	// resampled; CVBy is "run", or "block" when there were too few runs
	// and each was cut into contiguous blocks.
	CVGroups  int    `json:"cv_groups,omitempty"`
	CVBy      string `json:"cv_by,omitempty"`
	Bootstrap int    `json:"bootstrap,omitempty"`
	// HeldoutError is the cross-validated error of the chosen model, the
	// mean over equations of Equation.HeldoutError.
	HeldoutError float64 `json:"heldout_error"`
	// Settle is where the runs settle (median over settled runs of the
	// median of their last 5%), SettledRuns how many did, by the settle
	// rule inspect reports (ingest.Settles).
	Settle      []float64 `json:"settle,omitempty"`
	SettledRuns int       `json:"settled_runs"`
	// Note says what to be careful about, e.g. "no equilibrium found".
	Note string `json:"note,omitempty"`
}

// Field returns the equations as polynomials (raw coordinates).
func (m *Model) Field() []poly.Poly {
	m = m.AtRest()
	out := make([]poly.Poly, len(m.Equations))
	for i, e := range m.Equations {
		out[i] = poly.Poly{Exponents: e.Exponents, Coefficients: e.Coefficients}
	}
	return out
}

// EvalTo stores f(x) in dst and returns dst. It is safe for concurrent use
// but allocates; use a [FieldEvaluator] in loops.
func (m *Model) EvalTo(dst, x []float64) []float64 {
	m = m.AtRest()
	for i, e := range m.Equations {
		dst[i] = poly.Poly{Exponents: e.Exponents, Coefficients: e.Coefficients}.Eval(x)
	}
	return dst
}

// FieldEvaluator evaluates a model's field and Jacobian without
// allocating. It is not safe for concurrent use: make one per goroutine.
type FieldEvaluator struct {
	n    int
	lib  *poly.Library // union of all equations' monomials
	coef [][]float64   // coef[i][k]: equation i, library term k
	val  []float64
	grad []float64
	work []float64
}

// NewFieldEvaluator prepares m for repeated evaluation.
func NewFieldEvaluator(m *Model) *FieldEvaluator {
	m = m.AtRest()
	n := len(m.States)
	var exps [][]int
	idx := map[string]int{}
	for _, e := range m.Equations {
		for _, x := range e.Exponents {
			k := fmt.Sprint(x)
			if _, ok := idx[k]; !ok {
				idx[k] = len(exps)
				exps = append(exps, x)
			}
		}
	}
	lib := poly.FromExponents(n, exps)
	coef := make([][]float64, len(m.Equations))
	for i, e := range m.Equations {
		coef[i] = make([]float64, lib.Len())
		for k, x := range e.Exponents {
			coef[i][idx[fmt.Sprint(x)]] += e.Coefficients[k]
		}
	}
	return &FieldEvaluator{n: n, lib: lib, coef: coef,
		val: make([]float64, lib.Len()), grad: make([]float64, lib.Len()*n),
		work: make([]float64, lib.GradWorkLen())}
}

// EvalTo stores f(x) in dst and returns dst.
func (fe *FieldEvaluator) EvalTo(dst, x []float64) []float64 {
	fe.lib.EvalWorkTo(fe.val, fe.work[:fe.lib.WorkLen()], x)
	for i, c := range fe.coef {
		s := 0.0
		for k, v := range fe.val {
			s += c[k] * v
		}
		dst[i] = s
	}
	return dst
}

// JacobianTo stores f(x) in f (which may be nil) and the Jacobian
// df_i/dx_j in jac[i*n+j], and returns jac.
func (fe *FieldEvaluator) JacobianTo(jac, f, x []float64) []float64 {
	n := fe.n
	fe.lib.GradWorkTo(fe.grad, fe.val, fe.work, x)
	for i, c := range fe.coef {
		row := jac[i*n : (i+1)*n]
		for j := range row {
			row[j] = 0
		}
		s := 0.0
		for k, ck := range c {
			if ck == 0 {
				continue
			}
			s += ck * fe.val[k]
			g := fe.grad[k*n : (k+1)*n]
			for j := range row {
				row[j] += ck * g[j]
			}
		}
		if f != nil {
			f[i] = s
		}
	}
	return jac
}

// Verdict is the outcome of certification.
type Verdict string

// The verdicts of the contract.
const (
	Certified    Verdict = "certified"
	Rejected     Verdict = "rejected"
	Inconclusive Verdict = "inconclusive"
)

// Strength is how much a certified verdict claims.
type Strength string

// The strengths of the contract.
const (
	Asymptotic Strength = "asymptotic"
	Stable     Strength = "stable"
	NoClaim    Strength = "none"
)

// Certificate is the content of certificate.json. The certified region is
// {x : V(z(x)) <= Level, x inside Box}, z_j = (x_j - Equilibrium_j)/Scale_j.
type Certificate struct {
	Format   string   `json:"format"`
	Verdict  Verdict  `json:"verdict"`
	Strength Strength `json:"strength"`
	Reason   string   `json:"reason"`
	// ReasonKind classifies Reason (see [ReasonKind]).
	ReasonKind  ReasonKind `json:"reason_kind,omitempty"`
	Empirical   bool       `json:"empirical"`
	Caveat      string     `json:"caveat"`
	States      []string   `json:"states"`
	Units       []string   `json:"units"`
	Equilibrium []float64  `json:"equilibrium"`
	Scale       []float64  `json:"scale"`
	// Held is the model's Held: inputs constant throughout the data,
	// folded into the equations, so that the certificate holds with them
	// at those values. Absent when none was.
	Held []HeldInput `json:"held_inputs,omitempty"`
	// Average is the model's Average: the runs were averaged in blocks of
	// that many samples, and logs checked or screened against the
	// certificate must be too. 0 when they were not.
	Average int       `json:"average,omitempty"`
	V       poly.Poly `json:"V"`
	Level   float64   `json:"level"`
	// Box bounds, per state in original units, the connected piece of the
	// level set that holds the equilibrium; membership tests use it too.
	Box        [][2]float64 `json:"box"`
	Validation *Validation  `json:"validation"`

	// Found says whether an LP produced a V at all.
	Found bool `json:"found"`
	// Margin is the LP's decrease margin g (in 1/s, scaled coordinates).
	Margin float64 `json:"margin"`
	// NonRise says V was fitted at a non-hyperbolic linearisation (an
	// eigenvalue on the imaginary axis) and is only shown not to rise
	// beyond the noise tolerance, not to fall: at most the stable
	// strength is claimed, never asymptotic. Margin is then at most 0.
	NonRise bool `json:"non_rise,omitempty"`
	// InputGain is the dissipation inequality fitted for a model with
	// inputs (see [FitInputGain]); absent without inputs or when none
	// holds on the samples.
	InputGain *InputGain `json:"input_gain,omitempty"`
	// Noise is the noise per state, in the states' units, that Tolerance
	// and NoiseRadius assume (the model's pooled estimate); a run whose
	// own estimate ([RunNoise]) is higher gets its tolerances widened in
	// proportion when it is checked or screened.
	Noise []float64 `json:"noise,omitempty"`
	// NoiseRadius is the radius, in z, of the ball around the equilibrium
	// where noise dominates and no decrease is required: it holds 99.73%
	// of the measurement noise (k times the largest noise in z, k² the
	// chi-square quantile for as many degrees of freedom as states: 3 for
	// one state, 3.44 for two, 4.27 for five).
	NoiseRadius float64 `json:"noise_radius"`
	// Tolerance is the noise tolerance on V differences along recorded
	// pairs, in units of V.
	Tolerance float64 `json:"tolerance"`
	// Region describes the certified level set.
	Region Region `json:"region"`
	// RadiallyUnbounded reports whether V's top-degree part is positive
	// definite. Information only: nothing is claimed beyond the envelope.
	RadiallyUnbounded bool `json:"radially_unbounded"`
	// InSample holds the figures on the fit runs.
	InSample InSample `json:"in_sample"`
	// Settings records the options used, each part by the code that used
	// them (see [Settings]).
	Settings *Settings `json:"settings,omitempty"`
	// Contradicted says the data contradict stability of the equilibrium
	// (an unstable linearisation, or no V of the family can fall along
	// the recorded runs near it: the LP's best margin is negative), so
	// validation can say rejected; Contradiction says why.
	Contradicted  bool   `json:"contradicted"`
	Contradiction string `json:"contradiction,omitempty"`
	// LPConflict summarises the certificate LP's proof that no V of the
	// family falls along the rows (an infeasible LP, a negative best
	// margin, or the one LP posed for an unstable linearisation); absent
	// when there is none.
	LPConflict *LPConflict `json:"lp_conflict,omitempty"`
}

// Region describes the certified level set.
type Region struct {
	// EnvelopeShare is the region's volume as a share of the model's
	// trust region's (the part of the samples' box where the fitted
	// model is believed), not of the whole box. The key keeps its first
	// name.
	EnvelopeShare float64 `json:"envelope_share"`
	// Extent is the region's extent along each state, original units.
	Extent [][2]float64 `json:"extent"`
	// Limit names what stopped the region growing: "envelope edge",
	// "other equilibrium", "violated sample", "growth cap" or "none".
	Limit string `json:"limit"`
	// LimitPoint is where, in original units, when known.
	LimitPoint []float64 `json:"limit_point,omitempty"`
	LimitRun   string    `json:"limit_run,omitempty"`
	LPRounds   int       `json:"lp_rounds"`
	LPRows     int       `json:"lp_rows"`
	// Volume is the region's volume (Monte Carlo, inside the envelope) in
	// the product of the states' units; EnvelopeVolume the envelope's.
	Volume         float64 `json:"volume"`
	EnvelopeVolume float64 `json:"envelope_volume"`
	// Solves counts the certificate LPs solved while growing the region.
	Solves int `json:"lp_solves"`
}

// InSample holds in-sample figures of the certificate on the fit runs.
type InSample struct {
	Pairs            int     `json:"pairs"`
	DecreaseFraction float64 `json:"decrease_fraction"`
	FillPoints       int     `json:"fill_points"`
}

// Validation holds the held-out figures (filled by package validate).
type Validation struct {
	HeldoutRuns        int     `json:"heldout_runs"`
	DecreaseFraction   float64 `json:"decrease_fraction"`
	InvarianceFraction float64 `json:"invariance_fraction"`
	ViolationBound     float64 `json:"violation_bound"`
	Confidence         float64 `json:"confidence"`
	// Extra detail; see package validate.
	Pairs       int `json:"pairs"`
	StartInside int `json:"runs_started_inside"`
	// EnteredRuns counts held-out runs with at least one sample inside
	// the region; each is checked from its first sample inside.
	EnteredRuns int `json:"entered_runs"`
	Settled     int `json:"runs_settled"`
	// CutShort counts, of the entered runs that did not settle, the
	// pieces cut short before their recording ends: where a gap or a
	// one-sample jump (a hit) split the recording, or where an input
	// left rest (the next sample of their recording has it active). They
	// were cut before they could settle, so settling is not judged on
	// them. Absent (0) when no such piece entered unsettled. CutShortBy
	// counts them by reason ("gap", "jump", "input"; see
	// validate.Cut), absent when CutShort is 0.
	CutShort        int            `json:"runs_cut_short,omitempty"`
	CutShortBy      map[string]int `json:"runs_cut_short_by,omitempty"`
	ScenarioSamples int            `json:"scenario_samples"`
	Decorrelation   float64        `json:"decorrelation_s"`
	DecisionVars    int            `json:"decision_variables"`
	Worst           *Violation     `json:"worst_violation,omitempty"`
	Folds           int            `json:"folds"`
	// Model checks on held-out runs.
	DerivativeError []float64 `json:"derivative_error,omitempty"`
	TrajectoryError []float64 `json:"trajectory_error,omitempty"`
	DepartureTime   float64   `json:"departure_time_s"`
	Diverged        int       `json:"runs_diverged"`
	Note            string    `json:"note,omitempty"`
	// SettleRatio is the largest V(end)/V(start) over held-out runs that
	// started inside (below 1: every one ended nearer the equilibrium).
	SettleRatio float64 `json:"settle_ratio"`
	// ScenarioViolations counts decrease violations among the
	// ScenarioSamples; each adds one to d in the bound.
	ScenarioViolations int `json:"scenario_violations"`
	// FoldsAgree counts the folds (the released one included) whose own
	// verdict matches the released (combined) one, when every fold was
	// held out once; FoldVerdicts lists each fold's own verdict, the
	// released fold first.
	FoldsAgree   int      `json:"folds_agree,omitempty"`
	FoldVerdicts []string `json:"fold_verdicts,omitempty"`
	// Decay holds the held-out runs' decay rates of V, from which screen
	// flags runs that settle too slowly; nil in older certificates.
	Decay *Decay `json:"decay,omitempty"`
	// RestScatter is the test of whether the runs that settle at the
	// equilibrium share one rest point; nil when it was not made (the
	// model has inputs, or fewer than three runs settle there) and in
	// older certificates.
	RestScatter *RestScatter `json:"rest_scatter,omitempty"`
}

// RestScatter tests whether the runs that settle at the certified
// equilibrium come to rest at one point, as a model of the logged states
// alone says they must (package validate computes it). Over each run's
// final quarter it takes the mean drive the model leaves unexplained
// (the weak form: the change of the quarter's end means less the
// integral of the model's field, per second), whose spread under
// measurement noise is known from the run's own noise; an unlogged state
// or input that sets where a run comes to rest shows as drives that
// differ from run to run by more than that.
type RestScatter struct {
	// Runs counts the runs tested: those that settle near the
	// equilibrium and are at rest (no motion beyond their noise) over
	// their final quarter.
	Runs int `json:"runs"`
	// ChiSquare is the homogeneity statistic of the runs' unexplained
	// drives about their common (weighted) mean, on Dof degrees of
	// freedom ((Runs - 1) per state); PValue its chi-square tail
	// probability, and Alpha the level below which the rest points are
	// said to scatter (Scattered).
	ChiSquare float64 `json:"chi_square"`
	Dof       int     `json:"dof"`
	PValue    float64 `json:"p_value"`
	Alpha     float64 `json:"alpha"`
	Scattered bool    `json:"scattered"`
	// Ratio is ChiSquare / Dof: how many times the noise's variance the
	// drives scatter by (about 1 when the runs share a rest point).
	Ratio float64 `json:"ratio"`
	// DriftZ, when Scattered, is the pooled z-score of the change of each
	// run's unexplained drive from the quarter before its final one to
	// the final one, along the run's own offset from the common rest
	// point: above zero the offsets grow along the runs, below they
	// shrink. Zero when not Scattered or when fewer than three runs are
	// at rest over both quarters (DriftRuns counts those used).
	DriftZ    float64 `json:"drift_z"`
	DriftRuns int     `json:"drift_runs"`
	// Widest lists up to three runs whose rest points lie farthest from
	// the common one, in standard errors, farthest first.
	Widest []RestOffset `json:"widest,omitempty"`
	// Largest, when Scattered, is the largest offset of any run tested
	// as a share of its state's noise (RestOffset.NoiseShare), and
	// Material says it reaches a half: rest points that far apart hold
	// the verdict back; nearer ones (a sensor offset between runs, or a
	// weak unlogged drive) only keep the strength at stable.
	Largest  float64 `json:"largest_noise_share,omitempty"`
	Material bool    `json:"material,omitempty"`
}

// RestOffset is one run's rest point against the runs' common one.
type RestOffset struct {
	Run string `json:"run"`
	// Offset is, per state and in the states' units, where the run would
	// come to rest under its unexplained drive minus where the common
	// drive brings the runs to rest (the drive through the inverse
	// Jacobian at the equilibrium).
	Offset []float64 `json:"offset"`
	// Sigmas is the offset's size in standard errors of the run's noise
	// (the square root of its term of ChiSquare).
	Sigmas float64 `json:"sigmas"`
	// NoiseShare is the offset's largest state component over that
	// state's noise (the run's sample-to-sample standard deviation).
	NoiseShare float64 `json:"noise_share"`
}

// Decay is the distribution of V's decay rate over the held-out runs:
// per run, minus the least-squares slope of log V against time over its
// approach, its samples inside the region and outside the noise ball up
// to its first sample inside the ball (package validate computes it and
// screen uses the same rule).
type Decay struct {
	// Runs counts the held-out runs with a rate; Rates holds them, in
	// 1/s, in increasing order.
	Runs  int       `json:"runs"`
	Rates []float64 `json:"rates"`
	// Min, Median and Max summarise Rates.
	Min    float64 `json:"min"`
	Median float64 `json:"median"`
	Max    float64 `json:"max"`
	// LowerBound is the rate below which a run is flagged slow, in 1/s
	// (0: too few runs for a bound; nothing is flagged slow).
	LowerBound float64 `json:"lower_bound"`
	// FalseAlarm is the share of the held-out runs flagged slow by the
	// bound set from the other held-out runs (leave one out).
	FalseAlarm float64 `json:"false_alarm"`
	// Rule says how LowerBound was set.
	Rule string `json:"rule"`
}

// Violation locates the worst held-out violation.
type Violation struct {
	Run    string    `json:"run"`
	Time   float64   `json:"time"`
	State  []float64 `json:"state"`
	Excess float64   `json:"excess"`
	Kind   string    `json:"kind"`
}

// ErrFormat is returned when a JSON file is not of the expected format.
var ErrFormat = errors.New("not a basin file of this format")

// ReadModel decodes and checks a model.json. Unknown fields are allowed.
func ReadModel(r io.Reader) (*Model, error) {
	var m Model
	if err := decodeOne(r, &m); err != nil {
		return nil, fmt.Errorf("model: %w", err)
	}
	if m.Format != ModelFormat {
		return nil, fmt.Errorf("model: format %q: %w", m.Format, ErrFormat)
	}
	if err := m.validate(); err != nil {
		return nil, fmt.Errorf("model: %w", err)
	}
	if err := checkNames(m.States); err != nil {
		return nil, fmt.Errorf("model: %w", err)
	}
	for i, e := range m.Equations {
		if err := checkTerms(fmt.Sprintf("equation %d", i+1), e.Exponents, len(m.States)+len(m.Inputs)); err != nil {
			return nil, fmt.Errorf("model: %w", err)
		}
	}
	if err := m.checkRanges(); err != nil {
		return nil, fmt.Errorf("model: %w", err)
	}
	return &m, nil
}

func (m *Model) validate() error {
	n := len(m.States)
	if n == 0 || len(m.Units) != n || len(m.Equations) != n || len(m.Equilibrium) != n {
		return errors.New("states, units, equations and equilibrium must have one entry per state")
	}
	if len(m.RestInput) != len(m.Inputs) {
		return fmt.Errorf("rest_input has %d entries, want one per input (%d)", len(m.RestInput), len(m.Inputs))
	}
	if !finite(m.RestInput...) {
		return errors.New("rest_input: non-finite entry")
	}
	if err := checkNames(m.Vars()); err != nil {
		return err
	}
	for i, e := range m.Equations {
		if len(e.Exponents) != len(e.Coefficients) {
			return fmt.Errorf("equation %d: %d exponents but %d coefficients", i, len(e.Exponents), len(e.Coefficients))
		}
		for _, x := range e.Exponents {
			if len(x) != n+len(m.Inputs) {
				return fmt.Errorf("equation %d: exponent vector of length %d, want %d", i, len(x), n+len(m.Inputs))
			}
			for _, p := range x {
				if p < 0 || p > 16 {
					return fmt.Errorf("equation %d: exponent %d out of range", i, p)
				}
			}
		}
		if !finite(e.Coefficients...) {
			return fmt.Errorf("equation %d: non-finite coefficient", i)
		}
	}
	if !finite(m.Equilibrium...) {
		return errors.New("non-finite equilibrium")
	}
	return nil
}

// ReadCertificate decodes and checks a certificate.json. A truncated or
// inconsistent file is refused with the reason. Unknown fields are allowed.
func ReadCertificate(r io.Reader) (*Certificate, error) {
	var c Certificate
	if err := decodeOne(r, &c); err != nil {
		return nil, fmt.Errorf("certificate: %w", err)
	}
	if c.Format != CertificateFormat {
		return nil, fmt.Errorf("certificate: format %q: %w", c.Format, ErrFormat)
	}
	if err := checkNames(c.States); err != nil {
		return nil, fmt.Errorf("certificate: %w", err)
	}
	if err := checkTerms("V", c.V.Exponents, len(c.States)); err != nil {
		return nil, fmt.Errorf("certificate: %w", err)
	}
	if err := c.check(); err != nil {
		return nil, fmt.Errorf("certificate: %w", err)
	}
	return &c, nil
}

func (c *Certificate) check() error {
	n := len(c.States)
	if n == 0 || len(c.Units) != n || len(c.Equilibrium) != n || len(c.Scale) != n {
		return errors.New("states, units, equilibrium and scale must have one entry per state")
	}
	switch c.Verdict {
	case Certified, Rejected, Inconclusive:
	default:
		return fmt.Errorf("unknown verdict %q", c.Verdict)
	}
	if !finite(c.Equilibrium...) || !finite(c.Scale...) || !finite(c.Level) {
		return errors.New("non-finite equilibrium, scale or level")
	}
	for _, s := range c.Scale {
		if s <= 0 {
			return errors.New("scale must be positive")
		}
	}
	if len(c.V.Exponents) != len(c.V.Coefficients) {
		return errors.New("V: exponents and coefficients differ in length")
	}
	for _, e := range c.V.Exponents {
		if len(e) != n {
			return fmt.Errorf("V: exponent vector of length %d, want %d", len(e), n)
		}
		for _, p := range e {
			if p < 0 || p > 16 {
				return fmt.Errorf("V: exponent %d out of range", p)
			}
		}
	}
	if !finite(c.V.Coefficients...) {
		return errors.New("V: non-finite coefficient")
	}
	if c.Box != nil && len(c.Box) != n {
		return errors.New("box must have one entry per state")
	}
	for j, b := range c.Box {
		if !(b[0] <= b[1]) {
			return fmt.Errorf("box of state %d: lower bound %g above upper bound %g", j, b[0], b[1])
		}
	}
	if c.Verdict == Certified && (len(c.V.Exponents) == 0 || c.Level <= 0) {
		return errors.New("certified without a V or a positive level")
	}
	return nil
}

// Z stores the scaled coordinates of x in dst and returns dst.
func (c *Certificate) Z(dst, x []float64) []float64 {
	for j := range x {
		dst[j] = (x[j] - c.Equilibrium[j]) / c.Scale[j]
	}
	return dst
}

// Inside reports whether x (original units) is in the certified region,
// given V evaluated at z(x).
func (c *Certificate) Inside(x []float64, v float64) bool {
	if !(v <= c.Level) {
		return false
	}
	for j, b := range c.Box {
		if x[j] < b[0] || x[j] > b[1] {
			return false
		}
	}
	return true
}

func finite(xs ...float64) bool {
	for _, x := range xs {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return false
		}
	}
	return true
}

// AtEquilibrium returns a copy of m whose primary equilibrium is
// m.Equilibria[i] (listed first, with Equilibrium and JacobianEigenvalues
// set from it), so that [Certify] certifies that one; the other
// equilibria follow in their order. The copy shares the equations with m.
// It panics if i is out of range.
func (m *Model) AtEquilibrium(i int) *Model {
	e := m.Equilibria[i]
	c := *m
	c.Equilibria = append([]Equilibrium{e}, append(append([]Equilibrium(nil), m.Equilibria[:i]...), m.Equilibria[i+1:]...)...)
	c.Equilibrium = append([]float64(nil), e.Point...)
	c.JacobianEigenvalues = e.Eigenvalues
	return &c
}

// Nearest returns the index in m.Equilibria of the equilibrium nearest x
// (distance in units of each state's Spread) and that distance, or -1
// when there is none.
func (m *Model) Nearest(x []float64) (int, float64) {
	best, bd := -1, math.Inf(1)
	for i, e := range m.Equilibria {
		if len(e.Point) != len(x) {
			continue
		}
		d := 0.0
		for j, v := range e.Point {
			s := 1.0
			if j < len(m.Spread) && m.Spread[j] > 0 {
				s = m.Spread[j]
			}
			d += (v - x[j]) * (v - x[j]) / (s * s)
		}
		if d < bd {
			best, bd = i, d
		}
	}
	return best, math.Sqrt(bd)
}

// decodeOne decodes the one JSON value of r into v. The file is read
// whole (at most maxCertBytes; models and certificates are small), so
// that a decoding error can say where, by line and column (jsonWhere);
// a second value after the first (two files pasted together, an edit
// gone wrong) makes the file ambiguous and is refused.
func decodeOne(r io.Reader, v any) error {
	data, err := io.ReadAll(io.LimitReader(r, maxCertBytes+1))
	if err != nil {
		return err
	}
	if len(data) > maxCertBytes {
		return fmt.Errorf("larger than %d MiB, not a basin file: %w", maxCertBytes>>20, ErrFormat)
	}
	dec := json.NewDecoder(bytes.NewReader(data))
	if err := dec.Decode(v); err != nil {
		return jsonWhere(data, err)
	}
	if _, err := dec.Token(); err != io.EOF {
		return fmt.Errorf("data after the JSON object: %w", ErrFormat)
	}
	return nil
}

// maxCertBytes bounds the certificate ReadCertificate (and the model
// ReadModel) reads: a
// degree-8 V in 12 states has about 10^5 terms, a few MiB of JSON.
const maxCertBytes = 64 << 20

// jsonWhere words a JSON decoding error of data with the line and column
// where it happened (encoding/json gives a byte offset): "line 1, column
// 2: not JSON: invalid character ',' ...", or "line 3, column 13: field
// states: a number where string belongs". Other errors are returned as
// they are.
func jsonWhere(data []byte, err error) error {
	// off is the bytes read when the error was found: the byte at off-1
	// is the one it was found at
	at := func(off int64) string {
		pos := min(max(off-1, 0), int64(len(data)))
		line := 1 + bytes.Count(data[:pos], []byte("\n"))
		col := pos - int64(bytes.LastIndexByte(data[:pos], '\n'))
		return fmt.Sprintf("line %d, column %d", line, col)
	}
	var se *json.SyntaxError
	var te *json.UnmarshalTypeError
	switch {
	case errors.As(err, &se):
		return fmt.Errorf("%s: not JSON (%v): %w", at(se.Offset), se, ErrFormat)
	case errors.As(err, &te):
		return fmt.Errorf("%s: field %s: a JSON %s where %s belongs: %w", at(te.Offset), te.Field, te.Value, te.Type, ErrFormat)
	case errors.Is(err, io.EOF):
		return fmt.Errorf("empty file, not JSON: %w", ErrFormat)
	case errors.Is(err, io.ErrUnexpectedEOF):
		return fmt.Errorf("%s: the JSON ends early (a truncated file?): %w", at(int64(len(data))), ErrFormat)
	}
	return err
}
