package ingest

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// settleRun builds a one-state run of n samples at 100 Hz: x(i) plus
// Gaussian noise of sd times the noise-free signal's span (a constant
// signal's span is taken as 1); a negative sd gives AR(1) noise with
// coefficient -sd instead, its innovations 1% of the span.
func settleRun(rng *rand.Rand, n int, sd float64, x func(i int) float64) *Run {
	t := make([]float64, n)
	v := make([]float64, n)
	lo, hi := math.Inf(1), math.Inf(-1)
	for i := range n {
		t[i] = float64(i) / 100
		v[i] = x(i)
		lo, hi = min(lo, v[i]), max(hi, v[i])
	}
	span := hi - lo
	if span == 0 {
		span = 1
	}
	if sd < 0 { // AR(1) noise with coefficient -sd, unit innovations scaled by 0.01
		e := 0.0
		for i := range v {
			e = -sd*e + rng.NormFloat64()
			v[i] += 0.01 * span * e
		}
	} else {
		for i := range v {
			v[i] += sd * span * rng.NormFloat64()
		}
	}
	return &Run{Name: "r", T: t, X: [][]float64{v}}
}

func settled(r *Run) bool {
	lo, hi := minMax(r.X[0])
	ok, _ := settle(r, []float64{lo}, []float64{hi})
	return ok
}

// TestSettle: whether a run has come to rest is judged against its
// noise, not against its own span. The cases are invented signals with
// seeded noise; the rule's test statistic is the F test of significance
// of regression [MontgomeryPeckVining] (its critical value and sums are
// checked against gonum in TestSettleFit).
func TestSettle(t *testing.T) {
	const n = 2000 // 20 s at 100 Hz: the last tenth is 200 samples
	decay := func(i int) float64 { return 2 * math.Exp(-float64(i)/100) }
	rest := func(int) float64 { return 0.5 }
	for _, tc := range []struct {
		name string
		sd   float64 // noise, as a share of the noise-free span
		x    func(i int) float64
		n    int
		want bool
	}{
		// a decay over the first 10% of the run, then rest
		{"decay then rest, 0.1% noise", 0.001, decay, n, true},
		{"decay then rest, 1% noise", 0.01, decay, n, true},
		{"decay then rest, 3% noise", 0.03, decay, n, true},
		// at rest throughout: the run's span is the noise's (the old
		// rule, tail span against run span, refused all three)
		{"rest only, 0.1% noise", 0.001, rest, n, true},
		{"rest only, 1% noise", 0.01, rest, n, true},
		{"rest only, 3% noise", 0.03, rest, n, true},
		{"noise-free rest", 0, rest, n, true},
		// noise correlated from sample to sample, AR(1) with coefficient
		// 0.5 (white noise through a first-order filter): its F is
		// deflated by the residuals' lag-1 autocorrelation [Santer2000]
		{"rest only, AR(1) noise", -0.5, rest, n, true},
		{"noise-free decay, finished", 0, decay, n, true},
		// the shortest run judged: 81 samples, a tail of 5, a tenth of 10
		{"rest only, 1% noise, 81 samples", 0.01, rest, 81, true},
		// drift x = exp(-i/2000) over the whole run: at its end still
		// moving 1/2000 of its value per sample
		{"drift exp(-i/2000), noise-free", 0, func(i int) float64 { return math.Exp(-float64(i) / 2000) }, n, false},
		{"drift exp(-i/2000), 1% noise", 0.01, func(i int) float64 { return math.Exp(-float64(i) / 2000) }, n, false},
		{"drift exp(-i/2000), 2% noise", 0.02, func(i int) float64 { return math.Exp(-float64(i) / 2000) }, n, false},
		{"ramp, noise-free", 0, func(i int) float64 { return float64(i) / n }, n, false},
		{"ramp, 1% noise", 0.01, func(i int) float64 { return float64(i) / n }, n, false},
		// a ramp under the noise: it moves the state one noise standard
		// deviation a tenth, too little to show within one, 2 across
		// three (a temperature creeping up while the mechanics rest)
		{"ramp under the noise", 0.1, func(i int) float64 { return float64(i) / n }, n, false},
		// a slow oscillation (8 s period) decaying over 20 s: the last
		// tenth sees a stretch of it, a trend the quadratic catches
		{"slow oscillation decaying, 1% noise", 0.01, func(i int) float64 {
			s := float64(i) / 100
			return math.Exp(-s/20) * math.Cos(2*math.Pi*s/8)
		}, n, false},
		// a light damping still ringing (0.5 s period): many periods in
		// the last tenth, no trend, a spread far beyond the noise
		{"ringing, 1% noise", 0.01, func(i int) float64 {
			s := float64(i) / 100
			return math.Exp(-s/20) * math.Cos(2*math.Pi*s/0.5)
		}, n, false},
		{"ringing at constant amplitude, 81 samples", 0, func(i int) float64 { return math.Sin(2 * math.Pi * float64(i) / 20) }, 81, false},
		// an oscillation near the sampling rate (4.5 samples a period)
		// is, to the fourth differences, noise of its size: at rest
		// about its centre. The rule cannot tell it from noise.
		{"oscillation of 4.5 samples a period, 81 samples", 0, func(i int) float64 { return math.Sin(2 * math.Pi * float64(i) / 4.5) }, 81, true},
		// too short to judge, however still
		{"noise-free rest, 80 samples", 0, rest, 80, false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			r := settleRun(rand.New(rand.NewPCG(1, 2)), tc.n, tc.sd, tc.x)
			if got := settled(r); got != tc.want {
				t.Errorf("settled = %v, want %v", got, tc.want)
			}
		})
	}
}

