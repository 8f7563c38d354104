package main

import (
	"bytes"
	"strings"
	"testing"
	"time"
)

func TestProgressLine(t *testing.T) {
	for _, tc := range []struct {
		stage string
		share float64
		left  time.Duration
		want  string
	}{
		{"fitting the field", 0, -1, "[....................]   0% fitting the field · estimating time left"},
		{"certifying", 0.35, 12 * time.Second, "[#######.............]  35% certifying · about 12 s left"},
		{"certifying", 0.5, 185 * time.Second, "[##########..........]  50% certifying · about 3 min 5 s left"},
		{"certifying", 0.9, 0, "[##################..]  90% certifying · taking longer than estimated"},
		{"done", 1, 0, "[####################] 100% done · finishing"},
	} {
		if got := progressLine(tc.stage, tc.share, tc.left); got != tc.want {
			t.Errorf("progressLine(%q, %g, %v) =\n%q, want\n%q", tc.stage, tc.share, tc.left, got, tc.want)
		}
	}
	long := progressLine(strings.Repeat("stage ", 30), 0.5, time.Second)
	if n := len([]rune(long)); n > progressWidth {
		t.Errorf("line of %d runes, want at most %d", n, progressWidth)
	}
}

// TestProgressOffTerminal: nothing is drawn when stderr is not a
// terminal (a buffer here), nor with --quiet.
func TestProgressOffTerminal(t *testing.T) {
	for _, quiet := range []bool{false, true} {
		var b bytes.Buffer
		p := newProgress(&b, quiet)
		p.Stage("reading logs")
		p.Share("fitting the field", 0.5)
		p.Done()
		if b.Len() != 0 || p.on {
			t.Errorf("quiet=%v: drew %q off a terminal", quiet, b.String())
		}
	}
}
