package ingest

import (
	"errors"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/stat/distuv"
)

// oscillator logs a damped linear oscillator x” + 2 zeta w x' + w^2 x = 0
// (w = 2 pi rad/s, zeta = 0.05) at 200 Hz for dur seconds, from x0, v0,
// with Gaussian noise sd on both states. At sample hit (if >= 0) the
// velocity jumps by dv (a hammer hit: an impulse changes the velocity,
// not the position). Before sample rest (if > 0) the rig is at rest at
// x = 0 and the motion starts there. The free response is the textbook
// closed form of the underdamped oscillator (any vibrations text, e.g.
// [Rao], Mechanical Vibrations, the free damped response; from memory),
// stepped sample to sample exactly, so the truth has no integration
// error.
func oscillator(rng *rand.Rand, dur float64, x0, v0 float64, rest, hit int, dv, sd float64) string {
	const (
		h    = 0.005
		w    = 2 * math.Pi
		zeta = 0.05
	)
	wd := w * math.Sqrt(1-zeta*zeta)
	step := func(x, v float64) (float64, float64) {
		// x(t) = e^{-zeta w t} (x cos wd t + (v + zeta w x)/wd sin wd t)
		e := math.Exp(-zeta * w * h)
		c, s := math.Cos(wd*h), math.Sin(wd*h)
		b := (v + zeta*w*x) / wd
		xn := e * (x*c + b*s)
		vn := e * (-zeta*w*(x*c+b*s) + wd*(-x*s+b*c))
		return xn, vn
	}
	var sb strings.Builder
	sb.WriteString("t [s],disp [mm],vel [mm/s]\n")
	x, v := x0, v0
	n := int(dur / h)
	for i := range n {
		if i < rest {
			x, v = 0, 0
		} else if i == rest && rest > 0 {
			x, v = x0, v0
		}
		if i == hit {
			v += dv
		}
		sb.WriteString(ftoa(float64(i)*h) + "," + ftoa(x+sd*rng.NormFloat64()) + "," + ftoa(v+sd*rng.NormFloat64()) + "\n")
		if i >= rest {
			x, v = step(x, v)
		}
	}
	return sb.String()
}

// TestEventHammerHit: a hit in the middle of a free response splits the
// run exactly at the hit's sample, and its size is the velocity jump.
func TestEventHammerHit(t *testing.T) {
	const sd = 0.01 // mm and mm/s
	for _, tc := range []struct {
		name string
		hit  int
		dv   float64
	}{
		{"large hit", 700, 40},
		// 25 sd is above the 8 sqrt(5) = 17.9 sd threshold
		{"smallest hits found", 433, 25 * sd},
	} {
		t.Run(tc.name, func(t *testing.T) {
			in := oscillator(rand.New(rand.NewPCG(1, 2)), 8, 10, 0, 0, tc.hit, tc.dv, sd)
			ds, err := ReadCSV(strings.NewReader(in), "hit.csv", nil)
			if err != nil {
				t.Fatal(err)
			}
			if len(ds.Events) != 1 || len(ds.Runs) != 2 || len(ds.Heads) != 0 {
				t.Fatalf("events %+v, runs %d, heads %+v; want one event, two runs, no head", ds.Events, len(ds.Runs), ds.Heads)
			}
			ev := ds.Events[0]
			// Located to the sample: the first sample after the jump.
			if ev.State != "vel" || ev.Kind != EventStep || ev.Time != float64(tc.hit)*0.005 {
				t.Errorf("event %+v, want a step in vel at %g s", ev, float64(tc.hit)*0.005)
			}
			// The size statistic has noise sqrt(5) sd (its coefficients
			// 3/2, -3/2, 1/2, -1/2); 5 of those, plus the damped slope
			// change over one step (2 zeta w dv h, under 0.1 % of dv).
			if tol := 5*math.Sqrt(5)*sd + 2e-3*tc.dv; !scalar.EqualWithinAbs(ev.Size, tc.dv, tol) {
				t.Errorf("size %g, want %g ± %g", ev.Size, tc.dv, tol)
			}
			// MAD of 1600 values: relative standard error near
			// 1.166/sqrt(1600) = 2.9 %, about doubled by the
			// correlation of neighbouring s; 20 % is 3 of those
			if !scalar.EqualWithinRel(ev.Noise, sd, 0.2) {
				t.Errorf("noise estimate %g, want %g within 20%%", ev.Noise, sd)
			}
			a, b := ds.Runs[0], ds.Runs[1]
			if a.Len() != tc.hit || b.T[0] != ev.Time || b.Name != "hit.csv~1" || a.Events != 1 || a.Gaps != 0 {
				t.Errorf("runs %s (%d samples, %d events) and %s from %g", a.Name, a.Len(), a.Events, b.Name, b.T[0])
			}
			// the same log kept whole
			ds, err = ReadCSV(strings.NewReader(in), "hit.csv", &Options{KeepEvents: true})
			if err != nil || len(ds.Runs) != 1 || ds.Events != nil {
				t.Errorf("KeepEvents: err %v, %d runs, events %v", err, len(ds.Runs), ds.Events)
			}
		})
	}
}

