package fit

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"basin.example/ingest"
	"gonum.org/v1/gonum/floats/scalar"
)

// forced integrates x' = f(x, u(t)) by classical RK4 with step h and
// returns every sample (times, states, input), with Gaussian noise of
// sd[j] added to state j after integration.
func forced(f func(dst, x []float64, u float64), u func(t float64) float64, x0 []float64, h float64, steps int,
	sd []float64, rng *rand.Rand) (T []float64, X [][]float64, U []float64) {
	n := len(x0)
	x := append([]float64(nil), x0...)
	X = make([][]float64, n)
	k1, k2, k3, k4, tmp := make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
	for s := 0; s <= steps; s++ {
		t := float64(s) * h
		T = append(T, t)
		U = append(U, u(t))
		for j := range x {
			X[j] = append(X[j], x[j]+sd[j]*rng.NormFloat64())
		}
		f(k1, x, u(t))
		for j := range x {
			tmp[j] = x[j] + h/2*k1[j]
		}
		f(k2, tmp, u(t+h/2))
		for j := range x {
			tmp[j] = x[j] + h/2*k2[j]
		}
		f(k3, tmp, u(t+h/2))
		for j := range x {
			tmp[j] = x[j] + h*k3[j]
		}
		f(k4, tmp, u(t+h))
		for j := range x {
			x[j] += h / 6 * (k1[j] + 2*k2[j] + 2*k3[j] + k4[j])
		}
	}
	return T, X, U
}

// multisine is a drive of three incommensurate sinusoids with
// run-dependent amplitudes and phases, switched off for the last quarter
// of the run (the rig idle at drive 0).
func multisine(rng *rand.Rand, amp, dur float64, freqs []float64) func(t float64) float64 {
	a := make([]float64, len(freqs))
	ph := make([]float64, len(freqs))
	for k := range freqs {
		a[k] = amp * (0.5 + rng.Float64())
		ph[k] = 2 * math.Pi * rng.Float64()
	}
	return func(t float64) float64 {
		if t > 0.75*dur {
			return 0
		}
		s := 0.0
		for k, f := range freqs {
			s += a[k] * math.Sin(2*math.Pi*f*t+ph[k])
		}
		return s
	}
}

func forcedDataset(states []string, input string, f func(dst, x []float64, u float64), runs int, dur, h float64,
	freqs []float64, amp float64, sd []float64, seed uint64) *ingest.Dataset {
	rng := rand.New(rand.NewPCG(seed, 3))
	ds := &ingest.Dataset{Inputs: []ingest.Column{{Name: input, Unit: "N"}}}
	for _, s := range states {
		ds.States = append(ds.States, ingest.Column{Name: s})
	}
	for r := 0; r < runs; r++ {
		x0 := make([]float64, len(states))
		for j := range x0 {
			x0[j] = rng.Float64()*2 - 1
		}
		T, X, U := forced(f, multisine(rng, amp, dur, freqs), x0, h, int(math.Round(dur/h)), sd, rng)
		ds.Runs = append(ds.Runs, ingest.Run{Name: fmt.Sprintf("run%02d", r),
			Source: ingest.Source{File: fmt.Sprintf("run%02d.csv", r)}, T: T, X: X, U: [][]float64{U}})
	}
	return ds
}

// TestInputFirstOrder: x' = -a x + b u with a = 2, b = 3, logged under a
// multisine drive at 0.1% noise. The identified a and b must be within 2%
// (the noise and the derivative's bias are far below that), and no other
// term kept; the rest input is the idle drive 0 and the eigenvalue there -a.
// Source: the first-order linear system x' = -a x + b u; the truth is
// the simulated system's own coefficients [FirstOrderLag].
func TestInputFirstOrder(t *testing.T) {
	f := func(d, x []float64, u float64) { d[0] = -2*x[0] + 3*u }
	ds := forcedDataset([]string{"x"}, "u", f, 8, 8, 0.01, []float64{0.13, 0.41, 0.97}, 1, []float64{0.001}, 1)
	m, err := Field(context.Background(), ds, &FieldOptions{Degree: 2, Bootstrap: -1})
	if err != nil {
		t.Fatal(err)
	}
	if len(m.Inputs) != 1 || m.Inputs[0].Name != "u" || m.Inputs[0].Unit != "N" {
		t.Fatalf("inputs %+v", m.Inputs)
	}
	a, b := -m.Coefficient(0, []int{1, 0}), m.Coefficient(0, []int{0, 1})
	if !scalar.EqualWithinRel(a, 2, 0.02) || !scalar.EqualWithinRel(b, 3, 0.02) {
		t.Errorf("a = %g, b = %g, want 2 and 3 within 2%%; model %+v", a, b, m.Equations[0])
	}
	if !scalar.EqualWithinAbs(m.RestInput[0], 0, 1e-12) {
		t.Errorf("rest input %g, want 0 (the idle drive)", m.RestInput[0])
	}
	if len(m.Equations[0].Exponents) != 2 {
		t.Errorf("%d terms kept, want 2 (x and u)", len(m.Equations[0].Exponents))
	}
	for _, e := range m.Equations[0].Exponents {
		if len(e) != 2 {
			t.Fatalf("exponent %v, want one entry per state and per input", e)
		}
	}
	t.Logf("a = %.5g, b = %.5g, rest %g, eig %v, model %v %v", a, b, m.RestInput, m.JacobianEigenvalues, m.Equations[0].Exponents, m.Equations[0].Coefficients)
	sm := m.AtRest()
	if len(sm.Inputs) != 0 || len(sm.Equations[0].Exponents[0]) != 1 {
		t.Fatalf("at-rest model %+v", sm.Equations[0])
	}
	if len(m.JacobianEigenvalues) != 1 || !scalar.EqualWithinRel(m.JacobianEigenvalues[0][0], -2, 0.02) {
		t.Errorf("eigenvalues at rest input %v, want -2", m.JacobianEigenvalues)
	}
}

