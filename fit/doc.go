// Package fit identifies a polynomial vector field from logged runs and fits
// a Lyapunov-function certificate for one of its equilibria.
//
// # The field
//
// [Field] fits dx/dt = f(x) by sequentially thresholded ridge least squares
// on a monomial library (package [poly]), choosing the derivative method
// and each equation's threshold by held-out error over runs (every
// candidate scored on the held-out runs' integral form; the sparsest
// candidate is kept whose held-out error is within the standard error of
// the best candidate's, and within 1% of it or 1.5 standard errors of the
// paired difference), and finds
// the equilibria and their linearisations. The result is a [Model], the content of model.json.
//
// # The certificate
//
// [Certify] fits a Lyapunov function V by linear programming on sampled
// positivity and decrease constraints (package lp) and finds the largest
// level set {V <= c} on which they hold inside the model's trust region
// (regression leverage no larger than at the fit samples): first by a
// sampled search along the recorded samples and rays from the
// equilibrium, then by a branch-and-bound bound over the level set's box,
// with the decrease made robust to the fitted field's standard error.
// That search is package [lyapunov] ([lyapunov.Certify]); Certify checks
// the model against the data, hands the search the model and the runs in
// the scaled coordinates z, and turns its result into the certificate,
// in the states' units, with its reason.
// The result is a [Certificate], the content of certificate.json; its
// verdict stays [Inconclusive] until package validate has checked it on
// held-out runs.
//
// Such a certificate is empirical evidence, not a proof: see [Caveat].
package fit
