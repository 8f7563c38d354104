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

	"basin.example/fit"
	"basin.example/validate"
)

// writeTwoWell writes runs of the two-well Duffing oscillator
// x” + 0.5 x' - x + x³ = 0 ([GuckenheimerHolmes1983] §2.2: stable rest
// points at x = ±1, v = 0, a saddle at the origin) into dir, RK4 at
// 50 Hz for 20 s each, with Gaussian noise of sd noise on every cell.
// Starts are uniform in [-2, 2]²; the first left runs start at x < 0,
// the rest at x > 0, with v of the same sign. It returns how many runs
// end (noise-free) at x > 0, and each run's last noise-free x in
// ends. With linear set the system is instead the
// damped oscillator x” + 0.5 x' + x = 0, one rest point at the origin.
func writeTwoWell(t *testing.T, dir string, runs, left int, noise float64, linear bool) (right int, ends []float64) {
	t.Helper()
	rng := rand.New(rand.NewPCG(11, 0))
	f := func(x []float64) []float64 { return []float64{x[1], x[0] - 0.5*x[1] - x[0]*x[0]*x[0]} }
	if linear {
		f = func(x []float64) []float64 { return []float64{x[1], -x[0] - 0.5*x[1]} }
	}
	for r := 0; r < runs; r++ {
		s := 1.0
		if r < left {
			s = -1
		}
		x := []float64{s * (0.5 + 1.5*rng.Float64()), s * 1.5 * rng.Float64()}
		var b strings.Builder
		b.WriteString("t,x,v\n")
		const h = 0.02
		for i := 0; i < 1000; i++ {
			fmt.Fprintf(&b, "%.2f,%.6g,%.6g\n", float64(i)*h, x[0]+noise*rng.NormFloat64(), x[1]+noise*rng.NormFloat64())
			for k := 0; k < 4; k++ {
				rk4Step(f, x, h/4)
			}
		}
		if err := os.WriteFile(filepath.Join(dir, fmt.Sprintf("run%02d.csv", r)), []byte(b.String()), 0o644); err != nil {
			t.Fatal(err)
		}
		if x[0] > 0 {
			right++
		}
		ends = append(ends, x[0])
	}
	return right, ends
}

func readCert(t *testing.T, path string) *fit.Certificate {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	c := new(fit.Certificate)
	if err := json.Unmarshal(b, c); err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	return c
}

// TestRunTwoWells: basin run on the two-well oscillator writes a
// certificate per well, the well more runs settle at in
// certificate.json, and --equilibrium swaps them. Neither region holds
// the saddle (0, 0), and each is about its own well (within 0.05 of
// x = ±1, v = 0: the noise is 0.002 against a unit well distance).
func TestRunTwoWells(t *testing.T) {
	if testing.Short() {
		t.Skip("four evaluations of five folds each")
	}
	data := t.TempDir()
	right, ends := writeTwoWell(t, data, 30, 12, 0.002, false)
	most, fewer := 1.0, right
	if right < 30-right {
		most, fewer = -1, right
	} else {
		fewer = 30 - right
	}
	if right == 15 {
		t.Fatal("the runs split evenly: change the starts")
	}
	for _, tc := range []struct {
		name    string
		args    []string
		primary float64 // x of the well in certificate.json
		order   string  // the rest-point header's order, as the files are
	}{
		{"most settled", nil, most, "each with a certificate, in falling order of the runs settling there (as the files are numbered)"},
		{"picked", []string{"--equilibrium", fmt.Sprintf("x=%g,v=0", -most)}, -most, "each with a certificate, certificate.json first, then the others in falling order of the runs settling there (as the files are numbered)"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			out := filepath.Join(t.TempDir(), "out")
			args := append([]string{"run", "--quiet", "--out", out}, tc.args...)
			var so, se bytes.Buffer
			if code := basinMain(context.Background(), append(args, data), &so, &se); code != 0 {
				t.Fatalf("exit %d: %s", code, se.String())
			}
			for i, name := range []string{"certificate.json", "certificate-2.json"} {
				c := readCert(t, filepath.Join(out, name))
				want := tc.primary
				if i == 1 {
					want = -want
				}
				t.Logf("%s: %s (%s) at %.4g, level %.3g: %s", name, c.Verdict, c.Strength, c.Equilibrium, c.Level, c.Reason)
				if len(c.Equilibrium) != 2 || !(math.Abs(c.Equilibrium[0]-want) <= 0.05) || !(math.Abs(c.Equilibrium[1]) <= 0.05) {
					t.Errorf("%s: equilibrium %v, want (%g, 0)", name, c.Equilibrium, want)
				}
				z := c.Z(make([]float64, 2), []float64{0, 0})
				if c.Level > 0 && c.Inside([]float64{0, 0}, c.V.Eval(z)) {
					t.Errorf("%s: the region holds the saddle (0, 0)", name)
				}
				// Noise 0.002 against wells of unit size: each well is
				// certified (measured: both asymptotic, 3 to 4 of 5 folds).
				if c.Verdict != fit.Certified {
					t.Errorf("%s: %s, want certified: %s", name, c.Verdict, c.Reason)
				}
			}
			if _, err := os.Stat(filepath.Join(out, "certificate-3.json")); err == nil {
				t.Error("certificate-3.json written for a system with two stable rest points")
			}
			sum, err := os.ReadFile(filepath.Join(out, "summary.txt"))
			if err != nil {
				t.Fatal(err)
			}
			for _, want := range []string{"rest points: 2, " + tc.order + "\n", "certificate-2.json: rest point", fmt.Sprintf("runs settling there: %d", 30-fewer), fmt.Sprintf("runs settling there: %d", fewer)} {
				if !strings.Contains(string(sum), want) {
					t.Errorf("summary.txt lacks %q:\n%s", want, sum)
				}
			}
			checkOtherWell(t, out, data, ends, tc.primary)
		})
	}
}

