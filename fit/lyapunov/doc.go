// Package lyapunov is basin's certificate search: given a fitted model at
// an equilibrium and the recorded runs, both in the scaled coordinates z
// of the certificate ([System], [Data]), [Certify] fits a Lyapunov
// function V by linear programming and finds the largest level set of V
// that passes every check. Package fit turns a model and a data set into
// its inputs and its [Result] into a certificate; this package does not
// import fit.
//
// # The search
//
//   - The V family (vfamily.go): every monomial of total degree 2..D in z,
//     normalised to unit trace, with allocation-free evaluation.
//   - The LP rows (certlp.go): positivity, model decrease, targets,
//     exclusion and recorded-pair rows, generated on demand for the
//     cutting-plane solver of package lp.
//   - The growth rounds (search.go): from the quadratic of the Lyapunov
//     equation ([Solve]), each round solves the LP on a larger level set
//     and keeps the V whose level set covers the most of the trust region.
//   - The sampled level search (region.go): the level at which the piece
//     of {V <= c} holding the equilibrium first meets a failing sample, a
//     failing point on a ray, another equilibrium or the trust region's
//     edge.
//   - The bound (bound.go, level.go): the chosen level is bounded over
//     the level set's box by branch and bound ([Verify]) with Taylor-form
//     bounds of polynomials ([Poly], [Bounder]); only the bounded level is
//     certified.
//   - The trust region (trust.go): where the least-squares model is
//     trusted, by regression leverage ([Trust]).
//
// Every function returns what it computes; values are not modified after
// they are made. Types holding scratch space (a [Bounder]) say so.
package lyapunov
