package ingest

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
)

// evenClock returns the times 0, 1, ..., n-1.
func evenClock(n int) []float64 {
	t := make([]float64, n)
	for i := range t {
		t[i] = float64(i)
	}
	return t
}

// jitteredOscillator logs the damped oscillator of [oscillator] (w = 2 pi
// rad/s, zeta = 0.05) from x0 at rest, n samples on a clock whose steps
// are 5 ms times a factor uniform in [1-jitter, 1+jitter], each step taken
// with the closed-form free response for its own length (so the truth has
// no integration error), velocity jumping by dv at sample hit (if >= 0).
func jitteredOscillator(rng *rand.Rand, n int, jitter, x0 float64, hit int, dv, sd float64) string {
	const (
		w    = 2 * math.Pi
		zeta = 0.05
	)
	wd := w * math.Sqrt(1-zeta*zeta)
	var sb strings.Builder
	sb.WriteString("t [s],disp [mm],vel [mm/s]\n")
	x, v, t := x0, 0.0, 0.0
	for i := range n {
		if i == hit {
			v += dv
		}
		sb.WriteString(ftoa(t) + "," + ftoa(x+sd*rng.NormFloat64()) + "," + ftoa(v+sd*rng.NormFloat64()) + "\n")
		h := 0.005 * (1 + jitter*(2*rng.Float64()-1))
		e := math.Exp(-zeta * w * h)
		c, s := math.Cos(wd*h), math.Sin(wd*h)
		b := (v + zeta*w*x) / wd
		x, v = e*(x*c+b*s), e*(-zeta*w*(x*c+b*s)+wd*(-x*s+b*c))
		t += h
	}
	return sb.String()
}

// TestJumpUnevenClock: on a logger whose clock jitters by 30 %, fast
// smooth motion is not an event and a hammer hit still is, at its sample
// and with its size. The index-based statistic (steps compared without
// their durations) would see jumps all through the same data: checked
// here, so the case does test the clock.
func TestJumpUnevenClock(t *testing.T) {
	const sd = 0.01 // mm and mm/s
	for _, tc := range []struct {
		name string
		hit  int
		dv   float64
	}{
		{"no hit", -1, 0},
		{"hit", 900, 40},
	} {
		t.Run(tc.name, func(t *testing.T) {
			in := jitteredOscillator(rand.New(rand.NewPCG(3, 4)), 1600, 0.3, 100, tc.hit, tc.dv, sd)
			ds, err := ReadCSV(strings.NewReader(in), "jitter.csv", &Options{KeepHead: true})
			if err != nil {
				t.Fatal(err)
			}
			var whole *Dataset
			if whole, err = ReadCSV(strings.NewReader(in), "jitter.csv", &Options{KeepHead: true, KeepEvents: true}); err != nil {
				t.Fatal(err)
			}
			r := whole.Runs[0]
			// the index-based statistic against the same floor: sd
			// sqrt(5) times EventSigmas (8), 0.18 mm/s
			floor := EventSigmas * math.Sqrt(5) * sd
			over := 0
			for i := 2; i < r.Len()-1; i++ {
				x := r.X[1]
				if math.Abs(1.5*(x[i]-x[i-1])+0.5*(x[i-2]-x[i+1])) > floor {
					over++
				}
			}
			if over < 100 {
				t.Fatalf("the index-based statistic passes the floor at %d samples; the case does not exercise the clock", over)
			}
			want := 0
			if tc.hit >= 0 {
				want = 1
			}
			if len(ds.Events) != want {
				t.Fatalf("events %+v, want %d", ds.Events, want)
			}
			if want == 1 {
				ev := ds.Events[0]
				if ev.State != "vel" || ev.Kind != EventStep || ev.Time != r.T[tc.hit] {
					t.Errorf("event %+v, want a step in vel at %g s", ev, r.T[tc.hit])
				}
				// noise: 5 of the raw statistic's deviation (at most
				// sqrt(7.9) sd at these step ratios, below 3 sd); the
				// curvature term h2 (h1-h3) v''/2, v'' = w^2 v at most
				// (2 pi)^2 * 628 mm/s = 24,800 mm/s^3, with h2 <= 6.5 ms
				// and |h1-h3| <= 3 ms: 0.24 mm/s
				if tol := 5*3*sd + 0.24; !scalar.EqualWithinAbs(ev.Size, tc.dv, tol) {
					t.Errorf("size %g, want %g ± %g", ev.Size, tc.dv, tol)
				}
			}
		})
	}
}

// TestEvenSteps: steps of decimal times and of i·dt count as even (they
// differ in their last bits only); a microsecond of jitter in a
// millisecond step does not.
func TestEvenSteps(t *testing.T) {
	for _, tc := range []struct {
		name       string
		t0, t1, t2 float64
		t3         float64
		even       bool
	}{
		{"decimal text", 0.01, 0.02, 0.03, 0.04, true},
		{"i times dt", 7 * 0.1, 8 * 0.1, 9 * 0.1, 10 * 0.1, true},
		{"exact", 0, 1, 2, 3, true},
		{"1 us jitter in 1 ms", 0, 0.001, 0.002001, 0.003, false},
		{"30 % jitter", 0, 0.05, 0.115, 0.16, false},
	} {
		h1, h2, h3 := tc.t1-tc.t0, tc.t2-tc.t1, tc.t3-tc.t2
		if got := evenSteps(h1, h2, h3); got != tc.even {
			t.Errorf("%s: steps %v %v %v even %v, want %v", tc.name, h1, h2, h3, got, tc.even)
		}
	}
	// an even clock's statistic is the plain formula's
	x := []float64{0.3, -1.2, 2.5, 0.7}
	if got, want := jumpAt(x[0], x[1], x[2], x[3], 0.01, 0.02, 0.03, 0.04), 1.5*(x[2]-x[1])+0.5*(x[0]-x[3]); got != want {
		t.Errorf("jumpAt on decimal times %v, want the plain %v", got, want)
	}
}
