// Package lp solves linear programs in inequality form,
//
//	minimise c'x subject to Gx <= h, lb <= x <= ub,
//
// by a dense primal–dual interior-point method (Mehrotra's
// predictor–corrector), with an outer cutting-plane loop for problems with
// many more rows than unknowns: solve on a subset of the rows, evaluate all
// of them, add the most violated, repeat. The loop solves its restricted
// problems by a dual simplex method, warm-started from round to round.
//
// # Method
//
// [Solve] runs the interior-point method on the homogeneous self-dual
// embedding of the problem (Ye, Todd and Mizuno, "An O(√nL)-iteration
// homogeneous and self-dual linear programming algorithm", Math. Oper.
// Res. 19(1), 1994; the primal, the dual and a homogenising pair τ, κ form
// one self-dual LP, so no feasible start or phase one is needed). Bounds are
// treated as extra rows with a diagonal structure. Each iteration forms the
// normal matrix G'DG + diag(bound terms) (in parallel for large problems),
// factorises it by gonum's Cholesky (lapack64.Potrf, after a diagonal
// shift of 1e-13 relative to each diagonal entry that grows only if the
// factorisation fails), refines each solve by up to three steps of
// iterative refinement against the unshifted matrix (without them the dual
// residual stalls near 1e-6 once the weights D span 1e20), and takes one
// predictor and one corrector step. The iteration starts from x = 0 and
// all slacks and multipliers 1.
// The embedding either converges to an optimal pair (x, z) or to a ray that
// proves the problem infeasible (a Farkas certificate, [Farkas]) or
// unbounded ([Result.Ray]); both are returned and can be checked by the
// caller. Rows are scaled to unit infinity norm internally; every figure in
// the [Result] refers to the problem as given.
//
// Unbounded means, as usual for interior-point methods, that the dual is
// infeasible: the returned ray d has c'd < 0 and keeps every row and bound
// (Gd <= 0, and d respects the finite bounds), so the problem is unbounded
// whenever it is feasible at all.
//
// [SolveCuts] is the cutting-plane loop over a [Rows] source that is read
// on demand, one pass per round, in parallel; a pass skips the rows that
// surely still hold (their distance from the point they were last
// evaluated at exceeds the point's move since). By default its restricted
// problems are solved by a dual simplex method in row form (the basis is
// n constraints held at equality, an explicit B⁻¹ updated by a rank-one
// change per pivot and recomputed by LU every 100 pivots, dual
// steepest-edge pricing, Harris's ratio test, perturbed costs against
// stalling, Bland's rule against cycling), each
// round starting from the previous round's optimal basis: rows added to
// the pool leave that basis dual feasible, so a round costs a few pivots
// per added row. Infeasible pools give a Farkas certificate from the
// pivot that finds them; unknowns without the bound the start needs get
// an artificial one, and one that binds at the end gives an unbounded
// ray. If the dual simplex fails (a near-singular basis, its pivot
// limit), the interior-point method takes over from scratch
// ([CutOptions.Method]); there the rounds before the last are solved to a
// loose tolerance (1e-5), the last one, and any certificate of
// infeasibility, at the requested one. Memory is about twice the active
// rows times the unknowns, plus a few words per row (violations, the
// skip test's distance, point and norm, the active flags, the candidate
// list).
package lp

import (
	"errors"
	"math"
)

// Status is the outcome of a solve.
type Status int

// Outcomes.
const (
	Optimal Status = iota
	Infeasible
	Unbounded
	IterationLimit
	NumericalFailure
)

func (s Status) String() string {
	switch s {
	case Optimal:
		return "optimal"
	case Infeasible:
		return "infeasible"
	case Unbounded:
		return "unbounded"
	case IterationLimit:
		return "iteration limit"
	case NumericalFailure:
		return "numerical failure"
	}
	return "unknown"
}

// Errors returned with the matching Status. ErrInvalid reports a problem
// with NaN or infinite data where a finite number is needed.
var (
	ErrInfeasible = errors.New("lp: infeasible")
	ErrUnbounded  = errors.New("lp: unbounded")
	ErrIterations = errors.New("lp: iteration limit")
	ErrNumerical  = errors.New("lp: numerical failure")
	ErrInvalid    = errors.New("lp: invalid problem")
)

