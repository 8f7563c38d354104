package validate

import (
	"bytes"
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"basin.example/fit"
	"basin.example/ingest"
)

// TestSplitCut: a piece of a recording that ends where a one-sample jump
// (a hammer hit) or a gap split it was cut before it could settle, so
// Check does not flag it unsettled: it carries a Cut saying where and
// why, read by ingest from a logged CSV. The last piece of each
// recording, and a recording never split, are still judged.
//
// The rig is the very lightly damped oscillator of TestInputCut,
// x” + 2ζω x' + ω² x = 0 with ζ = 0.001, ω = 2 rad/s, logged at 100 Hz
// with Gaussian noise of 1e-3 on a = 0.5 + x and b = x' (circleCert's
// z0 = x, z1 = x'/ω, V = x² + (x'/ω)²): its 2% settling time 4/(ζω) =
// 2000 s [Ogata] is far beyond the 10 s recordings, so no piece settles.
// Recording 1 is hit at 5 s (x' steps by 0.3, 300 times the noise: an
// ingest event in b); recording 2 has no samples from 4 s to 5 s (a gap
// of 1 s, 100 median steps); recording 3 runs whole. The tolerance, 0.01,
// is about 7 standard deviations of V's per-sample noise (2·|z|·σ with
// |z| ≤ 0.6 and σ of z about 1.1e-3 gives 1.4e-3), and V falls by
// 0.36·(1 - e^{-4ζω·5 s}) = 0.007 over a piece, less than that, so no
// piece is "on its way" either.
func TestSplitCut(t *testing.T) {
	const dt, zeta, w, hit, gapFrom, gapTo, end, sd = 0.01, 0.001, 2.0, 5.0, 4.0, 5.0, 10.0, 1e-3
	rng := rand.New(rand.NewPCG(11, 0))
	var csv bytes.Buffer
	csv.WriteString("run,t,a,b\n")
	for run := 1; run <= 3; run++ {
		x, v := 0.6, 0.0
		f := func(x, v float64) (float64, float64) { return v, -2*zeta*w*v - w*w*x }
		for i := 0; i < int(math.Round(end/dt)); i++ {
			tt := float64(i) * dt
			if run == 1 && i == int(math.Round(hit/dt)) {
				v += 0.3
			}
			if run != 2 || tt < gapFrom-dt/2 || tt >= gapTo-dt/2 {
				fmt.Fprintf(&csv, "%d,%.2f,%.6f,%.6f\n", run, tt, 0.5+x+sd*rng.NormFloat64(), v+sd*rng.NormFloat64())
			}
			// RK4, error O(dt^4) per unit time: far below the noise
			k1x, k1v := f(x, v)
			k2x, k2v := f(x+dt/2*k1x, v+dt/2*k1v)
			k3x, k3v := f(x+dt/2*k2x, v+dt/2*k2v)
			k4x, k4v := f(x+dt*k3x, v+dt*k3v)
			x += dt / 6 * (k1x + 2*k2x + 2*k3x + k4x)
			v += dt / 6 * (k1v + 2*k2v + 2*k3v + k4v)
		}
	}
	ds, err := ingest.ReadCSV(&csv, "rig.csv", &ingest.Options{RunCol: "run"})
	if err != nil {
		t.Fatal(err)
	}
	cert := circleCert(false)
	cert.Box = nil
	cert.Level = 10
	cert.Tolerance = 0.01
	want := []struct {
		run  string
		cut  *Cut
		tol  float64 // on the cut's times: one sample
		last bool
	}{
		{"rig.csv#1", &Cut{Reason: CutJump, Time: hit, State: "b"}, dt / 2, false},
		{"rig.csv#1~1", nil, 0, true},
		{"rig.csv#2", &Cut{Reason: CutGap, Time: gapFrom - dt, Until: gapTo}, dt / 2, false},
		{"rig.csv#2~1", nil, 0, true},
		{"rig.csv#3", nil, 0, true},
	}
	if len(ds.Runs) != len(want) {
		t.Fatalf("ingest gave %d runs, want %d (a hit and a gap split two of three recordings)", len(ds.Runs), len(want))
	}
	// Judged as whole runs (the split counts cleared), every piece is
	// unsettled: the test's premise.
	plain := &ingest.Dataset{States: ds.States, Time: ds.Time}
	for _, r := range ds.Runs {
		r.Gaps, r.Events = 0, 0
		plain.Runs = append(plain.Runs, r)
	}
	_, runs, err := Check(context.Background(), cert, plain, nil)
	if err != nil {
		t.Fatal(err)
	}
	for _, r := range runs {
		if !hasFlag(&r, FlagUnsettled) || r.Cut != nil || hasFlag(&r, FlagRises) || hasFlag(&r, FlagLeaves) {
			t.Fatalf("%s as a whole run: flags %+v, cut %v; want unsettled only, no cut", r.Run, r.Flags, r.Cut)
		}
	}
	val, runs, err := Check(context.Background(), cert, ds, nil)
	if err != nil {
		t.Fatal(err)
	}
	for i, w := range want {
		r := &runs[i]
		if r.Run != w.run {
			t.Fatalf("run %d is %s, want %s", i, r.Run, w.run)
		}
		if w.last {
			if r.Cut != nil || !hasFlag(r, FlagUnsettled) || !r.Flagged {
				t.Errorf("%s runs to its recording's end: cut %+v, flags %+v; want unsettled, no cut", r.Run, r.Cut, r.Flags)
			}
			continue
		}
		c := r.Cut
		if c == nil || c.Reason != w.cut.Reason || c.State != w.cut.State || c.Input != "" ||
			!(math.Abs(c.Time-w.cut.Time) <= w.tol) || !(math.Abs(c.Until-w.cut.Until) <= w.tol) {
			t.Errorf("%s: cut %+v, want %+v (times ± %g s)", r.Run, c, w.cut, w.tol)
		}
		if hasFlag(r, FlagUnsettled) || r.Flagged {
			t.Errorf("%s: cut short, yet flags %+v (flagged %v)", r.Run, r.Flags, r.Flagged)
		}
	}
	if val.CutShort != 2 || val.CutShortBy[CutJump] != 1 || val.CutShortBy[CutGap] != 1 || val.Settled != 0 || val.EnteredRuns != 5 {
		t.Errorf("validation: %d cut short (%v), %d settled of %d entered; want 2 (a jump, a gap), 0 of 5",
			val.CutShort, val.CutShortBy, val.Settled, val.EnteredRuns)
	}
	// Leaving the cut pieces out of the settling test claims nothing for
	// them: the pieces judged did not settle, so the claim is at most
	// stability, not asymptotic.
	c := *cert
	Decide(&c, val, runs, [][2]float64{{-zeta * w, w}, {-zeta * w, -w}}, nil)
	if c.Strength == fit.Asymptotic {
		t.Errorf("%s/%s with every judged piece unsettled: %s", c.Verdict, c.Strength, c.Reason)
	}
}

