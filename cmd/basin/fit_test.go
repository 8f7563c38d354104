package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"basin.example/fit"
	"gonum.org/v1/gonum/floats/scalar"
)

// writeOscillator writes runs of theta' = omega, omega' = -4 theta -
// 0.8 omega (RK4, 100 Hz, 1e-4 rad of seeded noise) as CSV files in dir.
func writeOscillator(t *testing.T, dir string, runs int, constant bool) {
	t.Helper()
	rng := rand.New(rand.NewPCG(1, 0))
	f := func(x []float64) []float64 { return []float64{x[1], -4*x[0] - 0.8*x[1]} }
	for r := 0; r < runs; r++ {
		var b strings.Builder
		b.WriteString("time [s],theta [rad],omega [rad/s]")
		if constant {
			b.WriteString(",temp [K]")
		}
		b.WriteString("\n")
		x := []float64{2*rng.Float64() - 1, 2*rng.Float64() - 1}
		h := 0.01
		for i := 0; i < 800; i++ {
			fmt.Fprintf(&b, "%.4f,%.8f,%.8f", float64(i)*h, x[0]+1e-4*rng.NormFloat64(), x[1]+1e-4*rng.NormFloat64())
			if constant {
				b.WriteString(",293.15")
			}
			b.WriteString("\n")
			for s := 0; s < 10; s++ {
				rk4Step(f, x, h/10)
			}
		}
		if err := os.WriteFile(filepath.Join(dir, fmt.Sprintf("run%02d.csv", r)), []byte(b.String()), 0o644); err != nil {
			t.Fatal(err)
		}
	}
}

func TestFitCommand(t *testing.T) {
	dir := t.TempDir()
	writeOscillator(t, dir, 8, false)
	out := filepath.Join(dir, "out")
	var o, e bytes.Buffer
	if code := basinMain(context.Background(), []string{"fit", dir, "--out", out, "--bootstrap", "20"}, &o, &e); code != 0 {
		t.Fatalf("exit %d: %s", code, e.String())
	}
	text := o.String()
	for _, want := range []string{
		"d(theta)/dt [rad/s] = 1 omega",
		"d(omega)/dt [rad/s^2] = -4 theta - 0.8 omega",
		"stable focus: theta = 0 rad, omega = 0 rad/s; eigenvalues -0.4±1.96i 1/s",
	} {
		if !strings.Contains(text, want) {
			t.Errorf("output lacks %q:\n%s", want, text)
		}
	}
	f, err := os.Open(filepath.Join(out, "model.json"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	m, err := fit.ReadModel(f)
	if err != nil {
		t.Fatal(err)
	}
	if m.Units[1] != "rad/s" || len(m.Equations[1].Coefficients) != 2 || !scalar.EqualWithinAbs(m.Equations[1].Coefficients[0], -4, 1e-3) {
		t.Errorf("model %+v", m.Equations)
	}
	// --json prints the same model.
	o.Reset()
	if code := basinMain(context.Background(), []string{"fit", "--json", "--out", out, "--bootstrap", "20", dir}, &o, &e); code != 0 {
		t.Fatalf("exit %d: %s", code, e.String())
	}
	var mj fit.Model
	if err := json.Unmarshal(o.Bytes(), &mj); err != nil || mj.Format != fit.ModelFormat {
		t.Fatalf("--json: %v %q", err, mj.Format)
	}
}

func TestFitCommandBadInput(t *testing.T) {
	for _, tc := range []struct {
		name string
		make func(t *testing.T, dir string)
		args []string
		want string
	}{
		{"constant column", func(t *testing.T, dir string) { writeOscillator(t, dir, 6, true) }, nil, `state "temp" is constant`},
		{"too few samples", func(t *testing.T, dir string) {
			os.WriteFile(filepath.Join(dir, "a.csv"), []byte("t,x,y\n0,1,2\n0.1,1.1,2.2\n0.2,1.3,2.1\n0.3,1.2,2.5\n0.4,1.0,2.4\n0.5,0.9,2.0\n"), 0o644)
		}, nil, "too few samples: 6, need at least 30"},
		{"short run", func(t *testing.T, dir string) {
			writeOscillator(t, dir, 6, false)
			os.WriteFile(filepath.Join(dir, "short.csv"), []byte("time [s],theta [rad],omega [rad/s]\n0,1,2\n0.1,1.1,2.2\n"), 0o644)
		}, nil, `run "short.csv" has 2 samples`},
		{"bad degree", func(t *testing.T, dir string) { writeOscillator(t, dir, 6, false) }, []string{"--degree", "0"}, "--degree must be 1..8"},
		{"bad deriv", func(t *testing.T, dir string) { writeOscillator(t, dir, 6, false) }, []string{"--deriv", "magic"}, "--deriv must be"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			tc.make(t, dir)
			out := filepath.Join(dir, "out")
			var o, e bytes.Buffer
			args := append([]string{"fit", dir, "--out", out}, tc.args...)
			if code := basinMain(context.Background(), args, &o, &e); code != 2 {
				t.Fatalf("exit %d, want 2: %s", code, e.String())
			}
			if msg := e.String(); !strings.Contains(msg, tc.want) || strings.Count(msg, "\n") != 1 || strings.Contains(msg, "NaN") {
				t.Errorf("stderr %q, want one line with %q", msg, tc.want)
			}
			if _, err := os.Stat(filepath.Join(out, "model.json")); err == nil {
				t.Error("model.json written on bad input")
			}
		})
	}
}
