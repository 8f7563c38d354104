package main

import (
	"bytes"
	"context"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestInspectSteppedState: a drive column left among the states (held
// between a few steps, no noise) gets one warning naming the --inputs to
// give, with the inputs already named kept in it; a measured state and a
// column already named as an input get none.
func TestInspectSteppedState(t *testing.T) {
	dir := t.TempDir()
	in := "t [s],disp [mm],vel [mm/s],drive [V],gain\n"
	for i := range 200 {
		x := float64(i) * 0.01
		drive := 0.0
		if i >= 60 && i < 140 {
			drive = 0.5
		}
		in += ftoa(x) + "," + ftoa(math.Exp(-x)*math.Cos(7*x)) + "," + ftoa(math.Exp(-x)*math.Sin(7*x)) + "," + ftoa(drive) + "," + ftoa(1+float64(i%3)) + "\n"
	}
	path := filepath.Join(dir, "shaker.csv")
	if err := os.WriteFile(path, []byte(in), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name string
		args []string
		want string // "" for no warning
	}{
		{"drive among the states", nil, `state "drive" holds its value exactly between jumps (on 98% of sample pairs, 2 levels): it looks like a drive or a setpoint, not a state; if it is one, give --inputs drive`},
		{"another input named", []string{"--inputs", "gain"}, "give --inputs gain,drive"},
		{"drive named as an input", []string{"--inputs", "drive"}, ""},
		{"quiet", []string{"--quiet"}, ""},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var stdout, stderr bytes.Buffer
			args := append(append([]string{"inspect"}, tc.args...), path)
			if code := basinMainIn(context.Background(), args, &stdout, &stderr, nil); code != 0 {
				t.Fatalf("exit %d: %s", code, stderr.String())
			}
			msg := stderr.String()
			if n := strings.Count(msg, "holds its value"); tc.want == "" && n != 0 || tc.want != "" && (n != 1 || !strings.Contains(msg, tc.want)) {
				t.Errorf("stderr %q, want one warning with %q", msg, tc.want)
			}
		})
	}
}
