package fit

// ReasonKind classifies a certificate's Reason so that programs decide on
// a field, never on the message text. It is the certificate's
// reason_kind; the empty kind is an older file without one.
type ReasonKind string

// Reason kinds set by Certify.
const (
	// ReasonRegion: a V and its level set were found (not yet checked on
	// held-out runs).
	ReasonRegion ReasonKind = "region_found"
	// ReasonUnstableLinearisation: the fitted Jacobian at the equilibrium
	// has an eigenvalue with positive real part.
	ReasonUnstableLinearisation ReasonKind = "unstable_linearisation"
	// ReasonEigenvalues: the Jacobian's eigenvalues could not be computed.
	ReasonEigenvalues ReasonKind = "eigenvalues_failed"
	// ReasonLyapunovSingular: the Lyapunov equation of the linearisation
	// has no unique solution.
	ReasonLyapunovSingular ReasonKind = "lyapunov_singular"
	// ReasonTooFewSamples: too few samples for the V family.
	ReasonTooFewSamples ReasonKind = "too_few_samples"
	// ReasonOutsideData: the equilibrium lies outside the part of the
	// state space the model is trusted in.
	ReasonOutsideData ReasonKind = "equilibrium_outside_trust_region"
	// ReasonTrustDegenerate: the regression leverage cannot be computed
	// (a collinear library over the samples).
	ReasonTrustDegenerate ReasonKind = "trust_region_degenerate"
	// ReasonLPInfeasible: the certificate LP has no solution with a
	// positive margin (V must rise along the recorded runs).
	ReasonLPInfeasible ReasonKind = "lp_infeasible"
	// ReasonLPFailed: the LP solver failed.
	ReasonLPFailed ReasonKind = "lp_failed"
	// ReasonNoLevel: no level set of V reaches beyond the noise ball while
	// passing the checks.
	ReasonNoLevel ReasonKind = "no_level"
)

// Reason kinds set by package validate's verdict.
const (
	ReasonCertified     ReasonKind = "certified"
	ReasonNoHeldout     ReasonKind = "no_heldout_runs"
	ReasonNoneEntered   ReasonKind = "no_run_entered"
	ReasonFewEntered    ReasonKind = "too_few_runs_entered"
	ReasonLeft          ReasonKind = "heldout_run_left"
	ReasonHeldoutRise   ReasonKind = "heldout_rise"
	ReasonLinearUnknown ReasonKind = "linearisation_unknown"
	// ReasonLinearMarginal: no V was fitted because the fitted Jacobian
	// has an eigenvalue with a real part above zero but within
	// Options.LinearTol of its size: neither growth nor decay is shown.
	ReasonLinearMarginal ReasonKind = "linearisation_marginal"
	ReasonFewRuns        ReasonKind = "too_few_runs"
	ReasonNoHeldoutPairs ReasonKind = "no_heldout_pairs"
	ReasonSameStart      ReasonKind = "runs_start_at_one_state"
	// ReasonLackOfFit: the certificate would be certified, but the model
	// fails the lack-of-fit check ([Model.Misfit]).
	ReasonLackOfFit ReasonKind = "model_lacks_fit"
	// ReasonRestScatter: the certificate would be certified, but the runs
	// that settle at the equilibrium come to rest at points that differ
	// by more than their noise allows (Validation.RestScatter), and do
	// not draw together along the runs.
	ReasonRestScatter ReasonKind = "rest_points_scatter"
	// ReasonFoldsDisagree: the folds (each run held out once) did not all
	// certify, nor did most reject.
	ReasonFoldsDisagree ReasonKind = "folds_disagree"
)
