package fit

import (
	"errors"
	"math"

	"basin.example/fit/poly"
	"basin.example/ingest"
	"gonum.org/v1/gonum/mat"
)

// ErrFeedback is the error of an input (Dataset.Inputs) that the states
// determine: a controller's command logged as an input.
var ErrFeedback = errors.New("input follows the states")

// feedbackShare: an input of which a polynomial in the states (of the
// field's degree) explains at least this share of the variance is a
// feedback command, u ≈ k(x). Then x' = f(x) + g(x)u is the closed loop
// f(x) + g(x)k(x) whatever g is, so the field at rest input (the plant
// with its controller off) cannot be told from the data: the part of u
// that the states leave free, under 10% of u's spread at this share, is
// all that separates the plant's terms from the controller's, and the
// thresholding drops the input's terms (a balancing rig, unstable with
// the controller off, came out certified with the closed loop as its
// field). Identification needs the input excited independently of the
// states (closed-loop identifiability; from memory, common practice).
const feedbackShare = 0.99

// feedbackRows caps the samples the check regresses on (taken at an even
// stride over all runs).
const feedbackRows = 20000

// inputExplained returns the share of the variance of each input that a
// least-squares fit on the monomials of the states of degree 0..degree
// explains (1 - residual sum of squares / total), over at most
// feedbackRows samples; NaN for an input that does not vary. The states
// are standardised by m's Centre and Spread.
func inputExplained(m *Model, runs []*ingest.Run, q, degree int) []float64 {
	n := len(m.States)
	lib := poly.NewLibrary(n, 0, degree)
	p := lib.Len()
	total := 0
	for _, r := range runs {
		total += r.Len()
	}
	stride := max(1, total/feedbackRows)
	var rows []float64         // the design matrix, row by row
	us := make([][]float64, q) // us[k] the input samples
	z := make([]float64, n)
	i := 0
	for _, r := range runs {
		for s := 0; s < r.Len(); s, i = s+1, i+1 {
			if i%stride != 0 {
				continue
			}
			ok := true
			for j := range z {
				z[j] = (r.X[j][s] - m.Centre[j]) / m.Spread[j]
				ok = ok && z[j] == z[j]
			}
			for k := range q {
				ok = ok && r.U[k][s] == r.U[k][s]
			}
			if !ok {
				continue
			}
			rows = append(rows, make([]float64, p)...)
			lib.EvalTo(rows[len(rows)-p:], z)
			for k := range q {
				us[k] = append(us[k], r.U[k][s])
			}
		}
	}
	out := make([]float64, q)
	nr := len(rows) / p
	if nr < 2*p {
		for k := range out {
			out[k] = 0 // too few samples to tell: the fit's own checks refuse them
		}
		return out
	}
	A := mat.NewDense(nr, p, rows)
	var qr mat.QR
	qr.Factorize(A)
	for k := range q {
		y := mat.NewVecDense(len(us[k]), us[k])
		mean := 0.0
		for _, v := range us[k] {
			mean += v
		}
		mean /= float64(len(us[k]))
		tss := 0.0
		for _, v := range us[k] {
			tss += (v - mean) * (v - mean)
		}
		if !(tss > 0) {
			out[k] = math.NaN()
			continue
		}
		var beta mat.VecDense
		if err := qr.SolveVecTo(&beta, false, y); err != nil {
			out[k] = 0 // a rank-deficient state library: the field's own check reports it
			continue
		}
		var fitted mat.VecDense
		fitted.MulVec(A, &beta)
		rss := 0.0
		for r, v := range us[k] {
			d := v - fitted.AtVec(r)
			rss += d * d
		}
		out[k] = 1 - rss/tss
	}
	return out
}
