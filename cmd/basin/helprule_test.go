package main

import (
	"bytes"
	"math/rand/v2"
	"strings"
	"testing"

	"basin.example/ingest"
)

// TestInspectHelpSettleRule: 'basin help inspect' states the settle rule
// inspect applies (ingest.Settles, judged against the run's own noise),
// not the older one (the last 5% spanning at most a tenth of the range).
// A run resting in noise throughout tells them apart: its last 5% spans
// most of its range, so the older rule calls it unsettled, while
// ingest.Settles (and README.md, Input, Settled) says it settles.
func TestInspectHelpSettleRule(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 0))
	const n = 400
	r := &ingest.Run{Name: "rest", T: make([]float64, n), X: [][]float64{make([]float64, n)}}
	for i := range n {
		r.T[i] = float64(i) / 100
		r.X[0][i] = 0.01 * rng.NormFloat64()
	}
	settles, _ := ingest.Settles(r)
	if !settles {
		t.Fatal("ingest.Settles: a run resting in noise does not settle; the help's rule below is then wrong")
	}
	lo, hi := r.X[0][0], r.X[0][0]
	for _, x := range r.X[0] {
		lo, hi = min(lo, x), max(hi, x)
	}
	tlo, thi := r.X[0][n-n/20], r.X[0][n-n/20]
	for _, x := range r.X[0][n-n/20:] {
		tlo, thi = min(tlo, x), max(thi, x)
	}
	if thi-tlo <= (hi-lo)/10 {
		t.Fatalf("the noise run's last 5%% spans %g of a range of %g: it does not tell the rules apart", thi-tlo, hi-lo)
	}
	var out, errb bytes.Buffer
	if code := basinMain(t.Context(), []string{"help", "inspect"}, &out, &errb); code != 0 {
		t.Fatalf("help inspect: exit %d: %s", code, errb.String())
	}
	help := strings.Join(strings.Fields(out.String()), " ")
	if strings.Contains(help, "last 5% spans at most a tenth of its range") {
		t.Error("help inspect states the older settle rule (last 5% within a tenth of the range), which calls this run unsettled")
	}
	for _, want := range []string{"over its last tenth", "its own noise", "median of its last 5%"} {
		if !strings.Contains(help, want) {
			t.Errorf("help inspect lacks %q", want)
		}
	}
}
