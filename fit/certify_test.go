package fit

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"strings"
	"testing"
	"time"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"

	"basin.example/ingest"
)

// certSystem is a test system with an exact polynomial model.
type certSystem struct {
	name   string
	states []string
	eqs    []Equation
	f      func(dst, x []float64) // true dynamics (may differ from eqs)
	eq     []float64
	others [][]float64
}

func (s *certSystem) model(spread []float64) *Model {
	n := len(s.states)
	m := &Model{Format: ModelFormat, States: s.states, Units: make([]string, n), Equations: s.eqs,
		Equilibrium: s.eq, Spread: spread, Noise: make([]float64, n)}
	m.Equilibria = append(m.Equilibria, Equilibrium{Point: s.eq})
	for _, o := range s.others {
		m.Equilibria = append(m.Equilibria, Equilibrium{Point: o})
	}
	return m
}

// certRK4 integrates x' = f(x) with classical RK4 at step h for steps
// steps, storing every every-th state; it stops early if |x| > blow.
func certRK4(f func(dst, x []float64), x0 []float64, h float64, steps, every int, blow float64) (ts []float64, xs [][]float64, ok bool) {
	n := len(x0)
	x := append([]float64(nil), x0...)
	k1, k2, k3, k4, y := make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
	for s := 0; s <= steps; s++ {
		if s%every == 0 {
			ts = append(ts, float64(s)*h)
			xs = append(xs, append([]float64(nil), x...))
		}
		f(k1, x)
		for j := range y {
			y[j] = x[j] + h/2*k1[j]
		}
		f(k2, y)
		for j := range y {
			y[j] = x[j] + h/2*k2[j]
		}
		f(k3, y)
		for j := range y {
			y[j] = x[j] + h*k3[j]
		}
		f(k4, y)
		for j := range x {
			x[j] += h / 6 * (k1[j] + 2*k2[j] + 2*k3[j] + k4[j])
		}
		if floats.Dot(x, x) > blow*blow {
			return ts, xs, false
		}
	}
	return ts, xs, true
}

// certRuns simulates runs from random starts in box and returns them as a
// dataset: only those that converge to the equilibrium (within 0.05), or
// with keepAll every run that stays bounded. noise adds Gaussian
// measurement noise of that standard deviation.
func certRuns(s *certSystem, box [][2]float64, runs int, h float64, steps, every int, noise float64, seed uint64, keepAll bool) *ingest.Dataset {
	rng := rand.New(rand.NewPCG(seed, 0))
	n := len(s.states)
	ds := &ingest.Dataset{}
	for _, st := range s.states {
		ds.States = append(ds.States, ingest.Column{Name: st})
	}
	x0 := make([]float64, n)
	for tries := 0; len(ds.Runs) < runs && tries < 100*runs; tries++ {
		for j := range x0 {
			x0[j] = box[j][0] + rng.Float64()*(box[j][1]-box[j][0])
		}
		ts, xs, ok := certRK4(s.f, x0, h, steps, every, 50)
		if !ok {
			continue
		}
		d := 0.0
		for j := range x0 {
			d += (xs[len(xs)-1][j] - s.eq[j]) * (xs[len(xs)-1][j] - s.eq[j])
		}
		if d > 0.05*0.05 && !keepAll {
			continue
		}
		r := ingest.Run{Name: "run" + string(rune('A'+len(ds.Runs)%26)) + string(rune('0'+len(ds.Runs)/26)), T: ts, X: make([][]float64, n)}
		for j := 0; j < n; j++ {
			r.X[j] = make([]float64, len(ts))
			for i := range ts {
				r.X[j][i] = xs[i][j] + noise*rng.NormFloat64()
			}
		}
		ds.Runs = append(ds.Runs, r)
	}
	return ds
}

// Van der Pol in reverse time, mu = 1: x1' = -x2, x2' = x1 + (x1²-1)x2
// (Khalil, Nonlinear Systems, 3rd ed., §8.2; [Khalil2002]).
var vdpReverse = &certSystem{
	name:   "vdp-reverse",
	states: []string{"x1", "x2"},
	eqs: []Equation{
		{State: "x1", Exponents: [][]int{{0, 1}}, Coefficients: []float64{-1}},
		{State: "x2", Exponents: [][]int{{1, 0}, {0, 1}, {2, 1}}, Coefficients: []float64{1, -1, 1}},
	},
	f: func(dst, x []float64) {
		dst[0] = -x[1]
		dst[1] = x[0] + (x[0]*x[0]-1)*x[1]
	},
	eq: []float64{0, 0},
}

