package fit

import (
	"context"
	"encoding/json"
	"errors"
	"math"
	"math/cmplx"
	"math/rand/v2"
	"sort"
	"strings"
	"testing"

	"basin.example/fit/poly"
	"basin.example/ingest"
	"github.com/sajari/regression"
	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"
)

func lorenzStarts() [][]float64 {
	return [][]float64{{-8, 7, 27}, {1, 1, 1}, {10, -5, 30}, {-3, -6, 15}, {5, 10, 20}, {0.5, -2, 35}, {0.5, -0.5, -1}}
}

// TestFieldLorenz is the sparse-regression check of [Brunton2016] (Brunton, Proctor &
// Kutz, "Discovering governing equations from data by sparse
// identification of nonlinear dynamical systems", PNAS 113(15), 2016
// ([Brunton2016]): sigma = 10, rho = 28, beta = 8/3. Six runs of 5 s at
// 500 Hz from RK4 (step 5e-4, error far below the tolerances). Clean data:
// exactly the seven true terms, every coefficient within 0.5% (the brief's
// bound; the measured error is about 2e-6). 1% noise: the true support and
// coefficients within 5% (the brief's bound; measured about 1%).
func TestFieldLorenz(t *testing.T) {
	for _, tc := range []struct {
		name  string
		noise float64
		tol   float64
	}{{"clean", 0, 0.005}, {"noise 1%", 0.01, 0.05}} {
		t.Run(tc.name, func(t *testing.T) {
			ds := simulate(lorenz, lorenzStarts(), 5, 0.002, 4, tc.noise, 1)
			m, err := Field(context.Background(), ds, &FieldOptions{Degree: 2, Bootstrap: 20})
			if err != nil {
				t.Fatal(err)
			}
			sup, rel := compare(m, lorenz)
			if !sup || !(rel <= tc.tol) {
				for _, e := range m.Equations {
					t.Logf("%s: %v %.6g", e.State, e.Exponents, e.Coefficients)
				}
				t.Fatalf("support recovered %v, max relative error %.3g (want true support within %g)", sup, rel, tc.tol)
			}
			terms := 0
			for _, e := range m.Equations {
				terms += len(e.Coefficients)
			}
			if terms != 7 {
				t.Errorf("%d terms, want 7", terms)
			}
		})
	}
}

// TestLorenzEquilibria checks the equilibria and linearisations of the
// field fitted to clean Lorenz data against [Lorenz1963], [Strogatz1994] (computed
// from the formulas in [Strogatz1994] ch. 9):
// the origin, a saddle with eigenvalues -22.827723, -2.666667, 11.827723,
// and C± = (±6√2, ±6√2, 27) with -13.854578 and 0.093956 ± 10.194505i.
// Tolerance 1e-4 relative: the fitted coefficients are within about 2e-6.
func TestLorenzEquilibria(t *testing.T) {
	ds := simulate(lorenz, lorenzStarts(), 5, 0.002, 4, 0, 1)
	m, err := Field(context.Background(), ds, &FieldOptions{Degree: 2, Bootstrap: -1})
	if err != nil {
		t.Fatal(err)
	}
	r := 6 * math.Sqrt2
	want := []struct {
		point []float64
		eig   []complex128
		class string
	}{
		{[]float64{0, 0, 0}, []complex128{-22.827723, -2.666667, 11.827723}, ClassSaddle},
		{[]float64{r, r, 27}, []complex128{-13.854578, complex(0.093956, -10.194505), complex(0.093956, 10.194505)}, ClassSaddle},
		{[]float64{-r, -r, 27}, []complex128{-13.854578, complex(0.093956, -10.194505), complex(0.093956, 10.194505)}, ClassSaddle},
	}
	if len(m.Equilibria) != 3 {
		t.Fatalf("%d equilibria, want 3: %+v", len(m.Equilibria), m.Equilibria)
	}
	for _, w := range want {
		var got *Equilibrium
		for i := range m.Equilibria {
			if dist(m.Equilibria[i].Point, w.point) < 1e-3 {
				got = &m.Equilibria[i]
			}
		}
		if got == nil {
			t.Errorf("no equilibrium near %v", w.point)
			continue
		}
		if got.Class != w.class || !got.InEnvelope {
			t.Errorf("at %v: class %q in envelope %v, want %q", w.point, got.Class, got.InEnvelope, w.class)
		}
		for k, e := range got.Eigenvalues {
			if d := cmplx.Abs(complex(e[0], e[1]) - w.eig[k]); !(d <= 1e-4*cmplx.Abs(w.eig[k])+1e-6) {
				t.Errorf("at %v: eigenvalue %d = %v, want %v", w.point, k, e, w.eig[k])
			}
		}
	}
}