// TestEventBelowThreshold: a jump of 10 noise deviations (under the 17.9
// of the threshold) and a noise-only log split nothing.
func TestEventBelowThreshold(t *testing.T) {
	const sd = 0.01
	in := oscillator(rand.New(rand.NewPCG(3, 4)), 8, 10, 0, 0, 900, 10*sd, sd)
	ds, err := ReadCSV(strings.NewReader(in), "small.csv", nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(ds.Events) != 0 || len(ds.Runs) != 1 {
		t.Errorf("events %+v in a log with a 10-sigma jump", ds.Events)
	}
}

// TestEventSpike: a dropped packet (one row of zeros) is a spike in both
// states; the sample is dropped and the run split around it.
func TestEventSpike(t *testing.T) {
	in := oscillator(rand.New(rand.NewPCG(5, 6)), 4, 10, 0, 0, -1, 0, 0.01)
	lines := strings.Split(in, "\n")
	const m = 301 // sample 300 (line 0 is the header)
	f := strings.Split(lines[m], ",")
	lines[m] = f[0] + ",0,0"
	ds, err := ReadCSV(strings.NewReader(strings.Join(lines, "\n")), "drop.csv", nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(ds.Runs) != 2 || ds.Runs[0].Len() != 300 || ds.Samples() != 799 {
		t.Fatalf("%d runs, first %d samples, %d in all; want 2, 300, 799", len(ds.Runs), ds.Runs[0].Len(), ds.Samples())
	}
	for _, ev := range ds.Events {
		if ev.Kind != EventSpike || ev.Time != 1.5 {
			t.Errorf("event %+v, want a spike at 1.5 s", ev)
		}
	}
	if len(ds.Events) != 2 {
		t.Errorf("events %+v, want one per state", ds.Events)
	}
}

// TestRestingHead: a rig at rest for 1 s, then hit, has its resting head
// trimmed up to the hit's sample; a slow drift from the start is motion,
// not rest, and is kept.
func TestRestingHead(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	in := oscillator(rng, 6, 0, 0, 200, 200, 50, 0.01) // rest 200 samples, then v jumps by 50
	ds, err := ReadCSV(strings.NewReader(in), "rest.csv", nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(ds.Heads) != 1 || ds.Heads[0].Samples != 200 || ds.Heads[0].Duration != 1 || ds.Runs[0].T[0] != 1 || len(ds.Runs) != 1 {
		t.Fatalf("heads %+v, runs %d from %g; want 200 samples (1 s) trimmed, one run from 1 s", ds.Heads, len(ds.Runs), ds.Runs[0].T[0])
	}
	// kept, the hit is an event at the same sample
	ds, err = ReadCSV(strings.NewReader(in), "rest.csv", &Options{KeepHead: true})
	if err != nil {
		t.Fatal(err)
	}
	if len(ds.Heads) != 0 || len(ds.Events) != 1 || ds.Events[0].Time != 1 || len(ds.Runs) != 2 {
		t.Errorf("KeepHead: heads %+v, events %+v, %d runs", ds.Heads, ds.Events, len(ds.Runs))
	}
	// a ramp of 0.2 noise deviations a sample: it crosses 6 deviations
	// after 30 samples, a "head" the drift test must refuse (its halves'
	// means differ by 3 deviations, the standard error is 0.26)
	var sb strings.Builder
	sb.WriteString("t,x\n")
	for i := range 400 {
		sb.WriteString(ftoa(float64(i)*0.01) + "," + ftoa(0.002*float64(i)+0.01*rng.NormFloat64()) + "\n")
	}
	ds, err = ReadCSV(strings.NewReader(sb.String()), "ramp.csv", nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(ds.Heads) != 0 || ds.Samples() != 400 {
		t.Errorf("ramp: heads %+v, %d samples; want none trimmed", ds.Heads, ds.Samples())
	}
}

// TestEventQuietCases: fast smooth motion with no noise, an undersampled
// decaying oscillation, and quantised counts that flicker by one count
// have no events.
func TestEventQuietCases(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 10))
	for _, tc := range []struct {
		name string
		x    func(i int) float64
	}{
		{"noise-free decay", func(i int) float64 { return math.Exp(-0.01*float64(i)) * math.Cos(0.3*float64(i)) }},
		// 12 samples a period, amplitude 1000 times the noise at first,
		// decaying to the noise: s follows the motion where it is large
		{"undersampled decay", func(i int) float64 {
			return 10*math.Exp(-0.003*float64(i))*math.Sin(2*math.Pi*float64(i)/12) + 0.01*rng.NormFloat64()
		}},
		{"flickering counts", func(i int) float64 { return 512 + math.Round(0.4*rng.NormFloat64()) }},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var sb strings.Builder
			sb.WriteString("t,x\n")
			for i := range 3000 {
				sb.WriteString(ftoa(float64(i)*0.01) + "," + ftoa(tc.x(i)) + "\n")
			}
			ds, err := ReadCSV(strings.NewReader(sb.String()), "q.csv", nil)
			if err != nil {
				t.Fatal(err)
			}
			if len(ds.Events) != 0 || len(ds.Runs) != 1 {
				t.Errorf("events %+v (%d runs)", ds.Events, len(ds.Runs))
			}
		})
	}
}

