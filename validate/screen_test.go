package validate

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"

	"basin.example/fit"
	"basin.example/fit/poly"
	"basin.example/ingest"
)

// circleCert is a hand-made certificate: V = z0^2 + z1^2 (plus extra
// zero-coefficient terms when general is set, to force the compiled
// path), level 1, scale (1, 2), equilibrium (0.5, 0).
func circleCert(general bool) *fit.Certificate {
	v := poly.Poly{Exponents: [][]int{{2, 0}, {0, 2}}, Coefficients: []float64{1, 1}}
	if general {
		v.Exponents = append(v.Exponents, []int{3, 1}, []int{0, 4})
		v.Coefficients = append(v.Coefficients, 0, 0)
	}
	return &fit.Certificate{Format: fit.CertificateFormat, Verdict: fit.Inconclusive,
		States: []string{"a", "b"}, Units: []string{"", ""},
		Equilibrium: []float64{0.5, 0}, Scale: []float64{1, 2}, V: v, Level: 1,
		Box: [][2]float64{{-0.5, 1.5}, {-2, 2}}, Found: true,
		NoiseRadius: 0.05, Tolerance: 1e-3}
}

// makeRun samples f(t) (in z coordinates of circleCert) at m times.
func makeRun(name string, m int, dt float64, f func(t float64) (z0, z1 float64)) ingest.Run {
	r := ingest.Run{Name: name, T: make([]float64, m), X: [][]float64{make([]float64, m), make([]float64, m)}}
	for i := range r.T {
		t := float64(i) * dt
		z0, z1 := f(t)
		r.T[i] = t
		r.X[0][i] = 0.5 + z0
		r.X[1][i] = 2 * z1
	}
	return r
}

func TestScreen(t *testing.T) {
	decay := func(t float64) (float64, float64) { // damped rotation, ends at 0
		a := 0.8 * math.Exp(-t)
		return a * math.Cos(3*t), a * math.Sin(3*t)
	}
	lossless := func(t float64) (float64, float64) { return 0.6 * math.Cos(2*t), 0.6 * math.Sin(2*t) }
	grows := func(t float64) (float64, float64) { // spirals out, leaves at |z| = 1
		a := 0.5 * math.Exp(0.2*t)
		return a * math.Cos(2*t), a * math.Sin(2*t)
	}
	bump := func(t float64) (float64, float64) { // decays but jumps up at t = 1
		a := 0.8 * math.Exp(-t)
		if t >= 1 {
			a += 0.2
		}
		if t >= 1.01 {
			a = 0.8*math.Exp(-t) + 0.2*math.Exp(-(t-1)*10)
		}
		return a, 0
	}
	outside := func(t float64) (float64, float64) { return 3, 3 }
	type want struct {
		flags              []string
		startIn, everIn, s bool
	}
	for _, tc := range []struct {
		name string
		run  ingest.Run
		want want
	}{
		{"decays", makeRun("decays", 1000, 0.01, decay), want{nil, true, true, true}},
		{"lossless", makeRun("lossless", 1000, 0.01, lossless), want{[]string{FlagUnsettled}, true, true, false}},
		{"grows", makeRun("grows", 1000, 0.01, grows), want{[]string{FlagRises, FlagLeaves, FlagUnsettled}, true, true, false}},
		{"bump", makeRun("bump", 1000, 0.01, bump), want{[]string{FlagRises}, true, true, true}},
		// A run that never reaches the region has not settled: the runs
		// that leave a basin start outside any sound region.
		{"outside", makeRun("outside", 100, 0.01, outside), want{[]string{FlagUnsettled}, false, false, false}},
	} {
		for variant := 0; variant < 3; variant++ {
			general := variant == 2
			s := NewScreener(circleCert(general), nil)
			s.generic = variant == 1 // quadratic through the general loop
			var got RunScreen
			s.Screen(&got, "f.csv", &tc.run)
			var kinds []string
			for _, f := range got.Flags {
				kinds = append(kinds, f.Kind)
			}
			if !equalStrings(kinds, tc.want.flags) || got.StartInside != tc.want.startIn ||
				got.EverInside != tc.want.everIn || got.Settled != tc.want.s || got.Flagged != (len(kinds) > 0) {
				t.Errorf("%s (general %v): flags %v start %v ever %v settled %v; want %+v",
					tc.name, general, kinds, got.StartInside, got.EverInside, got.Settled, tc.want)
			}
			if got.Samples != tc.run.Len() || got.File != "f.csv" || got.Run != tc.name {
				t.Errorf("%s: identity fields %+v", tc.name, got)
			}
		}
	}
}

