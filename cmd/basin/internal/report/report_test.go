package report

import (
	"bytes"
	"errors"
	"math"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"

	"basin.example/fit"
)

func renderPage(t *testing.T, in *Input) string {
	t.Helper()
	var b bytes.Buffer
	if err := HTML(&b, in); err != nil {
		t.Fatal(err)
	}
	return b.String()
}

// TestPageStructure: the sections are there, both figures are inline SVG,
// and nothing needs the network or a script.
func TestPageStructure(t *testing.T) {
	s := renderPage(t, fixture(mustCert(fixtureCertJSON), nil))
	for _, id := range []string{"read-first", "finding", "plane", "v-time", "region", "model", "heldout", "settings"} {
		if !strings.Contains(s, `<section id="`+id+`"`) {
			t.Errorf("section %q missing", id)
		}
	}
	if i, j := strings.Index(s, `id="read-first"`), strings.Index(s, `id="finding"`); i < 0 || i > j {
		t.Error("the caution must come before the finding")
	}
	if !strings.Contains(s, fit.Caveat) {
		t.Error("caveat text missing")
	}
	if n := strings.Count(s, `<svg role="img"`); n != 2 {
		t.Errorf("%d inline figures, want 2", n)
	}
	for _, label := range []string{`aria-label="phase plane of theta and omega"`, `aria-label="V along held-out runs"`} {
		if !strings.Contains(s, label) {
			t.Errorf("figure %s missing", label)
		}
	}
	// The only URLs allowed are the SVG and XLink namespace names, which
	// browsers never fetch.
	rest := strings.NewReplacer(`xmlns="http://www.w3.org/2000/svg"`, "", `xmlns:xlink="http://www.w3.org/1999/xlink"`, "").Replace(s)
	for _, bad := range []string{"http:", "https:", "<script", "<link", "<img", "<iframe", "url(", "@import", "src=", "href="} {
		if strings.Contains(strings.ToLower(rest), bad) {
			t.Errorf("page contains %q", bad)
		}
	}
	for _, want := range []string{"CERTIFIED", "asymptotic", "kept by", "20%", "V rose at 1.5 s, by 0.02 more than the noise tolerance", "v_degree", "envelope edge"} {
		if !strings.Contains(strings.ToUpper(s), strings.ToUpper(want)) {
			t.Errorf("page lacks %q", want)
		}
	}
}

// TestHostileNames: names from the user's files cannot inject markup.
func TestHostileNames(t *testing.T) {
	cj := strings.Replace(fixtureCertJSON, `["theta", "omega"]`, `["\"><img src=x>", "omega</title><script>"]`, 1)
	cert := mustCert(cj)
	in := fixture(cert, []string{"<script>alert(1)</script>", "a&b", "run<u>x", `"quoted'`, "ok", "<script>x</script>"})
	s := renderPage(t, in)
	low := strings.ToLower(s)
	for _, bad := range []string{"<script", "<img", "<u>", "</title><"} {
		if strings.Contains(low, bad) {
			t.Errorf("page contains raw %q", bad)
		}
	}
	for _, want := range []string{"&lt;script&gt;x&lt;/script&gt;", "&#34;&gt;&lt;img src=x&gt;"} {
		if !strings.Contains(s, want) {
			t.Errorf("page lacks the escaped %q", want)
		}
	}
	var b bytes.Buffer
	if err := Summary(&b, in); err != nil {
		t.Fatal(err)
	}
}

// svgPaths returns the point lists of the <path> elements whose style
// contains every given fragment, in canvas points.
func svgPaths(svg string, style ...string) [][][2]float64 {
	re := regexp.MustCompile(`<path d="([^"]*)"[^>]*style="([^"]*)"`)
	num := regexp.MustCompile(`[ML]([-0-9.e+]+),([-0-9.e+]+)`)
	var out [][][2]float64
	for _, m := range re.FindAllStringSubmatch(svg, -1) {
		ok := true
		for _, f := range style {
			ok = ok && strings.Contains(m[2], f)
		}
		if !ok {
			continue
		}
		var pts [][2]float64
		for _, p := range num.FindAllStringSubmatch(m[1], -1) {
			x, _ := strconv.ParseFloat(p[1], 64)
			y, _ := strconv.ParseFloat(p[2], 64)
			pts = append(pts, [2]float64{x, y})
		}
		out = append(out, pts)
	}
	return out
}

