package fit

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"
)

func centred(m int) []float64 {
	z := make([]float64, 2*m+1)
	for i := range z {
		z[i] = float64(i - m)
	}
	return z
}

func scaled(num []float64, den float64) []float64 {
	out := make([]float64, len(num))
	for i, v := range num {
		out[i] = v / den
	}
	return out
}

// TestSavitzkyGolayTables checks the weights against the published tables
// ([SavitzkyGolay1964]): Savitzky & Golay, "Smoothing and differentiation
// of data by simplified least squares procedures", Anal. Chem. 36(8),
// 1964, with the corrections of Steinier, Termonia & Deltour, Anal. Chem.
// 44, 1972; the quartic 7-point set was recomputed by exact least squares
// (docs/references.md). Exact rationals, so 1e-12.
func TestSavitzkyGolayTables(t *testing.T) {
	for _, tc := range []struct {
		name          string
		m, deg, deriv int
		want          []float64
	}{
		{"5-pt quadratic smoothing", 2, 2, 0, scaled([]float64{-3, 12, 17, 12, -3}, 35)},
		{"5-pt cubic smoothing", 2, 3, 0, scaled([]float64{-3, 12, 17, 12, -3}, 35)},
		{"7-pt quadratic smoothing", 3, 2, 0, scaled([]float64{-2, 3, 6, 7, 6, 3, -2}, 21)},
		{"9-pt quadratic smoothing", 4, 2, 0, scaled([]float64{-21, 14, 39, 54, 59, 54, 39, 14, -21}, 231)},
		{"11-pt quadratic smoothing", 5, 2, 0, scaled([]float64{-36, 9, 44, 69, 84, 89, 84, 69, 44, 9, -36}, 429)},
		{"7-pt quartic smoothing", 3, 4, 0, scaled([]float64{5, -30, 75, 131, 75, -30, 5}, 231)},
		{"5-pt linear first derivative", 2, 1, 1, scaled([]float64{-2, -1, 0, 1, 2}, 10)},
		{"5-pt quadratic first derivative", 2, 2, 1, scaled([]float64{-2, -1, 0, 1, 2}, 10)},
		{"7-pt quadratic first derivative", 3, 2, 1, scaled([]float64{-3, -2, -1, 0, 1, 2, 3}, 28)},
		{"5-pt cubic first derivative", 2, 3, 1, scaled([]float64{1, -8, 0, 8, -1}, 12)},
		{"7-pt cubic first derivative", 3, 3, 1, scaled([]float64{22, -67, -58, 0, 58, 67, -22}, 252)},
		{"9-pt cubic first derivative", 4, 3, 1, scaled([]float64{86, -142, -193, -126, 0, 126, 193, 142, -86}, 1188)},
		{"5-pt quadratic second derivative", 2, 2, 2, scaled([]float64{2, -1, -2, -1, 2}, 7)},
		{"7-pt cubic second derivative", 3, 3, 2, scaled([]float64{5, 0, -3, -4, -3, 0, 5}, 42)},
	} {
		t.Run(tc.name, func(t *testing.T) {
			z := centred(tc.m)
			got := SavitzkyGolayTo(make([]float64, len(z)), z, 0, tc.deg, tc.deriv)
			for i := range tc.want {
				if !scalar.EqualWithinAbs(got[i], tc.want[i], 1e-12) {
					t.Fatalf("weights %v, want %v", got, tc.want)
				}
			}
		})
	}
	// Worked numbers ([SavitzkyGolay1964]): derivative of exp at 0, h = 0.1.
	for _, tc := range []struct {
		m, deg int
		want   float64
	}{{3, 3, 0.99997914}, {2, 2, 1.00567751}} {
		z := centred(tc.m)
		nodes := scaled(z, 10)
		w := SavitzkyGolayTo(make([]float64, len(z)), nodes, 0, tc.deg, 1)
		s := 0.0
		for i, v := range nodes {
			s += w[i] * math.Exp(v)
		}
		if !scalar.EqualWithinAbs(s, tc.want, 1e-8) { // the reference has 8 decimals
			t.Errorf("%d-pt degree %d: %.10f, want %.8f", 2*tc.m+1, tc.deg, s, tc.want)
		}
	}
	// On z^4 at the centre the 5-point filter gives -72/35 ([SavitzkyGolay1964]).
	w := SavitzkyGolayTo(make([]float64, 5), centred(2), 0, 3, 0)
	s := 0.0
	for i, z := range centred(2) {
		s += w[i] * z * z * z * z
	}
	if !scalar.EqualWithinAbs(s, (-72.0 / 35), 1e-12) {
		t.Errorf("z^4: %g, want %g", s, -72.0/35)
	}
	if SavitzkyGolayTo(make([]float64, 3), []float64{0, 1, 2}, 1, 3, 1) != nil {
		t.Error("3 nodes carried a cubic")
	}
}