// TestScreenFlagDetail checks time and excess of each flag on a run built
// so they are known exactly.
func TestScreenFlagDetail(t *testing.T) {
	// z0 values chosen by hand; z1 = 0. V = z0^2.
	z := []float64{0.9, 0.5, 0.7, 0.3, 1.2, 0.4, 1.1, 0.95}
	r := ingest.Run{Name: "r", T: make([]float64, len(z)), X: [][]float64{make([]float64, len(z)), make([]float64, len(z))}}
	for i, v := range z {
		r.T[i] = float64(i) / 10
		r.X[0][i] = 0.5 + v
	}
	s := NewScreener(circleCert(false), nil)
	var got RunScreen
	s.Screen(&got, "f", &r)
	// rises: 0.25 -> 0.49 at t = 0.2, excess 0.24 - tol; the later rises
	// start or end outside the region and do not count.
	// leaves: first at t = 0.4 (V = 1.44), worst 1.21+... = 0.44.
	// unsettled: w = 1 sample (8/20 -> 1): tail 0.9025 vs head 0.81, not
	// below the settle level 0.0025.
	tol := 1e-3
	want := []Flag{{Kind: FlagRises, Time: 0.2, Excess: 0.49 - 0.25 - tol}, {Kind: FlagLeaves, Time: 0.4, Excess: 0.44}, {Kind: FlagUnsettled, Time: 0.7, Excess: 0.9025 - 0.0025}}
	if len(got.Flags) != len(want) {
		t.Fatalf("flags %+v, want %+v", got.Flags, want)
	}
	for i, f := range got.Flags {
		// 1e-12: a handful of float64 operations on values near 1.
		if f.Kind != want[i].Kind || !scalar.EqualWithinAbs(f.Time, want[i].Time, 1e-12) || !scalar.EqualWithinAbs(f.Excess, want[i].Excess, 1e-12) {
			t.Errorf("flag %d = %+v, want %+v", i, f, want[i])
		}
	}
	// Distances in the states' units. leaves: worst sample z0 = 1.2
	// (a = 1.7), the boundary on its ray at z0 = 1 (a = 1.5): 0.2 in a,
	// 0 in b. rises: worst at z0 = 0.7, grad V = (1.4, 0) in z, so the
	// move is excess/1.4 in z0, times scale 1.
	wantD := [][]float64{{(0.24 - tol) / 1.4, 0}, {0.2, 0}, nil}
	for i, f := range got.Flags {
		if len(f.Distance) != len(wantD[i]) {
			t.Fatalf("flag %s distance %v, want %v", f.Kind, f.Distance, wantD[i])
		}
		for j := range f.Distance {
			// 1e-12: bisection to 2^-60 and a few operations near 1.
			if !scalar.EqualWithinAbsOrRel(f.Distance[j], wantD[i][j], 1e-12, 1e-12) {
				t.Errorf("flag %s distance %v, want %v", f.Kind, f.Distance, wantD[i])
			}
		}
	}
	if !scalar.EqualWithinAbs(s.SettleLevel(), 0.0025, 1e-15) {
		t.Errorf("settle level %g, want 0.0025 (lambda_max 1 times 0.05^2)", s.SettleLevel())
	}
}

// TestScreenerV checks both evaluation paths against the plain
// poly.Poly.Eval (an independent, straightforward evaluator) on random
// quadratics and quartics with cross terms, linear and constant parts.
func TestScreenerV(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 0))
	for n := 1; n <= 4; n++ {
		for _, deg := range []int{2, 4} {
			lib := poly.NewLibrary(n, 0, deg)
			p := poly.Poly{Exponents: lib.Terms(), Coefficients: make([]float64, lib.Len())}
			for k := range p.Coefficients {
				p.Coefficients[k] = rng.NormFloat64()
			}
			c := &fit.Certificate{States: make([]string, n), Equilibrium: make([]float64, n), Scale: make([]float64, n), V: p}
			for j := range c.Scale {
				c.Scale[j] = 1
			}
			s := NewScreener(c, nil)
			if s.quad != (deg == 2) {
				t.Fatalf("n=%d deg=%d: quadratic path %v", n, deg, s.quad)
			}
			z := make([]float64, n)
			for i := 0; i < 50; i++ {
				for j := range z {
					z[j] = 2*rng.Float64() - 1
				}
				want := p.Eval(z)
				// 1e-12 relative: sums of ~15 terms of order 1 in float64.
				if got := s.V(z); !scalar.EqualWithinAbs(got, want, 1e-12*max(1, math.Abs(want))) {
					t.Fatalf("n=%d deg=%d: V = %v, want %v", n, deg, got, want)
				}
			}
		}
	}
}