// svgPrecision is the half-unit of the last of the 5 significant digits
// vgsvg prints (its constant pr = 5) for a coordinate of size v points.
func svgPrecision(v float64) float64 {
	return 0.5 * math.Pow(10, math.Floor(math.Log10(math.Abs(v)+1e-300))-4)
}

// TestFiguresRedrawCertificate reads certificate.json back and checks that
// the boundary drawn satisfies V = level at its points (to the SVG's print
// precision), lies in the box, the equilibrium mark sits on the
// equilibrium, and the tables carry the certificate's numbers exactly.
func TestFiguresRedrawCertificate(t *testing.T) {
	cert := mustCert(fixtureCertJSON)
	in := fixture(cert, nil)
	pl, err := in.check()
	if err != nil {
		t.Fatal(err)
	}
	d, err := build(in, pl)
	if err != nil {
		t.Fatal(err)
	}
	f := d.Plane
	s := renderPage(t, in)
	if !strings.Contains(s, string(f.SVG)) {
		t.Fatal("the page does not hold the plane figure built")
	}
	toData := func(p [2]float64) (float64, float64, float64, float64) {
		kx := (f.xr[1] - f.xr[0]) / (f.cx[1] - f.cx[0])
		ky := (f.yr[1] - f.yr[0]) / (f.cy[1] - f.cy[0])
		x := f.xr[0] + (p[0]-f.cx[0])*kx
		y := f.yr[0] + (p[1]-f.cy[0])*ky
		return x, y, svgPrecision(p[0]) * math.Abs(kx), svgPrecision(p[1]) * math.Abs(ky)
	}
	lines := svgPaths(string(f.SVG), "stroke:"+hex(inkRegion), "stroke-width:2.4")
	n := 0
	for _, l := range lines {
		for _, p := range l {
			x, y, dx, dy := toData(p)
			// V is checked with an evaluation independent of package poly;
			// the tolerance is how much V can change within the print
			// rounding of the point: |dV/dx| dx + |dV/dy| dy, doubled.
			a, b := x-fixtureEquil[0], y-fixtureEquil[1]
			gx, gy := 3*a+b, a+2*b
			tol := 2 * (math.Abs(gx)*dx + math.Abs(gy)*dy)
			if v := quadV(x, y); !scalar.EqualWithinAbs(v, cert.Level, tol) {
				t.Fatalf("boundary point (%g, %g): V = %g, level %g, tol %g", x, y, v, cert.Level, tol)
			}
			if x < cert.Box[0][0]-dx || x > cert.Box[0][1]+dx || y < cert.Box[1][0]-dy || y > cert.Box[1][1]+dy {
				t.Fatalf("boundary point (%g, %g) outside the box %v", x, y, cert.Box)
			}
			n++
		}
	}
	if n < 200 {
		t.Fatalf("only %d boundary points drawn", n)
	}
	// The ellipse V = 2.25 pokes out of the box at the top and the bottom,
	// so the boundary is cut there: at least two pieces.
	if len(lines) < 2 {
		t.Errorf("%d boundary pieces, want the ellipse cut by the box into >= 2", len(lines))
	}
	// Equilibrium mark: the filled square in the equilibrium colour.
	sq := svgPaths(string(f.SVG), "fill:"+hex(inkEquil))
	if len(sq) != 1 || len(sq[0]) < 4 {
		t.Fatalf("equilibrium marks: %v", sq)
	}
	var cx, cy float64
	for _, p := range sq[0][:4] {
		cx += p[0] / 4
		cy += p[1] / 4
	}
	x, y, dx, dy := toData([2]float64{cx, cy})
	if !scalar.EqualWithinAbs(x, cert.Equilibrium[0], 2*dx) || !scalar.EqualWithinAbs(y, cert.Equilibrium[1], 2*dy) {
		t.Errorf("equilibrium drawn at (%g, %g), certificate (%g, %g)", x, y, cert.Equilibrium[0], cert.Equilibrium[1])
	}
	// Tables: the exact value of each number rides along in data-v.
	cell := regexp.MustCompile(`data-k="([a-z_-]+)" data-v="([^"]*)"`)
	got := map[string][]float64{}
	for _, m := range cell.FindAllStringSubmatch(s, -1) {
		v, err := strconv.ParseFloat(m[2], 64)
		if err != nil {
			t.Fatalf("data-v %q: %v", m[2], err)
		}
		got[m[1]] = append(got[m[1]], v)
	}
	v := cert.Validation
	want := map[string][]float64{
		"level":               {cert.Level},
		"equilibrium":         cert.Equilibrium,
		"scale":               cert.Scale,
		"v-coef":              cert.V.Coefficients,
		"extent-lo":           {cert.Region.Extent[0][0], cert.Region.Extent[1][0]},
		"extent-hi":           {cert.Region.Extent[0][1], cert.Region.Extent[1][1]},
		"envelope_share":      {cert.Region.EnvelopeShare},
		"decrease_fraction":   {v.DecreaseFraction},
		"invariance_fraction": {v.InvarianceFraction},
		"violation_bound":     {v.ViolationBound},
		"confidence":          {v.Confidence},
		"heldout_runs":        {float64(v.HeldoutRuns)},
		"coef":                {0.1, 1, 0.15, -1, -1, 0.001},
	}
	for k, w := range want {
		if g := got[k]; len(g) != len(w) {
			t.Errorf("%s: page has %v, certificate %v", k, g, w)
		} else {
			for i := range w {
				if g[i] != w[i] {
					t.Errorf("%s[%d]: page %v, certificate %v", k, i, g[i], w[i])
				}
			}
		}
	}
}