// TestInputOscillator: x” + 2 zeta w x' + w^2 x = (F/m) u with w = 2π
// rad/s, zeta = 0.1, F/m = 4, logged under a multisine drive. The input
// gain (the u term of dv/dt) must be within 3%; and the fitted model,
// simulated under u = sin(r w t) with r = 0.8, must reach a steady-state
// amplitude within 3% of (F/m)/w^2 / sqrt((1-r^2)^2 + (2 zeta r)^2).
// Source: the magnification factor of a damped single-degree-of-freedom
// system under harmonic force, Thomson & Dahl, Theory of Vibration with
// Applications (from memory) [ThomsonDahl].
func TestInputOscillator(t *testing.T) {
	const w, zeta, gain = 2 * math.Pi, 0.1, 4.0
	f := func(d, x []float64, u float64) {
		d[0] = x[1]
		d[1] = -w*w*x[0] - 2*zeta*w*x[1] + gain*u
	}
	ds := forcedDataset([]string{"x", "v"}, "drive", f, 8, 12, 0.005, []float64{0.37, 0.83, 1.31}, 3, []float64{0.0002, 0.001}, 2)
	m, err := Field(context.Background(), ds, &FieldOptions{Degree: 2, Bootstrap: -1})
	if err != nil {
		t.Fatal(err)
	}
	g := m.Coefficient(1, []int{0, 0, 1})
	if !scalar.EqualWithinRel(g, gain, 0.03) {
		t.Errorf("input gain %g, want %g within 3%%; dv/dt %+v", g, gain, m.Equations[1])
	}
	const r = 0.8
	want := gain / (w * w) / math.Sqrt((1-r*r)*(1-r*r)+(2*zeta*r)*(2*zeta*r))
	fm := func(d, x []float64, u float64) { m.EvalInputTo(d, x, []float64{u}) }
	drive := func(t float64) float64 { return math.Sin(r * w * t) }
	// zeta w = 0.63 1/s: after 40 s the transient is e^-25 of its start.
	T, X, _ := forced(fm, drive, []float64{0, 0}, 0.002, 30000, []float64{0, 0}, rand.New(rand.NewPCG(1, 1)))
	amp := 0.0
	for i, tt := range T {
		if tt >= 50 {
			amp = math.Max(amp, math.Abs(X[0][i]))
		}
	}
	t.Logf("gain %.5g (want %g), amplitude %.5g (want %.5g); dv/dt %v %v", g, gain, amp, want, m.Equations[1].Exponents, m.Equations[1].Coefficients)
	if !scalar.EqualWithinRel(amp, want, 0.03) {
		t.Errorf("steady-state amplitude %g, want %g within 3%% (magnification factor)", amp, want)
	}
}

// TestRestSegments: a run driven for its first 600 samples and idle (drive
// 0) for its last 400 keeps one segment, the idle tail, whole; a data set
// without inputs is returned unchanged. Common practice (the samples
// where the input holds its rest value obey the at-rest model).
func TestRestSegments(t *testing.T) {
	L := 1000
	T, X, U := make([]float64, L), make([]float64, L), make([]float64, L)
	for i := range T {
		T[i] = float64(i) * 0.01
		X[i] = math.Exp(-T[i])
		if i < 600 {
			U[i] = 1 + math.Sin(T[i])
		}
	}
	ds := &ingest.Dataset{States: []ingest.Column{{Name: "x"}}, Inputs: []ingest.Column{{Name: "u"}},
		Runs: []ingest.Run{{Name: "r", T: T, X: [][]float64{X}, U: [][]float64{U}}}}
	got := RestSegments(ds, []float64{0})
	if len(got.Runs) != 1 || got.Runs[0].Len() != 400 || got.Runs[0].T[0] != T[600] || got.Runs[0].Name != "r@6" {
		t.Fatalf("segments %d, first %+v", len(got.Runs), got.Runs)
	}
	ds.Inputs, ds.Runs[0].U = nil, nil
	if RestSegments(ds, nil) != ds {
		t.Error("a data set without inputs was not returned as it is")
	}
}