// TestSettleOutlier: a rest with one outlier (a glitch of 50 noise
// standard deviations) counts as at rest wherever the spike falls. The
// settle point is a median, which one sample hardly moves, and the F
// test cannot fail on one sample: a point of leverage h takes at most a
// share h of the sums of squares, so F <= h (m-3) / (2 (1-h)), below
// the critical value (h of the end point of a quadratic over 200
// samples is about 0.045, a bound of 4.6 against 7.1). A run that a
// kick sets moving again fails as a ringing or a trend instead.
func TestSettleOutlier(t *testing.T) {
	const n = 2000
	for _, at := range []int{n - 1, n - 100, n - 200, n - 1000} {
		r := settleRun(rand.New(rand.NewPCG(3, 4)), n, 0.01, func(i int) float64 { return 2 * math.Exp(-float64(i)/100) })
		r.X[0][at] += 50 * 0.01 * 2
		if !settled(r) {
			t.Errorf("spike at sample %d: not settled", at)
		}
	}
}

// TestSettleFalseRefusals: white Gaussian noise about a constant is
// refused as "moving" at most about the trend test's level (1e-3) per
// state; over 2,000 seeded rests of each length, no more than 10 (the
// binomial(2000, 1e-3) upper tail beyond 10 is below 1e-4, computed).
func TestSettleFalseRefusals(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for _, n := range []int{81, 400, 4000} {
		refused := 0
		for range 2000 {
			if !settled(settleRun(rng, n, 0.01, func(int) float64 { return 0 })) {
				refused++
			}
		}
		if refused > 10 {
			t.Errorf("%d samples: %d of 2000 white-noise rests refused", n, refused)
		}
	}
}

// TestSettleFit checks the settle test's pieces against independent
// computations: the F(2, nu) quantile against gonum's distuv.F, the
// normal point of the drift test against distuv.UnitNormal, and the
// orthogonal-polynomial quadratic fit's regression sum of squares and
// fitted values against a least-squares solve of [1 t t²] by gonum's QR
// (the sums of squares of the F test of significance of regression,
// [MontgomeryPeckVining]).
func TestSettleFit(t *testing.T) {
	for _, nu := range []float64{2, 7, 97, 1997} {
		for _, alpha := range []float64{1e-3, 0.05} {
			want := distuv.F{D1: 2, D2: nu}.Quantile(1 - alpha)
			if got := fQuantile2(alpha, nu); !scalar.EqualWithinRel(got, want, 1e-9) {
				t.Errorf("F(2, %g) quantile at %g: %v, want %v", nu, 1-alpha, got, want)
			}
		}
	}
	// the drift test's level: the two-sided 1e-3 point of the normal
	// [AbramowitzStegun1964]
	if want := distuv.UnitNormal.Quantile(1 - 5e-4); !scalar.EqualWithinRel(driftZ, want, 1e-12) {
		t.Errorf("driftZ %v, want %v", driftZ, want)
	}
	rng := rand.New(rand.NewPCG(7, 8))
	m := 50
	tt, x := make([]float64, m), make([]float64, m)
	a := mat.NewDense(m, 3, nil)
	for i := range m {
		tt[i] = 1e3 + 0.1*float64(i) + 0.03*rng.Float64() // uneven, far from 0
		x[i] = 1 - 0.5*(tt[i]-1e3) + 0.2*(tt[i]-1e3)*(tt[i]-1e3) + 0.05*rng.NormFloat64()
		u := tt[i] - 1e3 // the QR on the shifted time: same column space
		a.Set(i, 0, 1)
		a.Set(i, 1, u)
		a.Set(i, 2, u*u)
	}
	var qr mat.QR
	qr.Factorize(a)
	var beta mat.VecDense
	if err := qr.SolveVecTo(&beta, false, mat.NewVecDense(m, x)); err != nil {
		t.Fatal(err)
	}
	q := fitQuad(tt, x)
	mean, ssRes := 0.0, 0.0
	for i := range m {
		mean += x[i] / float64(m)
	}
	ssTot := 0.0
	for i := range m {
		u := tt[i] - 1e3
		f := beta.AtVec(0) + beta.AtVec(1)*u + beta.AtVec(2)*u*u
		if !scalar.EqualWithinAbsOrRel(q.at(tt[i]), f, 1e-9, 1e-9) {
			t.Fatalf("fitted value at %g: %v, want %v", tt[i], q.at(tt[i]), f)
		}
		ssRes += (x[i] - f) * (x[i] - f)
		ssTot += (x[i] - mean) * (x[i] - mean)
	}
	if !scalar.EqualWithinRel(q.ssReg, ssTot-ssRes, 1e-9) || !scalar.EqualWithinRel(q.ssTot, ssTot, 1e-12) {
		t.Errorf("SS_reg %v SS_tot %v, want %v %v", q.ssReg, q.ssTot, ssTot-ssRes, ssTot)
	}
	// the fitted curve's travel over the window: its range over a fine grid
	lo, hi := math.Inf(1), math.Inf(-1)
	for k := 0; k <= 100000; k++ {
		v := q.at(tt[0] + (tt[m-1]-tt[0])*float64(k)/100000)
		lo, hi = min(lo, v), max(hi, v)
	}
	if !scalar.EqualWithinAbsOrRel(q.travel(), hi-lo, 1e-6, 1e-6) {
		t.Errorf("travel %v, want %v", q.travel(), hi-lo)
	}
}