// TestFornberg checks the weights of [Fornberg1988], "Generation of finite
// difference formulas on arbitrarily spaced grids", Math. Comp. 51(184),
// 1988, Table 1, and the non-uniform and worked cases of [Fornberg1988]
// (exact rationals: 1e-12; the worked sin values are given to 10 decimals:
// 1e-10).
func TestFornberg(t *testing.T) {
	for _, tc := range []struct {
		name  string
		nodes []float64
		x0    float64
		deriv int
		want  []float64
	}{
		{"centred order 2", []float64{-1, 0, 1}, 0, 1, []float64{-0.5, 0, 0.5}},
		{"centred order 4", []float64{-2, -1, 0, 1, 2}, 0, 1, []float64{1.0 / 12, -2.0 / 3, 0, 2.0 / 3, -1.0 / 12}},
		{"centred order 6", centred(3), 0, 1, []float64{-1.0 / 60, 3.0 / 20, -3.0 / 4, 0, 3.0 / 4, -3.0 / 20, 1.0 / 60}},
		{"centred order 8", centred(4), 0, 1, []float64{1.0 / 280, -4.0 / 105, 1.0 / 5, -4.0 / 5, 0, 4.0 / 5, -1.0 / 5, 4.0 / 105, -1.0 / 280}},
		{"second order 2", []float64{-1, 0, 1}, 0, 2, []float64{1, -2, 1}},
		{"second order 4", centred(2), 0, 2, []float64{-1.0 / 12, 4.0 / 3, -5.0 / 2, 4.0 / 3, -1.0 / 12}},
		{"second order 6", centred(3), 0, 2, []float64{1.0 / 90, -3.0 / 20, 3.0 / 2, -49.0 / 18, 3.0 / 2, -3.0 / 20, 1.0 / 90}},
		{"one-sided 2", []float64{0, 1}, 0, 1, []float64{-1, 1}},
		{"one-sided 3", []float64{0, 1, 2}, 0, 1, []float64{-1.5, 2, -0.5}},
		{"one-sided 5", []float64{0, 1, 2, 3, 4}, 0, 1, []float64{-25.0 / 12, 4, -3, 4.0 / 3, -1.0 / 4}},
		{"non-uniform {-1,0,2}", []float64{-1, 0, 2}, 0, 1, []float64{-2.0 / 3, 1.0 / 2, 1.0 / 6}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			c := make([][]float64, tc.deriv+1)
			for k := range c {
				c[k] = make([]float64, len(tc.nodes))
			}
			FornbergTo(c, tc.x0, tc.nodes)
			for i, w := range tc.want {
				if !scalar.EqualWithinAbs(c[tc.deriv][i], w, 1e-12) {
					t.Fatalf("weights %v, want %v", c[tc.deriv], tc.want)
				}
			}
		})
	}
	apply := func(nodes []float64, deriv int) float64 {
		c := make([][]float64, deriv+1)
		for k := range c {
			c[k] = make([]float64, len(nodes))
		}
		FornbergTo(c, 1, nodes)
		s := 0.0
		for i, x := range nodes {
			s += c[deriv][i] * math.Sin(x)
		}
		return s
	}
	for _, tc := range []struct {
		nodes []float64
		deriv int
		want  float64
	}{
		{[]float64{0.9, 1, 1.1}, 1, 0.5394022522},
		{[]float64{0.8, 0.9, 1, 1.1, 1.2}, 1, 0.5403005070},
		{[]float64{0.9, 1, 1.1}, 2, -0.8407699927},
	} {
		if got := apply(tc.nodes, tc.deriv); !scalar.EqualWithinAbs(got, tc.want, 1e-10) {
			t.Errorf("sin at 1 on %v, derivative %d: %.10f, want %.10f", tc.nodes, tc.deriv, got, tc.want)
		}
	}
}