// TestInputGainFirstOrder: for x' = -a x + b u (a = 2, b = 3) with V = x²
// the ultimate bound under |u| <= U is |x| <= (b/a) U [FirstOrderLag]
// (from memory): with lambda = a the inequality dV/dt <= -lambda V +
// gamma u² holds exactly when gamma >= b²/a·(scale), and the bound is
// tight at the steady state x = (b/a) u. The runs hold input steps for 3
// s (6 time constants), so the samples reach that steady state and the
// gain fitted on them by the dissipation LP must be within 5% of b/a =
// 1.5 (the fitted coefficients are within 0.1%; the rest is how close the
// samples come to the steady state).
func TestInputGainFirstOrder(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 5))
	ds := &ingest.Dataset{States: []ingest.Column{{Name: "x"}}, Inputs: []ingest.Column{{Name: "u"}}}
	f := func(d, x []float64, u float64) { d[0] = -2*x[0] + 3*u }
	for r := 0; r < 8; r++ {
		lv := []float64{2*rng.Float64() - 1, 2*rng.Float64() - 1, 2*rng.Float64() - 1, 0}
		u := func(t float64) float64 { return lv[min(3, int(t/3))] }
		T, X, U := forced(f, u, []float64{2*rng.Float64() - 1}, 0.01, 1200, []float64{0.0005}, rng)
		ds.Runs = append(ds.Runs, ingest.Run{Name: fmt.Sprintf("run%02d", r), T: T, X: X, U: [][]float64{U}})
	}
	m, err := Field(context.Background(), ds, &FieldOptions{Degree: 2, Bootstrap: -1})
	if err != nil {
		t.Fatal(err)
	}
	g, err := FitInputGain(m, ds)
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("model %v %v; gamma %.5g, lambda %.5g, bound %.5g (want 1.5), norm bound %.5g, %d samples",
		m.Equations[0].Exponents, m.Equations[0].Coefficients, g.Gamma, g.Lambda, g.Bound, g.NormBound, g.Samples)
	if len(g.Bound) != 1 || !scalar.EqualWithinRel(g.Bound[0], 1.5, 0.05) {
		t.Errorf("ultimate bound per unit input %v, want b/a = 1.5 within 5%%", g.Bound)
	}
	if !(g.Lambda > 0) || !(g.Gamma > 0) {
		t.Errorf("gamma %g, lambda %g: both must be positive", g.Gamma, g.Lambda)
	}
}

// TestInputModelRoundTrip: a model with inputs survives model.json (the
// exponents one per state then one per input), a rest_input of the wrong
// length or an exponent vector without the input entry is refused, and
// Certify works on it at rest input. Common practice (a file format read
// back as written).
func TestInputModelRoundTrip(t *testing.T) {
	f := func(d, x []float64, u float64) { d[0] = -2*x[0] + 3*u }
	ds := forcedDataset([]string{"x"}, "u", f, 8, 8, 0.01, []float64{0.13, 0.41, 0.97}, 1, []float64{0.001}, 1)
	m, err := Field(context.Background(), ds, &FieldOptions{Degree: 2, Bootstrap: -1})
	if err != nil {
		t.Fatal(err)
	}
	b, err := json.Marshal(m)
	if err != nil {
		t.Fatal(err)
	}
	back, err := ReadModel(bytes.NewReader(b))
	if err != nil {
		t.Fatal(err)
	}
	if len(back.Inputs) != 1 || back.Inputs[0].Name != "u" || len(back.RestInput) != 1 ||
		!scalar.EqualWithinAbs(back.Coefficient(0, []int{0, 1}), m.Coefficient(0, []int{0, 1}), 0) {
		t.Fatalf("read back %+v", back)
	}
	for _, bad := range []func(*Model){
		func(m *Model) { m.RestInput = nil },
		func(m *Model) { m.Equations[0].Exponents[0] = m.Equations[0].Exponents[0][:1] },
	} {
		c := *back
		c.Equations = []Equation{back.Equations[0]}
		c.Equations[0].Exponents = append([][]int(nil), back.Equations[0].Exponents...)
		bad(&c)
		b, _ := json.Marshal(&c)
		if _, err := ReadModel(bytes.NewReader(b)); err == nil {
			t.Errorf("a broken model with inputs was read: %s", b)
		}
	}
	cert, err := Certify(context.Background(), back, ds, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !cert.Found {
		t.Errorf("no certificate at rest input for a stable first-order lag: %s", cert.Reason)
	}
	ds.Inputs = nil
	if _, err := Certify(context.Background(), back, ds, nil); !errors.Is(err, ErrMismatch) {
		t.Errorf("data without the model's input: err %v, want ErrMismatch", err)
	}
}
