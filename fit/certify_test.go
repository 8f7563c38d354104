package fit

import (
	"context"
	"math"
	"math/rand/v2"
	"testing"

	"github.com/basin-dev/basin/ingest"
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
		if norm2(x) > blow*blow {
			return ts, xs, false
		}
	}
	return ts, xs, true
}

// certRuns simulates runs from random starts in box that converge to the
// equilibrium (within 0.05) and returns them as a dataset; noise adds
// Gaussian measurement noise of that standard deviation.
func certRuns(s *certSystem, box [][2]float64, runs int, h float64, steps, every int, noise float64, seed uint64) *ingest.Dataset {
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
		if d > 0.05*0.05 {
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
// (Khalil, Nonlinear Systems, 3rd ed., §8.2; REFERENCES.md B4).
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

func TestCertifyVanDerPol(t *testing.T) {
	certDebug = t.Logf
	defer func() { certDebug = nil }()
	ds := certRuns(vdpReverse, [][2]float64{{-2.2, 2.2}, {-3, 3}}, 100, 0.005, 3000, 10, 0, 1)
	m := vdpReverse.model([]float64{1, 1})
	for _, deg := range []int{2, 4} {
		c, err := Certify(context.Background(), m, ds, &CertifyOptions{Degree: deg})
		if err != nil {
			t.Fatal(err)
		}
		t.Logf("deg %d: found %v level %.4g share %.3f volume %.3f (ROA share %.3f) limit %s rounds %d solves %d reason %s",
			deg, c.Found, c.Level, c.Region.EnvelopeShare, c.Region.Volume, c.Region.Volume/13.72222, c.Region.Limit, c.Region.LPRounds, c.Region.Solves, c.Reason)
		t.Logf("V = %v", c.V.Coefficients)
	}
}

var _ = math.Pi