// TestDerivativeRuns checks the run-level derivatives on an uneven grid:
// both methods are exact on a cubic (the fourth-order stencil and the
// cubic fit reproduce cubics), to round-off.
func TestDerivativeRuns(t *testing.T) {
	n := 200
	tm := make([]float64, n)
	x := make([]float64, n)
	for i := range tm {
		tm[i] = 0.01*float64(i) + 0.003*math.Sin(float64(i)) // jittered clock
		x[i] = 1 + 2*tm[i] - tm[i]*tm[i] + 0.5*tm[i]*tm[i]*tm[i]
	}
	dw := newDerivWork()
	dx := make([]float64, n)
	xs := make([]float64, n)
	check := func(name string, dx []float64) {
		for i, v := range dx {
			want := 2 - 2*tm[i] + 1.5*tm[i]*tm[i]
			if !scalar.EqualWithinAbs(v, want, 1e-8) {
				t.Fatalf("%s: sample %d: %g, want %g", name, i, v, want)
			}
		}
	}
	dw.fornbergRun(dx, tm, x)
	check("fornberg", dx)
	dw.sgRuns([][]float64{xs}, [][]float64{dx}, tm, [][]float64{x}, []int{6})
	check("savitzky-golay", dx)
	for i := range xs {
		if !scalar.EqualWithinAbs(xs[i], x[i], 1e-10) {
			t.Fatalf("smoothing changed a cubic at %d", i)
		}
	}
}

// TestSGPairTables checks the value and slope weights that sgRuns
// computes together from one factorisation against the cubic tables of
// [SavitzkyGolay1964], "Smoothing and differentiation of data by simplified
// least squares procedures", Anal. Chem. 36(8), 1964 (Tables I and III,
// with the corrections of Steinier, Termonia & Deltour, 1972): exact
// rationals, so 1e-12.
func TestSGPairTables(t *testing.T) {
	for _, tc := range []struct {
		m      int
		w0, w1 []float64
	}{
		{2, scaled([]float64{-3, 12, 17, 12, -3}, 35), scaled([]float64{1, -8, 0, 8, -1}, 12)},
		{3, scaled([]float64{-2, 3, 6, 7, 6, 3, -2}, 21), scaled([]float64{22, -67, -58, 0, 58, 67, -22}, 252)},
		{4, scaled([]float64{-21, 14, 39, 54, 59, 54, 39, 14, -21}, 231),
			scaled([]float64{86, -142, -193, -126, 0, 126, 193, 142, -86}, 1188)},
	} {
		z := centred(tc.m)
		w0, w1 := make([]float64, len(z)), make([]float64, len(z))
		if !newSGWork(3).pair(w0, w1, z, 0) {
			t.Fatalf("%d points: no weights", len(z))
		}
		if !floats.EqualApprox(w0, tc.w0, 1e-12) || !floats.EqualApprox(w1, tc.w1, 1e-12) {
			t.Errorf("%d points: value weights %v, want %v; slope weights %v, want %v", len(z), w0, tc.w0, w1, tc.w1)
		}
	}
}

