// Package lp solves linear programs in inequality form,
//
//	minimise c'x subject to Gx <= h, lb <= x <= ub,
//
// by a dense primal–dual interior-point method (Mehrotra's
// predictor–corrector), with an outer cutting-plane loop for problems with
// many more rows than unknowns: solve on a subset of the rows, evaluate all
// of them, add the most violated, repeat.
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

// Errors returned with the matching Status.
var (
	ErrInfeasible = errors.New("lp: infeasible")
	ErrUnbounded  = errors.New("lp: unbounded")
	ErrIterations = errors.New("lp: iteration limit")
	ErrNumerical  = errors.New("lp: numerical failure")
)

// Rows is a (possibly huge) set of inequality rows g_i'x <= h_i that the
// cutting-plane loop reads on demand, so that memory grows with the active
// rows, not with all of them.
type Rows interface {
	// Len returns the number of rows.
	Len() int
	// RowTo stores row i's coefficients in dst (length = number of
	// unknowns) and returns h_i.
	RowTo(dst []float64, i int) float64
}

// Problem is min c'x s.t. G x <= h (G row-major, len(H) rows), and
// Lower <= x <= Upper (nil bounds mean unbounded; use ±Inf per entry).
type Problem struct {
	C            []float64
	G            []float64 // row-major, len(H) x len(C)
	H            []float64
	Lower, Upper []float64
}

// Inf is a convenient infinite bound.
var Inf = math.Inf(1)
