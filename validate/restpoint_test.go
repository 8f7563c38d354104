package validate

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"basin.example/fit"
	"basin.example/ingest"
)

// TestEvaluateEachWell: the two-well Duffing oscillator x” + 0.5 x' - x
// + x³ = 0 ([GuckenheimerHolmes1983] §2.2: stable rest points at x = ±1,
// a saddle at 0), 30 runs that settle in either well. Options.Equilibrium
// picks each well in turn: the certificate is about that well, and when
// it has a region, the region does not hold the saddle. (At this commit
// no V of degree 2 is found at either well, so the saddle check has no
// region to look at; the equilibrium check always applies.)
func TestEvaluateEachWell(t *testing.T) {
	if testing.Short() {
		t.Skip("two evaluations of five folds each")
	}
	sys := system{name: "two-well", f: func(d []float64, _ float64, x []float64) { d[0] = x[1]; d[1] = x[0] - 0.5*x[1] - x[0]*x[0]*x[0] },
		states: []string{"x", "v"}, x0: func(r *rand.Rand) []float64 { return box(r, 2, 2) }, dur: 20, rate: 50, runs: 30}
	ds := simulate(t, sys, 0.003, 5)
	for _, well := range []float64{1, -1} {
		res, err := Evaluate(context.Background(), ds, &Options{Equilibrium: []float64{well, 0}, Field: &fit.FieldOptions{Bootstrap: -1}})
		if err != nil {
			t.Fatal(err)
		}
		c := res.Certificate
		t.Logf("well %+g: %s at %.4g: %s", well, c.Verdict, c.Equilibrium, c.Reason)
		if !(math.Abs(c.Equilibrium[0]-well) <= 0.02) || !(math.Abs(c.Equilibrium[1]) <= 0.02) {
			t.Errorf("well %+g: certificate at %v", well, c.Equilibrium)
		}
		z := c.Z(make([]float64, 2), []float64{0, 0})
		if c.Level > 0 && c.Inside([]float64{0, 0}, c.V.Eval(z)) {
			t.Errorf("well %+g: the region holds the saddle (0, 0)", well)
		}
	}
}

// TestEvaluateAllWells: on the same two-well data ([GuckenheimerHolmes1983]
// §2.2), EvaluateAll gives one result per well, the well more runs
// settle at first, each certificate at its own well (within 0.02 of
// x = ±1, v = 0; noise 0.003), with no region holding the saddle.
func TestEvaluateAllWells(t *testing.T) {
	if testing.Short() {
		t.Skip("two evaluations of five folds each")
	}
	sys := system{name: "two-well", f: func(d []float64, _ float64, x []float64) { d[0] = x[1]; d[1] = x[0] - 0.5*x[1] - x[0]*x[0]*x[0] },
		states: []string{"x", "v"}, x0: func(r *rand.Rand) []float64 { return box(r, 2, 2) }, dur: 20, rate: 50, runs: 30}
	ds := simulate(t, sys, 0.003, 5)
	all, skips, err := EvaluateAll(context.Background(), ds, &Options{Field: &fit.FieldOptions{Bootstrap: -1}})
	if err != nil {
		t.Fatal(err)
	}
	for _, s := range skips {
		t.Logf("skipped %v (%d runs): %s", s.Rest.Point, s.Rest.Runs, s.Why)
	}
	if len(all) != 2 {
		t.Fatalf("%d results, want one per well", len(all))
	}
	if !(all[0].Rest.Runs >= all[1].Rest.Runs) || all[1].Rest.Runs == 0 {
		t.Errorf("runs settling: %d then %d, want falling and both > 0", all[0].Rest.Runs, all[1].Rest.Runs)
	}
	if !(all[0].Certificate.Equilibrium[0]*all[1].Certificate.Equilibrium[0] < 0) {
		t.Errorf("both certificates in one well: %v and %v", all[0].Certificate.Equilibrium, all[1].Certificate.Equilibrium)
	}
	for i, r := range all {
		c := r.Certificate
		t.Logf("%d: %s at %.4g, %d runs: %s", i, c.Verdict, c.Equilibrium, r.Rest.Runs, c.Reason)
		well := math.Copysign(1, c.Equilibrium[0])
		if !(math.Abs(c.Equilibrium[0]-well) <= 0.02) || !(math.Abs(c.Equilibrium[1]) <= 0.02) {
			t.Errorf("%d: certificate at %v", i, c.Equilibrium)
		}
		if !(math.Abs(r.Rest.Point[0]-well) <= 0.05) {
			t.Errorf("%d: rest point %v for a certificate at %v", i, r.Rest.Point, c.Equilibrium)
		}
		z := c.Z(make([]float64, 2), []float64{0, 0})
		if c.Level > 0 && c.Inside([]float64{0, 0}, c.V.Eval(z)) {
			t.Errorf("%d: the region holds the saddle (0, 0)", i)
		}
	}
}