// vdpData is the Van der Pol data set of the tests: 100 runs started in
// the box around the limit cycle that converge (so they lie inside it),
// RK4 at h = 0.005 s, recorded every 0.05 s for 15 s, no noise.
func vdpData() *ingest.Dataset {
	return certRuns(vdpReverse, [][2]float64{{-2.2, 2.2}, {-3, 3}}, 100, 0.005, 3000, 10, 0, 1, false)
}

// vdpROAArea is the area inside the Van der Pol (mu = 1) limit cycle, the
// true region of attraction of the reverse-time system ([VanderPolCycle]
// and B5: 13.72222, computed there).
const vdpROAArea = 13.72222

// regionPoints draws up to want points uniformly from the data's box that
// lie inside the certificate's region.
func regionPoints(c *Certificate, lo, hi []float64, want int, seed uint64) [][]float64 {
	rng := rand.New(rand.NewPCG(seed, 3))
	n := len(lo)
	vp := c.V.Compile(n)
	z := make([]float64, n)
	var out [][]float64
	for tries := 0; len(out) < want && tries < 200*want; tries++ {
		x := make([]float64, n)
		for j := range x {
			x[j] = lo[j] + rng.Float64()*(hi[j]-lo[j])
		}
		if c.Inside(x, vp.Eval(c.Z(z, x))) {
			out = append(out, x)
		}
	}
	return out
}

// dataBox returns the bounding box of ds.
func dataBox(ds *ingest.Dataset) (lo, hi []float64) {
	n := len(ds.States)
	lo, hi = make([]float64, n), make([]float64, n)
	for j := range lo {
		lo[j], hi[j] = math.Inf(1), math.Inf(-1)
	}
	for _, r := range ds.Runs {
		for j := range r.X {
			for _, v := range r.X[j] {
				lo[j], hi[j] = math.Min(lo[j], v), math.Max(hi[j], v)
			}
		}
	}
	return lo, hi
}

// checkConverges simulates every point with the true dynamics (own RK4,
// h = 0.01 s, 40 s) and fails the test for any that does not end within
// tol of the equilibrium.
func checkConverges(t *testing.T, s *certSystem, pts [][]float64, tol float64) {
	t.Helper()
	bad := 0
	for _, x0 := range pts {
		_, xs, ok := certRK4(s.f, x0, 0.01, 4000, 4000, 100)
		d := 0.0
		end := xs[len(xs)-1]
		for j := range end {
			d += (end[j] - s.eq[j]) * (end[j] - s.eq[j])
		}
		if !ok || d > tol*tol {
			bad++
			if bad <= 3 {
				t.Errorf("%s: region point %v does not converge (ends at %v)", s.name, x0, end)
			}
		}
	}
	if bad > 0 {
		t.Errorf("%s: %d of %d region points do not converge", s.name, bad, len(pts))
	}
}

func TestCertifyVanDerPol(t *testing.T) {
	heavy(t)
	ds := vdpData()
	m := vdpReverse.model([]float64{1, 1})
	lo, hi := dataBox(ds)
	for _, tc := range []struct {
		deg      int
		minShare float64 // of the true region of attraction
	}{
		// The best quadratic from Khalil's P reaches 47.2% of the true
		// area ([VanderPolCycle]); the first-order cell bound costs a few
		// per cent of that (FINDINGS: 3-5%), so 0.46 is asked of the LP's
		// quadratic (measured 0.469).
		{2, 0.46},
		// The aim for degree 4 (measured ~0.80).
		{4, 0.60},
	} {
		if tc.deg > 2 && raceOn {
			continue
		}
		c, err := Certify(context.Background(), m, ds, &CertifyOptions{Degree: tc.deg})
		if err != nil {
			t.Fatal(err)
		}
		if !c.Found {
			t.Fatalf("degree %d: no certificate: %s", tc.deg, c.Reason)
		}
		share := c.Region.Volume / vdpROAArea
		t.Logf("degree %d: level %.4g, %.1f%% of the envelope, %.1f%% of the true ROA, limit %s, %d solves, %d rounds",
			tc.deg, c.Level, 100*c.Region.EnvelopeShare, 100*share, c.Region.Limit, c.Region.Solves, c.Region.LPRounds)
		if share < tc.minShare {
			t.Errorf("degree %d: %.3f of the true ROA, want >= %.2f", tc.deg, share, tc.minShare)
		}
		// The region lies inside the limit cycle: its area cannot exceed
		// the cycle's ([VanderPolCycle]), allowing 2% for the Monte-Carlo
		// share (20,000 points: relative error ~1%).
		if c.Region.Volume > vdpROAArea*1.02 {
			t.Errorf("degree %d: region area %.3f exceeds the ROA's %.3f", tc.deg, c.Region.Volume, vdpROAArea)
		}
		if c.Verdict != Inconclusive || c.Strength != NoClaim || !c.Empirical || c.Caveat != Caveat || c.Format != CertificateFormat {
			t.Errorf("degree %d: verdict %s strength %s empirical %v", tc.deg, c.Verdict, c.Strength, c.Empirical)
		}
		// Every point of the region converges under the true dynamics.
		pts := regionPoints(c, lo, hi, 300, uint64(tc.deg))
		if len(pts) < 100 {
			t.Fatalf("only %d region points drawn", len(pts))
		}
		checkConverges(t, vdpReverse, pts, 0.05)
	}
}

