package validate

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"

	"basin.example/fit"
	"basin.example/fit/poly"
	"basin.example/ingest"
)

// gimbal is an invented camera gimbal's pitch axis, θ” + 2ζωθ' + ω²θ = 0
// (ω = 2π·0.8 rad/s, ζ = 0.25), read through a pitch encoder of quantum
// q (rad) and a rate gyro (rad/s). Scales 0.1 rad and 0.5 rad/s.
type gimbal struct {
	omega, zeta float64
	scale       [2]float64
	q           float64 // encoder quantum, rad
	sigmaP      float64 // pitch noise before the encoder, rad (below q)
	sigmaR      float64 // gyro noise, rad/s
}

func newGimbal(q float64) gimbal {
	return gimbal{omega: 2 * math.Pi * 0.8, zeta: 0.25, scale: [2]float64{0.1, 0.5}, q: q, sigmaP: 0.0005, sigmaR: 0.003}
}

// truth returns the noise-free pitch and rate at t of a free response of
// amplitude a and phase ph: θ = a e^{-ζωt} cos(ω_d t + ph) [Rao].
func (g gimbal) truth(t, a, ph float64) (float64, float64) {
	s := g.zeta * g.omega
	wd := g.omega * math.Sqrt(1-g.zeta*g.zeta)
	e := a * math.Exp(-s*t)
	return e * math.Cos(wd*t+ph), e * (-s*math.Cos(wd*t+ph) - wd*math.Sin(wd*t+ph))
}

// encode quantises a pitch reading: the encoder reports the nearest
// multiple of q.
func (g gimbal) encode(x float64) float64 { return g.q * math.Round(x/g.q) }

// run records a free response of m samples at 100 Hz: the encoder's
// pitch (noise below the quantum, then quantised) and the gyro's rate.
// freeze >= 0 holds the pitch reading from that sample on (a dead
// encoder); dead holds it at 0 from the start.
func (g gimbal) run(name string, rng *rand.Rand, m, freeze int) ingest.Run {
	a := 0.15 + 0.15*rng.Float64()
	ph := 2 * math.Pi * rng.Float64()
	r := ingest.Run{Name: name, T: make([]float64, m), X: [][]float64{make([]float64, m), make([]float64, m)}}
	for i := range r.T {
		t := float64(i) * 0.01
		p, w := g.truth(t, a, ph)
		r.T[i] = t
		r.X[0][i] = g.encode(p + g.sigmaP*rng.NormFloat64())
		r.X[1][i] = w + g.sigmaR*rng.NormFloat64()
		if freeze >= 0 && i > freeze {
			r.X[0][i] = r.X[0][freeze]
		}
	}
	return r
}

// cert is a certificate for the gimbal as basin would write it: V = z'Pz
// with A'P + PA = -I for the scaled linear model [Khalil2002, Thm 4.6];
// the encoder's noise q/√12, the quantiser's uniform error when the input
// moves over many quanta [Widrow2008]; the noise ball k times the
// largest noise in z, k = 3.44 for two states (fit.Certificate's
// NoiseRadius); the tolerance κ = 5 times the noise's standard deviation
// of a V difference over the region's samples (fit/lyapunov's Kappa).
func (g gimbal) cert() *fit.Certificate {
	// scaled model z' = Az: z0 = θ/s0, z1 = θ'/s1
	s0, s1 := g.scale[0], g.scale[1]
	a := [2][2]float64{{0, s1 / s0}, {-g.omega * g.omega * s0 / s1, -2 * g.zeta * g.omega}}
	// A'P + PA = -I in the unknowns p00, p01, p11
	lhs := mat.NewDense(3, 3, []float64{
		2 * a[0][0], 2 * a[1][0], 0,
		a[0][1], a[0][0] + a[1][1], a[1][0],
		0, 2 * a[0][1], 2 * a[1][1],
	})
	var p mat.VecDense
	if err := p.SolveVec(lhs, mat.NewVecDense(3, []float64{-1, 0, -1})); err != nil {
		panic(err)
	}
	p00, p01, p11 := p.AtVec(0), p.AtVec(1), p.AtVec(2)
	noise := []float64{g.q / math.Sqrt(12), g.sigmaR}
	nz := max(noise[0]/s0, noise[1]/s1)
	// the largest V and |∇V|² weighted by the noise over the responses
	// the runs draw from (amplitude up to 0.3 rad)
	vmax, gmax := 0.0, 0.0
	for k := range 64 {
		ph := 2 * math.Pi * float64(k) / 64
		for i := range 1000 {
			th, w := g.truth(float64(i)*0.01, 0.3, ph)
			z0, z1 := th/s0, w/s1
			vmax = max(vmax, p00*z0*z0+2*p01*z0*z1+p11*z1*z1)
			g0, g1 := 2*(p00*z0+p01*z1), 2*(p01*z0+p11*z1)
			gmax = max(gmax, 2*(g0*g0*noise[0]*noise[0]/(s0*s0)+g1*g1*noise[1]*noise[1]/(s1*s1)))
		}
	}
	return &fit.Certificate{Format: fit.CertificateFormat, Verdict: fit.Certified, Strength: fit.Asymptotic,
		States: []string{"pitch", "pitch_rate"}, Units: []string{"rad", "rad/s"},
		Equilibrium: []float64{0, 0}, Scale: []float64{s0, s1},
		V:     poly.Poly{Exponents: [][]int{{2, 0}, {1, 1}, {0, 2}}, Coefficients: []float64{p00, 2 * p01, p11}},
		Level: 1.5 * vmax, Box: [][2]float64{{-0.6, 0.6}, {-4, 4}}, Found: true,
		NoiseRadius: 3.44 * nz, Tolerance: 5 * math.Sqrt(gmax), Noise: noise}
}

