package validate

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
)

// TestDopriTableau checks the tableau against the identities of
// [DormandPrince1980] (Dormand & Prince, J. Comput. Appl. Math. 6:19-26,
// 1980): row sums equal the nodes, the order conditions sum b c^k =
// 1/(k+1) (k <= 4 for b5, k <= 3 for b4, and sum b4 c^4 = 53929/270000),
// and the error weights sum to 0. 1e-15: a sum of seven float64
// fractions.
func TestDopriTableau(t *testing.T) {
	const tol = 1e-15
	for i := range dpA {
		s := 0.0
		for _, a := range dpA[i] {
			s += a
		}
		if !scalar.EqualWithinAbs(s, dpC[i], tol) {
			t.Errorf("row %d sums to %v, want c = %v", i, s, dpC[i])
		}
	}
	for k := 0; k <= 4; k++ {
		s5, s4 := 0.0, 0.0
		for i := range dpC {
			s5 += dpB5[i] * math.Pow(dpC[i], float64(k))
			s4 += dpB4[i] * math.Pow(dpC[i], float64(k))
		}
		if !scalar.EqualWithinAbs(s5, 1/float64(k+1), tol) {
			t.Errorf("b5 order condition k=%d: %v", k, s5)
		}
		want4 := 1 / float64(k+1)
		if k == 4 {
			want4 = 53929.0 / 270000
		}
		if !scalar.EqualWithinAbs(s4, want4, tol) {
			t.Errorf("b4 sum c^%d = %v, want %v", k, s4, want4)
		}
	}
	e := 0.0
	for i := range dpB5 {
		e += dpB5[i] - dpB4[i]
		if dpA[6][min(i, 5)] != dpB5[i] && i < 6 {
			t.Errorf("FSAL: A[6][%d] != b5[%d]", i, i)
		}
	}
	if !scalar.EqualWithinAbs(e, 0, tol) {
		t.Errorf("error weights sum to %v", e)
	}
	// D1: one step on y' = y with h = 1 gives the stability polynomial at
	// 1, 1631/600; with h = 0.1, 1.10517091833.
	for _, tc := range []struct{ h, want, tol float64 }{{1, 1631.0 / 600, 1e-14}, {0.1, 1.10517091833, 1e-11}} {
		dst := [][]float64{make([]float64, 2)}
		Integrate(func(d []float64, _ float64, x []float64) { d[0] = x[0] }, []float64{1}, []float64{0, tc.h}, dst, &DopriOptions{FixedStep: tc.h})
		if !scalar.EqualWithinAbs(dst[0][1], tc.want, tc.tol) {
			t.Errorf("y'=y, h=%g: %.12f, want %.12f", tc.h, dst[0][1], tc.want)
		}
	}
}

// burden is y' = y - t^2 + 1, y(0) = 0.5, exact (t+1)^2 - e^t/2 (Burden &
// Faires, Numerical Analysis, §5.2-5.4; [BurdenFaires]).
func burden(d []float64, t float64, x []float64) { d[0] = x[0] - t*t + 1 }

func burdenExact(t float64) float64 { return (t+1)*(t+1) - 0.5*math.Exp(t) }

