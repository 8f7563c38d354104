package main

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"basin.example/fit"
	"basin.example/ingest"
	"basin.example/internal/parallel"
)

// run1 runs basin and returns the exit code and stderr, which must be
// one line when the code is 2 or 3.
func run1(t *testing.T, args ...string) (int, string) {
	t.Helper()
	var out, errb strings.Builder
	code := basinMain(t.Context(), args, &out, &errb)
	msg := strings.TrimSpace(errb.String())
	if (code == 2 || code == 3) && strings.Contains(msg, "\n") {
		t.Errorf("%v: exit %d with more than one line on stderr:\n%s", args, code, msg)
	}
	return code, msg
}

// TestOutCheckedFirst: a bad --out is refused before the inputs are read
// (the inputs here do not exist, and the error is about --out).
func TestOutCheckedFirst(t *testing.T) {
	dir := t.TempDir()
	file := filepath.Join(dir, "file")
	os.WriteFile(file, []byte("x"), 0o644)
	logs := filepath.Join(dir, "logs")
	os.Mkdir(logs, 0o755)
	missing := filepath.Join(dir, "nosuch.csv")
	for _, tc := range []struct {
		args []string
		want string
	}{
		{[]string{"run", "--out", "", missing}, "--out needs a folder"},
		{[]string{"fit", "--out", " ", missing}, "--out needs a folder"},
		{[]string{"certify", "--model", missing, "--out", file, missing}, "is a file, not a folder"},
		{[]string{"run", "--out", filepath.Join(file, "sub"), missing}, "not a directory"},
		{[]string{"run", "--out", logs, logs}, "is also an input folder"},
		{[]string{"fit", "--out", logs + "/", logs}, "is also an input folder"},
		{[]string{"demo", "--out", ""}, "--out needs a folder"},
		{[]string{"demo", "--out", file}, "is a file"},
	} {
		code, msg := run1(t, tc.args...)
		if code != 2 || !strings.Contains(msg, tc.want) {
			t.Errorf("%q: exit %d %q, want 2 and %q", tc.args, code, msg, tc.want)
		}
	}
}

// TestDemoLeavesForeignFiles: demo refuses, before writing anything, a
// folder holding files it did not write, and rewrites its own folder.
func TestDemoLeavesForeignFiles(t *testing.T) {
	for _, tc := range []struct {
		name  string
		files map[string]string // path under DIR -> content
		want  string            // "" when demo may write there
	}{
		{"user's logs", map[string]string{"data/run-01.csv": "mine", "data/notes.txt": "mine"}, "did not write"},
		{"user's run only", map[string]string{"data/run-01.csv": "mine"}, "did not write"},
		{"user's summary", map[string]string{"summary.txt": "mine"}, "did not write"},
		{"data is a file", map[string]string{"data": "mine"}, "not a folder basin demo wrote"},
		{"unrelated files", map[string]string{"README": "mine"}, ""},
	} {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			for p, c := range tc.files {
				os.MkdirAll(filepath.Dir(filepath.Join(dir, p)), 0o755)
				if err := os.WriteFile(filepath.Join(dir, p), []byte(c), 0o644); err != nil {
					t.Fatal(err)
				}
			}
			code, msg := run1(t, "demo", "--data-only", "--quiet", "--out", dir)
			if tc.want == "" {
				if code != 0 {
					t.Fatalf("exit %d: %s", code, msg)
				}
			} else if code != 2 || !strings.Contains(msg, tc.want) {
				t.Fatalf("exit %d %q, want 2 and %q", code, msg, tc.want)
			}
			for p, c := range tc.files {
				if b, err := os.ReadFile(filepath.Join(dir, p)); err != nil || string(b) != c {
					t.Errorf("%s changed: %q, %v", p, b, err)
				}
			}
			if tc.want != "" {
				if _, err := os.Stat(filepath.Join(dir, "data", "truth.json")); err == nil {
					t.Error("truth.json written into a refused folder")
				}
			}
		})
	}
	// A demo folder is the demo's own: a second demo rewrites it.
	dir := t.TempDir()
	for range 2 {
		if code, msg := run1(t, "demo", "--data-only", "--quiet", "--out", dir); code != 0 {
			t.Fatalf("demo into its own folder: exit %d: %s", code, msg)
		}
	}
}

// writeWide writes a CSV of cols random columns and rows rows.
func writeWide(t *testing.T, path string, cols, rows int) {
	t.Helper()
	var b strings.Builder
	b.WriteString("t")
	for j := range cols {
		b.WriteString(",x" + ftoa(float64(j)))
	}
	b.WriteString("\n")
	v := 0.1
	for i := range rows {
		b.WriteString(ftoa(0.01 * float64(i)))
		for range cols {
			v = 4 * v * (1 - v) // logistic map: deterministic, not constant
			b.WriteString("," + ftoa(v))
		}
		b.WriteString("\n")
	}
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
}

