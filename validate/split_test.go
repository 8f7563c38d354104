package validate

import (
	"context"
	"fmt"
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"

	"basin.example/fit"
	"basin.example/ingest"
)

func TestSplit(t *testing.T) {
	runs := make([]ingest.Run, 11)
	f := Split(runs, 4, 1)
	count := map[int]int{}
	for _, k := range f {
		count[k]++
	}
	for k := 0; k < 4; k++ {
		if count[k] < 2 || count[k] > 3 {
			t.Errorf("fold %d has %d runs: %v", k, count[k], f)
		}
	}
	g := Split(runs, 4, 1)
	h := Split(runs, 4, 2)
	same, differ := true, false
	for i := range f {
		same = same && f[i] == g[i]
		differ = differ || f[i] != h[i]
	}
	if !same || !differ {
		t.Errorf("seeded: same seed equal %v, other seed differs %v", same, differ)
	}
	// A manifest's holdout wins; "fit" never held out.
	runs[2].Split, runs[5].Split, runs[6].Split = "holdout", "holdout", "fit"
	f = Split(runs, 4, 1)
	for i, k := range f {
		if want := map[bool]int{true: 0, false: -1}[runs[i].Split == "holdout"]; k != want {
			t.Errorf("run %d (%q) fold %d, want %d", i, runs[i].Split, k, want)
		}
	}
	runs[2].Split, runs[5].Split = "", ""
	f = Split(runs, 4, 1)
	if f[6] != -1 {
		t.Errorf("a fit run was dealt to fold %d", f[6])
	}
}

// TestEvaluateFewRuns: with 2 runs there is no held-out verdict.
func TestEvaluateFewRuns(t *testing.T) {
	sys := damped
	sys.runs, sys.dur, sys.rate = 2, 40, 100
	res, err := Evaluate(context.Background(), simulate(t, sys, 0, 1), evalOpts())
	if err != nil {
		t.Fatal(err)
	}
	if c := res.Certificate; c.Verdict != fit.Inconclusive || c.Strength != fit.NoClaim || c.Reason == "" {
		t.Errorf("%s/%s: %s", c.Verdict, c.Strength, c.Reason)
	}
}

// TestDecideLeaves: a held-out run that starts inside and leaves by more
// than the tolerance rejects, whatever else holds; within the tolerance
// it is inconclusive.
func TestDecideLeaves(t *testing.T) {
	stable := [][2]float64{{-0.3, 2}, {-0.3, -2}}
	mk := func(growth float64) (*fit.Certificate, *fit.Validation, []RunScreen) {
		c := circleCert(false)
		c.Margin = 0.1
		ds := &ingest.Dataset{States: []ingest.Column{{Name: "a"}, {Name: "b"}}}
		for i := 0; i < 4; i++ {
			ph := float64(i)
			ds.Runs = append(ds.Runs, makeRun("d", 500, 0.01, func(t float64) (float64, float64) {
				a := 0.8 * math.Exp(-t)
				return a * math.Cos(3*t+ph), a * math.Sin(3*t+ph)
			}))
		}
		ds.Runs = append(ds.Runs, makeRun("out", 500, 0.01, func(t float64) (float64, float64) {
			return 0.95 + growth*t/5, 0
		}))
		val, runs, err := Check(context.Background(), c, ds, nil)
		if err != nil {
			t.Fatal(err)
		}
		return c, val, runs
	}
	c, val, runs := mk(0)
	Decide(c, val, runs, stable, nil)
	if c.Verdict != fit.Certified || c.Strength != fit.Stable {
		// the "out" run sits still inside: stays, does not settle
		t.Errorf("baseline: %s/%s %s", c.Verdict, c.Strength, c.Reason)
	}
	c, val, runs = mk(0.5)
	Decide(c, val, runs, stable, nil)
	if c.Verdict != fit.Rejected || val.Worst == nil || val.Worst.Kind != FlagLeaves || val.Worst.Run != "out" {
		t.Errorf("leaving: %s %s worst %+v", c.Verdict, c.Reason, val.Worst)
	}
	c, val, runs = mk(0.1) // reaches z0 = 1.05: V = 1.1025, 0.1 above level
	c.Tolerance = 0.2
	Decide(c, val, runs, stable, &Options{Tolerance: 0.2})
	if c.Verdict != fit.Inconclusive {
		t.Errorf("leaving within tolerance: %s %s", c.Verdict, c.Reason)
	}
	// A run that starts outside, enters and leaves again: not certified.
	c = circleCert(false)
	c.Margin = 0.1
	ds := &ingest.Dataset{States: []ingest.Column{{Name: "a"}, {Name: "b"}}}
	for i := 0; i < 3; i++ {
		ds.Runs = append(ds.Runs, makeRun("d", 500, 0.01, func(t float64) (float64, float64) { return 0.8 * math.Exp(-t), 0 }))
	}
	ds.Runs = append(ds.Runs, makeRun("through", 500, 0.01, func(t float64) (float64, float64) { return -1.2 + 0.6*t, 0 }))
	val2, runs2, err := Check(context.Background(), c, ds, nil)
	if err != nil {
		t.Fatal(err)
	}
	Decide(c, val2, runs2, stable, nil)
	if c.Verdict != fit.Inconclusive || !strings.Contains(c.Reason, "through") {
		t.Errorf("entered and left: %s %s", c.Verdict, c.Reason)
	}
	Decide(c, val, runs, [][2]float64{{0.2, 1}, {0.2, -1}}, nil)
	if c.Verdict != fit.Rejected {
		t.Errorf("unstable linearisation: %s", c.Verdict)
	}
}

