package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"

	"basin.example/fit"
)

// numCase describes one badly conditioned data set: the runs of a damped
// oscillator theta' = omega, omega' = -4 theta - 0.8 omega (RK4, 50 Hz),
// turned into logged columns by cols.
type numCase struct {
	name   string
	header string
	// cols maps the true state and a noise source to the logged cells.
	cols func(x []float64, rng *rand.Rand) []float64
	// start gives a run's initial state (nil: uniform in [-1, 1]²).
	start func(rng *rand.Rand) []float64
	// exit2 is the text of the one-line refusal when the input really is
	// unusable; empty when basin run must answer.
	exit2 string
	// answer says a verdict is as good as the refusal (exit2).
	answer bool
	// verdicts allowed; nil means inconclusive only.
	verdicts []fit.Verdict
	// levelTol > 0 asks for the baseline's verdict and its level within
	// this relative tolerance: the case is the baseline in other
	// coordinates, which basin's own scaling should undo.
	levelTol float64
}

// writeNumRuns writes runs CSV files of tc's data into dir.
func writeNumRuns(t *testing.T, dir string, tc numCase, runs int) {
	t.Helper()
	rng := rand.New(rand.NewPCG(7, 0))
	f := func(x []float64) []float64 { return []float64{x[1], -4*x[0] - 0.8*x[1]} }
	for r := 0; r < runs; r++ {
		var b strings.Builder
		b.WriteString(tc.header + "\n")
		x := []float64{2*rng.Float64() - 1, 2*rng.Float64() - 1}
		if tc.start != nil {
			x = tc.start(rng)
		}
		const h = 0.02
		for i := 0; i < 400; i++ {
			fmt.Fprintf(&b, "%.2f", float64(i)*h)
			for _, v := range tc.cols(x, rng) {
				fmt.Fprintf(&b, ",%.17g", v)
			}
			b.WriteString("\n")
			for s := 0; s < 4; s++ {
				rk4Step(f, x, h/4)
			}
		}
		if err := os.WriteFile(filepath.Join(dir, fmt.Sprintf("run%02d.csv", r)), []byte(b.String()), 0o644); err != nil {
			t.Fatal(err)
		}
	}
}

// nonFinite matches NaN or ±Inf as printed by Go (%g, strconv), by
// JavaScript-style formatters and by hand ("inf", "Infinity").
var nonFinite = regexp.MustCompile(`(?i)\b(nan|[+-]?inf(inity)?)\b`)