func TestScreenAllocs(t *testing.T) {
	for _, general := range []bool{false, true} {
		s := NewScreener(circleCert(general), nil)
		r := makeRun("r", 5000, 0.01, func(t float64) (float64, float64) { return 0.5 * math.Cos(t), 0.5 * math.Sin(t) })
		dst := RunScreen{Flags: make([]Flag, 0, 3)}
		if a := testing.AllocsPerRun(20, func() { s.Screen(&dst, "f", &r) }); a != 0 {
			t.Errorf("general %v: %v allocs per run", general, a)
		}
	}
}

func TestScreenRuns(t *testing.T) {
	ds := &ingest.Dataset{}
	for i := 0; i < 9; i++ {
		ph := float64(i)
		ds.Runs = append(ds.Runs, makeRun("r", 200, 0.05, func(t float64) (float64, float64) {
			a := 0.7 * math.Exp(-t)
			if i%3 == 0 {
				a = 0.7
			}
			return a * math.Cos(2*t+ph), a * math.Sin(2*t+ph)
		}))
	}
	got, err := ScreenRuns(context.Background(), circleCert(false), ds, nil)
	if err != nil {
		t.Fatal(err)
	}
	for i, g := range got {
		if g.Flagged != (i%3 == 0) {
			t.Errorf("run %d flagged %v", i, g.Flagged)
		}
	}
}

func equalStrings(a, b []string) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// BenchmarkScreen measures the screening hot loop on 100 runs of 10,000
// samples, one goroutine per core, for a quadratic and a quartic V.
func BenchmarkScreen(b *testing.B) {
	ds := &ingest.Dataset{}
	for i := 0; i < 100; i++ {
		ph := float64(i)
		ds.Runs = append(ds.Runs, makeRun("r", 10000, 0.001, func(t float64) (float64, float64) {
			a := 0.8 * math.Exp(-t)
			return a * math.Cos(3*t+ph), a * math.Sin(3*t+ph)
		}))
	}
	samples := ds.Samples()
	for _, bc := range []struct {
		name    string
		general bool
		generic bool
	}{{"quadratic", false, false}, {"quadratic-unspecialised", false, true}, {"quartic", true, false}} {
		b.Run(bc.name, func(b *testing.B) {
			cert := circleCert(bc.general)
			b.SetBytes(int64(samples * 2 * 8))
			for b.Loop() {
				screenRunsWith(ds, cert, bc.generic)
			}
			b.ReportMetric(float64(samples)*float64(b.N)/b.Elapsed().Seconds()/1e6, "Msamples/s")
		})
	}
}