// TestSGRunsLeastSquares checks sgRuns on a jittered clock and three
// states of two window widths against an independent least-squares fit:
// at every sample, gonum's QR solve (mat.Dense.Solve) of the cubic
// Vandermonde system in the offsets t - t_i over the same window gives
// the value (constant term) and the slope (linear term). The windows are
// well conditioned (condition of the scaled Vandermonde below 10), so the
// two agree to 1e-9 relative to the data's size.
func TestSGRunsLeastSquares(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 0))
	n := 300
	tm := make([]float64, n)
	for i := range tm {
		tm[i] = 0.005*float64(i) + 20e-6*rng.NormFloat64() // 200 Hz, 20 µs jitter
	}
	half := []int{6, 3, 6}
	x := make([][]float64, len(half))
	xs := make([][]float64, len(half))
	dx := make([][]float64, len(half))
	for j := range x {
		x[j], xs[j], dx[j] = make([]float64, n), make([]float64, n), make([]float64, n)
		for i := range x[j] {
			x[j][i] = math.Sin(float64(j+1)*tm[i]) + 0.01*rng.NormFloat64()
		}
	}
	newDerivWork().sgRuns(xs, dx, tm, x, half)
	for j, m := range half {
		w := 2*m + 1
		for i := 0; i < n; i++ {
			a := stencil(i, n, w)
			v := mat.NewDense(w, 4, nil)
			y := mat.NewVecDense(w, nil)
			for k := 0; k < w; k++ {
				s := tm[a+k] - tm[i]
				v.Set(k, 0, 1)
				v.Set(k, 1, s)
				v.Set(k, 2, s*s)
				v.Set(k, 3, s*s*s)
				y.SetVec(k, x[j][a+k])
			}
			var c mat.VecDense
			if err := c.SolveVec(v, y); err != nil {
				t.Fatal(err)
			}
			if !scalar.EqualWithinAbsOrRel(xs[j][i], c.AtVec(0), 1e-9, 1e-9) ||
				!scalar.EqualWithinAbsOrRel(dx[j][i], c.AtVec(1), 1e-9*float64(j+1), 1e-9) {
				t.Fatalf("state %d sample %d: value %.12g slope %.12g, least squares %.12g %.12g",
					j, i, xs[j][i], dx[j][i], c.AtVec(0), c.AtVec(1))
			}
		}
	}
}

// TestSGBlocksTables forces the prefix-sum path (sgBlocks) onto a uniform
// grid and reads its value and slope weights off impulse responses: a
// unit sample at node j gives, at centre i, the weight of offset j - i.
// They must be the cubic tables of [SavitzkyGolay1964], "Smoothing and
// differentiation of data by simplified least squares procedures", Anal.
// Chem. 36(8), 1964 (Tables I and III, with the corrections of Steinier,
// Termonia & Deltour, 1972). The sums are differences of prefix sums over
// a block (at most 1.25 windows of nodes, |u| <= 1) and the normal
// matrices have condition below 300 (gonum's mat.Cond on the worst
// window of a block, measured for 5..121 points), so the weights agree
// with the exact rationals to about 300 * 2.2e-16 * 121 ≈ 1e-11: 1e-10.
func TestSGBlocksTables(t *testing.T) {
	for _, tc := range []struct {
		m      int
		w0, w1 []float64
	}{
		{2, scaled([]float64{-3, 12, 17, 12, -3}, 35), scaled([]float64{1, -8, 0, 8, -1}, 12)},
		{3, scaled([]float64{-2, 3, 6, 7, 6, 3, -2}, 21), scaled([]float64{22, -67, -58, 0, 58, 67, -22}, 252)},
		{4, scaled([]float64{-21, 14, 39, 54, 59, 54, 39, 14, -21}, 231),
			scaled([]float64{86, -142, -193, -126, 0, 126, 193, 142, -86}, 1188)},
	} {
		w := 2*tc.m + 1
		n := 6 * w
		tm := make([]float64, n)
		for i := range tm {
			tm[i] = float64(i)
		}
		j := n / 2
		x := [][]float64{make([]float64, n)}
		x[0][j] = 1
		xs, dx := [][]float64{make([]float64, n)}, [][]float64{make([]float64, n)}
		newDerivWork().sgBlocks(xs, dx, tm, x, []int{0}, w)
		got0, got1 := make([]float64, w), make([]float64, w)
		for k := range w { // centre i = j - (k - m) sees the impulse at offset k - m
			i := j - (k - tc.m)
			got0[k], got1[k] = xs[0][i], dx[0][i]
		}
		if !floats.EqualApprox(got0, tc.w0, 1e-10) || !floats.EqualApprox(got1, tc.w1, 1e-10) {
			t.Errorf("%d points: value weights %v, want %v; slope weights %v, want %v", w, got0, tc.w0, got1, tc.w1)
		}
	}
}