// TestContourOnLevel checks the contour routine directly: points on the
// circle x² + y² = 1 to bisection accuracy, and a closed loop.
func TestContourOnLevel(t *testing.T) {
	lines := contour(func(x, y float64) float64 { return x*x + y*y - 1 }, -2, 2, -2, 2, 37, 41)
	if len(lines) != 1 {
		t.Fatalf("%d pieces, want one closed loop", len(lines))
	}
	l := lines[0]
	if l[0] != l[len(l)-1] {
		t.Errorf("loop not closed: %v ... %v", l[0], l[len(l)-1])
	}
	for _, p := range l {
		// bisection to 2^-60 of a cell edge (0.1): below 1e-15 in V
		if r := math.Hypot(p[0], p[1]); !scalar.EqualWithinAbs(r, 1, 1e-12) {
			t.Fatalf("point %v at radius %v", p, r)
		}
	}
	// two disjoint circles give two loops; a saddle-shaped level gives
	// open curves ending on the border.
	two := contour(func(x, y float64) float64 {
		return math.Min((x-1)*(x-1)+y*y, (x+1)*(x+1)+y*y) - 0.25
	}, -2, 2, -2, 2, 40, 40)
	if len(two) != 2 {
		t.Errorf("two circles: %d pieces", len(two))
	}
	hyp := contour(func(x, y float64) float64 { return x*y - 0.5 }, -2, 2, -2, 2, 40, 40)
	if len(hyp) != 2 {
		t.Errorf("hyperbola: %d pieces, want 2", len(hyp))
	}
}