func TestDopriBurdenFaires(t *testing.T) {
	// [BurdenFaires]: fixed h = 0.2 with the fifth-order weights gives
	// 5.3054723945 (computed, error 4.4e-7 against the exact solution);
	// 5e-8 leaves room for rounding over ten steps only.
	dst := [][]float64{make([]float64, 11)}
	ts := make([]float64, 11)
	for i := range ts {
		ts[i] = 0.2 * float64(i)
	}
	Integrate(burden, []float64{0.5}, ts, dst, &DopriOptions{FixedStep: 0.2})
	if got := dst[0][10]; !scalar.EqualWithinAbs(got, 5.3054723945, 5e-8) {
		t.Errorf("fixed h=0.2: y(2) = %.10f, want 5.3054723945", got)
	}
	// Convergence order: the global error at t = 2 must fall by about 2^5
	// per halving of h. Order 5 measured as log2 of successive ratios; a
	// band of 4.6..5.4 allows the asymptotic regime's drift.
	var errs []float64
	for _, h := range []float64{0.2, 0.1, 0.05, 0.025} {
		m := int(math.Round(2/h)) + 1
		ts := make([]float64, m)
		for i := range ts {
			ts[i] = h * float64(i)
		}
		d := [][]float64{make([]float64, m)}
		Integrate(burden, []float64{0.5}, ts, d, &DopriOptions{FixedStep: h})
		errs = append(errs, math.Abs(d[0][m-1]-burdenExact(2)))
	}
	for i := 1; i < len(errs); i++ {
		if p := math.Log2(errs[i-1] / errs[i]); !(p >= 4.6 && p <= 5.4) {
			t.Errorf("observed order %.2f between h=%g and h/2 (errors %v)", p, 0.2/math.Pow(2, float64(i-1)), errs)
		}
	}
	// Adaptive with dense output at 201 points: every point within a few
	// times the tolerance of the exact solution (rtol 1e-8; global error
	// accumulates over ~tens of steps, so 1e-6 absolute on values ~5).
	ts = make([]float64, 201)
	for i := range ts {
		ts[i] = 0.01 * float64(i)
	}
	d := [][]float64{make([]float64, 201)}
	st := Integrate(burden, []float64{0.5}, ts, d, &DopriOptions{RelTol: 1e-8, AbsTol: 1e-10})
	for i, tt := range ts {
		if e := math.Abs(d[0][i] - burdenExact(tt)); !(e <= 1e-6) {
			t.Fatalf("dense output at t=%g: error %g", tt, e)
		}
	}
	if st.Diverged || st.Steps > 100 {
		t.Errorf("adaptive stats %+v", st)
	}
}

// TestDopriVanDerPol: Van der Pol with mu = 1 settles on a limit cycle of
// amplitude about 2.0 (2.0086) and period about 6.6633 (common textbook
// values, from memory). Tolerances: 0.01 on amplitude and period, well
// above the integration error at rtol 1e-9 and the 1e-3 sampling step.
func TestDopriVanDerPol(t *testing.T) {
	vdp := func(d []float64, _ float64, x []float64) {
		d[0] = x[1]
		d[1] = (1-x[0]*x[0])*x[1] - x[0]
	}
	const dt, T = 1e-3, 60.0
	m := int(T/dt) + 1
	ts := make([]float64, m)
	for i := range ts {
		ts[i] = dt * float64(i)
	}
	d := [][]float64{make([]float64, m), make([]float64, m)}
	st := Integrate(vdp, []float64{0.1, 0}, ts, d, &DopriOptions{RelTol: 1e-9, AbsTol: 1e-12})
	if st.Diverged {
		t.Fatal(st.Reason)
	}
	amp := 0.0
	var ups []float64 // upward zero crossings of x after t = 30
	for i := int(30 / dt); i < m; i++ {
		amp = math.Max(amp, math.Abs(d[0][i]))
		if d[0][i-1] < 0 && d[0][i] >= 0 {
			f := -d[0][i-1] / (d[0][i] - d[0][i-1])
			ups = append(ups, ts[i-1]+f*dt)
		}
	}
	if !scalar.EqualWithinAbs(amp, 2.0086, 0.01) {
		t.Errorf("amplitude %.4f, want about 2.0086", amp)
	}
	period := (ups[len(ups)-1] - ups[0]) / float64(len(ups)-1)
	if !scalar.EqualWithinAbs(period, 6.6633, 0.01) {
		t.Errorf("period %.4f, want about 6.6633", period)
	}
}

// TestDopriBlowUp: x' = x^2, x(0) = 1 blows up at t = 1; the integrator
// must report it and not hang or panic.
func TestDopriBlowUp(t *testing.T) {
	ts := []float64{0, 0.5, 0.99, 1.5, 2}
	d := [][]float64{make([]float64, 5)}
	st := Integrate(func(d []float64, _ float64, x []float64) { d[0] = x[0] * x[0] }, []float64{1}, ts, d, &DopriOptions{MaxNorm: 1e8})
	if !st.Diverged || st.Reached > 1+1e-6 || st.Reached < 0.99 {
		t.Errorf("stats %+v", st)
	}
	// exact 1/(1-t) at 0.5 and 0.99; 1e-4 relative at default tolerances.
	if !scalar.EqualWithinAbs(d[0][1], 2, 2e-4) || !scalar.EqualWithinAbs(d[0][2]/100, 1, 1e-3) || !math.IsNaN(d[0][3]) {
		t.Errorf("values %v", d[0])
	}
}