// TestSGJitteredCubic checks sgRuns on jittered clocks against the exact
// value and slope of a cubic: a least-squares cubic reproduces a cubic
// exactly on any nodes (common practice: Savitzky–Golay of order p is
// exact for polynomials of degree <= p), so only rounding is left. It is
// bounded by the condition of the normal matrices (below 300, see
// TestSGBlocksTables) times 2.2e-16 times the window's size (<= 121)
// times the data's scale X: about 1e-11 X for the value and 1e-11 X / H
// for the slope, H the window's half-length in time; the test allows ten
// times that. The cases cover the demo's clock (200 Hz, 20 µs rms
// jitter), a jitter of a third of the step, a clock that starts at 1e4 s
// (offsets lose digits to the large times) and a large constant level.
func TestSGJitteredCubic(t *testing.T) {
	for _, tc := range []struct {
		name           string
		t0, h, jitter  float64 // start, step, uniform jitter half-width (s)
		level          float64
		half           []int
		wantBlocksPath bool
	}{
		{"demo clock", 0, 0.005, 35e-6, 0, []int{6, 12}, true},
		{"a third of a step", 0, 0.005, 0.005 / 3, 0, []int{2, 3, 60}, true},
		{"late clock", 1e4, 0.01, 1e-3, 0, []int{4, 30}, true},
		{"large level", 0, 0.001, 2e-4, 1e3, []int{5, 19}, true},
		{"uniform", 0, 0.005, 0, 0, []int{6, 12}, false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			rng := rand.New(rand.NewPCG(11, 0))
			n := 700
			tm := make([]float64, n)
			for i := range tm {
				tm[i] = tc.t0 + tc.h*float64(i) + tc.jitter*(2*rng.Float64()-1)
			}
			if uni, _ := uniformGrid(tm); uni == tc.wantBlocksPath {
				t.Fatalf("uniform grid %v: the case does not take the path it is meant for", uni)
			}
			// x_j(t) = level + a + b s + c s^2 + d s^3 with s = t - mid.
			mid := tm[n/2]
			span := tm[n-1] - tm[0]
			coef := [][4]float64{{0.3, 1.2 / span, -4 / (span * span), 9 / (span * span * span)},
				{-1, 0.5 / span, 2 / (span * span), -3 / (span * span * span)}}
			x := make([][]float64, len(tc.half))
			xs := make([][]float64, len(tc.half))
			dx := make([][]float64, len(tc.half))
			for j := range x {
				x[j], xs[j], dx[j] = make([]float64, n), make([]float64, n), make([]float64, n)
				c := coef[j%2]
				for i, ti := range tm {
					s := ti - mid
					x[j][i] = tc.level + c[0] + s*(c[1]+s*(c[2]+s*c[3]))
				}
			}
			newDerivWork().sgRuns(xs, dx, tm, x, tc.half)
			for j, m := range tc.half {
				c := coef[j%2]
				scale := math.Abs(tc.level) + 2 // |x| <= level + 2 on the run
				tolV := 1e-10 * scale
				tolS := 1e-10 * scale / (float64(m) * tc.h)
				for i, ti := range tm {
					s := ti - mid
					v := tc.level + c[0] + s*(c[1]+s*(c[2]+s*c[3]))
					d := c[1] + s*(2*c[2]+s*3*c[3])
					if !scalar.EqualWithinAbs(xs[j][i], v, tolV) || !scalar.EqualWithinAbs(dx[j][i], d, tolS) {
						t.Fatalf("state %d (half-width %d) sample %d: value %.15g slope %.15g, want %.15g %.15g (tol %.2g, %.2g)",
							j, m, i, xs[j][i], dx[j][i], v, d, tolV, tolS)
					}
				}
			}
		})
	}
}

