package validate

import (
	"bytes"
	"context"
	"fmt"
	"math/rand/v2"
	"strings"
	"testing"

	"basin.example/fit"
	"basin.example/ingest"
)

// hammerRigF is the damped hardening Duffing oscillator x' = v,
// v' = -2x - x³ - 0.5v, a field inside the cubic library, so a fitted
// model can be exact. It is globally asymptotically stable: its energy
// E = v²/2 + x² + x⁴/4 falls at the rate 0.5·v², and only the origin
// keeps v ≡ 0 (LaSalle's invariance principle; [Khalil2002] §4.2, from
// memory), with eigenvalues -0.25 ± 1.392i there (exact, from
// x” + 0.5x' + 2x = 0).
func hammerRigF(d []float64, _ float64, x []float64) {
	d[0] = x[1]
	d[1] = -2*x[0] - x[0]*x[0]*x[0] - 0.5*x[1]
}

// hammerRigCSV writes hammerRigF logged as one CSV with a run column:
// recs recordings of 20 s at 50 Hz from starts drawn in |x| <= 1,
// |v| <= 1.5, with Gaussian noise of sd on both states. Recording 4
// takes a hammer hit at 8 s: v steps by kick (an impulse changes the
// velocity), which ingest cuts there (a step event in v), and its piece
// after the hit, rig.csv#4~1, swings out far beyond the range the other
// recordings cover. With cut, recording 4 ends at the hit instead: the
// same rig without the outlying piece, sample for sample.
func hammerRigCSV(t testing.TB, recs int, cut bool, seed uint64, kick, sd float64) []byte {
	t.Helper()
	const rate, dur, hitAt = 50.0, 20.0, 8.0
	rng := rand.New(rand.NewPCG(seed, 3))
	var csv bytes.Buffer
	csv.WriteString("run,t,x,v\n")
	m := int(dur*rate) + 1
	h := int(hitAt * rate) // the first sample after the hit
	ts := make([]float64, m)
	for i := range ts {
		ts[i] = float64(i) / rate
	}
	opts := &DopriOptions{RelTol: 1e-10, AbsTol: 1e-12}
	integrate := func(x0 []float64, ts []float64, dst [][]float64) {
		if st := Integrate(hammerRigF, x0, ts, dst, opts); st.Diverged {
			t.Fatalf("truth simulation diverged: %s", st.Reason)
		}
	}
	for r := 0; r < recs; r++ {
		x0 := box(rng, 1, 1.5)
		x := [][]float64{make([]float64, m), make([]float64, m)}
		if r != 4 {
			integrate(x0, ts, x)
		} else {
			// Up to the hit, one step on to its time, then on from there
			// with v raised by kick.
			integrate(x0, ts[:h], [][]float64{x[0][:h], x[1][:h]})
			y := [][]float64{make([]float64, 2), make([]float64, 2)}
			integrate([]float64{x[0][h-1], x[1][h-1]}, ts[h-1:h+1], y)
			integrate([]float64{y[0][1], y[1][1] + kick}, ts[h:], [][]float64{x[0][h:], x[1][h:]})
		}
		end := m
		if r == 4 && cut {
			end = h
		}
		for i := 0; i < end; i++ {
			fmt.Fprintf(&csv, "%d,%.2f,%.6f,%.6f\n", r, ts[i], x[0][i]+sd*rng.NormFloat64(), x[1][i]+sd*rng.NormFloat64())
		}
	}
	return csv.Bytes()
}

// hammerRig reads hammerRigCSV as basin does (ingest splits the hit
// recording at its jump).
func hammerRig(t testing.TB, recs int, cut bool, seed uint64, kick, sd float64) *ingest.Dataset {
	t.Helper()
	ds, err := ingest.ReadCSV(bytes.NewReader(hammerRigCSV(t, recs, cut, seed, kick, sd)), "rig.csv", &ingest.Options{RunCol: "run"})
	if err != nil {
		t.Fatal(err)
	}
	return ds
}

