package validate

import (
	"context"
	"math"
	"testing"

	"basin.example/fit"
	"basin.example/ingest"
)

// TestInputCut: a piece of a recording that ends where an input comes on
// was cut before it could settle, so the held-out check does not flag it
// unsettled (it carries a Cut naming the input and its onset), while a
// piece that runs to the recording's end unsettled is still flagged.
//
// The rig is a very lightly damped oscillator, x” + 2ζω x' + ω² x = 0
// with ζ = 0.001, ω = 2 rad/s, x = 0.6 e^{-ζωt} cos(ω_d t), in
// circleCert's z with z0 = x and z1 = x'/ω: V = |z|² = x² + (x'/ω)² has
// dV/dt = -4ζ x'²/ω ≤ 0, so V never rises, but it falls by about 0.4%
// per second, less between chunks than screen's margin, so neither piece is
// "on its way". Its 2% settling time is 4/(ζω) = 2000 s [Ogata] (the
// envelope e^{-ζωt}, from memory), far beyond both pieces: the first
// ends at 5.99 s, where the drive (a step of 0.5) comes on for 0.5 s; the
// second runs from 6.5 s to the log's end at 9.99 s. Both are unsettled
// by the rule when judged as whole runs (checked first: the test fails if
// the data do not show it); V at each end, 0.36·e^{-0.004·t} ≥ 0.34,
// lies far above the settle level 0.0025.
func TestInputCut(t *testing.T) {
	const dt, zeta, w, onset, off, end = 0.01, 0.001, 2.0, 6.0, 6.5, 10.0
	wd := w * math.Sqrt(1-zeta*zeta)
	rec := func(file string, drive bool) ingest.Run {
		r := makeRun("rig.csv", int(math.Round(end/dt)), dt, func(t float64) (float64, float64) {
			e := math.Exp(-zeta * w * t)
			x := e * math.Cos(wd*t)
			v := -e * (zeta*w*math.Cos(wd*t) + wd*math.Sin(wd*t))
			return 0.6 * x, 0.6 * v / w
		})
		r.Source.File = file
		r.U = [][]float64{make([]float64, r.Len())}
		for i, s := range r.T {
			if drive && s >= onset-dt/2 && s < off-dt/2 {
				r.U[0][i] = 0.5
			}
		}
		return r
	}
	// Two files with one base name (a partitioned fleet): only the first
	// has the drive on.
	whole := &ingest.Dataset{States: []ingest.Column{{Name: "a"}, {Name: "b"}}, Inputs: []ingest.Column{{Name: "drive"}},
		Runs: []ingest.Run{rec("rig=1/rig.csv", true), rec("rig=2/rig.csv", false)}}
	seg := fit.RestSegments(whole, []float64{0})
	if len(seg.Runs) != 3 {
		t.Fatalf("RestSegments gave %d pieces, want 3 (two of the driven recording, the other whole)", len(seg.Runs))
	}
	cert := circleCert(false)
	cert.Box = nil
	cert.Level = 10
	// Judged as whole runs, every piece is unsettled: the test's premise.
	_, plain, err := Check(context.Background(), cert, seg, nil)
	if err != nil {
		t.Fatal(err)
	}
	for _, r := range plain {
		if !hasFlag(&r, FlagUnsettled) || r.Cut != nil {
			t.Fatalf("%s (%s) without Whole: flags %+v, cut %v; want unsettled and no cut", r.Run, r.File, r.Flags, r.Cut)
		}
	}
	val, runs, err := Check(context.Background(), cert, seg, &Options{Whole: whole})
	if err != nil {
		t.Fatal(err)
	}
	want := []struct {
		run, file string
		cut       bool
	}{
		{"rig.csv@0", "rig=1/rig.csv", true},    // ends where the drive comes on
		{"rig.csv@6.5", "rig=1/rig.csv", false}, // runs to the log's end
		{"rig.csv", "rig=2/rig.csv", false},     // never driven: the whole log
	}
	for i, w := range want {
		r := &runs[i]
		if r.Run != w.run || r.File != w.file {
			t.Fatalf("piece %d is %s of %s, want %s of %s", i, r.Run, r.File, w.run, w.file)
		}
		if w.cut {
			// the onset is the first sample with the drive on: 6.00 s
			if r.Cut == nil || r.Cut.Reason != CutInput || r.Cut.Input != "drive" || !(math.Abs(r.Cut.Time-onset) <= dt/2) {
				t.Errorf("%s: cut %+v, want input drive at %g s", r.Run, r.Cut, onset)
			}
			if hasFlag(r, FlagUnsettled) || r.Flagged {
				t.Errorf("%s: cut short, yet flags %+v (flagged %v)", r.Run, r.Flags, r.Flagged)
			}
			continue
		}
		if r.Cut != nil || !hasFlag(r, FlagUnsettled) || !r.Flagged {
			t.Errorf("%s (%s): cut %+v, flags %+v; want unsettled and not cut", r.Run, r.File, r.Cut, r.Flags)
		}
	}
	if val.CutShort != 1 || val.Settled != 0 || val.EnteredRuns != 3 {
		t.Errorf("validation: %d cut short, %d settled of %d entered; want 1, 0 of 3", val.CutShort, val.Settled, val.EnteredRuns)
	}
}
