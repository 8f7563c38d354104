package report

import (
	"html"
	"regexp"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"basin.example/fit"
	"basin.example/fit/poly"
	"basin.example/validate"
)

// classOf classifies the equilibrium of x' = Ax (2x2) by its eigenvalues
// (gonum), as the trace-determinant plane does ([Strogatz1994] §5.2):
// a real pair of opposite signs is a saddle, a complex pair a focus, a
// pair on the imaginary axis neither.
func classOf(t *testing.T, a []float64) string {
	t.Helper()
	var e mat.Eigen
	if !e.Factorize(mat.NewDense(2, 2, a), mat.EigenNone) {
		t.Fatal("eigenvalues did not converge")
	}
	v := e.Values(nil)
	re0, re1 := real(v[0]), real(v[1])
	switch {
	case re0*re1 < 0:
		return "saddle"
	case re0 == 0 && re1 == 0:
		return "non-hyperbolic"
	case imag(v[0]) != 0 && re0 < 0:
		return "stable focus"
	case imag(v[0]) != 0:
		return "unstable focus"
	case re0 < 0:
		return "stable node"
	}
	return "unstable node"
}

// TestEquilibriumKey: the phase plane's key calls the certificate's
// equilibrium "the runs settle on" only when the fitted model calls it
// stable and runs settle. The trial rigs' Jacobians: an arm whose rate
// term is anti-damping (x” = -9x + 0.1x': runs spiral out, none settles;
// basin rejected it and the key said the runs settle on it), a lossless
// oscillator (x” = -4x, none settles), a saddle (x” = x - x') with a few
// runs settling elsewhere, and the fixture's damped oscillator.
func TestEquilibriumKey(t *testing.T) {
	tests := []struct {
		name    string
		jac     []float64
		settled int
		noModel bool
		want    string
	}{
		{"damped, runs settle", []float64{0, 1, -1, -1}, 6, false, "equilibrium the runs settle on"},
		{"anti-damped arm", []float64{0, 1, -9, 0.1}, 0, false, "fitted equilibrium (an unstable focus; no run settles on it)"},
		{"lossless oscillator", []float64{0, 1, -4, 0}, 0, false, "fitted equilibrium (an eigenvalue on the imaginary axis; no run settles on it)"},
		{"saddle, some settle elsewhere", []float64{0, 1, 1, -1}, 4, false, "fitted equilibrium (a saddle)"},
		{"damped, none settles", []float64{0, 1, -1, -1}, 0, false, "fitted equilibrium (a stable focus; no run settles on it)"},
		{"no model", nil, 0, true, "equilibrium of the certificate"},
	}
	key := regexp.MustCompile(`(fitted )?equilibri[^<]*`)
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			in := fixture(mustCert(fixtureCertJSON), nil)
			if tt.noModel {
				in.Model = nil
			} else {
				in.Model.SettledRuns = tt.settled
				in.Model.Equilibria[0].Class = classOf(t, tt.jac)
			}
			page := html.UnescapeString(renderPage(t, in))
			var got []string
			for _, m := range key.FindAllString(page, -1) {
				if strings.HasPrefix(m, "equilibrium the runs") || strings.HasPrefix(m, "fitted equilibrium") || m == "equilibrium of the certificate" {
					got = append(got, m)
				}
			}
			if len(got) == 0 {
				t.Fatalf("no equilibrium entry in the key")
			}
			for _, g := range got {
				if g != tt.want {
					t.Errorf("key says %q, want %q", g, tt.want)
				}
			}
		})
	}
}

// TestNoVWords: a certificate without a V (the anti-damped arm: rejected,
// no level) shows no "level 0" and no flag measured in a V of 0 against
// an edge at V = 0.
func TestNoVWords(t *testing.T) {
	c := mustCert(fixtureCertJSON)
	c.Verdict, c.Strength, c.Found, c.Level = fit.Rejected, fit.NoClaim, false, 0
	c.V = poly.Poly{}
	in := fixture(c, nil)
	in.Checks[0].Flagged = true
	in.Checks[0].Flags = []validate.Flag{{Kind: validate.FlagUnsettled, Time: 14.99, Excess: 0}}
	tags := regexp.MustCompile(`(?s)<[^>]*>`)
	page := html.UnescapeString(tags.ReplaceAllString(renderPage(t, in), ""))
	for _, bad := range []string{"level 0", "V = 0)", "was 0 ("} {
		if strings.Contains(page, bad) {
			t.Errorf("page says %q", bad)
		}
	}
	for _, want := range []string{"no V was found, so there is no level and no region", "had not settled by its end at 14.99 s"} {
		if !strings.Contains(page, want) {
			t.Errorf("page lacks %q", want)
		}
	}
}