// heldAtEnd says the reading x held one value over its last n samples or
// more, counted directly (the old stuck rule, without the rest test).
func heldAtEnd(x []float64, n int) bool {
	m := len(x)
	for i := m - n; i < m; i++ {
		if x[i] != x[m-1] {
			return false
		}
	}
	return true
}

// TestStuckQuantised: healthy gimbal runs at rest read through a
// quantised encoder (noise 0.0005 rad, below the quantum) hold one reading
// for long stretches; held at rest, that is not a stuck sensor. A reading
// that freezes mid-approach, or is dead from the start, still is.
//
// The outside check of the rig data is the quantiser's [Widrow2008]: at
// rest on a bin's centre with Gaussian input noise σ, a reading leaves the
// bin with chance p = 2(1 - Φ(q/2σ)) per sample, so the share of runs
// whose last 50 readings all hold is (1-p)^50: 0.098 at q = 0.002
// (q/2σ = 2) and 1 - 3e-5 at q = 0.005 (q/2σ = 5). The count of healthy
// runs held over their ends (what the rule without the rest test
// flagged) must lie in the binomial's central 99.9% for 35 runs.
//
// Measured (seeds below): held at the end, old rule, 4/35 at 0.002 rad and
// 35/35 at 0.005 rad; flagged stuck by the rule with the rest test, 0/35
// and 0/35.
func TestStuckQuantised(t *testing.T) {
	const runs, m = 35, 1000
	for _, tc := range []struct {
		q         float64
		maxStuck  int // healthy runs flagged stuck allowed
		frozenAt  []int
		deadStart bool
	}{
		{q: 0.002, maxStuck: 0, frozenAt: []int{120, 200}, deadStart: true},
		{q: 0.005, maxStuck: 0, frozenAt: []int{120, 200}, deadStart: true},
	} {
		t.Run(fmt.Sprintf("q=%g", tc.q), func(t *testing.T) {
			g := newGimbal(tc.q)
			cert := g.cert()
			s := NewScreener(cert, nil)
			rng := rand.New(rand.NewPCG(7, uint64(tc.q*1e6)))
			held, stuck, other := 0, 0, 0
			// V at the held stretch's first sample over the settle level:
			// the largest on healthy runs held at the end, the least on
			// dead encoders
			worstHealthy, leastDead := 0.0, math.Inf(1)
			for k := range runs {
				r := g.run(fmt.Sprintf("healthy-%d", k), rng, m, -1)
				var rs RunScreen
				s.Screen(&rs, "f", &r)
				if heldAtEnd(r.X[0], tailMax) {
					held++
					worstHealthy = max(worstHealthy, s.st.stuckV[0]/s.SettleLevel())
				}
				for _, f := range rs.Flags {
					if f.Kind == FlagStuck {
						stuck++
						if !heldAtEnd(r.X[0], tailMax) {
							t.Errorf("%s: stuck without a held reading over the last %d samples", r.Name, tailMax)
						}
					} else {
						other++
						t.Logf("%s: flag %s (excess %.3g)", r.Name, f.Kind, f.Excess)
					}
				}
			}
			p := 2 * (1 - distuv.UnitNormal.CDF(g.q/(2*g.sigmaP)))
			b := distuv.Binomial{N: runs, P: math.Pow(1-p, tailMax)}
			lo, hi := binomQuantile(b, 0.0005), binomQuantile(b, 0.9995)
			t.Logf("q %g rad: held over the last %d samples %d/%d (quantiser model: %.2f expected, 99.9%% in %d..%d); flagged stuck %d/%d; other flags %d",
				g.q, tailMax, held, runs, b.Mean(), lo, hi, stuck, runs, other)
			if held < lo || held > hi {
				t.Errorf("held runs %d outside the quantiser model's %d..%d: the rig data do not behave as a quantised sensor at rest", held, lo, hi)
			}
			if held == 0 {
				t.Errorf("no healthy run holds its reading over its end: the case is not exercised")
			}
			if stuck > tc.maxStuck {
				t.Errorf("%d healthy runs flagged stuck (at most %d allowed)", stuck, tc.maxStuck)
			}
			if other > 0 {
				t.Errorf("%d other flags on healthy runs", other)
			}
			// dead encoders: frozen mid-approach, or at 0 from the start
			var bad []ingest.Run
			for _, at := range tc.frozenAt {
				bad = append(bad, g.run(fmt.Sprintf("frozen-%d", at), rng, m, at))
			}
			if tc.deadStart {
				r := g.run("dead", rng, m, -1)
				for i := range r.X[0] {
					r.X[0][i] = 0
				}
				bad = append(bad, r)
			}
			for i := range bad {
				var rs RunScreen
				s.Screen(&rs, "f", &bad[i])
				leastDead = min(leastDead, s.st.stuckV[0]/s.SettleLevel())
				if !hasFlag(&rs, FlagStuck) {
					t.Errorf("%s: a dead encoder is not flagged stuck (flags %v)", bad[i].Name, rs.Flags)
				} else if f := flagOf(&rs, FlagStuck); f.State != "pitch" {
					t.Errorf("%s: stuck names %q, want pitch", bad[i].Name, f.State)
				}
			}
			t.Logf("V where the reading began to hold, over the settle level: at most %.3g on healthy runs held at rest, at least %.3g on dead encoders", worstHealthy, leastDead)
		})
	}
}

// binomQuantile is the least k with CDF(k) >= p.
func binomQuantile(b distuv.Binomial, p float64) int {
	for k := 0; k <= int(b.N); k++ {
		if b.CDF(float64(k)) >= p {
			return k
		}
	}
	return int(b.N)
}
