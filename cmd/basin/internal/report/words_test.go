package report

import (
	"bytes"
	"fmt"
	"html"
	"regexp"
	"strings"
	"testing"

	"basin.example/fit"
	"basin.example/validate"
)

// wordCases are fixed inputs whose rendering must read cleanly: the
// fixture; one held-out run that does not start inside, with round-off
// in the equilibrium, LP zeros in V and a bound small enough for an
// exponent; and a rejected certificate without a region or held-out runs.
func wordCases() map[string]*Input {
	cases := map[string]*Input{"fixture": fixture(mustCert(fixtureCertJSON), nil)}

	c := mustCert(fixtureCertJSON)
	c.Equilibrium = []float64{2.019e-28, -1.1102e-13}
	c.V.Exponents = [][]int{{2, 0}, {1, 1}, {0, 2}, {1, 0}, {0, 1}}
	c.V.Coefficients = []float64{1.5, 1, 1, 0, 3e-9}
	c.Tolerance = 1.1102e-13
	c.NoiseRadius = 9.999999999999999e-05
	v := *c.Validation
	v.HeldoutRuns, v.StartInside, v.Settled, v.InvarianceFraction = 1, 0, 0, 0
	v.ViolationBound, v.Pairs, v.DecreaseFraction, v.ScenarioSamples = 6.9e-05, 1, 1, 1
	v.DerivativeError = []float64{0.0513, 9.999999999999999e-05}
	c.Validation = &v
	in := fixture(c, nil)
	in.Model.Equations[0].HeldoutError = 1.1102e-13
	in.Checks = in.Checks[len(in.Checks)-1:]
	for i := range in.Heldout {
		in.Heldout[i] = i == len(in.Heldout)-1
	}
	cases["one run, none inside"] = in

	r := mustCert(fixtureCertJSON)
	r.Verdict, r.Strength, r.Level, r.Validation = fit.Rejected, fit.NoClaim, 0, nil
	r.Region = fit.Region{}
	cases["rejected"] = &Input{Cert: r}
	return cases
}

// TestWords renders the summary and the page of each case and looks for
// what a reader should never see: float noise in exponent form, a count
// of one with a plural noun, a share of nothing, 100% for a share below
// one, and a state vector without units.
func TestWords(t *testing.T) {
	// What people see: the text, the figures' labels included, without
	// the markup (SVG coordinates, the exact values in data-v for machines).
	tags := regexp.MustCompile(`(?s)<[^>]*>`)
	bad := []*regexp.Regexp{
		regexp.MustCompile(`e-0\d`),
		regexp.MustCompile(`\b1 (runs|pairs|sample pairs|samples|violations|terms|states)\b`),
		regexp.MustCompile(`0(\.0)?% of 0|% \(0 of 0`),
		regexp.MustCompile(`\(-?[0-9.]+(e[-+]?\d+)?, -?[0-9.]+(e[-+]?\d+)?\)`), // "(-6.772, -159.4)"
		regexp.MustCompile(`\d{7,}`),                                           // 499.99999999999955, 0.30000000000000004
	}
	// every coordinate of a state vector names its state and its unit
	coord := regexp.MustCompile(`\b(theta|omega) = (-?[0-9.]+(e[-+]?\d+)?)( rad/s| rad)?`)
	for name, in := range wordCases() {
		var sum bytes.Buffer
		if err := Summary(&sum, in); err != nil {
			t.Fatal(err)
		}
		page := html.UnescapeString(tags.ReplaceAllString(renderPage(t, in), " "))
		for what, text := range map[string]string{"summary": sum.String(), "page": page} {
			for _, re := range bad {
				if m := re.FindString(text); m != "" {
					t.Errorf("%s, %s: %q (matches %s)", name, what, m, re)
				}
			}
			for _, m := range coord.FindAllStringSubmatch(text, -1) {
				if m[4] == "" {
					t.Errorf("%s, %s: %q has no unit", name, what, m[0])
				}
			}
			if strings.Contains(text, "100.0%") {
				t.Errorf("%s, %s: a share printed as 100.0%%", name, what)
			}
		}
		if name == "one run, none inside" {
			for _, want := range []string{"held-out: 1 run;", "no run entered the region", "record held-out runs that start or pass within theta",
				"equilibrium: theta = 0 rad, omega = 0 rad/s", "V(z) = 1.5 z_theta^2 + 1 z_theta z_omega + 1 z_omega^2\n  (2 terms below"} {
				if !strings.Contains(sum.String(), want) {
					t.Errorf("summary lacks %q:\n%s", want, sum.String())
				}
			}
			for _, want := range []string{"no run entered the region", "theta rad 0 1", "omega rad/s 0 1", "Left out here: 2 more terms of V"} {
				if !strings.Contains(strings.Join(strings.Fields(page), " "), want) {
					t.Errorf("page lacks %q", want)
				}
			}
		}
	}
}

