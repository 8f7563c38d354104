package ingest

import (
	"context"
	"fmt"
	"math"
	"strconv"
	"strings"
	"testing"
)

// TestSecondsText: times in warnings are written with four significant
// digits like the durations beside them (%.4g), in fixed point from 10^4 s
// up (written out by hand; common practice).
func TestSecondsText(t *testing.T) {
	for _, tc := range []struct {
		x    float64
		want string
	}{
		{12.340000000000002, "12.34"},
		{6.7834567, "6.783"},
		{0, "0"},
		{0.5, "0.5"},
		{-0.25, "-0.25"},
		{0.000123456, "0.0001235"},
		{9999.6, "10000"},
		{123456.7, "123457"},
		{1.7332301234e9, "1733230123"},
		{math.NaN(), "NaN"},
	} {
		if got := secondsText(tc.x); got != tc.want {
			t.Errorf("secondsText(%v) = %q, want %q", tc.x, got, tc.want)
		}
	}
}

// TestEventWarningTime: a spike logged at a time stamp that is a sum of
// 0.01 s steps (12.340000000000002 s, written by the logger with every
// digit) is named at 12.34 s in the warning, not with the round-off.
func TestEventWarningTime(t *testing.T) {
	var b strings.Builder
	b.WriteString("t,x\n")
	tm, at := 0.0, ""
	for i := range 2000 {
		x := math.Exp(-0.2*tm) * math.Cos(3*tm)
		// a small deterministic wobble as noise (4e-4, a tenth of a
		// percent of the swing)
		x += 4e-4 * math.Sin(1.7*float64(i*i))
		if i == 1234 {
			x += 0.5
			at = strconv.FormatFloat(tm, 'g', -1, 64)
		}
		fmt.Fprintf(&b, "%s,%s\n", strconv.FormatFloat(tm, 'g', -1, 64), strconv.FormatFloat(x, 'g', -1, 64))
		tm += 0.01
	}
	if at == "12.34" || !strings.HasPrefix(at, "12.3") {
		t.Fatalf("the spike's time stamp is %s: the test needs one with round-off", at)
	}
	path := writeFile(t, t.TempDir(), "arm.csv", b.String())
	ds, err := Load(context.Background(), []string{path}, nil)
	if err != nil {
		t.Fatal(err)
	}
	var got string
	for _, w := range ds.Warnings {
		if strings.Contains(w, "one-sample") {
			got = w
		}
	}
	if !strings.Contains(got, "arm.csv at 12.34 s, x spike") {
		t.Errorf("warning %q, want the spike at 12.34 s (stamp %s)", got, at)
	}
}

// TestEventPlacesWarning: a hammer hit moves a rig's two rates at one
// sample, two events and one split; the warning says 2 jumps at 1 place,
// and EventPlaces counts places (run and time), not states.
func TestEventPlacesWarning(t *testing.T) {
	var b strings.Builder
	b.WriteString("t,x,v\n")
	x, v := 0.8, 0.0
	const h = 0.01
	for i := range 2000 {
		if i == 900 {
			v += 3 // the hit: a step in the rate
			x += 0.4
		}
		// x' = v, v' = -4x - 0.6v, one Euler step (small at h = 0.01)
		fmt.Fprintf(&b, "%.2f,%.6f,%.6f\n", float64(i)*h, x+4e-4*math.Sin(1.7*float64(i*i)), v+4e-4*math.Cos(2.3*float64(i*i)))
		x, v = x+h*v, v+h*(-4*x-0.6*v)
	}
	path := writeFile(t, t.TempDir(), "hit.csv", b.String())
	ds, err := Load(context.Background(), []string{path}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(ds.Events) != 2 || EventPlaces(ds.Events) != 1 {
		t.Fatalf("%d events at %d places, want 2 at 1: %+v", len(ds.Events), EventPlaces(ds.Events), ds.Events)
	}
	var got string
	for _, w := range ds.Warnings {
		if strings.Contains(w, "one-sample") {
			got = w
		}
	}
	if !strings.HasPrefix(got, "2 one-sample jumps (at 1 place:") {
		t.Errorf("warning %q, want it to count 2 jumps at 1 place", got)
	}
}