// The damped pendulum x1' = x2, x2' = -sin x1 - 0.5 x2 with saddles at
// ±pi. The model is a least-squares odd polynomial for sin on
// [-4.5, 4.5] (degree 7), whose zeros near ±pi are its other equilibria.
func pendulumSystem(t *testing.T) *certSystem {
	// Least squares for sin x ~ a1 x + a3 x³ + a5 x⁵ + a7 x⁷ on a grid,
	// solved by gonum's QR (mat.Dense.Solve on the tall design matrix).
	const n = 1801
	design, rhs := mat.NewDense(n, 4, nil), mat.NewVecDense(n, nil)
	for i := 0; i < n; i++ {
		x := 4.5 * float64(i-900) / 900
		design.SetRow(i, []float64{x, x * x * x, math.Pow(x, 5), math.Pow(x, 7)})
		rhs.SetVec(i, math.Sin(x))
	}
	var sol mat.VecDense
	if err := sol.SolveVec(design, rhs); err != nil {
		t.Fatalf("least squares for sin: %v", err)
	}
	k := sol.RawVector().Data
	poly7 := func(x float64) float64 { return k[0]*x + k[1]*x*x*x + k[2]*math.Pow(x, 5) + k[3]*math.Pow(x, 7) }
	// Newton for the zeros near ±pi.
	root := math.Pi
	for it := 0; it < 50; it++ {
		d := k[0] + 3*k[1]*root*root + 5*k[2]*math.Pow(root, 4) + 7*k[3]*math.Pow(root, 6)
		root -= poly7(root) / d
	}
	if !scalar.EqualWithinAbs(root, math.Pi, 0.1) {
		t.Fatalf("fitted sin has its zero at %g, not near pi", root)
	}
	return &certSystem{
		name:   "pendulum",
		states: []string{"theta", "omega"},
		eqs: []Equation{
			{State: "theta", Exponents: [][]int{{0, 1}}, Coefficients: []float64{1}},
			{State: "omega", Exponents: [][]int{{1, 0}, {3, 0}, {5, 0}, {7, 0}, {0, 1}},
				Coefficients: []float64{-k[0], -k[1], -k[2], -k[3], -0.5}},
		},
		f:      func(dst, x []float64) { dst[0] = x[1]; dst[1] = -math.Sin(x[0]) - 0.5*x[1] },
		eq:     []float64{0, 0},
		others: [][]float64{{root, 0}, {-root, 0}},
	}
}

// The double-well oscillator x1' = x2, x2' = x1 - x1³ - 0.5 x2: wells at
// (±1, 0), a saddle at the origin; certified around the right well.
var doubleWell = &certSystem{
	name:   "double-well",
	states: []string{"p", "v"},
	eqs: []Equation{
		{State: "p", Exponents: [][]int{{0, 1}}, Coefficients: []float64{1}},
		{State: "v", Exponents: [][]int{{1, 0}, {3, 0}, {0, 1}}, Coefficients: []float64{1, -1, -0.5}},
	},
	f:      func(dst, x []float64) { dst[0] = x[1]; dst[1] = x[0] - x[0]*x[0]*x[0] - 0.5*x[1] },
	eq:     []float64{1, 0},
	others: [][]float64{{0, 0}, {-1, 0}},
}