func dist(a, b []float64) float64 {
	s := 0.0
	for i := range a {
		s += (a[i] - b[i]) * (a[i] - b[i])
	}
	return math.Sqrt(s)
}

// TestFieldLinear fits the damped linear oscillator x' = -0.1x + 2y,
// y' = -2x - 0.1y ([Brunton2016], first example;
// [Brunton2016]) with a degree-3 library and checks the fitted matrix
// and that the eigenvalues agree with gonum's on the true matrix
// (-0.1 ± 2i). Clean data, tolerance 1e-5 (derivative error of the
// smallest cubic window at 100 Hz is about 1e-7).
func TestFieldLinear(t *testing.T) {
	A := [][]float64{{-0.1, 2}, {-2, -0.1}}
	sys := system{name: "linear", states: []string{"x", "y"}, f: func(d, x []float64) {
		d[0] = A[0][0]*x[0] + A[0][1]*x[1]
		d[1] = A[1][0]*x[0] + A[1][1]*x[1]
	}, true: []map[string]float64{{"x": -0.1, "y": 2}, {"x": -2, "y": -0.1}}}
	starts := [][]float64{{2, 0}, {0, 1.5}, {-1, 1}, {1, -2}, {-2, -1}, {0.5, 0.5}}
	ds := simulate(sys, starts, 8, 0.01, 10, 0, 1)
	m, err := Field(context.Background(), ds, &FieldOptions{Bootstrap: -1})
	if err != nil {
		t.Fatal(err)
	}
	if sup, rel := compare(m, sys); !sup || !(rel <= 1e-5) {
		t.Fatalf("support %v, relative error %.3g", sup, rel)
	}
	var eg mat.Eigen
	if !eg.Factorize(mat.NewDense(2, 2, []float64{A[0][0], A[0][1], A[1][0], A[1][1]}), mat.EigenNone) {
		t.Fatal("gonum eigen failed")
	}
	want := eg.Values(nil)
	sort.Slice(want, func(a, b int) bool { return imag(want[a]) < imag(want[b]) })
	got := m.JacobianEigenvalues
	for k := range want {
		if d := cmplx.Abs(complex(got[k][0], got[k][1]) - want[k]); !(d <= 1e-5) {
			t.Errorf("eigenvalue %d = %v, want %v", k, got[k], want[k])
		}
	}
	if m.Equilibria[0].Class != ClassStableFocus || dist(m.Equilibrium, []float64{0, 0}) > 1e-9 {
		t.Errorf("primary equilibrium %v %q, want the origin, stable focus", m.Equilibrium, m.Equilibria[0].Class)
	}
}

// TestLeastSquaresSajari checks the streamed, normalised normal-equation
// solve (every term kept: threshold 0) against [sajari] github.com/sajari/regression
// v1.0.1, an independent ordinary-least-squares implementation, to 1e-8
// relative: the normalised matrix has condition about 1e2 and the refit
// jitter is 1e-12, so both agree to about 1e-11.
func TestLeastSquaresSajari(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 0))
	lib := poly.NewLibrary(2, 0, 2) // 1, x, y, x², xy, y²
	p, n := lib.Len(), 1
	const N = 1000
	// Two groups of N/2 rows, as Field splits by run; the total must then
	// hold all N rows (a zero row count would make every coefficient NaN).
	groups := []*groupSums{newGroupSums(p, n), newGroupSums(p, n)}
	rb := newRowBuffer(p, n)
	r := new(regression.Regression)
	r.SetObserved("y")
	for k := 1; k < p; k++ {
		r.SetVar(k-1, lib.Name(k, []string{"a", "b"}))
	}
	truth := []float64{0.3, -1.2, 0.7, 0.25, -0.4, 0.1}
	for i := 0; i < N; i++ {
		x := []float64{rng.NormFloat64(), 2*rng.Float64() - 1}
		phi, y := rb.row(groups[2*i/N])
		lib.EvalTo(phi, x)
		v := 0.0
		for k, c := range truth {
			v += c * phi[k]
		}
		v += 0.05 * rng.NormFloat64()
		y[0] = v
		r.Train(regression.DataPoint(v, append([]float64(nil), phi[1:]...)))
	}
	rb.flush()
	for _, g := range groups {
		g.finish(p)
	}
	pr := newProblem(groups, p, n)
	if pr.total.rows != N {
		t.Fatalf("the problem holds %d rows, want %d", pr.total.rows, N)
	}
	xi := make([]float64, p)
	gh, bh := make([]float64, p*p), make([]float64, p)
	pr.normalised(gh, bh, pr.total)
	newSolver(p).thresholdRefit(xi, gh, bh, 0, 0)
	if err := r.Run(); err != nil {
		t.Fatal(err)
	}
	// The reference itself must have seen the data: with noise 0.05 over
	// 1000 rows its coefficients are within about 0.01 of the truth, so
	// 0.05 catches an empty or mis-fed reference without flaking.
	for k, c := range truth {
		if !scalar.EqualWithinAbs(r.Coeff(k), c, 0.05) {
			t.Fatalf("sajari term %d = %g, truth %g: the reference did not see the data", k, r.Coeff(k), c)
		}
	}
	for k := 0; k < p; k++ {
		got := xi[k] * pr.ySD[0] / pr.colScale[k]
		want := r.Coeff(k)
		if !scalar.EqualWithinRel(got, want, 1e-8) {
			t.Errorf("term %s: %.12g, sajari %.12g", lib.Name(k, []string{"a", "b"}), got, want)
		}
	}
}

