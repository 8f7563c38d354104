package validate

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"

	"basin.example/fit"
	"basin.example/fit/poly"
	"basin.example/ingest"
)

// linearRun integrates x' = A x exactly (x(t) = expm(A t) x0, by gonum's
// matrix exponential) and adds seeded Gaussian noise of standard
// deviation sigma.
func linearRun(a *mat.Dense, x0 []float64, m int, dt, sigma float64, rng *rand.Rand) ingest.Run {
	n := len(x0)
	r := ingest.Run{Name: "lin", T: make([]float64, m), X: make([][]float64, n)}
	for j := range r.X {
		r.X[j] = make([]float64, m)
	}
	var e mat.Dense
	var at mat.Dense
	x := mat.NewVecDense(n, nil)
	for i := range r.T {
		t := float64(i) * dt
		at.Scale(t, a)
		e.Exp(&at)
		x.MulVec(&e, mat.NewVecDense(n, append([]float64(nil), x0...)))
		r.T[i] = t
		for j := range x0 {
			r.X[j][i] = x.AtVec(j) + sigma*rng.NormFloat64()
		}
	}
	return r
}

// identityCert is V = |z|^2 with unit scale around the origin, level 4.
func identityCert(n int) *fit.Certificate {
	exps := poly.Monomials(n, 2)
	var e [][]int
	var c []float64
	for _, ex := range exps {
		for j := range ex {
			if ex[j] == 2 {
				e = append(e, ex)
				c = append(c, 1)
			}
		}
	}
	box := make([][2]float64, n)
	for j := range box {
		box[j] = [2]float64{-2, 2}
	}
	return &fit.Certificate{Format: fit.CertificateFormat, States: make([]string, n), Units: make([]string, n),
		Equilibrium: make([]float64, n), Scale: ones(n), V: poly.Poly{Exponents: e, Coefficients: c}, Level: 4,
		Box: box, Found: true, NoiseRadius: 0.01, Tolerance: 1e-4}
}

func ones(n int) []float64 {
	o := make([]float64, n)
	for i := range o {
		o[i] = 1
	}
	return o
}

// TestDecayRateLinear checks the decay rate against linear systems
// theory [LinearDecay] (from memory; any linear systems textbook): for x' = A x and V =
// |x|^2 with A normal, d/dt log V = 2 x'Ax/x'x lies between 2 min Re(λ)
// and 2 max Re(λ), so its least-squares slope over time (a positively
// weighted mean of the derivative) does too: the rate, minus the slope,
// lies in [2 |max Re λ|, 2 |min Re λ|]. A rotation with decay (λ = -1 ±
// 3i) gives exactly 2; a symmetric A with λ = -1, -3 gives a rate between
// 2 and 6, and near 2 once the fast mode has died.
func TestDecayRateLinear(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 0))
	for _, tc := range []struct {
		name   string
		a      []float64
		x0     []float64
		lo, hi float64
	}{
		{"rotation", []float64{-1, 3, -3, -1}, []float64{1.5, 0}, 2, 2},
		{"symmetric", []float64{-2, 1, 1, -2}, []float64{1.2, 0.3}, 2, 6},
		{"diagonal3", nil, []float64{1, 0.5, -0.8}, 1, 4},
	} {
		n := len(tc.x0)
		a := mat.NewDense(n, n, tc.a)
		if tc.a == nil {
			a = mat.NewDense(n, n, []float64{-0.5, 0, 0, 0, -1, 0, 0, 0, -2})
		}
		// noise 1e-5 against a noise radius 0.01: log V is clean outside it.
		r := linearRun(a, tc.x0, 2000, 0.002, 1e-5, rng)
		s := NewScreener(identityCert(n), nil)
		var got RunScreen
		s.Screen(&got, "f", &r)
		if got.DecaySamples < DecayMinSamples {
			t.Fatalf("%s: %d decay samples", tc.name, got.DecaySamples)
		}
		// 1e-3 relative: the noise's share of log V at the smallest V used.
		if got.DecayRate < tc.lo*(1-1e-3) || got.DecayRate > tc.hi*(1+1e-3) || math.IsNaN(got.DecayRate) {
			t.Errorf("%s: rate %g, want in [%g, %g]", tc.name, got.DecayRate, tc.lo, tc.hi)
		}
		if tc.lo == tc.hi && !scalar.EqualWithinAbsOrRel(got.DecayRate, tc.lo, 1e-3, 1e-3) {
			t.Errorf("%s: rate %g, want %g", tc.name, got.DecayRate, tc.lo)
		}
	}
}

