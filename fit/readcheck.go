package fit

import (
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"
)

// Limits on what ReadModel and ReadCertificate accept, so that a hostile
// or corrupted file is refused before anything is built from it.
const (
	// maxTermDegree is the largest total degree of a term: the field
	// library and V are both at most degree 8.
	maxTermDegree = 8
	// maxExponentEntries caps terms × variables over a file (4 Mi entries,
	// some 10 MB of JSON), whatever the number of states.
	maxExponentEntries = 1 << 22
)

// checkTerms refuses exponent vectors of the wrong length, negative
// exponents, terms of total degree above maxTermDegree and duplicate
// terms (two coefficients of one monomial make the file ambiguous).
func checkTerms(what string, exps [][]int, vars int) error {
	if len(exps)*max(vars, 1) > maxExponentEntries {
		return fmt.Errorf("%s: %d terms in %d variables, more than basin ever writes", what, len(exps), vars)
	}
	seen := make(map[string]int, len(exps))
	var key strings.Builder
	for k, e := range exps {
		if len(e) != vars {
			return fmt.Errorf("%s: exponent vector of length %d, want %d", what, len(e), vars)
		}
		deg := 0
		key.Reset()
		for _, p := range e {
			if p < 0 || p > maxTermDegree {
				return fmt.Errorf("%s: exponent %d out of range 0..%d", what, p, maxTermDegree)
			}
			deg += p
			key.WriteString(strconv.Itoa(p))
			key.WriteByte(',')
		}
		if deg > maxTermDegree {
			return fmt.Errorf("%s: term %d has total degree %d, above %d", what, k+1, deg, maxTermDegree)
		}
		if j, dup := seen[key.String()]; dup {
			return fmt.Errorf("%s: terms %d and %d are the same monomial", what, j+1, k+1)
		}
		seen[key.String()] = k
	}
	return nil
}

// checkNames refuses empty and repeated state names.
func checkNames(names []string) error {
	seen := make(map[string]bool, len(names))
	for _, s := range names {
		if s == "" {
			return errors.New("empty state name")
		}
		if seen[s] {
			return fmt.Errorf("state %q named twice", s)
		}
		seen[s] = true
	}
	return nil
}

// checkRanges refuses a model.json whose scaling fields are unusable:
// each of centre, spread, noise, lower and upper, when present, has one
// finite entry per state; spreads are positive normal numbers (1/spread
// is finite), noise is not negative, and lower <= upper.
func (m *Model) checkRanges() error {
	n := len(m.States)
	for _, f := range []struct {
		name string
		v    []float64
	}{{"centre", m.Centre}, {"spread", m.Spread}, {"noise", m.Noise}, {"lower", m.Lower}, {"upper", m.Upper}} {
		if f.v == nil {
			continue
		}
		if len(f.v) != n {
			return fmt.Errorf("%s has %d entries, want one per state (%d)", f.name, len(f.v), n)
		}
		if !finite(f.v...) {
			return fmt.Errorf("%s: non-finite entry", f.name)
		}
	}
	for j, s := range m.Spread {
		if !(s >= 0x1p-1022) || math.IsInf(1/s, 0) {
			return fmt.Errorf("spread of %q is %g; it must be a positive normal number", m.States[j], s)
		}
	}
	for j, s := range m.Noise {
		if s < 0 {
			return fmt.Errorf("noise of %q is negative (%g)", m.States[j], s)
		}
	}
	if m.Lower != nil && m.Upper != nil {
		for j := range m.Lower {
			if !(m.Lower[j] <= m.Upper[j]) {
				return fmt.Errorf("lower %g above upper %g for %q", m.Lower[j], m.Upper[j], m.States[j])
			}
		}
	}
	return nil
}
