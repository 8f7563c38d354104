package report

import (
	"fmt"
	"math"
	"strings"

	"basin.example/fit"
	"basin.example/fit/poly"
	"basin.example/ingest"
	"basin.example/validate"
)

// The fixture is the linear oscillator x1' = x2, x2' = -x1 - x2, whose
// Lyapunov equation AᵀP + PA = -I has P = [[3/2, 1/2], [1/2, 1]]
// ([Khalil2002] ch. 4, from memory; confirmed in math.stackexchange
// q. 4604793; keys in docs/references.md). So V = zᵀPz with
// z = x - x*, and dV/dt = -|z|² along every run. Runs are integrated with
// classical RK4 (common practice).

var fixtureEquil = []float64{0.25, -0.1}

const fixtureCertJSON = `{
  "format": "basin.certificate/1",
  "verdict": "certified",
  "strength": "asymptotic",
  "reason": "V fell on 99.9% of held-out pairs; every held-out run that started inside settled.",
  "empirical": true,
  "caveat": "Checked on recorded samples only; not a proof of stability.",
  "states": ["theta", "omega"],
  "units": ["rad", "rad/s"],
  "equilibrium": [0.25, -0.1],
  "scale": [1, 1],
  "V": {"exponents": [[2, 0], [1, 1], [0, 2]], "coefficients": [1.5, 1, 1]},
  "level": 2.25,
  "box": [[-1.2, 1.6], [-1.7, 1.5]],
  "found": true,
  "region": {"envelope_share": 0.41, "extent": [[-1.2, 1.6], [-1.6, 1.4]], "limit": "envelope edge", "lp_rounds": 3, "lp_rows": 900},
  "validation": {"heldout_runs": 3, "decrease_fraction": 0.9987, "invariance_fraction": 1, "violation_bound": 0.0041,
    "confidence": 0.999999, "pairs": 1800, "runs_started_inside": 2, "runs_settled": 2, "scenario_samples": 1200, "folds": 5},
  "settings": {"degree": 3, "v_degree": 2, "seed": 1}
}`

// simulate integrates the fixture from x0 for n steps of h.
func simulate(name string, x0 [2]float64, n int, h float64) ingest.Run {
	f := func(x [2]float64) [2]float64 {
		a, b := x[0]-fixtureEquil[0], x[1]-fixtureEquil[1]
		return [2]float64{b, -a - b}
	}
	r := ingest.Run{Name: name, Source: ingest.Source{File: name + ".csv", Line: 2}}
	r.X = [][]float64{make([]float64, n), make([]float64, n)}
	r.T = make([]float64, n)
	x := x0
	for i := range n {
		r.T[i] = float64(i) * h
		r.X[0][i], r.X[1][i] = x[0], x[1]
		k1 := f(x)
		k2 := f([2]float64{x[0] + h/2*k1[0], x[1] + h/2*k1[1]})
		k3 := f([2]float64{x[0] + h/2*k2[0], x[1] + h/2*k2[1]})
		k4 := f([2]float64{x[0] + h*k3[0], x[1] + h*k3[1]})
		for j := range 2 {
			x[j] += h / 6 * (k1[j] + 2*k2[j] + 2*k3[j] + k4[j])
		}
	}
	return r
}

// fixture returns an Input around cert, with runs named by names (the
// last three held out, the last one flagged).
func fixture(cert *fit.Certificate, names []string) *Input {
	ds := &ingest.Dataset{States: []ingest.Column{{Name: cert.States[0], Unit: "rad"}, {Name: cert.States[1], Unit: "rad/s"}}}
	starts := [][2]float64{{1.2, 0.3}, {-0.9, 1.1}, {0.1, -1.5}, {1.4, -1.0}, {-1.1, -0.6}, {0.9, 1.3}}
	var held []bool
	var checks []validate.RunScreen
	for i, s := range starts {
		name := fmt.Sprintf("run%02d", i)
		if i < len(names) {
			name = names[i]
		}
		ds.Runs = append(ds.Runs, simulate(name, s, 600, 0.02))
		h := i >= len(starts)-3
		held = append(held, h)
		if h {
			rs := validate.RunScreen{File: name + ".csv", Run: name, Samples: 600, Settled: true, StartInside: i != 5}
			if i == len(starts)-1 {
				rs.Flagged = true
				rs.Flags = []validate.Flag{{Kind: validate.FlagRises, Time: 1.5, Excess: 0.02}}
			}
			checks = append(checks, rs)
		}
	}
	m := &fit.Model{Format: fit.ModelFormat, States: cert.States, Units: cert.Units,
		Equations: []fit.Equation{
			{State: cert.States[0], Exponents: [][]int{{0, 0}, {0, 1}}, Coefficients: []float64{0.1, 1},
				Terms: []fit.Term{{Name: "1", Interval: [2]float64{0.09, 0.11}, KeptShare: 1}, {Name: "omega", Interval: [2]float64{0.98, 1.02}, KeptShare: 1}}},
			{State: cert.States[1], Exponents: [][]int{{0, 0}, {1, 0}, {0, 1}, {3, 0}}, Coefficients: []float64{0.15, -1, -1, 0.001},
				Terms: []fit.Term{{KeptShare: 1}, {KeptShare: 1}, {KeptShare: 1}, {Interval: [2]float64{-0.01, 0.01}, KeptShare: 0.2, RarelyKept: true}}},
		},
		Equilibrium: fixtureEquil, SettledRuns: len(starts),
		Equilibria: []fit.Equilibrium{{Point: fixtureEquil, Class: "stable focus", InEnvelope: true},
			{Point: []float64{1.3, 0.05}, Class: "saddle", InEnvelope: true},
			{Point: []float64{40, 0}, Class: "outside envelope"}},
	}
	return &Input{Model: m, Cert: cert, Data: ds, Heldout: held, Checks: checks}
}

func mustCert(s string) *fit.Certificate {
	c, err := fit.ReadCertificate(strings.NewReader(s))
	if err != nil {
		panic(err)
	}
	return c
}

// quadV is V = zᵀPz for the fixture's P, evaluated independently of poly.
func quadV(x, y float64) float64 {
	a, b := x-fixtureEquil[0], y-fixtureEquil[1]
	return 1.5*a*a + a*b + b*b
}

var _ = poly.MonomialName
var _ = math.Abs