func TestCertifySaddles(t *testing.T) {
	heavy(t)
	pend := pendulumSystem(t)
	for _, tc := range []struct {
		sys  *certSystem
		box  [][2]float64
		deg  int
		skip bool
		// area of the region certified by the earlier occupancy-grid
		// search on the same data (measured at commit 61d47c4, a grid of
		// 447 x 448 points over the data's box): the region may not
		// shrink by more than 10%.
		before float64
	}{
		{pend, [][2]float64{{-4, 4}, {-2.5, 2.5}}, 2, false, 9.4236},
		{pend, [][2]float64{{-4, 4}, {-2.5, 2.5}}, 4, testing.Short() || raceOn, 9.4236},
		{doubleWell, [][2]float64{{-2, 2}, {-1.5, 1.5}}, 2, false, 0.4755},
		{doubleWell, [][2]float64{{-2, 2}, {-1.5, 1.5}}, 4, testing.Short() || raceOn, 1.3894},
	} {
		if tc.skip {
			continue
		}
		t.Run(tc.sys.name+"-"+string(rune('0'+tc.deg)), func(t *testing.T) {
			// Runs from the whole box, kept whatever equilibrium they reach,
			// so the saddles lie inside the data's envelope.
			ds := certRuns(tc.sys, tc.box, 60, 0.01, 2000, 4, 0, 5, true)
			m := tc.sys.model([]float64{1, 1})
			c, err := Certify(context.Background(), m, ds, &CertifyOptions{Degree: tc.deg})
			if err != nil {
				t.Fatal(err)
			}
			if !c.Found {
				t.Fatalf("no certificate: %s", c.Reason)
			}
			t.Logf("level %.4g, %.1f%% of the envelope, limit %s at %v", c.Level, 100*c.Region.EnvelopeShare, c.Region.Limit, c.Region.LimitPoint)
			vp := c.V.Compile(2)
			z := make([]float64, 2)
			for _, o := range tc.sys.others {
				// The model's other equilibria and the true saddles (±pi for
				// the pendulum, whose model zeros are close to them).
				for _, x := range [][]float64{o, {math.Copysign(math.Pi, o[0]), 0}} {
					if tc.sys.name != "pendulum" && x[0] != o[0] {
						continue
					}
					if c.Inside(x, vp.Eval(c.Z(z, x))) {
						t.Errorf("the region holds the equilibrium %v", x)
					}
				}
			}
			lo, hi := dataBox(ds)
			in, draws := 0, 447*448
			x := make([]float64, 2)
			for s := 0; s < draws; s++ {
				x[0] = lo[0] + float64(s%447)/447*(hi[0]-lo[0])
				x[1] = lo[1] + float64(s/447)/448*(hi[1]-lo[1])
				if c.Inside(x, vp.Eval(c.Z(z, x))) {
					in++
				}
			}
			if area := float64(in) / float64(draws) * (hi[0] - lo[0]) * (hi[1] - lo[1]); area < 0.9*tc.before {
				t.Errorf("region area %.4f, below 90%% of the earlier %.4f", area, tc.before)
			}
			pts := regionPoints(c, lo, hi, 300, 9)
			if len(pts) < 50 {
				t.Fatalf("only %d region points", len(pts))
			}
			checkConverges(t, tc.sys, pts, 0.05)
		})
	}
}

func TestCertifyLimitCycle(t *testing.T) {
	// Van der Pol forward in time (mu = 1): the origin is an unstable
	// focus inside a stable limit cycle, so no certificate may exist for
	// it ([Khalil2002] §2.7; the linearisation has
	// eigenvalues (1 ± i√3)/2).
	sys := &certSystem{
		name:   "vdp-forward",
		states: []string{"x1", "x2"},
		eqs: []Equation{
			{State: "x1", Exponents: [][]int{{0, 1}}, Coefficients: []float64{1}},
			{State: "x2", Exponents: [][]int{{1, 0}, {0, 1}, {2, 1}}, Coefficients: []float64{-1, 1, -1}},
		},
		f:  func(dst, x []float64) { dst[0] = x[1]; dst[1] = -x[0] + (1-x[0]*x[0])*x[1] },
		eq: []float64{0, 0},
	}
	ds := certRuns(sys, [][2]float64{{-1, 1}, {-1, 1}}, 20, 0.01, 2000, 5, 0, 3, true)
	for _, deg := range []int{2, 4} {
		c, err := Certify(context.Background(), sys.model([]float64{1, 1}), ds, &CertifyOptions{Degree: deg})
		if err != nil {
			t.Fatal(err)
		}
		if c.Found || !c.Contradicted || c.Verdict != Inconclusive || c.Reason == "" {
			t.Errorf("degree %d: found %v contradicted %v verdict %s reason %q", deg, c.Found, c.Contradicted, c.Verdict, c.Reason)
		}
		t.Logf("%s", c.Reason)
	}
}