// TestPlaceRests: rest points map to the fitted equilibria of the
// two-well oscillator ([GuckenheimerHolmes1983] §2.2: foci at x = ±1, a
// saddle at 0): the primary's, one certificate for the other well, and
// a reason for each rest point that gets none (near the saddle, far from
// every equilibrium, the same well twice).
func TestPlaceRests(t *testing.T) {
	m := &fit.Model{Spread: []float64{1, 1}, Equilibria: []fit.Equilibrium{
		{Point: []float64{1, 0}, Class: "stable focus"},
		// the Jacobian at the saddle [[0, 1], [1, -0.5]]: λ = (-0.5 ± √4.25)/2
		{Point: []float64{0, 0}, Class: "saddle", Eigenvalues: [][2]float64{{0.7808, 0}, {-1.2808, 0}}},
		{Point: []float64{-1, 0}, Class: "stable focus"},
	}}
	rp := func(x float64, n int) ingest.RestPoint { return ingest.RestPoint{Point: []float64{x, 0}, Runs: n} }
	for _, tc := range []struct {
		name    string
		rps     []ingest.RestPoint
		primary int
		rest    []int
		skips   []string // reasons, by prefix
	}{
		{"two wells", []ingest.RestPoint{rp(-1.01, 9), rp(0.99, 7)}, 1, []int{0}, nil},
		{"saddle and far", []ingest.RestPoint{rp(1, 9), rp(0.02, 3), rp(3, 2)}, 0, nil,
			[]string{"the fitted equilibrium there is a saddle", "no equilibrium of the fitted model near it"}},
		{"one well twice", []ingest.RestPoint{rp(-1, 5), rp(1, 4), rp(-0.9, 3)}, 1, []int{0},
			[]string{"the same fitted equilibrium"}},
		{"none settle", nil, -1, nil, nil},
	} {
		t.Run(tc.name, func(t *testing.T) {
			p, rest, skips := placeRests(m, tc.rps)
			if p != tc.primary {
				t.Errorf("primary %d, want %d", p, tc.primary)
			}
			if fmt.Sprint(rest) != fmt.Sprint(tc.rest) {
				t.Errorf("rest %v, want %v", rest, tc.rest)
			}
			if len(skips) != len(tc.skips) {
				t.Fatalf("skips %+v, want %q", skips, tc.skips)
			}
			for i, s := range skips {
				if !strings.HasPrefix(s.Why, tc.skips[i]) {
					t.Errorf("skip %d: %q, want %q...", i, s.Why, tc.skips[i])
				}
				// an eigenvalue with positive real part: runs near it
				// leave it ([Strogatz1994] §5.2), and the skip says so
				saddle := strings.HasPrefix(tc.skips[i], "the fitted equilibrium there is a saddle")
				if s.Unstable != saddle || strings.Contains(s.Why, "which runs near it leave") != saddle {
					t.Errorf("skip %d: %q, unstable %v; want unstable %v", i, s.Why, s.Unstable, saddle)
				}
			}
		})
	}
}