// TestEvaluateAllFolds: every fold of a well-sampled damped oscillator
// is never rejected, and the released fold is certified.
func TestEvaluateAllFolds(t *testing.T) {
	heavy(t)
	if testing.Short() {
		t.Skip("fits every fold")
	}
	o := evalOpts()
	o.AllFolds = true
	sys := damped
	sys.runs = 24 // 6 held out a fold, so some start inside the region
	res, err := Evaluate(context.Background(), simulate(t, sys, 0.001, 2), o)
	if err != nil {
		t.Fatal(err)
	}
	v := res.Certificate.Validation
	if v.Folds != 4 || v.FoldsAgree < 1 || v.FoldsAgree > 4 {
		t.Fatalf("folds %d agree %d", v.Folds, v.FoldsAgree)
	}
	// A stable system: no fold may be rejected; folds without a held-out
	// run starting inside are inconclusive, and the agreement count is
	// the number of certified folds.
	certified := 0
	for f, vd := range res.FoldVerdicts {
		if vd == fit.Rejected {
			t.Errorf("fold %d rejected a stable system", f)
		}
		if vd == fit.Certified {
			certified++
		}
	}
	t.Logf("fold verdicts %v", res.FoldVerdicts)
	if res.Certificate.Verdict != fit.Certified || v.FoldsAgree != certified || len(res.FoldVerdicts) != 4 {
		t.Errorf("%s (%s), %d of 4 folds agree, verdicts %v", res.Certificate.Verdict, res.Certificate.Reason, v.FoldsAgree, res.FoldVerdicts)
	}
	held := 0
	for _, h := range res.Heldout {
		if h {
			held++
		}
	}
	if held != 6 || len(res.Runs) != 6 {
		t.Errorf("held out %d runs, %d checked; want 6 of 24", held, len(res.Runs))
	}
}

