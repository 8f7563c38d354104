package demodata_test

import (
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"math"
	"strconv"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"

	"basin.example/internal/demodata"
)

func generate(t testing.TB, seed uint64, opts *demodata.Options) []demodata.Run {
	t.Helper()
	runs, err := demodata.Generate(seed, opts)
	if err != nil {
		t.Fatal(err)
	}
	return runs
}

// bytesOf returns every CSV file and truth.json concatenated.
func bytesOf(t *testing.T, seed uint64, runs []demodata.Run) []byte {
	var b bytes.Buffer
	for i := range runs {
		b.WriteString(runs[i].File + "\n")
		if err := runs[i].WriteCSV(&b); err != nil {
			t.Fatal(err)
		}
	}
	if err := demodata.NewTruth(seed, nil, runs).WriteJSON(&b); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

func TestDeterministic(t *testing.T) {
	a := bytesOf(t, 1, generate(t, 1, nil))
	b := bytesOf(t, 1, generate(t, 1, nil))
	if !bytes.Equal(a, b) {
		t.Fatal("same seed gave different bytes")
	}
	c := bytesOf(t, 2, generate(t, 2, nil))
	if bytes.Equal(a, c) {
		t.Fatal("seeds 1 and 2 gave the same bytes")
	}
}

// dampedFree is the closed-form free response of the linear damped
// oscillator theta” + 2 zeta w theta' + w^2 theta = 0 (underdamped):
// Thomson & Dahleh, "Theory of Vibration with Applications", 5th ed.,
// 1998, sec. 2.6, damped free vibration (from memory; it is also checked
// by differentiation: it satisfies the equation and the initial values).
func dampedFree(w, zeta, th0, om0, t float64) (float64, float64) {
	a := zeta * w
	wd := w * math.Sqrt(1-zeta*zeta)
	b := (om0 + a*th0) / wd
	e := math.Exp(-a * t)
	c, s := math.Cos(wd*t), math.Sin(wd*t)
	th := e * (th0*c + b*s)
	om := e * (-a*(th0*c+b*s) + (-th0*wd*s + b*wd*c))
	return th, om
}

// TestStepLinear checks the Runge–Kutta integrator against the closed form
// with the cubic term switched off, and its order: the classical RK4 has
// global error O(h^4) (Butcher, "Numerical Methods for Ordinary
// Differential Equations", 2nd ed., 2008, sec. 32, the classical
// fourth-order method), so halving h cuts the error about 16 times.
func TestStepLinear(t *testing.T) {
	p := demodata.DefaultParams()
	p.K3 = 0
	w, zeta := math.Sqrt(p.K/p.J), p.DampingRatio()
	const T = 3.0
	wantTh, wantOm := dampedFree(w, zeta, 0.1, -0.5, T)
	errAt := func(h float64) float64 {
		th, om := p.Advance(0.1, -0.5, 0, T, h, nil)
		return math.Max(math.Abs(th-wantTh), math.Abs(om-wantOm)/w)
	}
	// At the demo's step (1e-4 s, w h ~ 1e-3) the local error is about
	// (w h)^5/120 per step over 3e4 steps: ~1e-13 relative to the 0.1 rad
	// amplitude. 1e-10 leaves room for rounding over 3e4 steps.
	if e := errAt(1e-4); !(e <= 1e-10) {
		t.Errorf("error at h=1e-4: %.3g, want <= 1e-10", e)
	}
	// Order: from h = 8 ms to 4 ms (w h ~ 0.08 and 0.04, where the
	// asymptotic regime holds) the error ratio should be near 2^4 = 16;
	// 13..19 allows for the next term of the error expansion.
	if r := errAt(8e-3) / errAt(4e-3); r < 13 || r > 19 {
		t.Errorf("error ratio on halving h: %.2f, want about 16", r)
	}
}

func TestParams(t *testing.T) {
	// The demo's design figures (ours, documented in the package doc).
	p := demodata.DefaultParams()
	for _, c := range []struct {
		name      string
		got, want float64
		tol       float64
	}{
		{"natural frequency, Hz", p.NaturalFrequency(), 1.51, 0.01},
		{"damping ratio", p.DampingRatio(), 0.150, 0.001},
		{"saddle offset, rad", p.SaddleOffset(), 0.346, 0.001},
		// Energy at the saddle equals K^2/(4 K3): the potential
		// K d^2/2 - K3 d^4/4 at d^2 = K/K3.
		{"saddle energy, J", p.Energy(p.SaddleOffset(), 0), p.SaddleEnergy(), 1e-15},
		// The saddle is an equilibrium.
		{"acceleration at the saddle", p.Accel(p.SaddleOffset(), 0, 0), 0, 1e-12},
	} {
		if !scalar.EqualWithinAbs(c.got, c.want, c.tol) {
			t.Errorf("%s = %.6g, want %.6g ± %g", c.name, c.got, c.want, c.tol)
		}
	}
}

// TestEnergy checks the energy balance dE/dt = -C omega^2 of a damped
// oscillator with a conservative spring ([GuckenheimerHolmes1983] Guckenheimer & Holmes,
// "Nonlinear Oscillations, Dynamical Systems, and Bifurcations of Vector
// Fields", 1983, sec. 2.2, the unforced Duffing equation; from memory,
// and the identity is one line of calculus) on the true states of the runs
// that stay inside: E never rises, it falls by the integral of C omega^2,
// and it ends settled.
func TestEnergy(t *testing.T) {
	p := demodata.DefaultParams()
	runs := generate(t, 1, nil)
	inside := 0
	for i := range runs {
		r := &runs[i]
		if r.Leaves {
			continue
		}
		inside++
		e0 := p.Energy(r.TrueTheta[0], r.TrueOmega[0])
		prev, loss := e0, 0.0
		for k := 1; k < len(r.T); k++ {
			e := p.Energy(r.TrueTheta[k], r.TrueOmega[k])
			// The integrator's error (~1e-13 relative) bounds any rise.
			if e > prev+1e-12*e0 {
				t.Fatalf("%s: energy rose at t=%.3f: %.6g -> %.6g", r.File, r.T[k], prev, e)
			}
			prev = e
			w0, w1 := r.TrueOmega[k-1], r.TrueOmega[k]
			loss += p.C * 0.5 * (w0*w0 + w1*w1) * (r.T[k] - r.T[k-1]) // trapezoid
		}
		// Trapezoid error for omega^2 (frequency ~2w = 19 rad/s) at a
		// 5 ms step: about (19 * 0.005)^2 / 12 = 7.5e-4 relative; 3e-3.
		if got, want := e0-prev, loss; !scalar.EqualWithinAbs(got, want, 3e-3*want) {
			t.Errorf("%s: energy fell by %.6g J, integral of C omega^2 is %.6g J", r.File, got, want)
		}
		// Settled: the decay rate zeta w = 1.42/s gives E ~ e^-28 after
		// 10 s; 1e-6 of the saddle energy leaves room for a slow start
		// near a saddle.
		if prev > 1e-6*p.SaddleEnergy() {
			t.Errorf("%s: final energy %.3g J, not settled", r.File, prev)
		}
		if len(r.T) != 2001 {
			t.Errorf("%s: %d samples, want 2001 (10 s at 200 Hz)", r.File, len(r.T))
		}
	}
	if inside != 35 {
		t.Errorf("%d runs stay inside, want 35", inside)
	}
}

// TestLeaving checks that the runs marked as leaving really reach the end
// stop, and only at their last sample, and that they had to: a free run
// with energy below the saddles' and its angle between them can never
// leave (the energy only falls), so each leaving run starts above it.
func TestLeaving(t *testing.T) {
	p := demodata.DefaultParams()
	runs := generate(t, 1, nil)
	truth := demodata.NewTruth(1, nil, runs)
	if len(truth.Leaving) != 5 {
		t.Fatalf("%d leaving runs %v, want 5", len(truth.Leaving), truth.Leaving)
	}
	bursts := 0
	for i := range runs {
		r := &runs[i]
		if r.Kind == "burst" {
			bursts++
		}
		n := len(r.T)
		peak := 0.0
		for k := range n - 1 {
			peak = math.Max(peak, math.Abs(r.TrueTheta[k]))
		}
		last := math.Abs(r.TrueTheta[n-1])
		if !r.Leaves {
			if peak >= p.SaddleOffset() || last >= p.SaddleOffset() {
				t.Errorf("%s: inside run reached |theta| = %.3f past the saddle", r.File, math.Max(peak, last))
			}
			continue
		}
		if peak >= 0.8 || last < 0.8 {
			t.Errorf("%s: leaving run: peak before the end %.3f, last %.3f; want < 0.8 then >= 0.8", r.File, peak, last)
		}
		if r.LeaveTime != r.T[n-1] || r.LeaveTime > 9 {
			t.Errorf("%s: leave time %.3f, last sample %.3f", r.File, r.LeaveTime, r.T[n-1])
		}
		if r.EnergyRatio <= 1 {
			t.Errorf("%s: leaving run starts at %.3f of the saddle energy", r.File, r.EnergyRatio)
		}
	}
	if bursts != 10 {
		t.Errorf("%d burst runs, want 10", bursts)
	}
}

// TestNoise checks the logged noise and timing against the options.
func TestNoise(t *testing.T) {
	runs := generate(t, 1, nil)
	var n, sth, som, sdt, ndt float64
	for i := range runs {
		r := &runs[i]
		for k := range r.T {
			dth, dom := r.Theta[k]-r.TrueTheta[k], r.Omega[k]-r.TrueOmega[k]
			sth += dth * dth
			som += dom * dom
			n++
			if k > 0 {
				dt := r.T[k] - r.T[k-1]
				if dt <= 0 {
					t.Fatalf("%s: time does not increase at sample %d", r.File, k)
				}
				sdt += (dt - 0.005) * (dt - 0.005)
				ndt++
			}
		}
	}
	// ~72,000 samples: the sample standard deviation has a relative
	// standard error of 1/sqrt(2n) = 0.26%; 2% is about 8 of those.
	// The step's jitter is the difference of two 20 µs draws (clipped at
	// 3 sigma), so sqrt(2)*20 µs, plus 1 µs rounding: 5% tolerance.
	for _, c := range []struct {
		name      string
		got, want float64
		rel       float64
	}{
		{"encoder noise", math.Sqrt(sth / n), 0.5e-3, 0.02},
		{"gyro noise", math.Sqrt(som / n), 5e-3, 0.02},
		{"step jitter", math.Sqrt(sdt / ndt), math.Sqrt2 * 20e-6, 0.05},
	} {
		if !scalar.EqualWithinAbs(c.got, c.want, c.rel*c.want) {
			t.Errorf("%s: %.4g, want %.4g ± %.0f%%", c.name, c.got, c.want, 100*c.rel)
		}
	}
}

// TestCSV reads a written file back with encoding/csv and strconv.
func TestCSV(t *testing.T) {
	runs := generate(t, 1, &demodata.Options{Runs: 3, Leaving: -1, Bursts: -1, Duration: 1})
	var b bytes.Buffer
	if err := runs[0].WriteCSV(&b); err != nil {
		t.Fatal(err)
	}
	rows, err := csv.NewReader(&b).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if got := fmt.Sprint(rows[0]); got != "[time [s] theta [rad] omega [rad/s]]" {
		t.Errorf("header %s", got)
	}
	if len(rows) != 1+len(runs[0].T) || len(runs[0].T) != 201 {
		t.Fatalf("%d rows for %d samples", len(rows), len(runs[0].T))
	}
	for k, row := range rows[1:] {
		for j, want := range []float64{runs[0].T[k], runs[0].Theta[k], runs[0].Omega[k]} {
			got, err := strconv.ParseFloat(row[j], 64)
			// Six decimals: the printed value is within half a unit.
			if err != nil || !scalar.EqualWithinAbs(got, want, 5e-7) {
				t.Fatalf("row %d col %d: %q, want %.9f", k+2, j+1, row[j], want)
			}
		}
	}
}

func TestImpossible(t *testing.T) {
	p := demodata.DefaultParams()
	p.K3 = 0 // no saddles: nothing can leave
	_, err := demodata.Generate(1, &demodata.Options{Params: &p, Runs: 2, Leaving: 1, Bursts: -1})
	if !errors.Is(err, demodata.ErrSearch) {
		t.Fatalf("err = %v, want ErrSearch", err)
	}
	// Without saddles, runs that stay inside are still possible.
	runs, err := demodata.Generate(1, &demodata.Options{Params: &p, Runs: 4, Leaving: -1, Duration: 1})
	if err != nil || len(runs) != 4 || runs[0].Leaves {
		t.Fatalf("no saddles, inside runs: %d runs, err %v", len(runs), err)
	}
}

func BenchmarkGenerate(b *testing.B) {
	var samples int
	for b.Loop() {
		runs := generate(b, 1, nil)
		samples = 0
		for i := range runs {
			samples += len(runs[i].T)
		}
	}
	b.ReportMetric(float64(samples)*float64(b.N)/b.Elapsed().Seconds(), "samples/s")
}

// BenchmarkWriteCSV measures formatting the demo data set as CSV, beside
// encoding/csv with strconv.FormatFloat as the baseline, in the same run.
func BenchmarkWriteCSV(b *testing.B) {
	runs := generate(b, 1, nil)
	var buf bytes.Buffer
	for i := range runs {
		runs[i].WriteCSV(&buf)
	}
	size := int64(buf.Len())
	b.Run("ours", func(b *testing.B) {
		b.SetBytes(size)
		b.ReportAllocs()
		for b.Loop() {
			buf.Reset()
			for i := range runs {
				runs[i].WriteCSV(&buf)
			}
		}
	})
	b.Run("encoding-csv", func(b *testing.B) {
		b.SetBytes(size)
		b.ReportAllocs()
		rec := make([]string, 3)
		for b.Loop() {
			buf.Reset()
			for i := range runs {
				w := csv.NewWriter(&buf)
				w.Write([]string{"time [s]", "theta [rad]", "omega [rad/s]"})
				r := &runs[i]
				for k := range r.T {
					rec[0] = strconv.FormatFloat(r.T[k], 'f', 6, 64)
					rec[1] = strconv.FormatFloat(r.Theta[k], 'f', 6, 64)
					rec[2] = strconv.FormatFloat(r.Omega[k], 'f', 6, 64)
					w.Write(rec)
				}
				w.Flush()
			}
		}
	})
}