// TestDecayOf checks the bound and the leave-one-out false alarms.
func TestDecayOf(t *testing.T) {
	mk := func(rates ...float64) []RunScreen {
		var r []RunScreen
		for _, x := range rates {
			r = append(r, RunScreen{DecayRate: x, DecaySamples: 50})
		}
		return append(r, RunScreen{DecaySamples: 0, DecayRate: 99}) // no rate: ignored
	}
	for _, tc := range []struct {
		name        string
		rates       []float64
		bound, fa   float64
		nilWant     bool
		runs        int
		wantMedian  float64
		wantNoBound bool
	}{
		{"spread", []float64{2, 1.5, 1, 3}, 0.5, 0, false, 4, 1.75, false},
		{"one low", []float64{0.4, 2, 2.2, 1.8, 2.5}, 0.2, 0.2, false, 5, 2, false},
		{"two runs", []float64{1, 2}, 0, 0, false, 2, 1.5, true},
		{"none", nil, 0, 0, true, 0, 0, false},
	} {
		d := DecayOf(mk(tc.rates...))
		if tc.nilWant {
			if d != nil {
				t.Errorf("%s: %+v, want nil", tc.name, d)
			}
			continue
		}
		if d == nil {
			t.Fatalf("%s: nil", tc.name)
		}
		if d.Runs != tc.runs || d.LowerBound != tc.bound || d.FalseAlarm != tc.fa || d.Median != tc.wantMedian ||
			(d.Rule == "") {
			t.Errorf("%s: %+v", tc.name, d)
		}
	}
}

// TestScreenSlow: a run decaying at a fifth of the bound's rate is flagged
// slow, with its rate reported; a certificate without the decay field
// flags nothing slow.
func TestScreenSlow(t *testing.T) {
	slow := func(t float64) (float64, float64) {
		return 0.8 * math.Exp(-0.1*t) * math.Cos(t), 0.8 * math.Exp(-0.1*t) * math.Sin(t)
	}
	fast := func(t float64) (float64, float64) {
		return 0.8 * math.Exp(-1*t) * math.Cos(t), 0.8 * math.Exp(-1*t) * math.Sin(t)
	}
	c := circleCert(false)
	c.Validation = &fit.Validation{Decay: &fit.Decay{Runs: 5, LowerBound: 1}}
	for _, tc := range []struct {
		name     string
		f        func(float64) (float64, float64)
		cert     *fit.Certificate
		opts     *ScreenOptions
		slow     bool
		wantRate float64
	}{
		{"slow", slow, c, nil, true, 0.2},
		{"fast", fast, c, nil, false, 2},
		{"slow, old certificate", slow, circleCert(false), nil, false, 0.2},
		{"slow, NoSlow", slow, c, &ScreenOptions{NoSlow: true}, false, 0.2},
	} {
		r := makeRun(tc.name, 2000, 0.005, tc.f)
		var got RunScreen
		NewScreener(tc.cert, tc.opts).Screen(&got, "f", &r)
		// V = |z|^2 = 0.64 exp(-2 k t) exactly here (z1 scaled by 2
		// and back): the rate is 2k to rounding.
		if !scalar.EqualWithinAbsOrRel(got.DecayRate, tc.wantRate, 1e-9, 1e-9) {
			t.Errorf("%s: rate %g, want %g", tc.name, got.DecayRate, tc.wantRate)
		}
		if hasFlag(&got, FlagSlow) != tc.slow || (tc.slow && !got.Flagged) {
			t.Errorf("%s: flags %+v, want slow %v", tc.name, got.Flags, tc.slow)
		}
	}
}