// TestJudgeLastPieces: of a recording split into pieces (name, name~1,
// name~2, as the readers name them), only the last is judged on
// settling; other flags stay, another file's recording of the same
// name is its own, and a run-column split (file#value) is grouped by
// its own name.
func TestJudgeLastPieces(t *testing.T) {
	un := func() []Flag { return []Flag{{Kind: FlagUnsettled}} }
	rs := []RunScreen{
		{File: "a/log.csv", Run: "log.csv", Flagged: true, Flags: un()},
		{File: "a/log.csv", Run: "log.csv~1", Flagged: true, Flags: []Flag{{Kind: FlagUnsettled}, {Kind: FlagRises}}},
		{File: "a/log.csv", Run: "log.csv~2", Flagged: true, Flags: un()},
		{File: "b/log.csv", Run: "log.csv", Flagged: true, Flags: un()},
		{File: "c.csv", Run: "c.csv#7", Flagged: true, Flags: un()},
		{File: "c.csv", Run: "c.csv#7~1", Flagged: true, Flags: un()},
		{File: "c.csv", Run: "c.csv#8", Flagged: true, Flags: un()},
	}
	JudgeLastPieces(rs)
	want := []string{"", "rises", "unsettled", "unsettled", "", "unsettled", "unsettled"}
	for i, r := range rs {
		var kinds []string
		for _, f := range r.Flags {
			kinds = append(kinds, string(f.Kind))
		}
		if got := strings.Join(kinds, ","); got != want[i] || r.Flagged != (want[i] != "") {
			t.Errorf("%s %s: flags %q flagged %v, want %q", r.File, r.Run, got, r.Flagged, want[i])
		}
	}
}
