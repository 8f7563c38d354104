package validate

import (
	"context"
	"math"
	"math/rand/v2"
	"testing"

	"basin.example/fit"
	"basin.example/fit/poly"
	"basin.example/ingest"
)

// TestCheckOtherRest: a checked run that comes to rest outside the region
// settled at another rest point. Its unsettled flag stays (it lies
// outside this certificate's claim) but carries where it came to rest,
// and NameRests names that point when a candidate lies there; a run at
// rest off the equilibrium inside the region, and one still moving,
// carry none.
//
// The latch is the double-well Duffing oscillator x” = x - x³ - 0.8 x'
// (α = -1, β = 1, δ = 0.8 in [GuckenheimerHolmes1983]'s form, from
// memory): rest points at x = ±1 (wells) and 0 (a saddle), by x - x³ = 0.
// The certificate is about the well at +1 (V = |z|², z = (x - 1, x')/0.5,
// level 1). Runs of 30 s at 100 Hz by RK4 (h/4 substeps), noise 1e-4:
// from (1.4, 0) to +1 (settled), from (-1.4, 0.2) to -1, where the
// linearisation's rate ζω = 0.4/s leaves at most e^{-0.4·27} = 2e-5 of
// the start in the tail (the last tenth), so its rest point is (-1, 0)
// to 1e-3; a run held at (1.2, 0) inside the region; a run spiralling
// outside the region that is still moving at its end (lossless, δ = 0,
// from (-1.5, 0), its energy conserved).
func TestCheckOtherRest(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 0))
	run := func(name string, x0, v0, delta float64) ingest.Run {
		const h, m = 0.01, 3000
		f := func(x, v float64) (float64, float64) { return v, x - x*x*x - delta*v }
		r := ingest.Run{Name: name, T: make([]float64, m), X: [][]float64{make([]float64, m), make([]float64, m)}}
		x, v := x0, v0
		for i := range m {
			r.T[i] = float64(i) * h
			r.X[0][i], r.X[1][i] = x+1e-4*rng.NormFloat64(), v+1e-4*rng.NormFloat64()
			for range 4 {
				q := h / 4
				a1, b1 := f(x, v)
				a2, b2 := f(x+q/2*a1, v+q/2*b1)
				a3, b3 := f(x+q/2*a2, v+q/2*b2)
				a4, b4 := f(x+q*a3, v+q*b3)
				x += q / 6 * (a1 + 2*a2 + 2*a3 + a4)
				v += q / 6 * (b1 + 2*b2 + 2*b3 + b4)
			}
		}
		return r
	}
	held := ingest.Run{Name: "held", T: make([]float64, 3000), X: [][]float64{make([]float64, 3000), make([]float64, 3000)}}
	for i := range held.T {
		held.T[i] = float64(i) * 0.01
		held.X[0][i], held.X[1][i] = 1.2+1e-4*rng.NormFloat64(), 1e-4*rng.NormFloat64()
	}
	ds := &ingest.Dataset{States: []ingest.Column{{Name: "latch"}, {Name: "latch_rate"}},
		Runs: []ingest.Run{run("home", 1.4, 0, 0.8), run("other", -1.4, 0.2, 0.8), held, run("moving", -1.5, 0, 0)}}
	cert := &fit.Certificate{Format: fit.CertificateFormat, Verdict: fit.Certified, Strength: fit.Asymptotic,
		States: []string{"latch", "latch_rate"}, Units: []string{"mm", "mm/s"},
		Equilibrium: []float64{1, 0}, Scale: []float64{0.5, 0.5},
		V:     poly.Poly{Exponents: [][]int{{2, 0}, {0, 2}}, Coefficients: []float64{1, 1}},
		Level: 1, Found: true, NoiseRadius: 0.05, Tolerance: 1e-3}
	_, runs, err := Check(context.Background(), cert, ds, nil)
	if err != nil {
		t.Fatal(err)
	}
	unsettled := func(r *RunScreen) *Flag {
		for k := range r.Flags {
			if r.Flags[k].Kind == FlagUnsettled {
				return &r.Flags[k]
			}
		}
		return nil
	}
	if f := unsettled(&runs[0]); f != nil {
		t.Errorf("home: %+v, want settled", f)
	}
	f := unsettled(&runs[1])
	if f == nil || len(f.RestPoint) != 2 || !(math.Abs(f.RestPoint[0]+1) <= 1e-3) || !(math.Abs(f.RestPoint[1]) <= 1e-3) {
		t.Fatalf("other: unsettled flag %+v, want one at rest at (-1, 0) to 1e-3", f)
	}
	for _, i := range []int{2, 3} {
		if f := unsettled(&runs[i]); f == nil || f.RestPoint != nil {
			t.Errorf("%s: unsettled flag %+v, want one without a rest point", runs[i].Run, f)
		}
	}
	// Without a V there is no region, so nowhere is outside it: the run
	// at rest in the other well is not said to be at another rest point.
	noV := *cert
	noV.V, noV.Level, noV.Found, noV.Verdict, noV.Strength = poly.Poly{}, 0, false, fit.Inconclusive, fit.NoClaim
	if _, nv, err := Check(context.Background(), &noV, ds, nil); err != nil {
		t.Fatal(err)
	} else {
		for i := range nv {
			if f := unsettled(&nv[i]); f != nil && f.RestPoint != nil {
				t.Errorf("no V, %s: unsettled flag with a rest point %v", nv[i].Run, f.RestPoint)
			}
		}
	}
	// Naming: the other well names it; the saddle, two scale units from
	// it against four from the certificate's equilibrium, does not.
	for _, c := range []struct {
		names []string
		pts   [][]float64
		want  string
	}{
		{[]string{"the saddle", "certificate-2.json's rest point"}, [][]float64{{0, 0}, {-1, 0}}, "certificate-2.json's rest point"},
		{[]string{"the saddle"}, [][]float64{{0, 0}}, ""},
	} {
		rs := []RunScreen{{Flags: []Flag{*f}}}
		NameRests(rs, cert, c.names, c.pts)
		if got := rs[0].Flags[0].RestName; got != c.want {
			t.Errorf("candidates %v: named %q, want %q", c.names, got, c.want)
		}
	}
}