func TestDefaultPlane(t *testing.T) {
	cj := strings.Replace(fixtureCertJSON, `"scale": [1, 1]`, `"scale": [1, 0.01]`, 1)
	c := mustCert(cj)
	in := fixture(c, nil)
	// add a third, nearly constant state: the plane must skip it
	c3 := *c
	c3.States = []string{"theta", "flat", "omega"}
	c3.Units = []string{"rad", "K", "rad/s"}
	c3.Equilibrium = []float64{c.Equilibrium[0], 20, c.Equilibrium[1]}
	c3.Scale = []float64{1, 1, 0.01}
	for ri := range in.Data.Runs {
		r := &in.Data.Runs[ri]
		flat := make([]float64, r.Len())
		for i := range flat {
			flat[i] = 20 + 1e-3*float64(i%3)
		}
		r.X = [][]float64{r.X[0], flat, r.X[1]}
	}
	if p := DefaultPlane(&c3, in.Data); p != [2]int{0, 2} {
		t.Errorf("plane %v, want [0 2]", p)
	}
}

func TestBadInput(t *testing.T) {
	c := mustCert(fixtureCertJSON)
	for name, in := range map[string]*Input{
		"nil cert":  {},
		"bad plane": {Cert: c, Plane: []int{0, 0}},
		"plane oob": {Cert: c, Plane: []int{0, 5}},
		"heldout":   {Cert: c, Data: fixture(c, nil).Data, Heldout: []bool{true}},
	} {
		if err := HTML(&bytes.Buffer{}, in); !errors.Is(err, ErrInput) {
			t.Errorf("%s: HTML err = %v", name, err)
		}
		if err := Summary(&bytes.Buffer{}, in); !errors.Is(err, ErrInput) {
			t.Errorf("%s: Summary err = %v", name, err)
		}
	}
	// A rejected certificate without V, model or data still makes a page.
	rej := *c
	rej.Verdict, rej.Strength, rej.Level, rej.Validation = fit.Rejected, fit.NoClaim, 0, nil
	rej.V.Exponents, rej.V.Coefficients = nil, nil
	s := renderPage(t, &Input{Cert: &rej})
	if !strings.Contains(s, "REJECTED") && !strings.Contains(s, "rejected") {
		t.Error("rejected verdict not shown")
	}
}

func TestSummary(t *testing.T) {
	var b bytes.Buffer
	if err := Summary(&b, fixture(mustCert(fixtureCertJSON), nil)); err != nil {
		t.Fatal(err)
	}
	s := b.String()
	for _, want := range []string{
		"verdict: certified (strength asymptotic)",
		"equilibrium: theta = 0.25 rad, omega = -0.1 rad/s",
		"d(omega)/dt [rad/s^2] = 0.15 - 1 theta - 1 omega + 0.001 theta^3",
		"other equilibria of the fitted model: saddle at theta = 1.3 rad, omega = 0.05 rad/s",
		"held-out: 3 runs;",
		"of the 2 runs that started inside, 2 stayed inside and 2 settled",
		"V(z) = 1.5 z_theta^2 + 1 z_theta z_omega + 1 z_omega^2",
		"theta from -1.2 to 1.6 rad",
		"with confidence 99.9999%",
		"at most 0.41% (from 1200 effectively independent samples, 0 violations)",
		"caveat: " + fit.Caveat,
	} {
		if !strings.Contains(s, want) {
			t.Errorf("summary lacks %q:\n%s", want, s)
		}
	}
}

// TestDeterministic: the same input gives the same bytes (basin run
// promises byte-identical outputs for the same input and seed).
func TestDeterministic(t *testing.T) {
	a := renderPage(t, fixture(mustCert(fixtureCertJSON), nil))
	b := renderPage(t, fixture(mustCert(fixtureCertJSON), nil))
	if a != b {
		t.Fatal("two renderings of the same input differ")
	}
}