// TestMemoryBudget: a wide file with few rows, and a fit over the budget,
// stop at once with one line that says the budget and the flag raising
// it; the V family's size is checked the same way.
func TestMemoryBudget(t *testing.T) {
	dir := t.TempDir()
	wide := filepath.Join(dir, "wide.csv")
	writeWide(t, wide, 200, 50)
	out := filepath.Join(dir, "out")
	for _, cmd := range []string{"run", "fit"} {
		if code, msg := run1(t, cmd, "--out", out, wide); code != 2 || !strings.Contains(msg, "too few samples") && !strings.Contains(msg, "over the budget") {
			t.Errorf("%s on 200 columns x 50 rows: exit %d %q", cmd, code, msg)
		}
	}
	logs := filepath.Join(dir, "logs")
	os.Mkdir(logs, 0o755)
	writeOscillator(t, logs, 6, false)
	code, msg := run1(t, "fit", "--max-memory", "1KiB", "--out", out, logs)
	if code != 2 || !strings.Contains(msg, "over the budget of 1 KiB") || !strings.Contains(msg, "--max-memory") {
		t.Errorf("1 KiB budget: exit %d %q", code, msg)
	}
	for _, bad := range []string{"0", "-1GiB", "lots", "1_000", "0x10", "NaN", "8PiB"} {
		if code, msg := run1(t, "fit", "--max-memory", bad, "--out", out, logs); code != 2 || !strings.Contains(msg, "max-memory") {
			t.Errorf("--max-memory %s: exit %d %q", bad, code, msg)
		}
	}
	m := &memFlags{MaxMemory: 2 << 30}
	if err := m.checkV(40, 8); err == nil || !strings.Contains(err.Error(), "--v-degree") {
		t.Errorf("V of degree 8 in 40 states: %v", err)
	}
	if err := m.checkV(2, 8); err != nil {
		t.Errorf("V of degree 8 in 2 states: %v", err)
	}
}

// TestRateRefused: a sampling rate that is not a number, infinite, or
// so small or large that the sample times underflow or overflow is a
// usage error (it was a panic for NaN).
func TestRateRefused(t *testing.T) {
	dir := t.TempDir()
	f := filepath.Join(dir, "notime.csv")
	os.WriteFile(f, []byte("x,y\n1,2\n2,3\n3,1\n4,5\n"), 0o644)
	for _, r := range []string{"NaN", "nan", "Inf", "-Inf", "1e-320", "1e300", "-3"} {
		for _, cmd := range []string{"inspect", "fit"} {
			code, msg := run1(t, cmd, "--rate", r, "--out", filepath.Join(dir, "out"), f)
			if cmd == "inspect" {
				code, msg = run1(t, cmd, "--rate", r, f)
			}
			if code != 2 || !strings.Contains(msg, "--rate must be a sampling rate in Hz") {
				t.Errorf("%s --rate %s: exit %d %q", cmd, r, code, msg)
			}
		}
	}
	if code, msg := run1(t, "inspect", "--rate", "50", f); code != 0 {
		t.Errorf("--rate 50: exit %d %q", code, msg)
	}
}

// TestWorkerPanicExits3: a panic recovered by internal/parallel in a
// library's worker exits 3 with one line, even when the panic value is a
// bad-input sentinel (which would otherwise classify as exit 2).
func TestWorkerPanicExits3(t *testing.T) {
	for _, v := range []any{"index out of range [3] with length 3", fit.ErrTooFewSamples, ingest.ErrFormat} {
		perr := parallel.For(context.Background(), 4, 2, nil, func(_ context.Context, i int, _ struct{}) error {
			if i == 2 {
				panic(v)
			}
			return nil
		})
		err := classify(fmt.Errorf("fit: %w", perr), "logs/")
		var b strings.Builder
		if code := exitCode(&b, "run", err); code != 3 {
			t.Errorf("panic(%v): exit %d, want 3 (%q)", v, code, b.String())
		}
		if msg := b.String(); strings.Count(msg, "\n") != 1 || !strings.Contains(msg, "a bug in basin") {
			t.Errorf("panic(%v): stderr %q, want one line saying it is a bug", v, msg)
		}
	}
}