// Rows is a (possibly huge) set of inequality rows g_i'x <= h_i that the
// cutting-plane loop reads on demand, so that memory grows with the active
// rows, not with all of them.
//
// SolveCuts calls RowTo from several goroutines at once (each with its own
// dst). A Rows that needs scratch space can implement [Cloner]; each
// goroutine then reads from its own clone.
type Rows interface {
	// Len returns the number of rows.
	Len() int
	// RowTo stores row i's coefficients in dst (length = number of
	// unknowns) and returns h_i.
	RowTo(dst []float64, i int) float64
}

// Cloner is implemented by a [Rows] whose RowTo is not safe for concurrent
// use. Clone returns a copy with its own scratch space.
type Cloner interface {
	Clone() Rows
}

// Problem is min c'x s.t. G x <= h (G row-major, len(H) rows), and
// Lower <= x <= Upper (nil bounds mean unbounded; use ±Inf per entry).
// A row with h = +Inf is ignored.
type Problem struct {
	C            []float64
	G            []float64 // row-major, len(H) x len(C)
	H            []float64
	Lower, Upper []float64
}

// Inf is a convenient infinite bound.
var Inf = math.Inf(1)

// Options controls Solve. A nil *Options means all defaults.
type Options struct {
	// Tol is the relative tolerance on the primal and dual residuals and
	// on the duality gap; 0 means 1e-8.
	Tol float64
	// MaxIter caps the interior-point iterations; 0 means 200.
	MaxIter int
}

func (o *Options) tol() float64 {
	if o == nil || o.Tol <= 0 {
		return 1e-8
	}
	return o.Tol
}

func (o *Options) maxIter() int {
	if o == nil || o.MaxIter <= 0 {
		return 200
	}
	return o.MaxIter
}

// Result is the answer of Solve or SolveCuts.
//
// At an optimum the multipliers satisfy, up to DualResidual,
//
//	C + G'Z - ZLower + ZUpper = 0,  Z, ZLower, ZUpper >= 0,
//
// and the dual objective is -H'Z + Lower'ZLower - Upper'ZUpper (terms with
// an infinite bound are left out; their multiplier is 0).
type Result struct {
	Status    Status
	X         []float64 // the solution, within its bounds; for Infeasible and Unbounded, nil
	Objective float64   // c'X (NaN when there is no X)

	Z              []float64 // row multipliers, one per row (of all rows in SolveCuts)
	ZLower, ZUpper []float64 // bound multipliers, one per unknown

	Iterations int // interior-point iterations, or dual simplex pivots (summed over rounds in SolveCuts)

	// PrimalResidual is the largest violation of a row or bound by X,
	// max(0, g_i'X - h_i) and the bound excess, in the units of the data.
	// In SolveCuts it covers all rows, not only the active ones.
	PrimalResidual float64
	// DualResidual is the infinity norm of C + G'Z - ZLower + ZUpper.
	DualResidual float64
	// Gap is the duality gap, primal minus dual objective; RelGap is
	// Gap / (1 + |Objective|).
	Gap, RelGap float64

	// Farkas proves infeasibility (Status Infeasible), else nil.
	Farkas *Farkas
	// Ray proves unboundedness (Status Unbounded): c'Ray = -1, G Ray <= 0,
	// Ray_j >= 0 where Lower_j is finite and Ray_j <= 0 where Upper_j is
	// finite, all up to the solver tolerance. Else nil.
	Ray []float64

	// Cutting-plane figures (SolveCuts only).
	Rounds int    // solves of the restricted problem
	Method Method // the solver that answered: DualSimplex or InteriorPoint
	Active []int  // indices of the rows in the last restricted problem, ascending
}

// Farkas is a certificate of primal infeasibility: Y, YLower, YUpper >= 0
// with
//
//	G'Y - YLower + YUpper = 0  and  H'Y - Lower'YLower + Upper'YUpper = -1
//
// (up to Residual, the infinity norm of the first left-hand side). Any x
// with Gx <= h and Lower <= x <= Upper would give 0 <= -1, so there is none.
type Farkas struct {
	Y              []float64
	YLower, YUpper []float64
	Residual       float64
}