// checkOtherWell: basin check against certificate.json of out, on every
// run of data, says of each run whose noise-free end (ends) lies in the
// other well (x of the sign of -primary; the wells at x = ±1
// [GuckenheimerHolmes1983]) that it settled at another rest point, at
// that well (within 0.05: noise 0.002 against a unit well distance), and
// names certificate-2.json's rest point; it never says so of a run of
// its own well, and the table does not say the others had not settled.
func checkOtherWell(t *testing.T, out, data string, ends []float64, primary float64) {
	t.Helper()
	cert := filepath.Join(out, "certificate.json")
	var so, se bytes.Buffer
	if code := basinMain(context.Background(), []string{"check", "--json", "--cert", cert, data}, &so, &se); code != 0 {
		t.Fatalf("check --json: exit %d: %s", code, se.String())
	}
	var doc struct {
		Runs []struct {
			Run   string
			Flags []validate.Flag
		}
	}
	if err := json.Unmarshal(so.Bytes(), &doc); err != nil || len(doc.Runs) != len(ends) {
		t.Fatalf("check --json: %v, %d runs for %d written", err, len(doc.Runs), len(ends))
	}
	other := 0
	for i, r := range doc.Runs {
		var rest *validate.Flag
		for k := range r.Flags {
			if r.Flags[k].RestPoint != nil {
				rest = &r.Flags[k]
			}
		}
		if ends[i]*primary > 0 {
			if rest != nil {
				t.Errorf("%s ends in the certificate's well, yet %+v", r.Run, rest)
			}
			continue
		}
		other++
		if rest == nil || rest.Kind != validate.FlagUnsettled || !(math.Abs(rest.RestPoint[0]+primary) <= 0.05) || !(math.Abs(rest.RestPoint[1]) <= 0.05) ||
			rest.RestName != "certificate-2.json's rest point" {
			t.Errorf("%s ends in the other well (x = %.3g): flags %+v; want unsettled at (%g, 0), named certificate-2.json's rest point", r.Run, ends[i], r.Flags, -primary)
		}
	}
	if other == 0 {
		t.Fatal("no run ends in the other well: nothing checked")
	}
	so.Reset()
	se.Reset()
	basinMain(context.Background(), []string{"check", "--cert", cert, data}, &so, &se)
	if n := strings.Count(so.String(), "settled at another rest point by its end"); n != other || strings.Contains(so.String(), "had not settled") {
		t.Errorf("check's table says %d runs settled at another rest point, want %d, and never 'had not settled':\n%s", n, other, so.String())
	}
}

// TestRunOneRest: a system with one rest point (the damped oscillator
// x” + 0.5 x' + x = 0, common textbook example) gets certificate.json
// only, and no rest-point sections in the summary.
func TestRunOneRest(t *testing.T) {
	if testing.Short() {
		t.Skip("an evaluation of five folds")
	}
	data := t.TempDir()
	_, _ = writeTwoWell(t, data, 12, 6, 0.002, true)
	out := filepath.Join(t.TempDir(), "out")
	// An earlier run's extra certificate goes; a user's file stays.
	if err := os.MkdirAll(out, 0o755); err != nil {
		t.Fatal(err)
	}
	for _, n := range []string{"certificate-2.json", "certificate-02.json", "certificate-old.json"} {
		if err := os.WriteFile(filepath.Join(out, n), []byte("{}"), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	var so, se bytes.Buffer
	if code := basinMain(context.Background(), []string{"run", "--quiet", "--out", out, data}, &so, &se); code != 0 {
		t.Fatalf("exit %d: %s", code, se.String())
	}
	readCert(t, filepath.Join(out, "certificate.json"))
	if _, err := os.Stat(filepath.Join(out, "certificate-2.json")); !os.IsNotExist(err) {
		t.Errorf("certificate-2.json for one rest point (stat: %v)", err)
	}
	for _, n := range []string{"certificate-02.json", "certificate-old.json"} {
		if _, err := os.Stat(filepath.Join(out, n)); err != nil {
			t.Errorf("%s, not basin's, was removed: %v", n, err)
		}
	}
	sum, err := os.ReadFile(filepath.Join(out, "summary.txt"))
	if err != nil {
		t.Fatal(err)
	}
	if strings.Contains(string(sum), "rest points:") {
		t.Errorf("summary has rest-point sections for one rest point:\n%s", sum)
	}
}