// scanOutputs parses every JSON output and scans the text outputs for a
// non-finite number; it returns the certificate.
func scanOutputs(t *testing.T, out string, stdout []byte) *fit.Certificate {
	t.Helper()
	for _, name := range []string{"model.json", "certificate.json"} {
		b, err := os.ReadFile(filepath.Join(out, name))
		if err != nil {
			t.Fatal(err)
		}
		var v any
		if err := json.Unmarshal(b, &v); err != nil {
			// encoding/json refuses NaN and Inf, so a file that holds
			// one does not parse.
			t.Fatalf("%s does not parse: %v", name, err)
		}
		if m := nonFinite.FindString(string(b)); m != "" {
			t.Errorf("%s holds %q", name, m)
		}
	}
	for _, name := range []string{"report.html", "summary.txt"} {
		b, err := os.ReadFile(filepath.Join(out, name))
		if err != nil {
			t.Fatal(err)
		}
		if loc := nonFinite.FindIndex(b); loc != nil {
			lo, hi := max(0, loc[0]-60), min(len(b), loc[1]+60)
			t.Errorf("%s holds %q in ...%s...", name, b[loc[0]:loc[1]], b[lo:hi])
		}
	}
	if m := nonFinite.Find(stdout); m != nil {
		t.Errorf("stdout holds %q", m)
	}
	f, err := os.Open(filepath.Join(out, "certificate.json"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	c, err := fit.ReadCertificate(f)
	if err != nil {
		t.Fatalf("basin run wrote a certificate that basin refuses: %v", err)
	}
	return c
}

// TestRunIllConditioned runs the whole job on data sets that stress the
// numerics. Nothing non-finite may reach an output; a data set that is
// unusable is refused with one line, any other gets a verdict with its
// reason, and none of these may be certified unless the well-posed
// baseline (same system, unit scales) is.
func TestRunIllConditioned(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the whole job per case")
	}
	ident := func(x []float64, rng *rand.Rand) []float64 {
		return []float64{x[0] + 1e-4*rng.NormFloat64(), x[1] + 1e-4*rng.NormFloat64()}
	}
	cases := []numCase{
		{name: "baseline", header: "time [s],theta [rad],omega [rad/s]", cols: ident,
			verdicts: []fit.Verdict{fit.Certified, fit.Inconclusive}},
		// One state in micro-units and one in mega-units: twelve orders of
		// magnitude between columns. Scaling is a change of coordinates,
		// so the answer may be anything but rejected (the system is stable).
		{name: "micro and mega units", header: "time [s],theta [urad],omega [Mrad/s]",
			cols: func(x []float64, rng *rand.Rand) []float64 {
				v := ident(x, rng)
				return []float64{v[0] * 1e6, v[1] * 1e-6}
			}, verdicts: []fit.Verdict{fit.Certified, fit.Inconclusive},
			// Scaling by powers of ten is exact up to one rounding per
			// cell (the CSV keeps 17 digits): agreement to 1e-9 leaves
			// room for the LP solver's own tolerance, from memory ~1e-9.
			levelTol: 1e-9},
		// A large offset: the equilibrium sits at 1e6 with motion of order 1,
		// so raw monomials lose about twelve digits to cancellation.
		{name: "large offset", header: "time [s],theta [rad],omega [rad/s]",
			cols: func(x []float64, rng *rand.Rand) []float64 {
				v := ident(x, rng)
				return []float64{v[0] + 1e6, v[1] - 3e5}
			}, verdicts: []fit.Verdict{fit.Certified, fit.Inconclusive},
			// The offset costs about 6 of the 16 digits of each cell
			// (1e6 + O(1)), i.e. a rounding of ~1e-10 against a noise of
			// 1e-4: the fit moves by far less than the noise, and the
			// level (a quantile of sampled V values) by under 1e-3.
			levelTol: 1e-3},
		// Two sensors of one quantity that agree to 1e-7: the library's
		// columns are collinear to within noise. Refuse, or be inconclusive.
		{name: "nearly collinear sensors", header: "time [s],theta [rad],omega [rad/s],theta2 [rad]",
			cols: func(x []float64, rng *rand.Rand) []float64 {
				v := ident(x, rng)
				return []float64{v[0], v[1], v[0] + 1e-7*rng.NormFloat64()}
			}, exit2: "move together|collinear"},
		// A state that never moves: unusable for a field fit.
		{name: "constant state", header: "time [s],theta [rad],omega [rad/s],temp [K]",
			cols: func(x []float64, rng *rand.Rand) []float64 {
				v := ident(x, rng)
				return []float64{v[0], v[1], 293.15}
			}, exit2: `state "temp" is constant`},
		// A state that moves only in its last digits (1e-13 of 293 K).
		{name: "state moving at rounding level", header: "time [s],theta [rad],omega [rad/s],temp [K]",
			cols: func(x []float64, rng *rand.Rand) []float64 {
				v := ident(x, rng)
				return []float64{v[0], v[1], 293.15 + 1e-13*rng.NormFloat64()}
			}, exit2: `state "temp" is constant`, answer: true},
		// Every run starts at the equilibrium: the logs are sensor noise
		// only, and nothing about the dynamics can be told.
		{name: "runs start at the equilibrium", header: "time [s],theta [rad],omega [rad/s]", cols: ident,
			start: func(*rand.Rand) []float64 { return []float64{0, 0} }, exit2: "constant|move together|too few", answer: true},
	}
	var base *fit.Certificate
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			data := filepath.Join(dir, "data")
			os.Mkdir(data, 0o755)
			writeNumRuns(t, data, tc, 20)
			out := filepath.Join(dir, "out")
			var o, e bytes.Buffer
			code := basinMain(context.Background(), []string{"run", "--out", out, "--bootstrap", "10", "--growth", "3", data}, &o, &e)
			if m := nonFinite.FindString(e.String()); m != "" {
				t.Errorf("stderr holds %q: %s", m, e.String())
			}
			if code == 2 {
				msg := e.String()
				if tc.exit2 == "" {
					t.Fatalf("refused: %s", msg)
				}
				if !regexp.MustCompile(tc.exit2).MatchString(msg) || strings.Count(msg, "\n") != 1 {
					t.Errorf("stderr %q, want one line matching %q", msg, tc.exit2)
				}
				if ents, _ := os.ReadDir(out); len(ents) != 0 {
					t.Errorf("refused input left %d files in --out", len(ents))
				}
				return
			}
			if code != 0 {
				t.Fatalf("exit %d: %s", code, e.String())
			}
			if tc.exit2 != "" && !tc.answer {
				t.Fatalf("answered, want a refusal matching %q", tc.exit2)
			}
			c := scanOutputs(t, out, o.Bytes())
			t.Logf("verdict %s (%s): %s; level %g, held-out %d, started inside %d", c.Verdict, c.Strength, c.Reason, c.Level, c.Validation.HeldoutRuns, c.Validation.StartInside)
			if c.Reason == "" {
				t.Error("verdict without a reason")
			}
			allowed := tc.verdicts
			if allowed == nil {
				allowed = []fit.Verdict{fit.Inconclusive}
			}
			ok := false
			for _, v := range allowed {
				ok = ok || c.Verdict == v
			}
			if !ok {
				t.Errorf("verdict %s, want one of %v; reason %q", c.Verdict, allowed, c.Reason)
			}
			if tc.name == "baseline" {
				if c.Verdict != fit.Certified {
					t.Fatalf("the well-posed baseline is %s; the cases below compare with it", c.Verdict)
				}
				base = c
			}
			if tc.levelTol > 0 && base != nil {
				if c.Verdict != base.Verdict || !scalar.EqualWithinAbs(c.Level, base.Level, tc.levelTol*base.Level) {
					t.Errorf("verdict %s level %.12g, baseline %s level %.12g (tolerance %g relative)",
						c.Verdict, c.Level, base.Verdict, base.Level, tc.levelTol)
				}
			}
		})
	}
}
