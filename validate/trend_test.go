package validate

import (
	"context"
	"fmt"
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/gonum/stat/distuv"

	"basin.example/fit"
	"basin.example/ingest"
)

// TestDecideLateGrowth: held-out runs whose V first falls fast (a
// transient dying as e^(-4t)) and then grows slowly as e^(2gt), V(t) =
// 0.2025 (1 + 3e^(-4t)) e^(2gt) along a rotation. Over a whole run the
// fall dominates the least-squares slope of log V (a positive decay
// rate), so only the later half shows the growth: there d/dt log V =
// 2g - 12e^(-4t)/(1 + 3e^(-4t)), within 5.5e-4 of 2g for t >= 2.5 s
// (exact). Growth must leave the verdict inconclusive; the same runs
// without it (g = 0: the late rate is the transient's, just above 0)
// stay certified stable.
func TestDecideLateGrowth(t *testing.T) {
	marginal := [][2]float64{{0, 2}, {0, -2}}
	for _, tc := range []struct {
		name     string
		g        float64 // late growth rate of the amplitude, 1/s
		verdict  fit.Verdict
		strength fit.Strength
	}{
		{"falls then grows", 0.02, fit.Inconclusive, fit.NoClaim},
		{"falls then holds", 0, fit.Certified, fit.Stable},
	} {
		t.Run(tc.name, func(t *testing.T) {
			c := circleCert(false)
			c.NonRise = true
			ds := &ingest.Dataset{States: []ingest.Column{{Name: "a"}, {Name: "b"}}}
			for i := 0; i < 4; i++ {
				ph := float64(i)
				ds.Runs = append(ds.Runs, makeRun(fmt.Sprintf("r%d", i), 501, 0.01, func(t float64) (float64, float64) {
					a := 0.45 * math.Sqrt(1+3*math.Exp(-4*t)) * math.Exp(tc.g*t)
					return a * math.Cos(2*t+ph), a * math.Sin(2*t+ph)
				}))
			}
			o := &Options{Tolerance: 0.2}
			val, runs, err := Check(context.Background(), c, ds, o)
			if err != nil {
				t.Fatal(err)
			}
			for _, r := range runs {
				if !(r.DecaySamples > 0 && r.DecayRate > 0) {
					t.Fatalf("run %s: whole-run decay rate %g on %d samples, want above 0 (the transient's fall)", r.Run, r.DecayRate, r.DecaySamples)
				}
				if !r.lateOK || !scalar.EqualWithinAbs(r.lateRate, -2*tc.g, 6e-4) {
					t.Fatalf("run %s: late decay rate %g (known %v), want %g within 6e-4", r.Run, r.lateRate, r.lateOK, -2*tc.g)
				}
			}
			Decide(c, val, runs, marginal, o)
			if c.Verdict != tc.verdict || c.Strength != tc.strength {
				t.Errorf("%s/%s: %s; want %s/%s", c.Verdict, c.Strength, c.Reason, tc.verdict, tc.strength)
			}
			t.Logf("%s/%s: %s", c.Verdict, c.Strength, c.Reason)
		})
	}
}

// TestTrendWords: the reason for a trend up of V says the data show
// growth when the mean decay rate lies more than clearGrowthSE standard
// errors below zero, and that slow growth cannot be told from stability
// between growthSE and that. The mean and its standard error are
// checked against gonum's stat.Mean and stat.StdDev (the sample
// standard deviation, n-1) over √n [gonum]; the tail probabilities the
// threshold's comment quotes against gonum's distuv.Normal and
// distuv.StudentsT [FiveSigma], to the two digits quoted.
func TestTrendWords(t *testing.T) {
	for _, tc := range []struct {
		name  string
		rates []float64
		up    bool   // trendsUp's answer
		want  string // a phrase the reason must hold
		avoid string // a phrase it must not
	}{
		// mean -0.04, sample sd 6.2e-4, n 4: se 3.1e-4, z 129.
		{"clear growth", []float64{-0.0393, -0.0407, -0.0397, -0.0403}, true, "standard errors below zero): the data show growth, not stability", "cannot be told"},
		// mean -0.001, sd 8.2e-4, n 4: se 4.1e-4, z 2.4: above
		// growthSE, below clearGrowthSE.
		{"weak growth", []float64{-0.0002, -0.0018, -0.0016, -0.0004}, true, "slow growth cannot be told from stability", "data show growth"},
		{"scatter about zero", []float64{-0.001, 0.002, -0.0005, 0.001}, false, "", ""},
	} {
		t.Run(tc.name, func(t *testing.T) {
			neg, n, mean, se, up := trendsUp(tc.rates)
			if up != tc.up {
				t.Fatalf("trendsUp = %v, want %v (mean %g, se %g)", up, tc.up, mean, se)
			}
			wantMean := stat.Mean(tc.rates, nil)
			wantSE := stat.StdDev(tc.rates, nil) / math.Sqrt(float64(len(tc.rates)))
			// a sum of four numbers near 0.04: round-off near 1e-17
			if n != len(tc.rates) || !scalar.EqualWithinAbsOrRel(mean, wantMean, 1e-15, 1e-12) || !scalar.EqualWithinAbsOrRel(se, wantSE, 1e-15, 1e-12) {
				t.Fatalf("n %d, mean %g ± %g; want %d, %g ± %g", n, mean, se, len(tc.rates), wantMean, wantSE)
			}
			if !up {
				return
			}
			got := trendWords("along", "", neg, n, mean, se)
			if !strings.Contains(got, tc.want) || strings.Contains(got, tc.avoid) {
				t.Errorf("reason %q: want %q in it and not %q", got, tc.want, tc.avoid)
			}
			t.Log(got)
		})
	}
	// The figures in clearGrowthSE's comment.
	for _, tc := range []struct {
		name string
		p    float64
		want float64
		tol  float64 // half a unit of the last digit quoted
	}{
		{"normal", distuv.UnitNormal.CDF(-clearGrowthSE), 2.9e-7, 0.05e-7},
		{"t, 2 dof", distuv.StudentsT{Mu: 0, Sigma: 1, Nu: 2}.CDF(-clearGrowthSE), 0.019, 0.0005},
		{"t, 5 dof", distuv.StudentsT{Mu: 0, Sigma: 1, Nu: 5}.CDF(-clearGrowthSE), 0.0021, 0.00005},
	} {
		if !scalar.EqualWithinAbs(tc.p, tc.want, tc.tol) {
			t.Errorf("%s: P(below -%d) = %.3g, the comment says %g", tc.name, clearGrowthSE, tc.p, tc.want)
		}
	}
}