// BenchmarkCheck is the whole certificate check (screening, decorrelation
// time, scenario bound) of 100 held-out runs of 10,000 samples; the
// target is under 1 s.
func BenchmarkCheck(b *testing.B) {
	ds := &ingest.Dataset{States: []ingest.Column{{Name: "a"}, {Name: "b"}}}
	for i := 0; i < 100; i++ {
		ph := float64(i)
		ds.Runs = append(ds.Runs, makeRun("r", 10000, 0.001, func(t float64) (float64, float64) {
			a := 0.8 * math.Exp(-t)
			return a * math.Cos(3*t+ph), a * math.Sin(3*t+ph)
		}))
	}
	cert := circleCert(false)
	b.SetBytes(int64(ds.Samples() * 2 * 8))
	b.ReportAllocs()
	for b.Loop() {
		if _, _, err := Check(context.Background(), cert, ds, nil); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(b.Elapsed().Seconds()/float64(b.N), "s/check")
}

// screenRunsWith is ScreenRuns with the specialised kernel switchable.
func screenRunsWith(ds *ingest.Dataset, cert *fit.Certificate, generic bool) {
	out := make([]RunScreen, len(ds.Runs))
	done := make(chan bool)
	for w := 0; w < 2; w++ {
		go func() {
			s := NewScreener(cert, nil)
			s.generic = generic
			for i := w; i < len(ds.Runs); i += 2 {
				s.Screen(&out[i], "f", &ds.Runs[i])
			}
			done <- true
		}()
	}
	<-done
	<-done
}

// TestScreenEmptyRegion: a certificate with no V (none found) or a zero
// level has an empty region: nothing is inside, no pair is counted, and
// the run (ending outside) is unsettled.
func TestScreenEmptyRegion(t *testing.T) {
	r := makeRun("r", 100, 0.01, func(t float64) (float64, float64) { return 0.1, 0 })
	only := func(r RunScreen) bool { return len(r.Flags) == 1 && r.Flags[0].Kind == FlagUnsettled }
	for _, c := range []*fit.Certificate{circleCert(false), circleCert(true)} {
		c.Level = 0
		var got RunScreen
		NewScreener(c, nil).Screen(&got, "f", &r)
		if got.EverInside || !only(got) || got.Pairs != 0 {
			t.Errorf("level 0: %+v", got)
		}
		c.Level, c.V = 1, poly.Poly{}
		NewScreener(c, nil).Screen(&got, "f", &r)
		if got.EverInside || !only(got) || got.Pairs != 0 {
			t.Errorf("no V: %+v", got)
		}
	}
}

// TestScreenLeavesNoise: a run that settles with samples past the region's
// boundary by less than the noise (V above the level by less than the
// tolerance, or past the box by less than the noise radius times the
// scale) is not flagged leaves; past by more, it is, with the distance in
// the states' units.
func TestScreenLeavesNoise(t *testing.T) {
	c := circleCert(false) // level 1, tol 1e-3, noise radius 0.05, box a in [-0.5, 1.5]
	for _, tc := range []struct {
		name  string
		z0    float64 // the excursion in z0 after entering
		z1    float64
		leave bool
		dist  []float64
	}{
		{"V within tolerance", math.Sqrt(1 + 0.5e-3), 0, false, nil},
		{"V past tolerance", 1.01, 0, true, []float64{0.01, 0}},
		// past the box edge a = 1.5 (z0 = 1) by 0.0004 < 0.05 * scale 1,
		// with V = 1.0008 within the tolerance too
		{"box within noise", 1.0004, 0, false, nil},
		// b past its edge (2, z1 = 1) by 0.2 > 0.05 * 2, V = 1.21: leaves
		{"V and box past noise", 0, 1.1, true, []float64{0, 0.2}},
	} {
		zs := [][2]float64{{0.5, 0}, {0.6, 0}, {tc.z0, tc.z1}, {0.3, 0}}
		r := ingest.Run{Name: tc.name, X: [][]float64{nil, nil}}
		for k := 0; k < 400; k++ {
			z := zs[min(k/100, 3)]
			if k/100 == 3 {
				z = [2]float64{0.3 * math.Exp(-float64(k-300)/10), 0}
			}
			r.T = append(r.T, float64(k)*0.01)
			r.X[0] = append(r.X[0], 0.5+z[0])
			r.X[1] = append(r.X[1], 2*z[1])
		}
		var got RunScreen
		NewScreener(c, nil).Screen(&got, "f", &r)
		if hasFlag(&got, FlagLeaves) != tc.leave {
			t.Errorf("%s: flags %+v, want leaves %v", tc.name, got.Flags, tc.leave)
			continue
		}
		if tc.leave {
			d := flagOf(&got, FlagLeaves).Distance
			for j := range tc.dist {
				// 1e-9: bisection and the float64 sums above
				if len(d) != 2 || !scalar.EqualWithinAbsOrRel(d[j], tc.dist[j], 1e-9, 1e-9) {
					t.Errorf("%s: distance %v, want %v", tc.name, d, tc.dist)
				}
			}
		}
	}
}

// TestSettleLevelBall checks the settle level (the largest V on the noise
// ball |z| <= r) against outside values. For a quadratic V = z'Pz it is
// r²·lambda_max(P), the Rayleigh quotient's maximum over the sphere
// (Golub and Van Loan, Matrix Computations, 4th ed., 2013, §8.1
// [GolubVanLoan2013]; Rayleigh–Ritz [HornJohnson2013]; common
// practice), with
// lambda_max from gonum's mat.EigenSym, an independent eigensolver; 1e-12
// relative covers both solvers' rounding on matrices of norm ~1. The
// Gershgorin bound it replaces overestimated every case but the one
// with equal row sums (checked: the old figure is larger there). For a quartic V the level is
// an upper bound: no point of a dense polar grid of the ball exceeds it.
func TestSettleLevelBall(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 9))
	random := func(n int) []float64 { // a random symmetric positive definite P, row-major
		a := make([]float64, n*n)
		for i := range a {
			a[i] = rng.NormFloat64()
		}
		p := make([]float64, n*n)
		for i := range n {
			for j := range n {
				for k := range n {
					p[i*n+j] += a[k*n+i] * a[k*n+j] / float64(n)
				}
			}
			p[i*n+i] += 0.1
		}
		return p
	}
	for _, tc := range []struct {
		name string
		n    int
		p    []float64
		r    float64
		// gersh: Gershgorin's bound is exact (equal rows' sums)
		gersh bool
	}{
		{"2x2 [[2,1],[1,2]]", 2, []float64{2, 1, 1, 2}, 0.05, true},
		{"2x2 skewed", 2, []float64{1, 0.3, 0.3, 0.2}, 0.1, false},
		{"2x2 indefinite", 2, []float64{1, -2, -2, 0.5}, 0.2, false},
		{"3x3 random", 3, random(3), 0.05, false},
		{"6x6 random", 6, random(6), 0.3, false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			n := tc.n
			var v poly.Poly
			for i := range n {
				for j := i; j < n; j++ {
					e := make([]int, n)
					e[i]++
					e[j]++
					c := tc.p[i*n+j]
					if i != j {
						c *= 2
					}
					v.Exponents = append(v.Exponents, e)
					v.Coefficients = append(v.Coefficients, c)
				}
			}
			c := &fit.Certificate{States: make([]string, n), Equilibrium: make([]float64, n), Scale: make([]float64, n),
				V: v, Level: 1, NoiseRadius: tc.r}
			for j := range c.Scale {
				c.Scale[j] = 1
			}
			var es mat.EigenSym
			if !es.Factorize(mat.NewSymDense(n, append([]float64(nil), tc.p...)), false) {
				t.Fatal("EigenSym failed")
			}
			ev := es.Values(nil)
			want := tc.r * tc.r * max(ev[n-1], 0)
			s := NewScreener(c, nil)
			if !s.quad {
				t.Fatal("not on the quadratic path")
			}
			if got := s.SettleLevel(); !scalar.EqualWithinRel(got, want, 1e-12) {
				t.Errorf("settle level %.17g, want r²·lambda_max = %.17g", got, want)
			}
			gersh := math.Inf(-1)
			for i := range n {
				g := tc.p[i*n+i]
				for j := range n {
					if j != i {
						g += math.Abs(tc.p[i*n+j])
					}
				}
				gersh = max(gersh, g)
			}
			if old := tc.r * tc.r * max(gersh, 0); !tc.gersh && !(old > want*(1+1e-9)) {
				t.Errorf("Gershgorin's %.6g not above the exact %.6g: the case tests nothing", old, want)
			}
		})
	}
	t.Run("quartic bound", func(t *testing.T) {
		c := circleCert(false)
		c.V = poly.Poly{Exponents: [][]int{{2, 0}, {1, 1}, {0, 2}, {4, 0}, {2, 2}, {0, 3}},
			Coefficients: []float64{1, 0.4, 0.5, 3, -2, 1}}
		c.NoiseRadius = 0.2
		s := NewScreener(c, nil)
		got := s.SettleLevel()
		seen := math.Inf(-1)
		z := make([]float64, 2)
		for i := 0; i <= 40; i++ {
			for k := range 720 {
				rho, a := c.NoiseRadius*float64(i)/40, 2*math.Pi*float64(k)/720
				z[0], z[1] = rho*math.Cos(a), rho*math.Sin(a)
				v := c.V.Eval(z)
				seen = max(seen, v)
				if !(v <= got) {
					t.Fatalf("V(%v) = %.15g above the settle level %.15g", z, v, got)
				}
			}
		}
		if !(seen > 0) {
			t.Fatalf("grid maximum %g", seen)
		}
	})
}