// TestPanicIsOneLine: a panic recovered in a goroutine exits 3 (not 2,
// the bad-input code) with one line.
func TestPanicIsOneLine(t *testing.T) {
	err := screenSafe(func() fileResult { var x []int; _ = x[3]; return fileResult{} }, "a\x1b[2Jb.csv").err
	var pe *panicError
	if !errors.As(err, &pe) {
		t.Fatalf("err = %v, want a panicError", err)
	}
	var b strings.Builder
	if code := exitCode(&b, "screen", err); code != 3 {
		t.Errorf("exit %d, want 3", code)
	}
	if msg := b.String(); strings.Count(msg, "\n") != 1 || strings.ContainsRune(msg, 0x1b) || !strings.Contains(msg, "index out of range") {
		t.Errorf("stderr %q: want one sanitised line", msg)
	}
}

// TestEarliestBadFileNamed: with two bad files, the error names the
// first in input order every time, though the later one fails sooner.
func TestEarliestBadFileNamed(t *testing.T) {
	dir := t.TempDir()
	var b strings.Builder
	b.WriteString("t,x\n")
	for i := range 100000 {
		b.WriteString(ftoa(float64(i)*0.01) + ",1\n")
	}
	b.WriteString("1e9,oops\n")
	os.WriteFile(filepath.Join(dir, "a.csv"), []byte(b.String()), 0o644)
	for _, n := range []string{"b.csv", "c.csv"} {
		os.WriteFile(filepath.Join(dir, n), []byte("t,x\n0,1\n0.1,2\n0.2,3\n"), 0o644)
	}
	os.WriteFile(filepath.Join(dir, "z.csv"), []byte("t,x\n0,bad\n"), 0o644)
	for range 10 {
		code, msg := run1(t, "inspect", dir)
		if code != 2 || !strings.Contains(msg, "a.csv") {
			t.Fatalf("exit %d %q, want the error of a.csv", code, msg)
		}
	}
}

// TestTerminalOutputSanitised: a file name with ESC, OSC, CR and a
// newline (which forged a table line "verdict: certified") reaches the
// terminal as '?' in inspect's table.
func TestTerminalOutputSanitised(t *testing.T) {
	dir := t.TempDir()
	name := "run\x1b]0;owned\x07\r\nverdict: certified\u202e.csv"
	var b strings.Builder
	b.WriteString("t,x\n")
	for i := range 50 {
		b.WriteString(ftoa(0.01*float64(i)) + "," + ftoa(float64(i%7)) + "\n")
	}
	if err := os.WriteFile(filepath.Join(dir, name), []byte(b.String()), 0o644); err != nil {
		t.Skip("the file system refuses the name:", err)
	}
	var out, errb strings.Builder
	if code := basinMain(t.Context(), []string{"inspect", dir}, &out, &errb); code != 0 {
		t.Fatalf("exit %d: %s", code, errb.String())
	}
	text := out.String() + errb.String()
	if strings.ContainsAny(text, "\x1b\x07\r\u202e") {
		t.Errorf("control characters reached the terminal: %q", text)
	}
	for _, line := range strings.Split(text, "\n") {
		if strings.HasPrefix(line, "verdict") {
			t.Errorf("forged line: %q", line)
		}
	}
}

// TestUnitsAndCopies: logs in other units than the certificate's are
// refused (names alone matched before); copies of a run are counted once,
// with a warning (before, every run duplicated twice gave a smaller
// violation bound).
func TestUnitsAndCopies(t *testing.T) {
	d := sharedDemo(t)
	cert := filepath.Join(d.dir, "certificate.json")
	dir := t.TempDir()
	src, err := os.ReadFile(filepath.Join(d.dir, "data", "run-01.csv"))
	if err != nil {
		t.Fatal(err)
	}
	deg := filepath.Join(dir, "deg")
	os.Mkdir(deg, 0o755)
	os.WriteFile(filepath.Join(deg, "run-01.csv"), []byte(strings.Replace(string(src), "[rad]", "[deg]", 1)), 0o644)
	code, msg := run1(t, "check", "--cert", cert, deg)
	if code != 2 || !strings.Contains(msg, `run-01.csv:1: column "theta": in deg in the data but in rad`) {
		t.Errorf("check on logs in deg: exit %d %q", code, msg)
	}
	// screen refuses them the same way (it used to warn, then flag every
	// run with distances of degrees read as radians)
	code, msg = run1(t, "screen", "--cert", cert, deg)
	if code != 2 || !strings.Contains(msg, `run-01.csv:1: column "theta": in deg in the data but in rad in the certificate`) {
		t.Errorf("screen on logs in deg: exit %d %q", code, msg)
	}
	cp := filepath.Join(dir, "copies")
	os.Mkdir(cp, 0o755)
	for _, n := range []string{"a.csv", "b.csv", "c.csv"} {
		os.WriteFile(filepath.Join(cp, n), src, 0o644)
	}
	var out, errb strings.Builder
	basinMain(t.Context(), []string{"check", "--json", "--cert", cert, cp}, &out, &errb)
	if !strings.Contains(errb.String(), "run b.csv (") || !strings.Contains(errb.String(), "is a copy of run a.csv") ||
		strings.Count(errb.String(), "is a copy of") != 2 {
		t.Errorf("no warning for the copies: %q", errb.String())
	}
	if n := strings.Count(out.String(), `"file":`); n != 1 {
		t.Errorf("%d runs checked, want the 3 copies counted once", n)
	}
}