// TestRawPoly checks the exact expansion of products of (x - c)/s into raw
// monomials: a hand-expanded case (((x-1)/2)² = x²/4 - x/2 + 1/4, exact in
// binary floating point) and random polynomials against direct evaluation
// at random points (1e-12 relative: a few roundings per term).
func TestRawPoly(t *testing.T) {
	lib := poly.NewLibrary(1, 0, 2)
	got := rawPoly(lib, []float64{0, 0, 1}, []float64{1}, []float64{2}, 1)
	want := map[int]float64{0: 0.25, 1: -0.5, 2: 0.25}
	if len(got.Exponents) != 3 {
		t.Fatalf("got %v", got)
	}
	for k, e := range got.Exponents {
		if got.Coefficients[k] != want[e[0]] {
			t.Errorf("x^%d: %g, want %g", e[0], got.Coefficients[k], want[e[0]])
		}
	}
	rng := rand.New(rand.NewPCG(9, 0))
	for trial := 0; trial < 20; trial++ {
		lib := poly.NewLibrary(3, 0, 3)
		coef := make([]float64, lib.Len())
		for k := range coef {
			if rng.Float64() < 0.4 {
				coef[k] = rng.NormFloat64()
			}
		}
		c := []float64{rng.NormFloat64() * 3, rng.NormFloat64(), 5 * rng.Float64()}
		s := []float64{0.5 + rng.Float64(), 0.1 + rng.Float64(), 2 + rng.Float64()}
		out := 1 + rng.Float64()
		rp := rawPoly(lib, coef, c, s, out)
		for pt := 0; pt < 10; pt++ {
			x := []float64{rng.NormFloat64() * 2, rng.NormFloat64(), rng.NormFloat64() * 3}
			z := make([]float64, 3)
			for j := range z {
				z[j] = (x[j] - c[j]) / s[j]
			}
			vals := lib.EvalTo(make([]float64, lib.Len()), z)
			direct, mag := 0.0, 0.0
			for k, v := range vals {
				direct += out * coef[k] * v
				mag += math.Abs(out * coef[k] * v)
			}
			if got := rp.Eval(x); !scalar.EqualWithinAbs(got, direct, 1e-12*math.Max(mag, 1)*10) {
				t.Fatalf("trial %d: raw %.15g, direct %.15g", trial, got, direct)
			}
		}
	}
}

// TestNoiseStd checks the fourth-difference noise estimate on a densely
// sampled sine plus white noise of known std: within 5% (the estimate's
// own sampling error on 20,000 points is about 1%).
func TestNoiseStd(t *testing.T) {
	rng := rand.New(rand.NewPCG(2, 0))
	for _, sd := range []float64{1e-3, 1e-2, 5e-2} {
		x := make([]float64, 20000)
		for i := range x {
			x[i] = math.Sin(float64(i)*0.002) + sd*rng.NormFloat64()
		}
		if got := noiseStd([][]float64{x}, sampleCap); !scalar.EqualWithinAbs(got, sd, 0.05*sd) {
			t.Errorf("sd %g: estimate %g", sd, got)
		}
	}
}

