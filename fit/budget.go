package fit

import (
	"errors"
	"fmt"
	"math"
	"runtime"
)

// DefaultMaxMemory is the memory budget of [Field] when
// FieldOptions.MaxMemory is 0: 2 GiB.
const DefaultMaxMemory = 2 << 30

// ErrBudget is wrapped by the error of a fit that would need more memory
// than FieldOptions.MaxMemory allows; the error is a [*BudgetError].
var ErrBudget = errors.New("over the memory budget")

// A BudgetError says how much memory a fit would need and the budget it
// exceeds. It is returned before anything that grows with the library is
// allocated.
type BudgetError struct {
	Terms  float64 // library terms, C(vars+degree, degree)
	Vars   int     // states and inputs
	Degree int
	Groups int     // cross-validation groups, each with its own normal matrix
	Need   float64 // bytes, an upper estimate
	Budget int64   // bytes
}

func (e *BudgetError) Error() string {
	return fmt.Sprintf("a degree-%d library in %d variables has %.4g terms; the fit would need about %s (%d groups of normal equations), over the budget of %s; lower FieldOptions.Degree or raise FieldOptions.MaxMemory",
		e.Degree, e.Vars, e.Terms, bytesText(e.Need), e.Groups, bytesText(float64(e.Budget)))
}

func (e *BudgetError) Is(target error) bool { return target == ErrBudget }

// LibraryTerms returns the number of monomials of total degree 0..degree
// in vars variables, C(vars+degree, degree), in closed form and in
// floating point, so that it does not overflow for any width of file.
func LibraryTerms(vars, degree int) float64 {
	if vars < 0 || degree < 0 {
		return 0
	}
	lg := func(x int) float64 { v, _ := math.Lgamma(float64(x) + 1); return v }
	return math.Round(math.Exp(lg(vars+degree) - lg(vars) - lg(degree)))
}

// FieldMemory returns an upper estimate, in bytes, of what [Field] needs
// beyond the data for a library of the given degree in vars variables
// with the given number of cross-validation groups: a Gram matrix of the
// augmented library (terms plus targets) per group, one per worker and a
// few for the threshold search and the bootstrap, and the exponents.
func FieldMemory(vars, degree, groups int) float64 {
	return termsMemory(LibraryTerms(vars, degree), vars, groups)
}

// FieldTerms returns the number of terms of the field's library over n
// states and q inputs (see FieldOptions.InputDegree): the monomials of
// total degree 0..degree whose degree in the inputs is at most inDeg,
// the sum over k of C(q+k-1, k)·C(n+degree-k, degree-k). It is
// LibraryTerms(n+q, degree) when q is 0 or inDeg >= degree.
func FieldTerms(n, q, degree, inDeg int) float64 {
	if q == 0 || inDeg >= degree {
		return LibraryTerms(n+q, degree)
	}
	var p float64
	for k := 0; k <= inDeg; k++ {
		// monomials of degree exactly k in q inputs times those of
		// degree at most degree-k in n states
		exact := LibraryTerms(q, k) - LibraryTerms(q, k-1)
		p += exact * LibraryTerms(n, degree-k)
	}
	return p
}

// termsMemory is FieldMemory for a library of p terms.
func termsMemory(p float64, vars, groups int) float64 {
	w := p + float64(vars)
	mats := float64(groups + runtime.GOMAXPROCS(0) + 8)
	return 8*mats*w*w + 8*p*float64(vars+blockRows)
}

// checkBudget refuses, in closed form and before any allocation that
// grows with the library, a fit with too few samples for its library or
// one over the memory budget.
func (o *FieldOptions) checkBudget(n, q, samples, runs int) error {
	vars := n + q
	p := FieldTerms(n, q, o.Degree, o.InputDegree)
	if need := rowsPerTerm * p; float64(samples) < need {
		return errorf(ErrTooFewSamples, "too few samples: %d, need at least %.0f for a degree-%d library of %.4g terms in %d variables",
			samples, need, o.Degree, p, vars)
	}
	groups := runs
	if runs < o.Folds {
		groups = runs * ((2*o.Folds + runs - 1) / runs)
	}
	budget := o.MaxMemory
	if budget == 0 {
		budget = DefaultMaxMemory
	}
	if need := termsMemory(p, vars, groups); need > float64(budget) {
		return &BudgetError{Terms: p, Vars: vars, Degree: o.Degree, Groups: groups, Need: need, Budget: budget}
	}
	return nil
}

// bytesText writes a size in KiB, MiB, GiB or TiB.
func bytesText(b float64) string {
	units := []string{"B", "KiB", "MiB", "GiB", "TiB", "PiB"}
	i := 0
	for b >= 1024 && i < len(units)-1 {
		b /= 1024
		i++
	}
	return fmt.Sprintf("%.3g %s", b, units[i])
}
