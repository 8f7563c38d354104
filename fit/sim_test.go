package fit

import (
	"fmt"
	"math"
	"math/rand/v2"

	"basin.example/ingest"
)

// Test data: a small classical RK4 integrator and a few systems. Noise is
// white, Gaussian, seeded, with standard deviation noise·(range of the
// state over all runs).

type system struct {
	name   string
	states []string
	f      func(dst, x []float64)
	// true coefficients: true[i] maps a monomial name to its coefficient
	true []map[string]float64
}

func rk4(f func(dst, x []float64), x0 []float64, h float64, steps, every int) (t []float64, X [][]float64) {
	n := len(x0)
	x := append([]float64(nil), x0...)
	k1, k2, k3, k4, tmp := make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
	X = make([][]float64, n)
	record := func(s int) {
		t = append(t, float64(s)*h)
		for j := range x {
			X[j] = append(X[j], x[j])
		}
	}
	record(0)
	for s := 1; s <= steps; s++ {
		f(k1, x)
		for j := range x {
			tmp[j] = x[j] + h/2*k1[j]
		}
		f(k2, tmp)
		for j := range x {
			tmp[j] = x[j] + h/2*k2[j]
		}
		f(k3, tmp)
		for j := range x {
			tmp[j] = x[j] + h*k3[j]
		}
		f(k4, tmp)
		for j := range x {
			x[j] += h / 6 * (k1[j] + 2*k2[j] + 2*k3[j] + k4[j])
		}
		if s%every == 0 {
			record(s)
		}
	}
	return t, X
}

// simulate makes one run per start: duration dur, sample step dt, RK4
// substeps sub per sample.
func simulate(sys system, starts [][]float64, dur, dt float64, sub int, noise float64, seed uint64) *ingest.Dataset {
	ds := &ingest.Dataset{}
	for _, s := range sys.states {
		ds.States = append(ds.States, ingest.Column{Name: s})
	}
	steps := int(math.Round(dur / dt))
	for r, x0 := range starts {
		t, X := rk4(sys.f, x0, dt/float64(sub), steps*sub, sub)
		ds.Runs = append(ds.Runs, ingest.Run{Name: fmt.Sprintf("run%02d", r), Source: ingest.Source{File: fmt.Sprintf("run%02d.csv", r)}, T: t, X: X})
	}
	if noise > 0 {
		rng := rand.New(rand.NewPCG(seed, 7))
		for j := range sys.states {
			lo, hi := math.Inf(1), math.Inf(-1)
			for _, r := range ds.Runs {
				for _, v := range r.X[j] {
					lo, hi = math.Min(lo, v), math.Max(hi, v)
				}
			}
			sd := noise * (hi - lo)
			for _, r := range ds.Runs {
				for i := range r.X[j] {
					r.X[j][i] += sd * rng.NormFloat64()
				}
			}
		}
	}
	return ds
}

var lorenz = system{
	name:   "lorenz",
	states: []string{"x", "y", "z"},
	f: func(d, x []float64) {
		d[0] = 10 * (x[1] - x[0])
		d[1] = x[0]*(28-x[2]) - x[1]
		d[2] = x[0]*x[1] - 8.0/3*x[2]
	},
	true: []map[string]float64{
		{"x": -10, "y": 10},
		{"x": 28, "y": -1, "x z": -1},
		{"x y": 1, "z": -8.0 / 3},
	},
}

// duffing is a damped, hardening Duffing oscillator (one well):
// x' = y, y' = -x - 0.2y - x³.
var duffing = system{
	name:   "duffing",
	states: []string{"x", "y"},
	f: func(d, x []float64) {
		d[0] = x[1]
		d[1] = -x[0] - 0.2*x[1] - x[0]*x[0]*x[0]
	},
	true: []map[string]float64{{"y": 1}, {"x": -1, "y": -0.2, "x^3": -1}},
}

// vanderpol with mu = 1 ([VanderPolCycle]).
var vanderpol = system{
	name:   "vanderpol",
	states: []string{"x", "y"},
	f: func(d, x []float64) {
		d[0] = x[1]
		d[1] = (1-x[0]*x[0])*x[1] - x[0]
	},
	true: []map[string]float64{{"y": 1}, {"x": -1, "y": 1, "x^2 y": -1}},
}

// compare returns whether the model's support equals the true one and the
// largest relative coefficient error over the true terms (1 for a missed
// term).
func compare(m *Model, sys system) (support bool, maxRel float64) {
	support, maxRel, _, _ = compareCount(m, sys)
	return support, maxRel
}

// compareCount is compare that also counts the missed and the extra terms;
// maxRel is then over the true terms that were found; a NaN coefficient
// makes it NaN (math.Max propagates NaN), so callers compare with !(rel <= tol).
func compareCount(m *Model, sys system) (support bool, maxRel float64, missed, extra int) {
	support = true
	found := 0.0
	for i, eq := range m.Equations {
		got := map[string]float64{}
		for k, e := range eq.Exponents {
			got[monoName(e, sys.states)] = eq.Coefficients[k]
		}
		for name, want := range sys.true[i] {
			g, ok := got[name]
			if !ok {
				support = false
				missed++
				continue
			}
			found = math.Max(found, math.Abs(g-want)/math.Abs(want))
		}
		for name := range got {
			if _, ok := sys.true[i][name]; !ok {
				support = false
				extra++
			}
		}
	}
	maxRel = found
	if missed > 0 {
		maxRel = 1
	}
	return support, maxRel, missed, extra
}

func monoName(e []int, names []string) string {
	s := ""
	for j, p := range e {
		if p == 0 {
			continue
		}
		if s != "" {
			s += " "
		}
		s += names[j]
		if p > 1 {
			s += fmt.Sprintf("^%d", p)
		}
	}
	if s == "" {
		return "1"
	}
	return s
}

// softening is a fast, lightly damped oscillator with a softening spring
// (saddles at ±0.346): x' = y, y' = -90x - 2.85y + 750x³; sampled at
// 200 Hz in the derivative table, about 7 samples per radian of its
// 9.5 rad/s oscillation.
var softening = system{
	name:   "softening",
	states: []string{"x", "y"},
	f: func(d, x []float64) {
		d[0] = x[1]
		d[1] = -90*x[0] - 2.85*x[1] + 750*x[0]*x[0]*x[0]
	},
	true: []map[string]float64{{"y": 1}, {"x": -90, "y": -2.85, "x^3": 750}},
}