// TestBootstrap checks the bootstrap over runs on noisy Duffing data: the
// true terms are kept in (nearly) every refit, and their intervals hold
// the true values.
func TestBootstrap(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 0))
	var starts [][]float64
	for range 12 {
		starts = append(starts, []float64{4*rng.Float64() - 2, 4*rng.Float64() - 2})
	}
	ds := simulate(duffing, starts, 10, 0.01, 10, 0.005, 11)
	m, err := Field(context.Background(), ds, &FieldOptions{Bootstrap: 60})
	if err != nil {
		t.Fatal(err)
	}
	if sup, _ := compare(m, duffing); !sup {
		t.Fatal("support not recovered")
	}
	for i, eq := range m.Equations {
		if len(eq.Terms) != len(eq.Coefficients) {
			t.Fatalf("%d terms for %d coefficients", len(eq.Terms), len(eq.Coefficients))
		}
		for k, term := range eq.Terms {
			want := duffing.true[i][monoName(eq.Exponents[k], duffing.states)]
			if term.KeptShare < 0.9 || term.RarelyKept {
				t.Errorf("%s in %s: kept share %g", term.Name, eq.State, term.KeptShare)
			}
			// Widen by 2% of the value: the smoothing bias (about 0.5%
			// here) is not what a bootstrap over runs measures.
			w := 0.02 * math.Abs(want)
			if want < term.Interval[0]-w || want > term.Interval[1]+w {
				t.Errorf("%s in %s: interval %v misses %g", term.Name, eq.State, term.Interval, want)
			}
		}
	}
}

// TestDeterministic: the same input and seed give the same model.
func TestDeterministic(t *testing.T) {
	ds := simulate(vanderpol, [][]float64{{1, 0}, {0, 2}, {-2, 1}, {0.5, -0.5}, {3, 0}, {-1, -2}}, 8, 0.01, 5, 0.01, 4)
	var out []string
	for range 2 {
		m, err := Field(context.Background(), ds, &FieldOptions{Bootstrap: 30, Seed: 7})
		if err != nil {
			t.Fatal(err)
		}
		b, err := json.Marshal(m)
		if err != nil {
			t.Fatal(err)
		}
		out = append(out, string(b))
	}
	if out[0] != out[1] {
		t.Error("two fits with one seed differ")
	}
}