// TestExitMessages: the messages of the small cases that blamed the wrong
// thing or exited with the wrong code.
func TestExitMessages(t *testing.T) {
	d := sharedDemo(t)
	cert := filepath.Join(d.dir, "certificate.json")
	data := filepath.Join(d.dir, "data")
	dir := t.TempDir()
	man := filepath.Join(dir, "m.csv")
	var b strings.Builder
	b.WriteString("path,run,split\n")
	ents, _ := os.ReadDir(data)
	for _, e := range ents {
		if strings.HasSuffix(e.Name(), ".csv") {
			b.WriteString(filepath.Join(data, e.Name()) + ",,holdout\n")
		}
	}
	os.WriteFile(man, []byte(b.String()), 0o644)
	ab := filepath.Join(dir, "ab.csv")
	os.WriteFile(ab, []byte("t,a,b\n0,1,2\n0.1,2,3\n0.2,3,4\n"), 0o644)
	out := filepath.Join(dir, "out")
	for _, tc := range []struct {
		args []string
		want string
	}{
		{[]string{"inspect", "--states", "theta,theta", data}, `--states names "theta" twice`},
		// A manifest that names every file needs no INPUTS; holding out
		// every run is said as such.
		{[]string{"run", "--manifest", man, "--out", out}, "holds out every one of the 40 runs"},
		{[]string{"fit", "--manifest", man, "--out", out}, "holds out every one"},
		{[]string{"export", "--cert", cert, "--lang", "go", "--package", "func"}, `--package "func": not a valid identifier`},
		{[]string{"screen", "--cert", cert, ab}, "the certificate's states theta,omega are not all columns"},
	} {
		code, msg := run1(t, tc.args...)
		if code != 2 || !strings.Contains(msg, tc.want) || strings.Contains(tc.args[0], "screen") && strings.Contains(msg, "--states names") {
			t.Errorf("%q: exit %d %q, want 2 and %q", tc.args, code, msg, tc.want)
		}
	}
}

// TestOptionFieldsMapped: every Go option field that a library's error or
// reason text names (a string literal holding "Options.Field") has a flag
// in optionFlags, so the command line never shows a Go field name; and an
// error from ingest reads with the flag.
func TestOptionFieldsMapped(t *testing.T) {
	field := regexp.MustCompile(`(?:[a-z]+\.)?[A-Z][A-Za-z]*Options\.[A-Z][A-Za-z]*|\bOptions\.[A-Z][A-Za-z]*`)
	lit := regexp.MustCompile(`"(?:[^"\\\n]|\\.)*"`)
	seen := 0
	for _, dir := range []string{"../../ingest", "../../fit", "../../validate", "../../fit/lyapunov", "../../fit/export"} {
		files, err := filepath.Glob(filepath.Join(dir, "*.go"))
		if err != nil {
			t.Fatal(err)
		}
		for _, f := range files {
			if strings.HasSuffix(f, "_test.go") {
				continue
			}
			src, err := os.ReadFile(f)
			if err != nil {
				t.Fatal(err)
			}
			for _, l := range lit.FindAll(src, -1) {
				for _, m := range field.FindAll(l, -1) {
					seen++
					if got := optionFlags.Replace(string(m)); strings.Contains(got, "Options.") {
						t.Errorf("%s: %s names %s, which optionFlags does not map to a flag", f, l, m)
					}
				}
			}
		}
	}
	if seen == 0 {
		t.Fatal("no option field found in the libraries' strings: the scan is broken")
	}
	t.Logf("%d option field names in the libraries' strings, all mapped", seen)
	f := filepath.Join(t.TempDir(), "x.csv")
	if err := os.WriteFile(f, []byte("t,a\n0,1\n1,2\n2,3\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		args []string
		want string
	}{
		{[]string{"inspect", "--time-col", "clock", f}, `--time-col "clock" is not a column`},
		{[]string{"inspect", "--states", "b", f}, `--states names "b", which is not a column`},
		{[]string{"inspect", "--run-col", "t", f}, `--run-col "t" is the time column`},
	} {
		code, msg := run1(t, tc.args...)
		if code != 2 || !strings.Contains(msg, tc.want) || strings.Contains(msg, "Options.") {
			t.Errorf("%v: exit %d %q, want exit 2 with %q and no Go field name", tc.args, code, msg, tc.want)
		}
	}
}