// TestScreenSlowLongRest: a healthy run that decays and then rests in
// noise for hundreds of times its approach is not slow, and its decay
// rate is the true one; a genuinely slow run, as long, is still slow.
// The system is a decaying rotation x' = A x, A = [-a ω; -ω -a] (normal,
// eigenvalues -a ± iω), with V = |x|², so log V falls at exactly 2a
// [LinearDecay] (from memory); a and ω are the demo mount's (damping
// ratio 0.15 at 1.51 Hz: a = 0.15·2π·1.51, ω = a·√(1-0.15²)/0.15). The
// noise, 0.003 per state against a noise radius of 0.01, leaves about
// 0.4% of the rest's samples outside the ball (e^(-0.01²/(2·0.003²)),
// a Rayleigh tail): fitted with the approach, those excursions flatten
// the slope towards 0.
func TestScreenSlowLongRest(t *testing.T) {
	const (
		dt    = 0.005 // 200 Hz
		m     = 200000
		sigma = 0.003
	)
	zeta, wn := 0.15, 2*math.Pi*1.51
	rotation := func(a, w float64) *mat.Dense { return mat.NewDense(2, 2, []float64{-a, w, -w, -a}) }
	healthy := rotation(zeta*wn, wn*math.Sqrt(1-zeta*zeta))
	c := identityCert(2)
	// the bound the certificate sets from such runs: half their rate
	bound := zeta * wn
	c.Validation = &fit.Validation{Decay: &fit.Decay{Runs: 5, LowerBound: bound}}
	rng := rand.New(rand.NewPCG(3, 0))
	long := linearRun(healthy, []float64{0.8, 0}, m, dt, sigma, rng)
	// at rest (in noise) for 100 s, then kicked: the rest's excursions
	// before the kick are too short to fit and are dropped
	kicked := linearRun(healthy, []float64{0, 0}, m, dt, sigma, rng)
	after := linearRun(healthy, []float64{0.8, 0}, m-20000, dt, sigma, rng)
	for j := range kicked.X {
		copy(kicked.X[j][20000:], after.X[j])
	}
	slowRun := linearRun(rotation(0.1, wn), []float64{0.8, 0}, m, dt, sigma, rng)
	for _, tc := range []struct {
		name string
		run  *ingest.Run
		rate float64
		slow bool
	}{
		{"decays, then rests", &long, 2 * zeta * wn, false},
		{"rests, kicked, rests", &kicked, 2 * zeta * wn, false},
		{"slow", &slowRun, 0.2, true},
	} {
		var got RunScreen
		NewScreener(c, nil).Screen(&got, "f", tc.run)
		if got.DecaySamples < DecayMinSamples {
			t.Fatalf("%s: %d decay samples", tc.name, got.DecaySamples)
		}
		// 5%: the noise adds 2σ² to V on average, 18% of V at the ball
		// (V = 1e-4), raising log V there by at most ln 1.18 = 0.17 of
		// the approach's span of ln(0.64/1e-4) = 8.8 (2%), plus the
		// scatter of log V near the ball.
		if !scalar.EqualWithinAbsOrRel(got.DecayRate, tc.rate, 0, 0.05) {
			t.Errorf("%s: rate %g over %d samples, want %g within 5%%", tc.name, got.DecayRate, got.DecaySamples, tc.rate)
		}
		if hasFlag(&got, FlagSlow) != tc.slow {
			t.Errorf("%s: flags %+v, want slow %v", tc.name, got.Flags, tc.slow)
		}
	}
}