// TestFieldBadInput: each bad input gives its sentinel and a message that
// says what is wrong, never a model with NaN.
func TestFieldBadInput(t *testing.T) {
	good := func() *ingest.Dataset {
		return simulate(vanderpol, [][]float64{{1, 0}, {0, 2}, {-2, 1}, {0.5, -0.5}, {3, 0}, {-1, -2}}, 4, 0.01, 5, 0, 1)
	}
	for _, tc := range []struct {
		name string
		ds   func() *ingest.Dataset
		err  error
		msg  string
	}{
		{"too few samples", func() *ingest.Dataset {
			ds := good()
			ds.Runs = ds.Runs[:2]
			for i := range ds.Runs {
				r := &ds.Runs[i]
				r.T = r.T[:8]
				r.X = [][]float64{r.X[0][:8], r.X[1][:8]}
			}
			return ds
		}, ErrTooFewSamples, "need at least 30"},
		{"constant column", func() *ingest.Dataset {
			ds := good()
			for i := range ds.Runs {
				for k := range ds.Runs[i].X[1] {
					ds.Runs[i].X[1][k] = 2.5
				}
			}
			return ds
		}, ErrConstant, `state "y" is constant`},
		{"constant input", func() *ingest.Dataset {
			ds := good()
			ds.Inputs = []ingest.Column{{Name: "drive", Unit: "V"}}
			for i := range ds.Runs {
				u := make([]float64, len(ds.Runs[i].T))
				for k := range u {
					u[k] = 1.5
				}
				ds.Runs[i].U = [][]float64{u}
			}
			return ds
		}, ErrConstant, `input "drive" is constant (1.5 V in every sample of the 6 runs fitted)`},
		{"collinear columns", func() *ingest.Dataset {
			ds := good()
			ds.States = append(ds.States, ingest.Column{Name: "x2"})
			rng := rand.New(rand.NewPCG(1, 0))
			for i := range ds.Runs {
				x2 := make([]float64, len(ds.Runs[i].T))
				for k, v := range ds.Runs[i].X[0] {
					x2[k] = 1.01*v + 1e-4*rng.NormFloat64() // a second sensor of x
				}
				ds.Runs[i].X = append(ds.Runs[i].X, x2)
			}
			return ds
		}, ErrCollinear, `"x" and "x2" move together`},
		{"collinear library", func() *ingest.Dataset {
			ds := good()
			ds.States = []ingest.Column{{Name: "x"}, {Name: "y"}}
			for i := range ds.Runs {
				x := ds.Runs[i].X[0]
				y := make([]float64, len(x))
				for k, v := range x {
					y[k] = v * v // y is exactly x^2: library columns y and x^2 coincide
				}
				ds.Runs[i].X = [][]float64{x, y}
			}
			return ds
		}, ErrCollinear, "try a lower FieldOptions.Degree"},
		{"short run", func() *ingest.Dataset {
			ds := good()
			r := &ds.Runs[2]
			r.T, r.X = r.T[:3], [][]float64{r.X[0][:3], r.X[1][:3]}
			return ds
		}, ErrShortRun, `run "run02" has 3 samples`},
		// a one-row file (a logger stopped at once): one sample, not "1 samples"
		{"one-sample run", func() *ingest.Dataset {
			ds := good()
			r := &ds.Runs[2]
			r.T, r.X = r.T[:1], [][]float64{r.X[0][:1], r.X[1][:1]}
			return ds
		}, ErrShortRun, `run "run02" has 1 sample, fewer than`},
		{"all missing", func() *ingest.Dataset {
			ds := good()
			for i := range ds.Runs {
				ds.Runs[i].T, ds.Runs[i].X = nil, [][]float64{nil, nil}
			}
			return ds
		}, ErrTooFewSamples, "no usable samples"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			m, err := Field(context.Background(), tc.ds(), nil)
			if err == nil {
				t.Fatalf("no error; model %+v", m.Equations)
			}
			if !errors.Is(err, tc.err) || !strings.Contains(err.Error(), tc.msg) {
				t.Fatalf("error %q, want %v containing %q", err, tc.err, tc.msg)
			}
			t.Log(err)
		})
	}
	var ce *CollinearError
	ds := good()
	for i := range ds.Runs {
		x := ds.Runs[i].X[0]
		y := make([]float64, len(x))
		for k, v := range x {
			y[k] = v * v
		}
		ds.Runs[i].X = [][]float64{x, y}
	}
	_, err := Field(context.Background(), ds, nil)
	var c mat.Condition
	if !errors.As(err, &ce) || !errors.As(err, &c) || float64(c) < collinearCond {
		t.Errorf("collinear library: %v does not carry a mat.Condition", err)
	}
	// Skipping short runs, when asked, fits the rest.
	ds = good()
	r := &ds.Runs[2]
	r.T, r.X = r.T[:3], [][]float64{r.X[0][:3], r.X[1][:3]}
	if m, err := Field(context.Background(), ds, &FieldOptions{SkipShort: true, Bootstrap: -1}); err != nil || m.Runs != 5 {
		t.Errorf("SkipShort: %v", err)
	}
}

// TestOutsideEnvelope: an equilibrium of the fitted field outside the
// data's box is never called stable.
func TestOutsideEnvelope(t *testing.T) {
	// x' = -x (1 - x/1.5) has a stable equilibrium at 0 and an unstable
	// one at 1.5; runs in x in [-1.1, 1.1] only ever see the first. With
	// y' = -2y, the equilibrium (1.5, 0) is outside the box.
	sys := system{name: "two", states: []string{"x", "y"}, f: func(d, x []float64) {
		d[0] = -x[0] * (1 - x[0]/1.5)
		d[1] = -2 * x[1]
	}}
	ds := simulate(sys, [][]float64{{1, 1}, {-1, 0.5}, {0.8, -1}, {-0.6, -0.7}, {0.3, 1.2}, {-1.1, 0.2}}, 6, 0.01, 5, 0, 1)
	m, err := Field(context.Background(), ds, &FieldOptions{Bootstrap: -1})
	if err != nil {
		t.Fatal(err)
	}
	if len(m.Equilibria) < 2 {
		t.Fatalf("equilibria %+v", m.Equilibria)
	}
	for _, e := range m.Equilibria {
		if !e.InEnvelope && e.Class != ClassOutsideEnvelope {
			t.Errorf("equilibrium %v outside the box has class %q", e.Point, e.Class)
		}
	}
	if m.Equilibria[0].Class != ClassStableNode || dist(m.Equilibrium, []float64{0, 0}) > 1e-6 {
		t.Errorf("primary %v %q", m.Equilibrium, m.Equilibria[0].Class)
	}
}

