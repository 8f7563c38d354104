package main

import (
	"bytes"
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
)

// TestCheckPieces: a certificate at rest input is checked where the
// inputs rest, so a run whose drive is on twice gives three pieces; check
// says how many runs it read and how many pieces it checked, and run's
// held-out line likewise. The rig is x” + 0.8 x' + 4 x = 2 u, u a burst
// of 1.5 Hz on 2-4 s and 6-8 s of each 10 s run (RK4, 100 Hz, noise
// 1e-3).
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
}