// TestSGBlocksMatchSamples compares the prefix-sum path with the
// per-sample factorisation it replaces, on noisy data on a jittered clock
// (the tolerance of TestSGJitteredCubic), and on the inputs that send
// blocks or samples back to the per-sample path: a NaN in a state (its
// windows give NaN in both paths, and only those), repeated time stamps
// (windows with fewer than four distinct times) and runs of four to six
// samples.
func TestSGBlocksMatchSamples(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 0))
	clock := func(n int) []float64 {
		tm := make([]float64, n)
		for i := range tm {
			tm[i] = 0.005*float64(i) + 20e-6*rng.NormFloat64()
		}
		return tm
	}
	repeated := clock(200)
	for i := 100; i < 105; i++ {
		repeated[i] = repeated[100] // five samples at one time
	}
	for _, tc := range []struct {
		name string
		tm   []float64
		nan  int // index of a NaN in state 0, or -1
		half []int
	}{
		{"noisy", clock(2001), -1, []int{6, 12, 6}},
		{"NaN", clock(400), 150, []int{3, 8}},
		{"repeated times", repeated, -1, []int{2, 5}},
		{"4 samples", clock(4), -1, []int{2}},
		{"6 samples", clock(6), -1, []int{2, 6}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			n := len(tc.tm)
			x := make([][]float64, len(tc.half))
			got := [2][][]float64{make([][]float64, len(x)), make([][]float64, len(x))}
			want := [2][][]float64{make([][]float64, len(x)), make([][]float64, len(x))}
			for j := range x {
				x[j] = make([]float64, n)
				for i, s := range tc.tm {
					x[j][i] = math.Sin(float64(j+2)*s) + 0.01*rng.NormFloat64()
				}
				for k := range 2 {
					got[k][j], want[k][j] = make([]float64, n), make([]float64, n)
				}
			}
			if tc.nan >= 0 {
				x[0][tc.nan] = math.NaN()
			}
			newDerivWork().sgRuns(got[0], got[1], tc.tm, x, tc.half)
			sgPerSample = true
			newDerivWork().sgRuns(want[0], want[1], tc.tm, x, tc.half)
			sgPerSample = false
			checked := 0
			for j, m := range tc.half {
				w := min(2*m+1, n)
				tolS := 1e-10 * 2 / (float64(w/2) * 0.005) // |x| <= 2; see TestSGJitteredCubic
				for i := range n {
					for k, tol := range []float64{1e-10 * 2, tolS} {
						g, e := got[k][j][i], want[k][j][i]
						if math.IsNaN(e) != math.IsNaN(g) || !math.IsNaN(e) && !scalar.EqualWithinAbs(g, e, tol) {
							t.Fatalf("state %d sample %d (%s): %.15g, per sample %.15g", j, i, []string{"value", "slope"}[k], g, e)
						}
						if !math.IsNaN(e) {
							checked++
						}
					}
				}
			}
			if checked == 0 {
				t.Fatal("no finite values compared")
			}
			if tc.nan >= 0 && !math.IsNaN(got[1][0][tc.nan]) {
				t.Errorf("the NaN sample's own slope is %g", got[1][0][tc.nan])
			}
		})
	}
}

