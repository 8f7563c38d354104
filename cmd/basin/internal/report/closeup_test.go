package report

import (
	"strings"
	"testing"

	"basin.example/fit"
	"basin.example/fit/poly"
	"basin.example/ingest"
)

// TestCloseUp: the close-up of the phase plane is drawn only when it
// narrows the view: a run flying far off gives one; when the model's
// equilibrium out there is in the data's envelope the close-up must keep
// it in view, is as wide as the full plane, and is left out.
func TestCloseUp(t *testing.T) {
	const label = `aria-label="close-up of the phase plane of theta and omega"`
	for _, tc := range []struct {
		name       string
		far        bool // add a fit run out to theta = 40
		inEnvelope bool // the fixture's equilibrium at theta = 40 is in the envelope
		want       bool
	}{
		{"all runs near the box", false, false, false},
		{"a run far off", true, false, true},
		{"a run far off, to an equilibrium in the envelope", true, true, false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			in := fixture(mustCert(fixtureCertJSON), nil)
			if tc.far {
				r := ingest.Run{Name: "far", X: [][]float64{nil, nil}}
				for i := range 200 {
					s := float64(i) / 199
					r.T = append(r.T, 0.02*float64(i))
					r.X[0] = append(r.X[0], 40*s)
					r.X[1] = append(r.X[1], 0.5*s*(1-s))
				}
				in.Data.Runs = append(in.Data.Runs, r)
				in.Heldout = append(in.Heldout, false)
			}
			in.Model.Equilibria[2].InEnvelope = tc.inEnvelope
			page := renderPage(t, in)
			if got := strings.Contains(page, label); got != tc.want {
				t.Errorf("close-up drawn = %v, want %v", got, tc.want)
			}
			if n := strings.Count(page, `aria-label="phase plane of theta and omega"`); n != 1 {
				t.Errorf("%d full phase planes, want 1", n)
			}
		})
	}
}

// TestNoVTable: without a V the page says so in one line instead of an
// empty table of terms, leaves out the noise ball and tolerance of a V,
// keys no region or box it does not draw, and bounds nothing when no
// held-out sample lay inside a region.
func TestNoVTable(t *testing.T) {
	c := mustCert(fixtureCertJSON)
	c.V = poly.Poly{Exponents: [][]int{}, Coefficients: []float64{}}
	c.Level, c.Box = 0, nil
	v := *c.Validation
	v.Pairs, v.ScenarioSamples, v.DecreaseFraction, v.ViolationBound = 0, 0, 0, 1
	c.Validation = &v
	page := renderPage(t, fixture(c, nil))
	if strings.Contains(page, `<table id="v-terms">`) || strings.Contains(page, "V is a polynomial") {
		t.Error("page has a table of V's terms without a V")
	}
	if !strings.Contains(page, "No V was found, so there are no terms to list") {
		t.Error("page does not say that no V was found")
	}
	if !strings.Contains(page, "No V was found, so no region is claimed: see the reason under the verdict.") || strings.Contains(page, "No certified region.") {
		t.Error("the region section does not say that no V was found, so no region is claimed")
	}
	if !strings.Contains(page, "With no V there is no region: the figures below count nothing inside one") {
		t.Error("the held-out section does not say its figures count nothing inside a region")
	}
	for _, bad := range []string{"Noise ball radius", "boundary of the certified region", "box bounding the region", `data-k="violation_bound" data-v="1">100%`} {
		if strings.Contains(page, bad) {
			t.Errorf("page without a V has %q", bad)
		}
	}
	if !strings.Contains(page, "<h2>Trajectories</h2>") {
		t.Error("the phase plane's heading names a region it does not draw")
	}
	if !strings.Contains(page, "No region is drawn: none was certified.") || strings.Contains(page, "The region is the part of") {
		t.Error("the phase plane's caption describes a region it does not draw")
	}
	if !strings.Contains(page, `data-k="violation_bound" data-v="1">none: no held-out sample lay inside a region`) {
		t.Error("page does not say the bound has nothing to bound")
	}
	page = renderPage(t, fixture(mustCert(fixtureCertJSON), nil))
	if !strings.Contains(page, `<table id="v-terms">`) || strings.Contains(page, "No V was found") {
		t.Error("page with a V lacks its table of terms")
	}
}

// TestInconclusiveRegionWords: a certificate whose V and level were found
// on the fit runs but whose held-out check did not pass draws its level
// set, and calls it the region checked, never the certified region; a
// certified one keeps the words.
func TestInconclusiveRegionWords(t *testing.T) {
	for _, v := range []fit.Verdict{fit.Inconclusive, fit.Rejected, fit.Certified} {
		c := mustCert(fixtureCertJSON)
		c.Verdict = v
		page := renderPage(t, fixture(c, nil))
		certified := strings.Contains(page, "boundary of the certified region") || strings.Contains(page, "Trajectories and the certified region")
		checked := strings.Contains(page, "boundary of the region checked") && strings.Contains(page, "Trajectories and the region checked")
		if certified != (v == fit.Certified) || checked != (v != fit.Certified) {
			t.Errorf("%s: says certified region %v, region checked %v", v, certified, checked)
		}
	}
}