// TestEventThreshold checks the figures the thresholds' comments rely on
// against the normal distribution: two-sided tail probabilities
// 2(1 - Phi(k)) of 1.973e-9 for k = 6 and 1.244e-15 for k = 8 (standard
// normal tables, [AbramowitzStegun1964], Handbook of Mathematical
// Functions, 1964, table 26.1; from memory), computed with gonum's distuv
// as an independent implementation [gonum]; the MAD consistency factor
// 1/Phi^-1(3/4) [RousseeuwCroux1993]; and that the jump statistic's
// robust scale on white noise is sqrt(5) times the noise, as its
// coefficients say (a computation, checked by simulation).
func TestEventThreshold(t *testing.T) {
	n := distuv.UnitNormal
	for _, tc := range []struct {
		k, want float64
	}{{RestSigmas, 1.973e-9}, {EventSigmas, 1.244e-15}} {
		// CDF(-k), not Survival(k) = 1 - CDF(k), which cancels to
		// rounding error this far out
		if got := 2 * n.CDF(-tc.k); !scalar.EqualWithinRel(got, tc.want, 1e-3) {
			t.Errorf("P(|Z| > %g) = %.4g, want %.4g", tc.k, got, tc.want)
		}
	}
	if got := 1 / n.Quantile(0.75); !scalar.EqualWithinRel(got, madGauss, 1e-12) {
		t.Errorf("1/Phi^-1(3/4) = %.16g, madGauss %.16g", got, madGauss)
	}
	rng := rand.New(rand.NewPCG(11, 12))
	x := make([]float64, 1<<17)
	for i := range x {
		x[i] = rng.NormFloat64()
	}
	s := jumpStat(nil, x, evenClock(len(x)))
	// The MAD of 2^16 values (the subsample) has a relative standard
	// error near 1.166/sqrt(2^16) = 0.5 %; s is a moving sum of four
	// values, which correlates neighbours and about doubles that: 3 %
	// is several standard errors.
	if got := robustScale(s[2 : len(s)-1]); !scalar.EqualWithinRel(got, math.Sqrt(5), 0.03) {
		t.Errorf("robust scale of s on unit noise %g, want sqrt(5) = %g", got, math.Sqrt(5))
	}
	// and no event in 2^17 samples of pure noise (expected false alarms
	// 2^17 * 1.2e-15)
	var sb strings.Builder
	sb.WriteString("t,x\n")
	for i, v := range x {
		sb.WriteString(ftoa(float64(i)*0.001) + "," + ftoa(v) + "\n")
	}
	ds, err := ReadCSV(strings.NewReader(sb.String()), "noise.csv", nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(ds.Events) != 0 || len(ds.Heads) != 0 {
		t.Errorf("pure noise: events %+v, heads %+v", ds.Events, ds.Heads)
	}
}

// TestWindow: From and To keep [From, To] seconds of each recording
// from its first sample; a window after every run's end and a reversed
// one are errors naming the window.
func TestWindow(t *testing.T) {
	const in = "run,t,x\nA,10,1\nA,10.5,2\nA,11,3\nA,12,4\nB,0,5\nB,0.5,6\nB,1.5,7\n"
	for _, tc := range []struct {
		name     string
		from, to float64
		times    [][]float64
		window   int
		err      string
	}{
		{"from", 0.5, 0, [][]float64{{10.5, 11, 12}, {0.5, 1.5}}, 0, ""},
		{"from and to", 0.5, 1, [][]float64{{10.5, 11}, {0.5}}, 0, ""},
		{"one recording too short", 1.8, 0, [][]float64{{12}}, 1, ""},
		{"after every end", 3, 0, nil, 0, "w.csv: time window: no samples from 3 s after their start: every run ends before, the longest lasts 2 s"},
		{"from after to", 2, 1, nil, 0, "time window: start 2 s is after end 1 s"},
		{"negative", -1, 0, nil, 0, "time window: start -1 s"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			ds, err := ReadCSV(strings.NewReader(in), "w.csv", &Options{RunCol: "run", From: tc.from, To: tc.to, KeepHead: true, KeepEvents: true})
			if tc.err != "" {
				if !errors.Is(err, ErrWindow) || err == nil || !strings.HasPrefix(err.Error(), tc.err) {
					t.Fatalf("err %v, want %q", err, tc.err)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if len(ds.Runs) != len(tc.times) || ds.Window != tc.window || (tc.window > 0) != (len(ds.Warnings) == 1) {
				t.Fatalf("%d runs, window %d, warnings %q", len(ds.Runs), ds.Window, ds.Warnings)
			}
			for i, r := range ds.Runs {
				if !slicesEqual(r.T, tc.times[i]) {
					t.Errorf("run %s: T %v, want %v", r.Name, r.T, tc.times[i])
				}
			}
		})
	}
}

func slicesEqual(a, b []float64) bool {
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

// TestEventKink: a hit changes the velocity, so the position's slope
// changes at the hit's sample (a kink). In a position-only log that kink
// is the event, its size the velocity jump; with both states logged the
// velocity's step and the position's kink make one split, the sample
// between their cuts dropped.
func TestEventKink(t *testing.T) {
	const sd, dv, hit = 0.01, 400.0, 1000
	in := oscillator(rand.New(rand.NewPCG(13, 14)), 8, 10, 0, 0, hit, dv, sd)
	var pos strings.Builder
	for _, l := range strings.Split(strings.TrimSpace(in), "\n") {
		f := strings.Split(l, ",")
		pos.WriteString(f[0] + "," + f[1] + "\n")
	}
	ds, err := ReadCSV(strings.NewReader(pos.String()), "pos.csv", nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(ds.Events) != 1 || len(ds.Runs) != 2 {
		t.Fatalf("position only: events %+v, %d runs", ds.Events, len(ds.Runs))
	}
	ev := ds.Events[0]
	// the corner is the hit's sample: the position is continuous there
	// and the next step has the new velocity
	if ev.Kind != EventKink || ev.Time != hit*0.005 || ds.Runs[0].Len() != hit+1 {
		t.Errorf("event %+v, first run %d samples; want a kink at %g s, %d samples", ev, ds.Runs[0].Len(), hit*0.005, hit+1)
	}
	// The second difference over h has noise sqrt(6) sd / h = 4.9 mm/s;
	// the damped response's own curvature over one step adds
	// w^2 x h, under 2 mm/s here: 5 noise deviations plus that.
	if tol := 5*math.Sqrt(6)*sd/0.005 + 2; !scalar.EqualWithinAbs(ev.Size, dv, tol) {
		t.Errorf("kink size %g mm/s, want the velocity jump %g ± %g", ev.Size, dv, tol)
	}
	ds, err = ReadCSV(strings.NewReader(in), "both.csv", nil)
	if err != nil {
		t.Fatal(err)
	}
	kinds := map[string]string{}
	for _, ev := range ds.Events {
		kinds[ev.State] = ev.Kind
		if ev.Time != hit*0.005 {
			t.Errorf("event %+v, want it at %g s", ev, hit*0.005)
		}
	}
	if kinds["vel"] != EventStep || kinds["disp"] != EventKink || len(ds.Runs) != 2 || ds.Dropped != 1 ||
		ds.Runs[0].Len() != hit || ds.Runs[1].T[0] != (hit+1)*0.005 {
		t.Errorf("both states: events %+v, %d runs, %d dropped", ds.Events, len(ds.Runs), ds.Dropped)
	}
}
