package main

import (
	"bytes"
	"context"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"regexp"
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

// TestRunColHint: time going back in a file read without --run-col (two
// runs one after another) is an input error whose one line says to give
// --run-col; with --run-col, or for a repeated time, the error is as
// ingest words it.
func TestRunColHint(t *testing.T) {
	dir := t.TempDir()
	write := func(name, text string) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	const hint = "give --run-col NAME"
	long := write("long.csv", "unit,t,x\nA,0,1\nA,1,2\nB,0,3\nB,1,4\n")
	back := write("back.csv", "unit,t,x\nA,0,1\nA,2,2\nA,1,3\n")
	rep := write("rep.csv", "t,x\n0,1\n1,2\n1,3\n")
	for _, tc := range []struct {
		name string
		args []string
		want string // in the one line
		hint bool
	}{
		{"runs one after another", []string{long}, "long.csv:4:2: column \"t\": time does not increase: goes back", true},
		{"back within a run", []string{"--run-col", "unit", back}, "back.csv:4:2: column \"t\": time does not increase: goes back", false},
		{"repeat", []string{rep}, "rep.csv:4:1: column \"t\": time does not increase: repeats", false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var stdout, stderr bytes.Buffer
			code := basinMainIn(context.Background(), append([]string{"inspect"}, tc.args...), &stdout, &stderr, nil)
			msg := stderr.String()
			if code != 2 || strings.Count(msg, "\n") != 1 || !strings.Contains(msg, tc.want) || strings.Contains(msg, hint) != tc.hint {
				t.Errorf("exit %d, stderr %q; want 2, one line with %q, hint %v", code, msg, tc.want, tc.hint)
			}
		})
	}
}

// TestScreenRunColHint: screen, which streams its files, gives the same
// one-line error with the --run-col hint as the readers that load whole,
// for a CSV file and a Parquet file of two runs one after another (the
// Parquet error counts rows, the CSV error lines); with --run-col no hint.
func TestScreenRunColHint(t *testing.T) {
	dir := t.TempDir()
	cert := writeTestCert(t, screenCert)
	tt := []float64{0, 0.02, 0.04, 0, 0.02, 0.04}
	pitch := []float64{1.6, 1.58, 1.56, 1.4, 1.42, 1.44}
	rate := []float64{-1, -0.9, -0.8, 1, 0.9, 0.8}
	var b strings.Builder
	b.WriteString("unit,time [s],pitch [deg],rate [deg/s]\n")
	for i := range tt {
		fmt.Fprintf(&b, "%d,%g,%g,%g\n", 1+i/3, tt[i], pitch[i], rate[i])
	}
	csvPath := filepath.Join(dir, "two.csv")
	if err := os.WriteFile(csvPath, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	pqPath := filepath.Join(dir, "two.parquet")
	writeParquetCols(t, pqPath, false, []string{"unit", "time [s]", "pitch [deg]", "rate [deg/s]"}, []float64{1, 1, 1, 2, 2, 2}, tt, pitch, rate)
	const hint = "; if the file holds several runs one after another, give --run-col NAME, the column that tells them apart\n"
	for _, tc := range []struct {
		name string
		args []string
		want string // the whole line
	}{
		{"csv", []string{csvPath}, csvPath + `:5:2: column "time": time does not increase: goes back (0 after 0.04 on line 4)` + hint},
		{"parquet", []string{pqPath}, pqPath + `:4:2: column "time": time does not increase: goes back (0 after 0.04 on row 3)` + hint},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var stdout, stderr bytes.Buffer
			code := basinMain(context.Background(), append([]string{"screen", "--cert", cert}, tc.args...), &stdout, &stderr)
			if got, want := stderr.String(), "basin screen: "+tc.want; code != 2 || got != want || stdout.Len() != 0 {
				t.Errorf("exit %d, stdout %q, stderr\n%q\nwant exit 2, nothing on stdout, stderr\n%q", code, stdout.String(), got, want)
			}
			stdout.Reset()
			stderr.Reset()
			code = basinMain(context.Background(), append([]string{"screen", "--cert", cert, "--run-col", "unit"}, tc.args...), &stdout, &stderr)
			if code == 2 || strings.Contains(stderr.String(), "--run-col") {
				t.Errorf("with --run-col: exit %d, stderr %q", code, stderr.String())
			}
		})
	}
}

// singleDash matches a flag spelt with one dash after "flag" or "for".
var singleDash = regexp.MustCompile(`(flag|for) -[a-z]`)

// TestFlagValueErrors: a flag value that does not parse is a usage error
// (exit 2, one line) that spells the flag with two dashes, as the help
// does, and says what the flag takes.
func TestFlagValueErrors(t *testing.T) {
	for _, tc := range []struct {
		args []string
		want string
	}{
		{[]string{"run", "--seed", "-1", "x.csv"}, `invalid value "-1" for flag --seed: parse error (a whole number, 0 or more)`},
		{[]string{"run", "--degree=x", "x.csv"}, `invalid value "x" for flag --degree: parse error (a whole number)`},
		{[]string{"inspect", "--rate", "fast", "x.csv"}, `invalid value "fast" for flag --rate: parse error (a number)`},
		{[]string{"run", "--all-folds=maybe", "x.csv"}, `invalid value "maybe" for flag --all-folds: parse error (true or false)`},
		{[]string{"inspect", "--bogus", "x.csv"}, "flag provided but not defined: --bogus"},
	} {
		t.Run(strings.Join(tc.args, " "), func(t *testing.T) {
			var stdout, stderr bytes.Buffer
			code := basinMainIn(context.Background(), tc.args, &stdout, &stderr, nil)
			msg := stderr.String()
			if code != 2 || strings.Count(msg, "\n") != 1 || !strings.Contains(msg, tc.want) || singleDash.MatchString(msg) {
				t.Errorf("exit %d, stderr %q; want 2 and one line with %q", code, msg, tc.want)
			}
		})
	}
}

// TestQuietHelpTrue: the help of --quiet says that fit, certify and run
// then print nothing at all, as the manual does (it said only "no
// progress or warnings", and a user of run --quiet got no summary).
func TestQuietHelpTrue(t *testing.T) {
	var stdout, stderr bytes.Buffer
	if code := basinMainIn(context.Background(), []string{"help", "run"}, &stdout, &stderr, nil); code != 0 {
		t.Fatalf("help run: exit %d: %s", code, stderr.String())
	}
	if !strings.Contains(stdout.String(), "fit, certify and run then print nothing") {
		t.Errorf("help run does not say what --quiet leaves out:\n%s", stdout.String())
	}
}
