// Package lyapunov holds basin's certificate machinery that does not
// depend on the field fit: polynomials in the scaled coordinates z with
// Taylor-form bounds over boxes ([Poly], [Bounder]), the trust region of
// a least-squares model by regression leverage ([Trust]) and the bound
// check of a level set by branch and bound ([Verify]).
//
// Every function returns what it computes; values are not modified after
// they are made. Types holding scratch space (a [Bounder]) say so.
package lyapunov
