package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// rigLogs writes n logs of the rig x” + 2ζω x' + ω² x = 0 (ζ = 0.05,
// ω = 3 rad/s; RK4 at 100 Hz, noise 1e-3 on x [m] and v [m/s], 20 s
// each) into dir, starting from x, v/3 uniform in ±amp: log k%3 == 0 is
// hit at sample hit (v steps by 2 m/s), log k%3 == 1 has no samples
// from 8 s to 9 s.
func rigLogs(t *testing.T, dir string, n int, seed uint64, amp float64, hit int) {
	t.Helper()
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	const zeta, w, dt, sd = 0.05, 3.0, 0.01, 1e-3
	f := func(x, v float64) (float64, float64) { return v, -2*zeta*w*v - w*w*x }
	rng := rand.New(rand.NewPCG(seed, 0))
	for k := range n {
		x, v := amp*(2*rng.Float64()-1), 3*amp*(2*rng.Float64()-1)
		var b strings.Builder
		b.WriteString("t [s],x [m],v [m/s]\n")
		for i := range 2000 {
			s := float64(i) * dt
			if k%3 == 0 && i == hit {
				v += 2
			}
			if k%3 != 1 || s < 8-dt/2 || s >= 9-dt/2 {
				fmt.Fprintf(&b, "%.2f,%.6f,%.6f\n", s, x+sd*rng.NormFloat64(), v+sd*rng.NormFloat64())
			}
			k1x, k1v := f(x, v)
			k2x, k2v := f(x+dt/2*k1x, v+dt/2*k1v)
			k3x, k3v := f(x+dt/2*k2x, v+dt/2*k2v)
			k4x, k4v := f(x+dt*k3x, v+dt*k3v)
			x += dt / 6 * (k1x + 2*k2x + 2*k3x + k4x)
			v += dt / 6 * (k1v + 2*k2v + 2*k3v + k4v)
		}
		if err := os.WriteFile(filepath.Join(dir, fmt.Sprintf("g%02d.csv", k)), []byte(b.String()), 0o644); err != nil {
			t.Fatal(err)
		}
	}
}

// TestCheckHitsAndGaps: run on rig logs, some hit with a hammer (a
// velocity step) and some with a 1 s gap, then check on held-out logs
// of the same rig, started farther out and hit at 1 s. A piece that ends
// at the hit or the gap was cut before it could settle: the rig's 2%
// settling time is 4/(ζω) = 26.7 s [Ogata], and the first piece of a hit
// log has 1 s, of a gap log 8 s. check gives it a cut (jump in v at the
// hit, or gap from 7.99 s to 9 s: the last sample before and the first
// after) and no unsettled flag; the last piece of every log runs to its
// end and is judged (no cut).
func TestCheckHitsAndGaps(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the whole job")
	}
	dir := t.TempDir()
	fitDir, hoDir, out := filepath.Join(dir, "fit"), filepath.Join(dir, "heldout"), filepath.Join(dir, "out")
	rigLogs(t, fitDir, 24, 1, 1, 150)
	rigLogs(t, hoDir, 12, 7, 1.6, 100)
	var o, e bytes.Buffer
	if code := basinMain(context.Background(), []string{"run", "--quiet", "--out", out, fitDir}, &o, &e); code != 0 {
		t.Fatalf("run: exit %d: %s", code, e.String())
	}
	cert := filepath.Join(out, "certificate.json")
	o.Reset()
	e.Reset()
	if code := basinMain(context.Background(), []string{"check", "--json", "--cert", cert, hoDir}, &o, &e); code != 0 {
		t.Fatalf("check --json: exit %d: %s", code, e.String())
	}
	// every run's flags is a list, [] when it has none (the contract)
	if bytes.Contains(o.Bytes(), []byte(`"flags": null`)) || bytes.Contains(o.Bytes(), []byte(`"flags":null`)) {
		t.Errorf("check --json gives a run flags null, not a list")
	}
	var doc struct {
		Runs []struct {
			Run     string
			Settled bool
			Flags   []struct{ Kind string }
			Cut     *struct {
				Reason, State string
				Time, Until   float64
			}
		}
	}
	if err := json.Unmarshal(o.Bytes(), &doc); err != nil {
		t.Fatal(err)
	}
	const slack = 0.005 // half a sample: the times are the logged ones
	jumps, gaps, last, unsettledCut := 0, 0, 0, 0
	for _, r := range doc.Runs {
		var k int
		if _, err := fmt.Sscanf(r.Run, "g%02d.csv", &k); err != nil {
			t.Fatalf("run %q: %v", r.Run, err)
		}
		first := !strings.Contains(r.Run, "~")
		unsettled := false
		for _, f := range r.Flags {
			unsettled = unsettled || f.Kind == "unsettled"
		}
		switch {
		case first && k%3 == 0:
			jumps++
			if c := r.Cut; c == nil || c.Reason != "jump" || c.State != "v" || !(math.Abs(c.Time-1) <= slack) {
				t.Errorf("%s: cut %+v, want a jump in v at 1 s", r.Run, r.Cut)
			}
		case first && k%3 == 1:
			gaps++
			if c := r.Cut; c == nil || c.Reason != "gap" || !(math.Abs(c.Time-7.99) <= slack) || !(math.Abs(c.Until-9) <= slack) {
				t.Errorf("%s: cut %+v, want a gap from 7.99 s to 9 s", r.Run, r.Cut)
			}
		default:
			last++
			if r.Cut != nil {
				t.Errorf("%s runs to its log's end, yet cut %+v", r.Run, r.Cut)
			}
			continue
		}
		if unsettled {
			t.Errorf("%s: cut short, yet flagged unsettled", r.Run)
		}
		if !r.Settled {
			unsettledCut++
		}
	}
	if jumps != 4 || gaps != 4 || last != 12 {
		t.Errorf("%d pieces cut at a hit, %d at a gap, %d to the log's end; want 4, 4, 12", jumps, gaps, last)
	}
	// the premise: some piece had not settled when the hit or gap came
	if unsettledCut == 0 {
		t.Error("every cut piece settled: the test shows nothing")
	}
	o.Reset()
	e.Reset()
	if code := basinMain(context.Background(), []string{"check", "--cert", cert, hoDir}, &o, &e); code != 0 {
		t.Fatalf("check: exit %d: %s", code, e.String())
	}
	// the settled column names the cut of a piece that had not settled
	// (those cut at the hit, 1 s in; the gap pieces, 8 s long, settled
	// and read yes)
	for _, want := range []string{"cut: jump in v at 1 s"} {
		if !strings.Contains(o.String(), want) {
			t.Errorf("check's table lacks %q:\n%s", want, o.String())
		}
	}
}