// TestEvalQuadCols checks the quadratic kernels (evalBlock's choice:
// unrolled for 3 to maxUnrolled states; and the column-wise one, called
// directly, for every count) against the per-sample loop (quadV, the
// reference kept for benchmarks): the same
// operations in the same order, so V, |z|² and both box flags must agree
// to the bit, on random quadratics of 1 and 3 to maxUnrolled+2 states (2
// states have their own kernel) with cross terms,
// linear and constant parts, and samples inside and outside the box,
// NaN and infinite ones among them.
func TestEvalQuadCols(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 4))
	for _, n := range []int{1, 3, 4, 5, 6, 7, 8, 9, 10} {
		lib := poly.NewLibrary(n, 0, 2)
		p := poly.Poly{Exponents: lib.Terms(), Coefficients: make([]float64, lib.Len())}
		for k := range p.Coefficients {
			p.Coefficients[k] = rng.NormFloat64()
		}
		c := &fit.Certificate{States: make([]string, n), Equilibrium: make([]float64, n), Scale: make([]float64, n), V: p,
			Level: 1, NoiseRadius: 0.05, Box: make([][2]float64, n)}
		for j := range c.Scale {
			// a wider box for more states: some samples inside it
			w := max(1.5, 0.35*float64(n))
			c.Scale[j], c.Equilibrium[j], c.Box[j] = 0.5+rng.Float64(), rng.NormFloat64(), [2]float64{-w, w}
		}
		kern, cols, ref := NewScreener(c, nil), NewScreener(c, nil), NewScreener(c, nil)
		ref.generic = true
		const m = screenBlock - 3
		X := make([][]float64, n)
		for j := range X {
			X[j] = make([]float64, m+7)
			for i := range X[j] {
				X[j][i] = 2 * rng.NormFloat64()
			}
		}
		X[0][9], X[n-1][20] = math.NaN(), math.Inf(-1)
		X[n/2][30], X[n-1][31], X[0][32] = math.Inf(1), math.NaN(), math.Inf(-1)
		for _, i0 := range []int{0, 7} {
			kern.evalBlock(X, i0, i0+m)
			cols.evalQuadCols(X, i0, i0+m)
			ref.evalBlock(X, i0, i0+m)
			outs := 0
			for k := range m {
				same := func(a, b float64) bool {
					return math.Float64bits(a) == math.Float64bits(b) || (math.IsNaN(a) && math.IsNaN(b))
				}
				for _, got := range []*Screener{kern, cols} {
					if !same(got.vbuf[k], ref.vbuf[k]) || !same(got.rbuf[k], ref.rbuf[k]) ||
						got.obuf[k] != ref.obuf[k] || got.wbuf[k] != ref.wbuf[k] {
						t.Fatalf("n=%d sample %d (kernel %v): V %v |z|² %v out %v wide %v, per sample %v %v %v %v", n, i0+k, got == kern,
							got.vbuf[k], got.rbuf[k], got.obuf[k], got.wbuf[k], ref.vbuf[k], ref.rbuf[k], ref.obuf[k], ref.wbuf[k])
					}
				}
				if ref.obuf[k] {
					outs++
				}
			}
			if outs == 0 || outs == m {
				t.Fatalf("n=%d: %d of %d samples outside the box: the flags are not tested", n, outs, m)
			}
		}
	}
}