func TestCertifyBadInput(t *testing.T) {
	ds := certRuns(vdpReverse, [][2]float64{{-1, 1}, {-1, 1}}, 5, 0.01, 300, 5, 0, 4, false)
	m := vdpReverse.model([]float64{1, 1})
	ctx := context.Background()
	if _, err := Certify(ctx, m, ds, &CertifyOptions{Degree: 3}); !errors.Is(err, ErrOptions) {
		t.Errorf("odd degree: err = %v, want ErrOptions", err)
	}
	other := *ds
	other.States = []ingest.Column{{Name: "x1"}, {Name: "y"}}
	if _, err := Certify(ctx, m, &other, nil); !errors.Is(err, ErrMismatch) {
		t.Errorf("state names differ: err = %v, want ErrMismatch", err)
	}
	if _, err := Certify(ctx, m, &ingest.Dataset{States: ds.States}, nil); !errors.Is(err, ErrTooFewSamples) {
		t.Errorf("no samples: err = %v, want ErrTooFewSamples", err)
	}
	// Equilibrium outside the envelope: a result, not an error.
	far := vdpReverse.model([]float64{1, 1})
	far.Equilibrium = []float64{0, 10} // the Jacobian there is stable, so only the envelope stops it
	far.Equilibria[0].Point = far.Equilibrium
	c, err := Certify(ctx, far, ds, nil)
	if err != nil || c.Found || !strings.Contains(c.Reason, "outside the trust region") {
		t.Errorf("far equilibrium: err %v found %v reason %q", err, c != nil && c.Found, c.Reason)
	}
	// Degree too high for the samples.
	tiny := *ds
	tiny.Runs = []ingest.Run{ds.Runs[0]}
	tiny.Runs[0].T = tiny.Runs[0].T[:20]
	tiny.Runs[0].X = [][]float64{tiny.Runs[0].X[0][:20], tiny.Runs[0].X[1][:20]}
	c, err = Certify(ctx, m, &tiny, &CertifyOptions{Degree: 8})
	if err != nil || c.Found || !strings.Contains(c.Reason, "too few") {
		t.Errorf("degree 8 on 20 samples: err %v reason %q", err, c.Reason)
	}
	// A centre model (eigenvalues ±i) on runs that settle: no strict
	// start, not contradicted; the non-rise path finds V = |z|², the
	// centre's conserved energy (any mechanics text; exact), which does
	// not rise along the settling runs either. Marked NonRise, no margin.
	centre := &certSystem{states: []string{"x1", "x2"}, eq: []float64{0, 0}, eqs: []Equation{
		{State: "x1", Exponents: [][]int{{0, 1}}, Coefficients: []float64{1}},
		{State: "x2", Exponents: [][]int{{1, 0}}, Coefficients: []float64{-1}},
	}}
	c, err = Certify(ctx, centre.model([]float64{1, 1}), ds, nil)
	if err != nil || c.Contradicted || (c.Found && (!c.NonRise || c.Margin > 0)) || c.Verdict != Inconclusive {
		t.Errorf("centre: err %v found %v non-rise %v margin %g contradicted %v verdict %s", err, c.Found, c.NonRise, c.Margin, c.Contradicted, c.Verdict)
	}
}