// TestSGSmoothing checks the closed-form centred smoothing weights a - b k²
// against the quadratic/cubic smoothing tables of [SavitzkyGolay1964],
// "Smoothing and differentiation of data by simplified least squares
// procedures", Anal. Chem. 36(8), 1964 (Table I): exact rationals, 1e-15.
func TestSGSmoothing(t *testing.T) {
	for _, tc := range []struct {
		m    int
		want []float64
	}{
		{2, scaled([]float64{-3, 12, 17, 12, -3}, 35)},
		{3, scaled([]float64{-2, 3, 6, 7, 6, 3, -2}, 21)},
		{4, scaled([]float64{-21, 14, 39, 54, 59, 54, 39, 14, -21}, 231)},
		{5, scaled([]float64{-36, 9, 44, 69, 84, 89, 84, 69, 44, 9, -36}, 429)},
	} {
		a, b := sgSmoothing(tc.m)
		got := make([]float64, 2*tc.m+1)
		for k := -tc.m; k <= tc.m; k++ {
			got[k+tc.m] = a - b*float64(k*k)
		}
		if !floats.EqualApprox(got, tc.want, 1e-15) {
			t.Errorf("m=%d: %v, want %v", tc.m, got, tc.want)
		}
	}
}

// TestSmoothResidual compares the running sums of smoothResidual with the
// direct convolution by the least-squares weights of SavitzkyGolayTo
// (itself checked on the tables above) at every candidate half-width and
// several strides, on noisy signals of a few sizes. The running sums are
// restarted every 64 updates, so their rounding stays near 1e-14 of the
// data's size and the residual sums agree to 1e-9 relative (the residuals
// are noise, 1e-3 of the data here); chooseWindow, which compares them
// with a 20 % slack, then picks the same window as the direct sums.
func TestSmoothResidual(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 0))
	direct := func(x []float64, m, stride int) (float64, int) {
		nodes := centred(m)
		wt := SavitzkyGolayTo(make([]float64, len(nodes)), nodes, 0, 3, 0)
		ss, cnt := 0.0, 0
		for i := m; i+m < len(x); i += stride {
			s := 0.0
			for k, c := range wt {
				s += c * x[i-m+k]
			}
			ss += (x[i] - s) * (x[i] - s)
			cnt++
		}
		return ss, cnt
	}
	for _, n := range []int{30, 500, 2001} {
		x := make([]float64, n)
		for i := range x {
			s := 0.005 * float64(i)
			x[i] = 0.3*math.Sin(9.5*s) + 2 + 3e-3*rng.NormFloat64()
		}
		for _, m := range windowCandidates {
			for _, stride := range []int{1, 2, 3, 7, 61, 200} {
				got, gc := smoothResidual(0, 0, x, m, stride)
				want, wc := direct(x, m, stride)
				if gc != wc || !scalar.EqualWithinRel(got, want, 1e-9) && !(want == 0 && got == 0) {
					t.Fatalf("n=%d m=%d stride %d: %d residuals, sum %.15g; direct %d, %.15g", n, m, stride, gc, got, wc, want)
				}
			}
		}
		sigma := 3e-3
		runs := [][]float64{x, x[:n/2]}
		want := windowCandidates[0]
		stride := max(1, (n+n/2)/500)
		for _, m := range windowCandidates { // chooseWindow by the direct sums
			ss, cnt := 0.0, 0
			for _, r := range runs {
				s, c := direct(r, m, stride)
				ss, cnt = ss+s, cnt+c
			}
			a, _ := sgSmoothing(m)
			if cnt < 20 || ss/float64(cnt) > discrepancySlack*sigma*sigma*(1-a) {
				break
			}
			want = m
		}
		if got := chooseWindow(runs, sigma, 500); got != want {
			t.Errorf("n=%d: window %d, direct sums %d", n, got, want)
		}
	}
}

// TestSavitzkyGolayToAllocs: the public weights (used per sample by the
// held-out derivative check) keep their scratch on the stack up to
// degree sgSmallDegree.
func TestSavitzkyGolayToAllocs(t *testing.T) {
	nodes := centred(6)
	dst := make([]float64, len(nodes))
	for deg := 0; deg <= sgSmallDegree; deg++ {
		if a := testing.AllocsPerRun(100, func() { SavitzkyGolayTo(dst, nodes, 0.1, deg, min(deg, 1)) }); a != 0 {
			t.Errorf("degree %d: %g allocations a call", deg, a)
		}
	}
}