// BenchmarkEvalQuad measures evalBlock's quadratic kernels on full
// blocks of 3 and 6 states with cross terms: the unrolled one (evalBlock's
// choice), the column-wise one and the per-sample loop.
func BenchmarkEvalQuad(b *testing.B) {
	rng := rand.New(rand.NewPCG(3, 3))
	for _, n := range []int{3, 6} {
		lib := poly.NewLibrary(n, 0, 2)
		p := poly.Poly{Exponents: lib.Terms(), Coefficients: make([]float64, lib.Len())}
		for k := range p.Coefficients {
			p.Coefficients[k] = rng.NormFloat64()
		}
		c := &fit.Certificate{States: make([]string, n), Equilibrium: make([]float64, n), Scale: make([]float64, n), V: p,
			Level: 1, NoiseRadius: 0.05, Box: make([][2]float64, n)}
		X := make([][]float64, n)
		for j := range X {
			c.Scale[j], c.Box[j] = 1, [2]float64{-3, 3}
			X[j] = make([]float64, screenBlock)
			for i := range X[j] {
				X[j][i] = rng.NormFloat64()
			}
		}
		for _, kind := range []string{"unrolled", "columns", "per-sample"} {
			s := NewScreener(c, nil)
			s.generic = kind == "per-sample"
			b.Run(fmt.Sprintf("n=%d/%s", n, kind), func(b *testing.B) {
				for b.Loop() {
					if kind == "columns" {
						s.evalQuadCols(X, 0, screenBlock)
					} else {
						s.evalBlock(X, 0, screenBlock)
					}
				}
				b.ReportMetric(b.Elapsed().Seconds()*1e9/float64(b.N)/screenBlock, "ns/sample")
			})
		}
	}
}