// TestOutlyingPiece: a hammer hit that sends one recording's second piece
// far outside the range the other runs cover does not make an exact
// model "lack fit". The held-out error there is the fold models'
// extrapolation, not a lack: the lack-of-fit check leaves those windows
// out, says the piece lies outside the others' range (naming it and the
// states), and the verdict is the one of the same rig without the piece,
// certified (the truth: hammerRigF is globally asymptotically stable, and
// the certified region is checked against it by integration).
//
// Before, on the same data, the released fold's d(v)/dt scored 2.83 (and
// 5.3 on the second case) times the noise over all held-out windows, the
// piece carrying 86% of it; two folds were inconclusive for lack of fit,
// the verdict inconclusive, and the warning said "in most runs (a term
// outside the library, an unlogged input, saturation?)", naming no run.
// The premise is checked: the ratio over every held-out window is still
// at least 2.
func TestOutlyingPiece(t *testing.T) {
	heavy(t)
	if testing.Short() {
		t.Skip("fits fields and certificates")
	}
	for _, tc := range []struct {
		recs     int
		seed     uint64
		kick, sd float64
	}{
		{16, 1, 20, 0.04},
		{12, 2, 20, 0.04},
	} {
		t.Run(fmt.Sprintf("recs=%d/seed=%d", tc.recs, tc.seed), func(t *testing.T) {
			var verdicts [2]*fit.Certificate
			for k, cut := range []bool{false, true} {
				ds := hammerRig(t, tc.recs, cut, tc.seed, tc.kick, tc.sd)
				res, err := Evaluate(context.Background(), ds, &Options{Field: &fit.FieldOptions{Bootstrap: -1}})
				if err != nil {
					t.Fatal(err)
				}
				c := res.Certificate
				verdicts[k] = c
				t.Logf("cut %v: %s/%s (%s): %s", cut, c.Verdict, c.Strength, c.ReasonKind, c.Reason)
				for _, e := range res.Model.Equations {
					t.Logf("  d(%s)/dt: lack of fit %.3g, inside %.3g (%d outside), warning %q, note %q", e.State, e.LackOfFit, e.InsideLackOfFit, e.OutsideWindows, e.Warning, e.Extrapolation)
					if strings.Contains(e.Warning, "measurement noise") {
						t.Errorf("cut %v: d(%s)/dt: a lack-of-fit warning on an exact model: %q", cut, e.State, e.Warning)
					}
				}
				if why := res.Model.Misfit(); why != "" || c.ReasonKind == fit.ReasonLackOfFit {
					t.Errorf("cut %v: held back for lack of fit: %q / %s", cut, why, c.Reason)
				}
				if c.Verdict == fit.Certified {
					// 60 s is 15 time constants of the slowest decay
					// (1/0.25 s); within 0.01 of the origin is far
					// outside any residue of it.
					ok, tried := regionConverges(hammerRigF, c, 100, 60, 0.01)
					if tried < 100 || ok != tried {
						t.Errorf("cut %v: %d of %d points sampled in the certified region converge under the true field", cut, ok, tried)
					}
				}
				if cut {
					continue
				}
				eq := res.Model.Equations[1]
				if !(eq.LackOfFit >= 2) {
					t.Errorf("premise: d(v)/dt's ratio over every held-out window %.3g, want at least 2 (the extrapolation there)", eq.LackOfFit)
				}
				if len(eq.OutsideRuns) != 1 || eq.OutsideRuns[0] != "rig.csv#4~1" ||
					!strings.Contains(eq.Extrapolation, "run rig.csv#4's piece ~1 lies outside the range the runs fitted without it cover in x, v") ||
					!strings.Contains(eq.Extrapolation, "not checked there") {
					t.Errorf("d(v)/dt: outside runs %v, note %q; want rig.csv#4~1 named, outside in x and v", eq.OutsideRuns, eq.Extrapolation)
				}
			}
			hit, cut := verdicts[0], verdicts[1]
			if cut.Verdict != fit.Certified {
				t.Fatalf("premise: the rig without the piece is %s: %s", cut.Verdict, cut.Reason)
			}
			// The verdict, not the strength: on the second case the fold
			// that holds the piece out (with rig.csv#1 and #7) certifies
			// only stability, "not all settled" by Decide's settling
			// count, a matter of the settling checks on that fold's
			// runs (the rig without the piece deals its runs into other
			// folds), not of the lack-of-fit check: a fold held back for
			// lack of fit would veto certified (combineFolds), so with
			// the verdict certified none was.
			if hit.Verdict != cut.Verdict {
				t.Errorf("with the piece %s/%s, without %s/%s", hit.Verdict, hit.Strength, cut.Verdict, cut.Strength)
			}
		})
	}
}
