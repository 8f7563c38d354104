package report

import (
	"strings"
	"testing"

	"basin.example/fit"
	"basin.example/fit/poly"
)

// TestSummaryNoV: a certificate with no V (none found, so no level and
// no region) says so in the summary, with why from its reason kind, and
// describes no region: no level set, no extent, no pairs or runs inside
// a region, no bound over one, no flagged run outside a region's claim.
// The same certificate with its V keeps the region's lines.
func TestSummaryNoV(t *testing.T) {
	noRegion := []string{"region {V <=", "inside the region", "entered the region", "lay inside a region", "never entered the region", "limited by", "V(z) ="}
	for _, tc := range []struct {
		name  string
		kind  fit.ReasonKind
		want  []string
		avoid []string
	}{
		{"unstable linearisation", fit.ReasonUnstableLinearisation,
			[]string{"V: none found, so no region is claimed: the fitted linearisation at the equilibrium is unstable",
				"held-out: 3 runs; with no V there is no region to check them against",
				"scenario bound: none: with no V there is no region",
				"(1 rises; no V, so no region: they contradict no claim)"}, noRegion},
		{"marginal", fit.ReasonLinearMarginal,
			[]string{"V: none found, so no region is claimed: the fitted linearisation has an eigenvalue too near the imaginary axis"}, noRegion},
		{"LP infeasible", fit.ReasonLPInfeasible,
			[]string{"V: none found, so no region is claimed: no V of the degree tried falls along the fitted field"}, noRegion},
		{"with V", fit.ReasonCertified, []string{"region {V <= 2.25}", "V(z) =", "inside the region"}, []string{"none found", "no region is claimed"}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			c := mustCert(fixtureCertJSON)
			if tc.kind != fit.ReasonCertified {
				c.Verdict, c.Strength, c.Found = fit.Inconclusive, fit.NoClaim, false
				c.V = poly.Poly{Exponents: [][]int{}, Coefficients: []float64{}}
				c.Level, c.Box, c.Region = 0, nil, fit.Region{}
				v := *c.Validation
				v.Pairs, v.ScenarioSamples, v.DecreaseFraction, v.ViolationBound, v.StartInside, v.Settled = 0, 0, 0, 1, 0, 0
				c.Validation = &v
			}
			c.ReasonKind = tc.kind
			in := fixture(c, nil)
			if tc.kind != fit.ReasonCertified {
				for i := range in.Checks {
					in.Checks[i].StartInside, in.Checks[i].EverInside = false, false
				}
			}
			var b strings.Builder
			if err := Summary(&b, in); err != nil {
				t.Fatal(err)
			}
			got := b.String()
			for _, w := range tc.want {
				if !strings.Contains(got, w) {
					t.Errorf("summary lacks %q:\n%s", w, got)
				}
			}
			for _, w := range tc.avoid {
				if strings.Contains(got, w) {
					t.Errorf("summary has %q:\n%s", w, got)
				}
			}
		})
	}
}

// TestRestSectionNoV: a rest point's section without a V says none was
// found and why, not "region: none certified".
func TestRestSectionNoV(t *testing.T) {
	c := mustCert(fixtureCertJSON)
	c2 := mustCert(fixtureCertJSON)
	c2.V = poly.Poly{Exponents: [][]int{}, Coefficients: []float64{}}
	c2.Level, c2.Found, c2.Region, c2.ReasonKind = 0, false, fit.Region{}, fit.ReasonLPInfeasible
	in := fixture(c, nil)
	in.Rests = []Rest{{File: "certificate.json", Cert: c, Runs: 4}, {File: "certificate-2.json", Cert: c2, Runs: 2}}
	var b strings.Builder
	if err := Summary(&b, in); err != nil {
		t.Fatal(err)
	}
	_, sec, _ := strings.Cut(b.String(), "certificate-2.json:")
	if !strings.Contains(sec, "    V: none found, so no region is claimed: no V of the degree tried") || strings.Contains(sec, "region: none certified") {
		t.Errorf("section of certificate-2.json:\n%s", sec)
	}
}