// TestClassify covers the classes on hand-made spectra.
func TestClassify(t *testing.T) {
	for _, tc := range []struct {
		eig  []complex128
		want string
	}{
		{[]complex128{-1, -2}, ClassStableNode},
		{[]complex128{complex(-0.4, 1.96), complex(-0.4, -1.96)}, ClassStableFocus},
		{[]complex128{-1, 2}, ClassSaddle},
		{[]complex128{1, 2}, ClassUnstableNode},
		{[]complex128{complex(0.1, 1), complex(0.1, -1)}, ClassUnstableFocus},
		{[]complex128{complex(0, 1), complex(0, -1)}, ClassNonHyperbolic},
		{[]complex128{-1, 0}, ClassNonHyperbolic},
	} {
		if got := classify(tc.eig); got != tc.want {
			t.Errorf("%v: %q, want %q", tc.eig, got, tc.want)
		}
	}
}

// TestFieldOffset: a thermal loop logged in kelvin near 300 K with
// T' = -0.5 (T - 300) - 0.1 (T - 300)^3 + 0.2 h, h' = -h. Raw monomials of
// T are nearly collinear here, so the threshold works in centred
// coordinates and the raw equations are their exact expansion: they must
// reproduce the true field on the data (1e-4 relative to its range; clean
// data, smallest window) and the equilibrium (300, 0), a stable node.
func TestFieldOffset(t *testing.T) {
	sys := system{name: "thermal", states: []string{"T", "h"}, f: func(d, x []float64) {
		u := x[0] - 300
		d[0] = -0.5*u - 0.1*u*u*u + 0.2*x[1]
		d[1] = -x[1]
	}}
	ds := simulate(sys, [][]float64{{303, 1}, {297, 0.5}, {301, -1}, {298.5, 2}, {302, -0.5}, {299, 0}}, 10, 0.01, 5, 0, 1)
	m, err := Field(context.Background(), ds, &FieldOptions{Bootstrap: -1})
	if err != nil {
		t.Fatal(err)
	}
	if m.Basis != "centred" {
		t.Errorf("basis %q, want centred (condition %g)", m.Basis, m.Condition)
	}
	fe := NewFieldEvaluator(m)
	got, want := make([]float64, 2), make([]float64, 2)
	for _, r := range ds.Runs {
		for i := 0; i < r.Len(); i += 37 {
			x := []float64{r.X[0][i], r.X[1][i]}
			fe.EvalTo(got, x)
			sys.f(want, x)
			for j := range got {
				if !scalar.EqualWithinAbs(got[j], want[j], 1e-4*5) { // the field spans about 5 K/s
					t.Fatalf("at %v: f = %v, want %v", x, got, want)
				}
			}
		}
	}
	if dist(m.Equilibrium, []float64{300, 0}) > 1e-3 || m.Equilibria[0].Class != ClassStableNode {
		t.Errorf("equilibrium %v %q", m.Equilibrium, m.Equilibria[0].Class)
	}
}

// TestFieldOneRun: with fewer runs than folds, each run is cut into
// contiguous blocks for cross-validation and the bootstrap; one clean
// Lorenz run still gives the seven terms ([Brunton2016];
// same bound as TestFieldLorenz).
func TestFieldOneRun(t *testing.T) {
	ds := simulate(lorenz, [][]float64{{-8, 7, 27}}, 20, 0.002, 4, 0, 1)
	m, err := Field(context.Background(), ds, &FieldOptions{Degree: 2, Bootstrap: 10})
	if err != nil {
		t.Fatal(err)
	}
	if m.CVBy != "block" || m.CVGroups != 10 {
		t.Errorf("cross-validated by %q over %d groups, want block, 10", m.CVBy, m.CVGroups)
	}
	if sup, rel := compare(m, lorenz); !sup || !(rel <= 0.005) {
		t.Errorf("support %v, error %.3g", sup, rel)
	}
}

// TestFieldCancel: a cancelled context stops the fit with its error.
func TestFieldCancel(t *testing.T) {
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	ds := simulate(vanderpol, [][]float64{{1, 0}, {0, 2}, {-2, 1}, {0.5, -0.5}, {3, 0}, {-1, -2}}, 4, 0.01, 5, 0, 1)
	if _, err := Field(ctx, ds, nil); !errors.Is(err, context.Canceled) {
		t.Errorf("error %v, want context.Canceled", err)
	}
}