func TestCertifyVanDerPolFitted(t *testing.T) {
	if testing.Short() || raceOn {
		t.Skip("fits the field; slow")
	}
	// The same runs with 0.01 of seeded measurement noise, the field
	// fitted by Field: the shares are reported (the closing note's table),
	// and the region must still converge under the true dynamics.
	ds := certRuns(vdpReverse, [][2]float64{{-2.2, 2.2}, {-3, 3}}, 100, 0.005, 3000, 10, 0.01, 1, false)
	m, err := Field(context.Background(), ds, &FieldOptions{Bootstrap: -1})
	if err != nil {
		t.Fatal(err)
	}
	lo, hi := dataBox(ds)
	for _, deg := range []int{2, 4, 6} {
		if deg == 6 && os.Getenv("BASIN_TABLES") == "" {
			continue // reported in the closing note's table only (about 6 s)
		}
		c, err := Certify(context.Background(), m, ds, &CertifyOptions{Degree: deg})
		if err != nil {
			t.Fatal(err)
		}
		if !c.Found {
			t.Fatalf("degree %d: %s", deg, c.Reason)
		}
		t.Logf("fitted field, degree %d: %.1f%% of the true ROA, %.1f%% of the envelope, limit %s; %s",
			deg, 100*c.Region.Volume/vdpROAArea, 100*c.Region.EnvelopeShare, c.Region.Limit, c.Reason)
		// Degree 4 must cover 80% of the true region of attraction (the
		// inside of the cycle, area vdpROAArea): the share an LP with the
		// exact field reached was 88% (a prototype, measured).
		if roa := c.Region.Volume / vdpROAArea; deg == 4 && roa < 0.8 {
			t.Errorf("degree 4 covers %.1f%% of the true region of attraction, want >= 80%%", 100*roa)
		}
		checkConverges(t, vdpReverse, regionPoints(c, lo, hi, 300, 5), 0.05)
	}
}

// chainSystem is a stable chain of n states: x_i' = -x_i + 0.5 x_{i+1}
// - 0.2 x_i³ (last: -x_n - 0.2 x_n³).
func chainSystem(n int) *certSystem {
	s := &certSystem{name: "chain", eq: make([]float64, n)}
	for i := 0; i < n; i++ {
		s.states = append(s.states, fmt.Sprintf("s%d", i))
		e1, e3 := make([]int, n), make([]int, n)
		e1[i], e3[i] = 1, 3
		eq := Equation{State: s.states[i], Exponents: [][]int{e1, e3}, Coefficients: []float64{-1, -0.2}}
		if i+1 < n {
			en := make([]int, n)
			en[i+1] = 1
			eq.Exponents = append(eq.Exponents, en)
			eq.Coefficients = append(eq.Coefficients, 0.5)
		}
		s.eqs = append(s.eqs, eq)
	}
	s.f = func(dst, x []float64) {
		for i := range x {
			dst[i] = -x[i] - 0.2*x[i]*x[i]*x[i]
			if i+1 < len(x) {
				dst[i] += 0.5 * x[i+1]
			}
		}
	}
	return s
}

func TestCertifyHigherDimensions(t *testing.T) {
	heavy(t)
	// Stable chains of 3 and 6 states: a certificate is found, the region
	// converges under the true dynamics, and it stays fast.
	for _, n := range []int{3, 6} {
		sys := chainSystem(n)
		box := make([][2]float64, n)
		for j := range box {
			box[j] = [2]float64{-1.5, 1.5}
		}
		ds := certRuns(sys, box, 40, 0.01, 800, 4, 0, 6, false)
		spread := make([]float64, n)
		for j := range spread {
			spread[j] = 0.5
		}
		for _, deg := range []int{2, 4} {
			if n == 6 && deg == 4 || raceOn && (n == 6 || deg == 4) {
				continue // 210 LP unknowns: ~20 s
			}
			t0 := time.Now()
			c, err := Certify(context.Background(), sys.model(spread), ds, &CertifyOptions{Degree: deg})
			if err != nil {
				t.Fatal(err)
			}
			t.Logf("n=%d deg %d: found %v, %.2f%% of the envelope, limit %s, %d solves, %d active rows, %v",
				n, deg, c.Found, 100*c.Region.EnvelopeShare, c.Region.Limit, c.Region.Solves, c.Region.LPRows, time.Since(t0))
			if !c.Found {
				t.Fatalf("n=%d deg %d: %s", n, deg, c.Reason)
			}
			lo, hi := dataBox(ds)
			pts := regionPoints(c, lo, hi, 100, 1)
			if n == 3 && len(pts) < 20 {
				t.Errorf("n=3 deg %d: only %d region points drawn", deg, len(pts))
			}
			checkConverges(t, sys, pts, 0.05)
		}
	}
}

