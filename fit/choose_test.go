package fit

import (
	"context"
	"math"
	"math/rand/v2"
	"testing"

	"basin.example/ingest"

	"gonum.org/v1/gonum/floats/scalar"
)

// twoWell is the unforced two-well Duffing oscillator x” + δx' - x + x³
// = 0 with δ = 0.5 ([GuckenheimerHolmes1983] §2.2: the double well
// α = -1, β = 1; rest points ±1 stable, 0 a saddle).
var twoWell = system{
	name:   "two-well",
	states: []string{"x", "v"},
	f: func(d, x []float64) {
		d[0] = x[1]
		d[1] = x[0] - 0.5*x[1] - x[0]*x[0]*x[0]
	},
	true: []map[string]float64{{"v": 1}, {"x": 1, "v": -0.5, "x^3": -1}},
}

// thermalLoop is a first-order thermal loop, Newton's law of cooling
// dT/dt = -k (T - Tamb) with k = 0.02 1/s, Tamb = 20 (the lumped
// capacitance model, [IncroperaDeWitt] §5.1; from memory).
var thermalLoop = system{
	name:   "thermal",
	states: []string{"T"},
	f:      func(d, x []float64) { d[0] = -0.02 * (x[0] - 20) },
	true:   []map[string]float64{{"1": 0.4, "T": -0.02}},
}

func boxStarts(rng *rand.Rand, runs int, lo, hi []float64) [][]float64 {
	var out [][]float64
	for range runs {
		s := make([]float64, len(lo))
		for j := range s {
			s[j] = lo[j] + (hi[j]-lo[j])*rng.Float64()
		}
		out = append(out, s)
	}
	return out
}

// TestFieldKeepsTerms: with the default options (derivative method and
// threshold chosen by held-out error) a small real term survives. The
// two-well damping is worth about 4% of dv/dt's spread; the thermal
// loop's whole equation is small against the noise of a 10 Hz slope.
// Tolerances: 5% on the damping and on k (the brief's bound; measured
// 0.1-0.6%), the true support exactly.
func TestFieldKeepsTerms(t *testing.T) {
	for _, tc := range []struct {
		name  string
		sys   system
		ds    func() *Model
		state int
		term  string
		tol   float64
	}{
		{"two-well 1% noise", twoWell, func() *Model {
			st := boxStarts(rand.New(rand.NewPCG(5, 0)), 30, []float64{-2, -2}, []float64{2, 2})
			return mustFit(t, simulate(twoWell, st, 20, 0.01, 10, 0.01, 11), nil)
		}, 1, "v", 0.05},
		// Forced to finite differences, the term is kept (it used to be
		// dropped); their noise attenuates every coefficient of dv/dt by
		// about 7% here (noise in the regressors), hence 10%.
		{"two-well 1% noise, fornberg", twoWell, func() *Model {
			st := boxStarts(rand.New(rand.NewPCG(5, 0)), 30, []float64{-2, -2}, []float64{2, 2})
			return mustFit(t, simulate(twoWell, st, 20, 0.01, 10, 0.01, 11), &FieldOptions{Derivative: DerivFornberg, Bootstrap: -1})
		}, 1, "v", 0.10},
		{"thermal 0.2% noise", thermalLoop, func() *Model {
			st := boxStarts(rand.New(rand.NewPCG(2, 0)), 8, []float64{40}, []float64{80})
			return mustFit(t, simulate(thermalLoop, st, 200, 0.1, 2, 0.002, 11), nil)
		}, 0, "T", 0.05},
		{"thermal 1% noise", thermalLoop, func() *Model {
			st := boxStarts(rand.New(rand.NewPCG(2, 0)), 8, []float64{40}, []float64{80})
			return mustFit(t, simulate(thermalLoop, st, 200, 0.1, 2, 0.01, 11), nil)
		}, 0, "T", 0.05},
	} {
		t.Run(tc.name, func(t *testing.T) {
			m := tc.ds()
			for _, e := range m.Equations {
				t.Logf("%s (%s): %v %.5g, held-out %.3g of spread (%.3g/s), dense %.3g", e.State, m.Derivative, e.Exponents, e.Coefficients, e.HeldoutShare, e.HeldoutRMS, e.DenseError)
				if e.Warning != "" {
					t.Errorf("%s: warning %q", e.State, e.Warning)
				}
			}
			if sup, _ := compare(m, tc.sys); !sup {
				t.Errorf("support not recovered")
			}
			want := tc.sys.true[tc.state][tc.term]
			got := math.NaN()
			eq := m.Equations[tc.state]
			for k, x := range eq.Exponents {
				if monoName(x, tc.sys.states) == tc.term {
					got = eq.Coefficients[k]
				}
			}
			if !scalar.EqualWithinRel(got, want, tc.tol) {
				t.Errorf("%s coefficient of d%s/dt = %g, want %g within %g", tc.term, eq.State, got, want, tc.tol)
			}
		})
	}
}

// TestFieldWarnsEmpty: a sensor that logs only noise gets an empty
// equation and a warning; the real state's equation none.
func TestFieldWarnsEmpty(t *testing.T) {
	sys := system{name: "decay", states: []string{"x"}, f: func(d, x []float64) { d[0] = -x[0] }}
	st := boxStarts(rand.New(rand.NewPCG(1, 0)), 6, []float64{-2}, []float64{2})
	ds := simulate(sys, st, 5, 0.01, 5, 0.002, 3)
	rng := rand.New(rand.NewPCG(9, 9))
	ds.States = append(ds.States, ds.States[0])
	ds.States[1].Name = "hum"
	for r := range ds.Runs {
		hum := make([]float64, ds.Runs[r].Len())
		for i := range hum {
			hum[i] = 0.1 * rng.NormFloat64()
		}
		ds.Runs[r].X = append(ds.Runs[r].X, hum)
	}
	m := mustFit(t, ds, nil)
	if w := m.Equations[0].Warning; w != "" {
		t.Errorf("x: warning %q", w)
	}
	if w := m.Equations[1].Warning; w == "" || len(m.Equations[1].Coefficients) > 0 {
		t.Errorf("hum: %d terms, warning %q; want none and a warning", len(m.Equations[1].Coefficients), w)
	}
}

func mustFit(t *testing.T, ds *ingest.Dataset, opts *FieldOptions) *Model {
	t.Helper()
	if opts == nil {
		opts = &FieldOptions{Bootstrap: -1}
	}
	m, err := Field(context.Background(), ds, opts)
	if err != nil {
		t.Fatal(err)
	}
	return m
}