// TestDecideSlowGrowth: with a marginal linearisation (V fitted only not
// to rise), held-out runs whose amplitude grows by 10% over their length
// rise by less than the tolerance from entry to end, yet their decay rate
// (minus the slope of log V, here -2g) is below zero on every run: not
// certified. The same runs decaying at the same rate stay certified with
// strength stable. For z = a e^{g t}(cos, sin), V = a^2 e^{2 g t}, so the
// decay rate is -2g exactly (textbook: the envelope of a linear
// oscillator with modal damping -g; common practice).
func TestDecideSlowGrowth(t *testing.T) {
	marginal := [][2]float64{{0, 2}, {0, -2}}
	for _, tc := range []struct {
		name     string
		g        float64 // amplitude growth rate, 1/s
		verdict  fit.Verdict
		strength fit.Strength
	}{
		{"slowly growing", 0.02, fit.Inconclusive, fit.NoClaim},
		{"slowly decaying", -0.02, fit.Certified, fit.Stable},
	} {
		t.Run(tc.name, func(t *testing.T) {
			c := circleCert(false)
			c.NonRise = true
			ds := &ingest.Dataset{States: []ingest.Column{{Name: "a"}, {Name: "b"}}}
			for i := 0; i < 4; i++ {
				ph := float64(i)
				ds.Runs = append(ds.Runs, makeRun(fmt.Sprintf("r%d", i), 500, 0.01, func(t float64) (float64, float64) {
					a := 0.5 * math.Exp(tc.g*t)
					return a * math.Cos(2*t+ph), a * math.Sin(2*t+ph)
				}))
			}
			// A rise of V from entry to end of 0.25*(e^{0.2}-1) = 0.055
			// stays below this tolerance: the end-versus-entry test alone
			// does not see the growth.
			o := &Options{Tolerance: 0.2}
			val, runs, err := Check(context.Background(), c, ds, o)
			if err != nil {
				t.Fatal(err)
			}
			for _, r := range runs {
				if r.DecaySamples == 0 || !scalar.EqualWithinAbsOrRel(r.DecayRate, -2*tc.g, 1e-9, 1e-6) {
					t.Fatalf("run %s: decay rate %g on %d samples, want %g", r.Run, r.DecayRate, r.DecaySamples, -2*tc.g)
				}
			}
			Decide(c, val, runs, marginal, o)
			if c.Verdict != tc.verdict || c.Strength != tc.strength {
				t.Errorf("%s/%s: %s; want %s/%s", c.Verdict, c.Strength, c.Reason, tc.verdict, tc.strength)
			}
		})
	}
}

// TestDecideMarginalUnstable: the certificate search found the fitted
// Jacobian's largest real part above zero, and no V. When that real part
// is within LinearTol of the eigenvalue's size (+0.009 1/s on a 3.14
// rad/s oscillation, 0.29%), the verdict is inconclusive and its reason
// must not say the data contradict stability (it did: the search's text
// was kept); beyond LinearTol it is rejected. The classification is the
// eigenvalue's real part against its modulus (linear systems theory,
// common practice).
func TestDecideMarginalUnstable(t *testing.T) {
	for _, tc := range []struct {
		name    string
		re      float64
		verdict fit.Verdict
		kind    fit.ReasonKind
	}{
		{"within tolerance", 0.009, fit.Inconclusive, fit.ReasonLinearMarginal},
		{"beyond tolerance", 0.05, fit.Rejected, fit.ReasonUnstableLinearisation},
	} {
		t.Run(tc.name, func(t *testing.T) {
			c := &fit.Certificate{Verdict: fit.Rejected, ReasonKind: fit.ReasonUnstableLinearisation, Contradicted: true,
				Contradiction: "the fitted linearisation at the equilibrium is unstable",
				Reason:        "No V was fitted: the fitted linearisation at the equilibrium is unstable. The data contradict stability there."}
			eig := [][2]float64{{tc.re, 3.14}, {tc.re, -3.14}, {-2, 0}}
			Decide(c, &fit.Validation{}, nil, eig, &Options{})
			if c.Verdict != tc.verdict || c.ReasonKind != tc.kind {
				t.Fatalf("%s (%s): %s; want %s (%s)", c.Verdict, c.ReasonKind, c.Reason, tc.verdict, tc.kind)
			}
			if says := strings.Contains(c.Reason, "contradict"); (says && tc.verdict != fit.Rejected) || c.Contradicted != (tc.verdict == fit.Rejected) {
				t.Errorf("verdict %s with contradicted=%v and reason %q", c.Verdict, c.Contradicted, c.Reason)
			}
		})
	}
}

// TestRegionWordsRounding: an equilibrium coordinate that is rounding
// left by the solve (1.968e-44 against a half-width of 0.594) prints as
// 0, not as a denormal; a real offset still prints.
func TestRegionWordsRounding(t *testing.T) {
	for _, tc := range []struct {
		eq   float64
		want string
	}{
		{1.968e-44, "y 0 ±0.594 V"},
		{0.25, "y 0.25 ±0.594 V"},
	} {
		c := &fit.Certificate{States: []string{"y"}, Units: []string{"V"}, Equilibrium: []float64{tc.eq},
			Box: [][2]float64{{tc.eq - 0.594, tc.eq + 0.594}}}
		if got := regionWords(c); got != tc.want {
			t.Errorf("equilibrium %g: %q, want %q", tc.eq, got, tc.want)
		}
	}
}