// TestPopSD compares the two-pass standard deviation with gonum's
// stat.PopMeanVariance [gonum] on values with a large offset, where
// sq/n - mean² loses every digit [ChanGolubLeVeque1983], split across
// slices as runs are.
func TestPopSD(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 0))
	for _, tc := range []struct {
		name   string
		offset float64
		tol    float64 // relative, on the standard deviation
	}{
		{"centred", 0, 1e-12},
		// 1e9 offset, unit spread: the deviations are exact to ulp(1e9)
		// ~1e-7 of each stored value, the same values gonum sees; the
		// corrected form removes the mean's rounding to first order, so
		// both agree far below 1e-12 relative.
		{"offset 1e9", 1e9, 1e-12},
	} {
		t.Run(tc.name, func(t *testing.T) {
			xs := make([]float64, 5000)
			for i := range xs {
				xs[i] = tc.offset + rng.NormFloat64()
			}
			_, v := stat.PopMeanVariance(xs, nil)
			got := popSD(xs[:1234], xs[1234:4000], nil, xs[4000:])
			if want := math.Sqrt(v); !(want > 0.9) || !scalar.EqualWithinRel(got, want, tc.tol) {
				t.Errorf("sd = %.15g, want %.15g", got, want)
			}
		})
	}
	if got := popSD(); got != 0 {
		t.Errorf("popSD() = %g, want 0", got)
	}
}

// TestCertifyTwoWellsNoisy: the double well x” = x - x³ - 0.6 x' logged
// from starts over both wells with 1% noise per state (of its range), the
// model fitted from the logs and certified around the right well at V
// degree 2. Most samples rest near a well, so the velocity's spread is
// small next to its noise while the position's is wide: in units of the
// spreads the velocity is four times noisier. A noise ball as wide in z
// as the velocity's noise reached half-way to the saddle along the
// position, and no quadratic V held there (no V was found). The region
// must now exist, hold no point past the saddle, and lie where the
// energy E = v²/2 - x²/2 + x⁴/4 is below its saddle value 0: that piece
// of {E < 0} is positively invariant (dE/dt = -0.6 v² <= 0) with the
// well its only equilibrium, so every start there settles in the well
// (LaSalle's invariance principle, [Khalil2002] §4.2, from memory); its
// points are also simulated.
func TestCertifyTwoWellsNoisy(t *testing.T) {
	heavy(t)
	sys := &certSystem{
		name: "two-wells", states: []string{"pos", "vel"},
		f:  func(dst, x []float64) { dst[0] = x[1]; dst[1] = x[0] - x[0]*x[0]*x[0] - 0.6*x[1] },
		eq: []float64{1, 0},
	}
	ds := certRuns(sys, [][2]float64{{-1.8, 1.8}, {-1.5, 1.5}}, 40, 0.01, 1500, 1, 0, 7, true)
	rng := rand.New(rand.NewPCG(7, 1))
	lo, hi := dataBox(ds)
	for _, r := range ds.Runs {
		for j := range r.X {
			for i := range r.X[j] {
				r.X[j][i] += 0.01 * (hi[j] - lo[j]) * rng.NormFloat64()
			}
		}
	}
	m := mustFit(t, ds, nil)
	k, d := m.Nearest([]float64{1, 0})
	if k < 0 || d > 0.1 {
		t.Fatalf("no fitted equilibrium near the right well (nearest %d at %.3g spreads)", k, d)
	}
	m = m.AtEquilibrium(k)
	c, err := Certify(context.Background(), m, ds, &CertifyOptions{Degree: 2})
	if err != nil {
		t.Fatal(err)
	}
	if !c.Found {
		t.Fatalf("no certificate: %s", c.Reason)
	}
	t.Logf("level %.4g, %.1f%% of the trust region, box %v, noise radius %.3g", c.Level, 100*c.Region.EnvelopeShare, c.Box, c.NoiseRadius)
	if c.Box[0][0] <= 0 {
		t.Errorf("region box reaches pos = %.4g, at or past the saddle at 0", c.Box[0][0])
	}
	pts := regionPoints(c, lo, hi, 300, 9)
	if len(pts) < 50 {
		t.Fatalf("only %d region points", len(pts))
	}
	for _, x := range pts {
		if e := x[1]*x[1]/2 - x[0]*x[0]/2 + x[0]*x[0]*x[0]*x[0]/4; !(e < 0) || !(x[0] > 0) {
			t.Errorf("region point %v outside the well's piece of {E < 0} (E = %.4g)", x, e)
		}
	}
	checkConverges(t, sys, pts, 0.05)
}