// TestSummaryConflict: a certificate with an LP conflict gets one line
// saying who contradicts every V, how many rows and samples carry it and
// where the strongest lies; one without gets none.
func TestSummaryConflict(t *testing.T) {
	for _, tc := range []struct {
		name, conflict string
		want           []string
	}{
		{"none", ``, nil},
		{"field", `"lp_conflict": {"kind": "negative_margin", "v_degree": 2, "margin": -0.01, "lp_rows": 900, "rows": 5, "samples": 3,
			"families": [{"family": "positivity", "rows": 2, "share": 0.84}, {"family": "model decrease", "rows": 2, "share": 0.16}],
			"strongest": [{"family": "positivity", "share": 0.83, "point": [-0.0307, -0.0887], "run": "run-06.csv", "sample": 133}]},`,
			[]string{"LP conflict: the fitted field contradicts every V of degree 2: 5 rows carry the contradiction (positivity 84%, model decrease 16%), 3 of them at recorded samples; the strongest near theta = -0.031 rad, omega = -0.089 rad/s (run run-06.csv, sample 133)."}},
		{"data", `"lp_conflict": {"kind": "infeasible", "v_degree": 4, "lp_rows": 900, "rows": 7, "samples": 6,
			"families": [{"family": "data decrease", "rows": 6, "share": 0.7}, {"family": "target", "rows": 1, "share": 0.3}],
			"strongest": [{"family": "margin", "share": 0.5}, {"family": "data decrease", "share": 0.2, "point": [0.5, 0.25]}]},`,
			[]string{"the recorded runs contradict every V of degree 4", "the strongest near theta = 0.5 rad, omega = 0.25 rad/s."}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			cj := strings.Replace(fixtureCertJSON, `"settings":`, tc.conflict+`"settings":`, 1)
			var b bytes.Buffer
			if err := Summary(&b, fixture(mustCert(cj), nil)); err != nil {
				t.Fatal(err)
			}
			s := b.String()
			if n := strings.Count(s, "LP conflict"); n != min(len(tc.want), 1) {
				t.Errorf("%d conflict lines:\n%s", n, s)
			}
			for _, w := range tc.want {
				if !strings.Contains(s, w) {
					t.Errorf("summary lacks %q:\n%s", w, s)
				}
			}
			// The page's finding carries the same line.
			page := renderPage(t, fixture(mustCert(cj), nil))
			if got := strings.Contains(page, `data-k="lp-conflict"`); got != (len(tc.want) > 0) {
				t.Errorf("page has the conflict line: %v, want %v", got, len(tc.want) > 0)
			}
		})
	}
}

// TestNoEquilibriumLine: a model without an equilibrium in the data's box
// (a state that drifts) is said to have none, naming the state whose rate
// is farthest from zero at the settle point; a model with one says
// nothing more. The rate is worked by hand: d(theta)/dt = 0.3 + omega at
// omega = -0.1 is 0.2.
func TestNoEquilibriumLine(t *testing.T) {
	in := fixture(mustCert(fixtureCertJSON), nil)
	var b strings.Builder
	if err := Summary(&b, in); err != nil {
		t.Fatal(err)
	}
	if strings.Contains(b.String(), "no equilibrium") {
		t.Errorf("a model with an equilibrium is said to have none:\n%s", b.String())
	}
	in.Model.Equilibria = nil
	in.Model.Spread = []float64{1, 1}
	in.Model.Equations[0].Coefficients[0] = 0.3
	b.Reset()
	if err := Summary(&b, in); err != nil {
		t.Fatal(err)
	}
	want := "  the fitted model has no equilibrium in the data's box: the point above is where the runs settle, and d(theta)/dt is 0.2 rad/s there"
	if !strings.Contains(b.String(), want) {
		t.Errorf("summary lacks %q:\n%s", want, b.String())
	}
}

// TestBoundTextNoRegion: with no held-out pair inside a region the bound
// says there is nothing to bound, instead of "at most 100%".
func TestBoundTextNoRegion(t *testing.T) {
	for _, tc := range []struct {
		v    fit.Validation
		want string
	}{
		{fit.Validation{ViolationBound: 1, Confidence: 0.999999}, "none: no held-out sample lay inside a region, so there is nothing to bound"},
		{fit.Validation{ViolationBound: 0.115, Confidence: 0.999999, Pairs: 4194, ScenarioSamples: 176}, "with confidence 99.9999%, a new sample inside the region breaks the decrease with probability at most 11.5% (from 176 effectively independent samples, 0 violations)"},
	} {
		if got := BoundText(&tc.v); got != tc.want {
			t.Errorf("BoundText = %q, want %q", got, tc.want)
		}
	}
}
