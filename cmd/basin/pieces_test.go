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
	"regexp"
	"strconv"
	"strings"
	"testing"
)

// TestCheckPieces: a certificate at rest input is checked where the
// inputs rest, so a run whose drive is on twice gives three pieces; check
// says how many runs it read and how many pieces it checked, and run's
// held-out line likewise. The rig is x” + 0.8 x' + 4 x = 2 u, u a burst
// of 1.5 Hz on 2-4 s and 6-8 s of each 10 s run (RK4, 100 Hz, noise
// 1e-3).
//
// A piece that ends where the drive comes on (at 2 s or 6 s) was cut
// before it could settle: with ζ = 0.4/(2·2) = 0.2 and ω = 2 rad/s its
// 2% settling time is 4/(ζω) = 10 s [Ogata], five times the 2 s a piece
// has. Check gives it a cut (input drive, at the onset) and no unsettled
// flag; the pieces from 8 s run to the log's end and keep the rule.
func TestCheckPieces(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the whole job")
	}
	dir := t.TempDir()
	data := filepath.Join(dir, "data")
	os.Mkdir(data, 0o755)
	rng := rand.New(rand.NewPCG(3, 0))
	for r := range 12 {
		u := func(s float64) float64 {
			if (s >= 2 && s < 4) || (s >= 6 && s < 8) {
				return 0.8 * math.Sin(2*math.Pi*1.5*s)
			}
			return 0
		}
		f := func(s float64, x []float64) []float64 { return []float64{x[1], -4*x[0] - 0.8*x[1] + 2*u(s)} }
		x := []float64{2*rng.Float64() - 1, 2*rng.Float64() - 1}
		var b strings.Builder
		b.WriteString("t [s],x [mm],v [mm/s],drive [N]\n")
		const h = 0.01
		for i := range 1000 {
			s := float64(i) * h
			fmt.Fprintf(&b, "%.2f,%.6g,%.6g,%.6g\n", s, x[0]+1e-3*rng.NormFloat64(), x[1]+1e-3*rng.NormFloat64(), u(s))
			for q := range 4 { // RK4 at h/4, the drive held over each substep
				sq, hq := s+float64(q)*h/4, h/4
				k1 := f(sq, x)
				k2 := f(sq, []float64{x[0] + hq/2*k1[0], x[1] + hq/2*k1[1]})
				k3 := f(sq, []float64{x[0] + hq/2*k2[0], x[1] + hq/2*k2[1]})
				k4 := f(sq, []float64{x[0] + hq*k3[0], x[1] + hq*k3[1]})
				for j := range x {
					x[j] += hq / 6 * (k1[j] + 2*k2[j] + 2*k3[j] + k4[j])
				}
			}
		}
		if err := os.WriteFile(filepath.Join(data, fmt.Sprintf("run%02d.csv", r)), []byte(b.String()), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	out := filepath.Join(dir, "out")
	var o, e bytes.Buffer
	if code := basinMain(context.Background(), []string{"run", "--quiet", "--inputs", "drive", "--bootstrap", "10", "--out", out, data}, &o, &e); code != 0 {
		t.Fatalf("run: exit %d: %s", code, e.String())
	}
	sum, err := os.ReadFile(filepath.Join(out, "summary.txt"))
	if err != nil {
		t.Fatal(err)
	}
	// 12 runs, 5 folds: fold 0 holds 3 runs out, 3 pieces each
	if !regexp.MustCompile(`held-out: 3 runs \(9 pieces where the inputs rest\); .*of the \d+ pieces? that`).Match(sum) {
		t.Errorf("summary's held-out line:\n%s", sum)
	}
	o.Reset()
	e.Reset()
	code := basinMain(context.Background(), []string{"check", "--cert", filepath.Join(out, "certificate.json"), "--inputs", "drive", data}, &o, &e)
	if code != 0 && code != 1 {
		t.Fatalf("check: exit %d: %s", code, e.String())
	}
	for _, want := range []string{"12 runs checked (36 pieces where the inputs rest), ", "\n12 runs (36 pieces where the inputs rest); "} {
		if !strings.Contains(o.String(), want) {
			t.Errorf("check's output lacks %q:\n%s", want, o.String())
		}
	}
	o.Reset()
	e.Reset()
	code = basinMain(context.Background(), []string{"check", "--json", "--cert", filepath.Join(out, "certificate.json"), "--inputs", "drive", data}, &o, &e)
	if code != 0 && code != 1 {
		t.Fatalf("check --json: exit %d: %s", code, e.String())
	}
	var doc struct {
		Runs []struct {
			Run   string
			Flags []struct{ Kind string }
			Cut   *struct {
				Reason, Input string
				Time          float64
			}
		}
	}
	if err := json.Unmarshal(o.Bytes(), &doc); err != nil {
		t.Fatal(err)
	}
	cut, last := 0, 0
	for _, r := range doc.Runs {
		// the pieces start after a resting head is trimmed, or where a
		// burst ends (4 s, 8 s): the onset that ends a piece is the next
		// burst's, 2 s or 6 s (one sample, 0.01 s, of slack)
		start, err := strconv.ParseFloat(r.Run[strings.LastIndexByte(r.Run, '@')+1:], 64)
		if err != nil {
			t.Fatalf("piece %q: %v", r.Run, err)
		}
		switch {
		case start < 7:
			cut++
			onset := 2.0
			if start > 3 {
				onset = 6
			}
			if r.Cut == nil || r.Cut.Reason != "input" || r.Cut.Input != "drive" || !(math.Abs(r.Cut.Time-onset) <= 0.011) {
				t.Errorf("%s: cut %+v, want input drive at %g s", r.Run, r.Cut, onset)
			}
			for _, f := range r.Flags {
				if f.Kind == "unsettled" {
					t.Errorf("%s: cut short by the drive, yet flagged unsettled", r.Run)
				}
			}
		default:
			last++
			if r.Cut != nil {
				t.Errorf("%s runs to the log's end, yet cut %+v", r.Run, r.Cut)
			}
		}
	}
	if cut != 24 || last != 12 {
		t.Errorf("%d pieces cut by the drive and %d to the log's end, want 24 and 12", cut, last)
	}
}
