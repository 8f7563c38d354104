package main

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"basin.example/internal/demodata"
)

func demo(t *testing.T, args ...string) (code int, stdout, stderr string) {
	t.Helper()
	var o, e bytes.Buffer
	code = basinMain(context.Background(), append([]string{"demo"}, args...), &o, &e)
	return code, o.String(), e.String()
}

// TestDemoData checks that basin demo writes exactly the generator's data
// set, byte for byte, and the same bytes twice.
func TestDemoData(t *testing.T) {
	dir := t.TempDir()
	code, out, errs := demo(t, "--out", dir, "--data-only")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	if !strings.Contains(out, "40 runs") || !strings.Contains(out, "5 runs leave the basin") {
		t.Errorf("stdout: %q", out)
	}
	runs, err := demodata.Generate(1, nil)
	if err != nil {
		t.Fatal(err)
	}
	ents, _ := os.ReadDir(filepath.Join(dir, "data"))
	if len(ents) != len(runs)+1 {
		t.Fatalf("%d files in data, want %d", len(ents), len(runs)+1)
	}
	for _, i := range []int{0, 7, 39} { // one inside, one leaving, the last
		var want bytes.Buffer
		runs[i].WriteCSV(&want)
		got, err := os.ReadFile(filepath.Join(dir, "data", runs[i].File))
		if err != nil || !bytes.Equal(got, want.Bytes()) {
			t.Errorf("%s differs from the generator's output (%v)", runs[i].File, err)
		}
	}
	f, err := os.Open(filepath.Join(dir, "data", demodata.TruthFile))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	truth, err := demodata.ReadTruth(f)
	if err != nil {
		t.Fatal(err)
	}
	if len(truth.Leaving) != 5 || len(truth.Runs) != 40 {
		t.Errorf("truth: %d runs, leaving %v", len(truth.Runs), truth.Leaving)
	}
	first, _ := os.ReadFile(filepath.Join(dir, "data", "run-08.csv"))
	if code, _, errs := demo(t, "--out", dir, "--data-only"); code != 0 {
		t.Fatalf("second run: exit %d: %s", code, errs)
	}
	again, _ := os.ReadFile(filepath.Join(dir, "data", "run-08.csv"))
	if !bytes.Equal(first, again) {
		t.Error("a second demo wrote different bytes")
	}
}

func TestDemoBadInput(t *testing.T) {
	file := filepath.Join(t.TempDir(), "afile")
	os.WriteFile(file, []byte("x"), 0o644)
	for _, tc := range []struct {
		name string
		args []string
		want string // in the one-line message
	}{
		{"out is a file", []string{"--out", file, "--data-only"}, "--out"},
		{"inputs given", []string{"--out", t.TempDir(), "logs/"}, "no INPUTS"},
		{"empty out", []string{"--out", ""}, "--out"},
		{"bad flag", []string{"--degree", "3"}, "not defined"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			code, out, errs := demo(t, tc.args...)
			if code != 2 {
				t.Fatalf("exit %d, want 2; stderr %q", code, errs)
			}
			if strings.Count(errs, "\n") != 1 || !strings.Contains(errs, tc.want) {
				t.Errorf("stderr %q, want one line naming %q", errs, tc.want)
			}
			if out != "" {
				t.Errorf("stdout %q, want nothing", out)
			}
		})
	}
	if b, _ := os.ReadFile(file); string(b) != "x" {
		t.Error("the file given as --out was changed")
	}
}

// TestDemoFull runs the whole demo: whatever of the pipeline exists.
func TestDemoFull(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the pipeline")
	}
	d := sharedDemo(t)
	dir, out := d.dir, d.stdout
	if _, err := os.Stat(filepath.Join(dir, "report.html")); err == nil {
		if !strings.Contains(out, "report.html") {
			t.Errorf("report written but not named: %q", out)
		}
	} else if !strings.Contains(out, "not built yet") {
		t.Errorf("no report and no word why: %q", out)
	}
	if _, err := os.Stat(filepath.Join(dir, "model.json")); err != nil {
		t.Errorf("no model.json: %v", err)
	}
}