// TestSplitCuts: the pieces of a recording split at gaps or jumps are
// named name, name~1, ... (ingest.Run's naming), and each carries the
// recording's split counts; every piece but the last ends at a split,
// at a jump when one of the recording's events lies between it and the
// next kept piece, else at a gap. Rest segments (name@t) inherit their
// recording's cut when they run to its end. The bookkeeping is checked
// against ingest's documented naming, not against a computation.
func TestSplitCuts(t *testing.T) {
	mk := func(file, name string, gaps, events int, t0, t1 float64) ingest.Run {
		return ingest.Run{Name: name, Source: ingest.Source{File: file}, Gaps: gaps, Events: events,
			T: []float64{t0, t1}, X: [][]float64{{0, 0}}}
	}
	ds := &ingest.Dataset{Runs: []ingest.Run{
		mk("a.csv", "a.csv", 0, 0, 0, 10), // whole
		// a gap from 3 s to 4 s, then a hit at 6.01 s
		mk("rig=1/b.csv", "b.csv", 1, 1, 0, 3), mk("rig=1/b.csv", "b.csv~1", 1, 1, 4, 6), mk("rig=1/b.csv", "b.csv~2", 1, 1, 6.01, 10),
		mk("rig=2/b.csv", "b.csv", 0, 0, 0, 10),                                      // the same base name, never split
		mk("c~x.csv", "c~x.csv", 1, 0, 0, 1), mk("c~x.csv", "c~x.csv~1", 1, 0, 2, 3), // a '~' in the base name
		mk("d.csv", "d.csv", 2, 0, 0, 1), mk("d.csv", "d.csv~2", 2, 0, 5, 6), // d.csv~1 left out (MinPiece)
	},
		// the hit moved v (a step) and x (a kink) at one sample
		Events: []ingest.Event{{Run: "b.csv", Time: 6.01, State: "x", Kind: ingest.EventKink, Sigmas: 20},
			{Run: "b.csv", Time: 6.01, State: "v", Kind: ingest.EventStep, Sigmas: 900}}}
	got := SplitCuts(ds)
	want := map[RunKey]Cut{
		{"rig=1/b.csv", "b.csv"}:   {Reason: CutGap, Time: 3, Until: 4},
		{"rig=1/b.csv", "b.csv~1"}: {Reason: CutJump, Time: 6.01, State: "v"},
		{"c~x.csv", "c~x.csv"}:     {Reason: CutGap, Time: 1, Until: 2},
		{"d.csv", "d.csv"}:         {Reason: CutGap, Time: 1, Until: 5},
	}
	if len(got) != len(want) {
		t.Errorf("%d runs cut, want %d: %v", len(got), len(want), got)
	}
	for k, w := range want {
		if c := got[k]; c == nil || *c != w {
			t.Errorf("%v: cut %+v, want %+v", k, c, w)
		}
	}
	seg := []ingest.Run{
		mk("rig=1/b.csv", "b.csv~1@4", 1, 1, 4, 6),     // to its recording's end: the hit
		mk("rig=1/b.csv", "b.csv~1@4.5", 1, 1, 4.5, 5), // ends before (an input's onset: not this cut)
		mk("rig=1/b.csv", "b.csv~2@7", 1, 1, 7, 10),    // to the last piece's end
		mk("rig=2/b.csv", "b.csv@0", 0, 0, 0, 10),      // the other file's
	}
	parents := map[RunKey]*ingest.Run{}
	for i := range ds.Runs {
		parents[RunKey{ds.Runs[i].Source.File, ds.Runs[i].Name}] = &ds.Runs[i]
	}
	for i, w := range []*Cut{got[RunKey{"rig=1/b.csv", "b.csv~1"}], nil, nil, nil} {
		if c := splitCutOf(got, parents, &seg[i]); c != w {
			t.Errorf("segment %s of %s: cut %+v, want %+v", seg[i].Name, seg[i].Source.File, c, w)
		}
	}
}