// TestDecideClearGrowth: held-out runs whose V grows steadily along a
// rotation, V(t) = 0.1 e^(2gt) with g between 0.019 and 0.021 1/s per
// run (so the rates scatter and their standard error is not round-off),
// give an inconclusive verdict whose reason says the data show growth,
// never certified and never "cannot be told". The decay rate of each run
// is -2g exactly (log V is linear in t); the mean -0.04, its standard
// error 7.1e-4 (rates -0.038, -0.039, ..., -0.042: sd 1.58e-3 over √5),
// 57 standard errors below zero.
func TestDecideClearGrowth(t *testing.T) {
	marginal := [][2]float64{{0, 2}, {0, -2}}
	c := circleCert(false)
	c.NonRise = true
	ds := &ingest.Dataset{States: []ingest.Column{{Name: "a"}, {Name: "b"}}}
	for i := 0; i < 5; i++ {
		ph, g := float64(i), 0.019+0.0005*float64(i)
		ds.Runs = append(ds.Runs, makeRun(fmt.Sprintf("r%d", i), 301, 0.01, func(t float64) (float64, float64) {
			a := math.Sqrt(0.1) * math.Exp(g*t)
			return a * math.Cos(2*t+ph), a * math.Sin(2*t+ph)
		}))
	}
	o := &Options{Tolerance: 0.2} // V rises by 0.1(e^0.126 - 1) = 0.013 at most: below it
	val, runs, err := Check(context.Background(), c, ds, o)
	if err != nil {
		t.Fatal(err)
	}
	var rates []float64
	for _, r := range runs {
		if r.EverInside && r.DecaySamples > 0 {
			rates = append(rates, r.DecayRate)
		}
	}
	if len(rates) != 5 {
		t.Fatalf("%d runs with a decay rate, want 5", len(rates))
	}
	// -2g per run: log V is linear in t, so the least-squares slope is
	// exact up to round-off
	if m := stat.Mean(rates, nil); !scalar.EqualWithinAbs(m, -0.04, 1e-6) {
		t.Fatalf("mean decay rate %g, want -0.04", m)
	}
	Decide(c, val, runs, marginal, o)
	if c.Verdict != fit.Inconclusive || !strings.Contains(c.Reason, "the data show growth") {
		t.Errorf("%s/%s: %s; want inconclusive, the data show growth", c.Verdict, c.Strength, c.Reason)
	}
	t.Logf("%s/%s: %s", c.Verdict, c.Strength, c.Reason)
}

// TestSettledWords: the certified reason says every entered run settled
// only when every one of them was judged (long enough after entry, not
// cut short); else it counts the judged ones, as the held-out line does.
func TestSettledWords(t *testing.T) {
	for _, tc := range []struct {
		entered, long int
		want          string
	}{
		{10, 10, "all 10 held-out runs that entered stayed inside and settled"},
		{1, 1, "the one held-out run that entered stayed inside and settled"},
		{10, 9, "all 10 held-out runs that entered stayed inside; the 9 long enough after entry to judge settled (the other was too short or cut short)"},
		{5, 1, "all 5 held-out runs that entered stayed inside; the one long enough after entry to judge settled (the other 4 were too short or cut short)"},
	} {
		if got := settledWords(tc.entered, tc.long); got != tc.want {
			t.Errorf("settledWords(%d, %d) = %q, want %q", tc.entered, tc.long, got, tc.want)
		}
	}
}

// TestRunLabel: a reason names a run by its file too when the file lies
// in a folder, where a fleet's partitions repeat the same base name.
func TestRunLabel(t *testing.T) {
	for _, tc := range []struct {
		r    RunScreen
		want string
	}{
		{RunScreen{Run: "log.csv", File: "fleet/unit=21/log.csv"}, "log.csv (fleet/unit=21/log.csv)"},
		{RunScreen{Run: "run03.csv", File: "run03.csv"}, "run03.csv"},
		{RunScreen{Run: "run03.csv"}, "run03.csv"},
	} {
		if got := runLabel(tc.r); got != tc.want {
			t.Errorf("runLabel(%+v) = %q, want %q", tc.r, got, tc.want)
		}
	}
}