// TestRestAndCutWords: an unsettled flag that came to rest at another
// rest point says so, where, and which, not that the run had not
// settled; the settled column reads "another rest point" for it and
// "cut: drive on at 11.6 s" for a piece cut short by an input's onset,
// "cut: jump in v at 6.03 s" for one cut at a hit, "cut: gap from 7.99 s
// to 9 s" for one cut at a gap; the held-out lines say where the pieces
// not judged on settling were cut (common practice: a table cell says what happened, the flag why).
func TestRestAndCutWords(t *testing.T) {
	c := mustCert(fixtureCertJSON)
	rest := validate.Flag{Kind: validate.FlagUnsettled, Time: 14.99, Excess: 33, RestPoint: []float64{-1, 0.0003}, RestName: "certificate-2.json's rest point"}
	r := &validate.RunScreen{Flags: []validate.Flag{rest}, Flagged: true}
	got := FlagText(c, rest, r)
	for _, want := range []string{"settled at another rest point by its end at 14.99 s, at ", "(certificate-2.json's rest point)", "outside this certificate's region"} {
		if !strings.Contains(got, want) {
			t.Errorf("flag text %q lacks %q", got, want)
		}
	}
	if strings.Contains(got, "not settled") {
		t.Errorf("flag text %q says the run had not settled", got)
	}
	plain := validate.Flag{Kind: validate.FlagUnsettled, Time: 9.99, Excess: 1}
	if got := FlagText(c, plain, &validate.RunScreen{Flags: []validate.Flag{plain}}); !strings.HasPrefix(got, "had not settled by its end at 9.99 s") {
		t.Errorf("plain unsettled: %q", got)
	}
	for _, tc := range []struct {
		r    validate.RunScreen
		want string
	}{
		{*r, "another rest point"},
		{validate.RunScreen{Settled: true}, "yes"},
		{validate.RunScreen{Flags: []validate.Flag{plain}}, "no"},
		{validate.RunScreen{Cut: &validate.Cut{Reason: validate.CutInput, Time: 11.6, Input: "drive"}}, "cut: drive on at 11.6 s"},
		{validate.RunScreen{Cut: &validate.Cut{Reason: validate.CutJump, Time: 6.03, State: "v"}}, "cut: jump in v at 6.03 s"},
		{validate.RunScreen{Cut: &validate.Cut{Reason: validate.CutJump, Time: 6.03}}, "cut: jump at 6.03 s"},
		{validate.RunScreen{Cut: &validate.Cut{Reason: validate.CutGap, Time: 7.99, Until: 9}}, "cut: gap from 7.99 s to 9 s"},
		{validate.RunScreen{Cut: &validate.Cut{Reason: validate.CutGap, Time: 7.99}}, "cut: gap after 7.99 s"},
		// a piece cut short that settled all the same says so
		{validate.RunScreen{Settled: true, Cut: &validate.Cut{Reason: validate.CutJump, Time: 6.03, State: "v"}}, "yes"},
	} {
		if got := SettledText(&tc.r); got != tc.want {
			t.Errorf("settled column %q, want %q", got, tc.want)
		}
	}
}

// TestCutWhere: the held-out lines say where the pieces not judged on
// settling were cut, by reason, and a certificate written before the
// reasons were counted had only input cuts.
func TestCutWhere(t *testing.T) {
	for _, tc := range []struct {
		v    fit.Validation
		want string
	}{
		{fit.Validation{CutShort: 2}, "where an input left rest"},
		{fit.Validation{CutShort: 2, CutShortBy: map[string]int{"jump": 2}}, "at a one-sample jump"},
		{fit.Validation{CutShort: 1, CutShortBy: map[string]int{"gap": 1}}, "at a gap in the log"},
		{fit.Validation{CutShort: 3, CutShortBy: map[string]int{"gap": 1, "jump": 2}}, "(2 at a one-sample jump, 1 at a gap in the log)"},
	} {
		if got := cutWhere(&tc.v); got != tc.want {
			t.Errorf("%+v: %q, want %q", tc.v.CutShortBy, got, tc.want)
		}
	}
}

// TestHeldoutCutLines: the summary's held-out line and the page's
// settled row say how many entered runs were cut short and where, after
// the count that settled (common practice: a count says what it leaves
// out).
func TestHeldoutCutLines(t *testing.T) {
	c := mustCert(fixtureCertJSON)
	v := &fit.Validation{HeldoutRuns: 6, EnteredRuns: 6, Settled: 3, InvarianceFraction: 1, Pairs: 100, DecreaseFraction: 1,
		CutShort: 3, CutShortBy: map[string]int{"jump": 2, "gap": 1}}
	line := heldoutPieces(c, v, heldoutCount{Runs: 6})
	if want := "of the 6 runs that entered the region, 6 stayed inside and 3 settled, 3 cut short (2 at a one-sample jump, 1 at a gap in the log) before they could settle"; !strings.Contains(line, want) {
		t.Errorf("held-out line %q lacks %q", line, want)
	}
	one := *v
	one.Settled, one.CutShort, one.CutShortBy = 5, 1, map[string]int{"gap": 1}
	if line, want := heldoutPieces(c, &one, heldoutCount{Runs: 6}), "5 settled, 1 cut short at a gap in the log before it could settle"; !strings.Contains(line, want) {
		t.Errorf("held-out line %q lacks %q", line, want)
	}
	found := false
	for _, r := range valRows(v, heldoutCount{Runs: 6}) {
		found = found || strings.Contains(fmt.Sprint(r), "3 of 6; 3 more cut short (2 at a one-sample jump, 1 at a gap in the log), not judged on settling")
	}
	if !found {
		t.Errorf("no settled row names the cut pieces: %+v", valRows(v, heldoutCount{Runs: 6}))
	}
}