// TestBalanceNoise checks the certificate's scales against their
// definition (exact arithmetic): noise within a factor 2 across states
// (in spreads) keeps the spreads; beyond it each scale is multiplied by
// its noise-to-spread ratio over their geometric mean, capped at a
// factor 2 either way, so the product of the scales is kept when no cap
// bites, and the noise in z is then the same in every state.
func TestBalanceNoise(t *testing.T) {
	for _, tc := range []struct {
		name         string
		scale, noise []float64
		want         []float64
	}{
		{"even", []float64{1, 2}, []float64{0.01, 0.03}, []float64{1, 2}},
		{"three times noisier", []float64{1.45, 0.285}, []float64{0.027 * 1.45, 0.081 * 0.285},
			[]float64{1.45 / math.Sqrt(3), 0.285 * math.Sqrt(3)}},
		{"four times noisier, capped", []float64{1.45, 0.285}, []float64{0.027 * 1.45, 0.109 * 0.285},
			[]float64{1.45 / 2, 0.285 * 2}},
		{"capped", []float64{1, 1, 1}, []float64{1e-9, 0.01, 0.01}, []float64{0.5, 2, 2}},
		{"zero noise", []float64{1, 1}, []float64{0, 0.01}, []float64{1, 1}},
		{"one state", []float64{3}, []float64{0.1}, []float64{3}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			got := append([]float64(nil), tc.scale...)
			balanceNoise(got, tc.noise)
			if !floats.EqualApprox(got, tc.want, 1e-12) {
				t.Errorf("scales %v, want %v", got, tc.want)
			}
		})
	}
}

// TestCertifyBoundFallback: the double well of TestCertifyTwoWellsNoisy
// at 0.3% noise (32 runs, seed 3), certified at V degree 4. The best V of
// the growth rounds has a level set whose box reaches where V is not
// positive, and its bound finds no level at all; a V an earlier round
// found bounds. The region must exist, hold neither the saddle nor the
// other well, and every point of it must settle in the right well under
// the true dynamics (simulated).
func TestCertifyBoundFallback(t *testing.T) {
	heavy(t)
	sys := &certSystem{
		name: "two-wells", states: []string{"pos", "vel"},
		f:  func(dst, x []float64) { dst[0] = x[1]; dst[1] = x[0] - x[0]*x[0]*x[0] - 0.6*x[1] },
		eq: []float64{1, 0},
	}
	ds := certRuns(sys, [][2]float64{{-1.8, 1.8}, {-1.5, 1.5}}, 32, 0.01, 1500, 1, 0, 3, true)
	rng := rand.New(rand.NewPCG(3, 1))
	lo, hi := dataBox(ds)
	for _, r := range ds.Runs {
		for j := range r.X {
			for i := range r.X[j] {
				r.X[j][i] += 0.003 * (hi[j] - lo[j]) * rng.NormFloat64()
			}
		}
	}
	m := mustFit(t, ds, nil)
	k, d := m.Nearest([]float64{1, 0})
	if k < 0 || d > 0.1 {
		t.Fatalf("no fitted equilibrium near the right well (nearest %d at %.3g spreads)", k, d)
	}
	m = m.AtEquilibrium(k)
	c, err := Certify(context.Background(), m, ds, &CertifyOptions{Degree: 4})
	if err != nil {
		t.Fatal(err)
	}
	if !c.Found {
		t.Fatalf("no certificate: %s", c.Reason)
	}
	t.Logf("level %.4g, %.1f%% of the trust region, box %v", c.Level, 100*c.Region.EnvelopeShare, c.Box)
	vp := c.V.Compile(2)
	z := make([]float64, 2)
	for _, x := range [][]float64{{0, 0}, {-1, 0}} {
		if c.Inside(x, vp.Eval(c.Z(z, x))) {
			t.Errorf("the region holds the equilibrium %v", x)
		}
	}
	pts := regionPoints(c, lo, hi, 300, 9)
	if len(pts) < 50 {
		t.Fatalf("only %d region points", len(pts))
	}
	checkConverges(t, sys, pts, 0.05)
}
