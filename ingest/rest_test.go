package ingest

import (
	"context"
	"fmt"
	"math/rand/v2"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
)

// duffing logs the two-well Duffing oscillator x” + delta x' - x + x^3 = 0
// (delta = 0.5): stable rest points at x = ±1, v = 0, a saddle at the
// origin [GuckenheimerHolmes1983, the unforced Duffing equation]. RK4 with
// a step of 0.01 s (far below the 0.01 s^4 error a step the oscillation
// needs); samples every 0.05 s with Gaussian noise sd. It returns the CSV
// text and the well the noise-free run ends in (the sign of x after 40 s,
// when the energy left is far below the barrier).
func duffing(rng *rand.Rand, x, v, sd float64) (string, int) {
	const delta, h = 0.5, 0.01
	f := func(x, v float64) (float64, float64) { return v, -delta*v + x - x*x*x }
	var sb strings.Builder
	sb.WriteString("t [s],x [m],v [m/s]\n")
	for i := range 4000 {
		if i%5 == 0 {
			sb.WriteString(ftoa(float64(i)*h) + "," + ftoa(x+sd*rng.NormFloat64()) + "," + ftoa(v+sd*rng.NormFloat64()) + "\n")
		}
		k1x, k1v := f(x, v)
		k2x, k2v := f(x+h/2*k1x, v+h/2*k1v)
		k3x, k3v := f(x+h/2*k2x, v+h/2*k2v)
		k4x, k4v := f(x+h*k3x, v+h*k3v)
		x += h / 6 * (k1x + 2*k2x + 2*k3x + k4x)
		v += h / 6 * (k1v + 2*k2v + 2*k3v + k4v)
	}
	if x > 0 {
		return sb.String(), 1
	}
	return sb.String(), -1
}

// TestRestPointsTwoWells: 30 runs of the two-well Duffing oscillator from
// random starts give two rest points, at (±1, 0), each with the count of
// runs the simulation sends there; the median of all settle points, which
// may lie in either well or between them, is not what is reported.
func TestRestPointsTwoWells(t *testing.T) {
	rng := rand.New(rand.NewPCG(21, 22))
	dir := t.TempDir()
	var paths []string
	want := map[int][]string{}
	for i := range 30 {
		// starts at least 0.5 from either well: a run that starts next
		// to its rest point spans little more than the noise, and the
		// settle rule (a tail spanning a tenth of the run) does not call
		// it settled
		x0 := (1.5 + rng.Float64()) * float64(1-2*(i%2))
		in, well := duffing(rng, x0, 4*rng.Float64()-2, 0.01)
		name := fmt.Sprintf("run%02d.csv", i)
		paths = append(paths, writeFile(t, dir, name, in))
		want[well] = append(want[well], name)
	}
	if len(want[1]) == 0 || len(want[-1]) == 0 {
		t.Fatalf("the starts reach one well only: %v", want)
	}
	ds, err := Load(context.Background(), paths, nil)
	if err != nil {
		t.Fatal(err)
	}
	rps := RestPoints(ds)
	if len(rps) != 2 {
		t.Fatalf("%d rest points %+v, want 2", len(rps), rps)
	}
	for _, rp := range rps {
		well := 1
		if rp.Point[0] < 0 {
			well = -1
		}
		// the settle point is the median of the last 5 % of a run (at
		// least 10 samples), noise 0.01: a few hundredths at most
		if !scalar.EqualWithinAbs(rp.Point[0], float64(well), 0.03) || !scalar.EqualWithinAbs(rp.Point[1], 0, 0.03) {
			t.Errorf("rest point %v, want (%d, 0)", rp.Point, well)
		}
		if rp.Runs != len(want[well]) || !slices.Equal(rp.RunNames, want[well]) {
			t.Errorf("well %d: %d runs %v, want %d %v", well, rp.Runs, rp.RunNames, len(want[well]), want[well])
		}
	}
	if rps[0].Runs < rps[1].Runs {
		t.Errorf("not sorted by runs: %d before %d", rps[0].Runs, rps[1].Runs)
	}
	s := Summarise(ds)
	if len(s.RestPoints) != 2 || !slices.Equal(s.Settle, rps[0].Point) || s.SettledRuns != 30 {
		t.Errorf("summary: rest points %+v, settle %v, settled %d", s.RestPoints, s.Settle, s.SettledRuns)
	}
	// one well alone: one rest point, its point the median over the runs
	ds, err = Load(context.Background(), []string{filepath.Join(dir, want[1][0]), filepath.Join(dir, want[1][1])}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if rps := RestPoints(ds); len(rps) != 1 || rps[0].Runs != 2 || !scalar.EqualWithinAbs(rps[0].Point[0], 1, 0.03) {
		t.Errorf("one well: %+v", rps)
	}
}
