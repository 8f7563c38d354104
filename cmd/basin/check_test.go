package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// checkCertJSON: V = z0^2 + z1^2 around (0, 0), scale 1, level 1.
const checkCertJSON = `{
  "format": "basin.certificate/1", "verdict": "certified", "strength": "asymptotic",
  "reason": "hand-made for a test", "empirical": true, "caveat": "x",
  "states": ["a", "b"], "units": ["m", "m/s"], "equilibrium": [0, 0], "scale": [1, 1],
  "V": {"exponents": [[2, 0], [0, 2]], "coefficients": [1, 1]}, "level": 1,
  "found": true, "margin": 0.1, "noise_radius": 0.01, "tolerance": 1e-4
}
`

// writeCheckRuns writes n decaying runs and one that spirals out.
func writeCheckRuns(t *testing.T) string {
	dir := t.TempDir()
	for r := 0; r < 5; r++ {
		var b strings.Builder
		b.WriteString("t [s],a [m],b [m/s]\n")
		for i := 0; i < 400; i++ {
			tt := float64(i) * 0.01
			amp := 0.8 * math.Exp(-tt)
			if r == 4 {
				amp = 0.5 * math.Exp(0.3*tt)
			}
			fmt.Fprintf(&b, "%g,%g,%g\n", tt, amp*math.Cos(3*tt+float64(r)), amp*math.Sin(3*tt+float64(r)))
		}
		if err := os.WriteFile(filepath.Join(dir, fmt.Sprintf("r%d.csv", r)), []byte(b.String()), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	return dir
}

func TestCheckCommand(t *testing.T) {
	cert := writeTestCert(t, checkCertJSON)
	dir := writeCheckRuns(t)
	var out, errb bytes.Buffer
	code := basinMain(context.Background(), []string{"check", "--cert", cert, dir, "--json"}, &out, &errb)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errb.String())
	}
	var doc struct {
		Runs []struct {
			File, Run string
			Samples   int
			Flagged   bool
			Flags     []struct {
				Kind   string
				Time   float64
				Excess float64
			}
		}
		States  []struct{ Name, Unit string }
		Summary struct {
			Runs, Flagged int
			Verdict       string
		}
	}
	if err := json.Unmarshal(out.Bytes(), &doc); err != nil {
		t.Fatal(err)
	}
	if len(doc.Runs) != 5 || doc.Summary.Runs != 5 || doc.Summary.Flagged != 1 || !doc.Runs[4].Flagged || doc.Runs[0].Flagged {
		t.Fatalf("runs/flags: %s", out.String())
	}
	if doc.States[1].Name != "b" || doc.States[1].Unit != "m/s" || doc.Runs[2].Samples != 400 || doc.Runs[2].Run != "r2.csv" {
		t.Errorf("states/runs: %+v %+v", doc.States, doc.Runs[2])
	}
	kinds := ""
	for _, f := range doc.Runs[4].Flags {
		kinds += f.Kind + " "
	}
	if kinds != "rises leaves unsettled " {
		t.Errorf("flags of the growing run: %q", kinds)
	}
	// r4 starts inside (V = 0.25) and leaves by far more than the
	// tolerance: the data contradict the certificate.
	if doc.Summary.Verdict != "rejected" {
		t.Errorf("verdict %s", doc.Summary.Verdict)
	}
	// table form
	out.Reset()
	if code := basinMain(context.Background(), []string{"check", dir, "--cert", cert}, &out, &errb); code != 0 ||
		!strings.Contains(out.String(), "scenario bound") || !strings.Contains(out.String(), "r4.csv") {
		t.Errorf("table: exit %d\n%s", code, out.String())
	}
}

func TestCheckCommandErrors(t *testing.T) {
	cert := writeTestCert(t, checkCertJSON)
	dir := writeCheckRuns(t)
	other := writeTestCert(t, strings.Replace(checkCertJSON, `"states": ["a", "b"]`, `"states": ["a", "c"]`, 1))
	bad := filepath.Join(t.TempDir(), "bad.csv")
	os.WriteFile(bad, []byte("t,a,b\n0,1,2\n0.1,x,3\n"), 0o644)
	onlyA := filepath.Join(t.TempDir(), "only-a.csv")
	os.WriteFile(onlyA, []byte("t [s],a [m]\n0,0.5\n0.1,0.4\n"), 0o644)
	inMM := filepath.Join(t.TempDir(), "mm.csv")
	os.WriteFile(inMM, []byte("t [s],a [mm],b [m/s]\n0,500,0\n0.1,400,0\n"), 0o644)
	for _, tc := range []struct {
		name string
		args []string
		want string // in stderr
	}{
		{"no cert", []string{"check", dir}, "--cert"},
		{"bad beta", []string{"check", "--cert", cert, "--beta", "2", dir}, "--beta"},
		{"bad min-decrease", []string{"check", "--cert", cert, "--min-decrease", "0", dir}, "--min-decrease"},
		{"missing cert", []string{"check", "--cert", "/nonexistent/c.json", dir}, "/nonexistent/c.json"},
		{"truncated cert", []string{"check", "--cert", writeTestCert(t, checkCertJSON[:80]), dir}, "certificate"},
		{"states differ", []string{"check", "--cert", other, dir}, "\"c\""},
		{"bad cell", []string{"check", "--cert", cert, bad}, "bad.csv:3:2"},
		{"no inputs", []string{"check", "--cert", cert}, "INPUTS"},
		{"a state missing", []string{"check", "--cert", cert, onlyA}, `only-a.csv: the certificate's states a,b are not all columns of this file (no column "b")`},
		{"other units", []string{"check", "--cert", cert, inMM}, `mm.csv:1: column "a": in mm in the data but in m in ` + cert},
	} {
		var out, errb bytes.Buffer
		code := basinMain(context.Background(), tc.args, &out, &errb)
		if code != 2 || !strings.Contains(errb.String(), tc.want) || strings.Count(strings.TrimSpace(errb.String()), "\n") > 0 || out.Len() > 0 {
			t.Errorf("%s: exit %d, stderr %q, stdout %d bytes; want exit 2 naming %q", tc.name, code, errb.String(), out.Len(), tc.want)
		}
	}
}

// TestCheckColumnsByName: without --states, check reads the certificate's
// states by name, as screen does: the same runs with the columns in
// another order, or with a column that is not a state, give the same
// verdict and the same flags as the plain files.
func TestCheckColumnsByName(t *testing.T) {
	cert := writeTestCert(t, checkCertJSON)
	plain := writeCheckRuns(t)
	reorder := func(line string) string { // t,a,b -> b,t,a
		f := strings.Split(line, ",")
		return f[2] + "," + f[0] + "," + f[1]
	}
	extra := func(line string) string {
		if strings.HasPrefix(line, "t") {
			return line + ",temp [C]"
		}
		return line + ",21.5"
	}
	summary := func(dir string) string {
		var out, errb bytes.Buffer
		if code := basinMain(context.Background(), []string{"check", "--json", "--cert", cert, dir}, &out, &errb); code != 0 {
			t.Fatalf("%s: exit %d: %s", dir, code, errb.String())
		}
		var doc struct {
			Summary struct {
				Runs, Flagged int
				Verdict       string
			}
		}
		if err := json.Unmarshal(out.Bytes(), &doc); err != nil {
			t.Fatal(err)
		}
		return fmt.Sprintf("%+v", doc.Summary)
	}
	want := summary(plain)
	for _, tc := range []struct {
		name string
		edit func(string) string
	}{
		{"columns in another order", reorder},
		{"a column that is not a state", extra},
	} {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			ents, err := os.ReadDir(plain)
			if err != nil {
				t.Fatal(err)
			}
			for _, en := range ents {
				b, err := os.ReadFile(filepath.Join(plain, en.Name()))
				if err != nil {
					t.Fatal(err)
				}
				lines := strings.Split(strings.TrimSpace(string(b)), "\n")
				for i := range lines {
					lines[i] = tc.edit(lines[i])
				}
				os.WriteFile(filepath.Join(dir, en.Name()), []byte(strings.Join(lines, "\n")+"\n"), 0o644)
			}
			if got := summary(dir); got != want {
				t.Errorf("summary %s, want %s (the plain files')", got, want)
			}
		})
	}
}

// TestCheckPartitions: in a partitioned fleet two vehicles' logs may
// share a base name; check tells them apart as screen does, by a file
// column in the table and the partition values in --json.
func TestCheckPartitions(t *testing.T) {
	cert := writeTestCert(t, checkCertJSON)
	src := writeCheckRuns(t)
	root := t.TempDir()
	for v, r := range []string{"r0.csv", "r4.csv"} { // r4 spirals out
		d := filepath.Join(root, fmt.Sprintf("vehicle=%d", v+1))
		if err := os.MkdirAll(d, 0o755); err != nil {
			t.Fatal(err)
		}
		b, err := os.ReadFile(filepath.Join(src, r))
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(d, "log.csv"), b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	var out, errb bytes.Buffer
	if code := basinMain(context.Background(), []string{"check", "--cert", cert, root, "--json"}, &out, &errb); code != 0 {
		t.Fatalf("exit %d: %s", code, errb.String())
	}
	var doc struct {
		Runs []struct {
			File, Run string
			Flagged   bool
			Partition map[string]string
		}
	}
	if err := json.Unmarshal(out.Bytes(), &doc); err != nil {
		t.Fatal(err)
	}
	if len(doc.Runs) != 2 {
		t.Fatalf("%d runs, want 2: %s", len(doc.Runs), out.String())
	}
	for i, r := range doc.Runs {
		want := fmt.Sprint(i + 1)
		if r.Partition["vehicle"] != want || r.Flagged != (i == 1) {
			t.Errorf("run %d (%s): partition %v flagged %v, want vehicle=%s flagged %v", i, r.File, r.Partition, r.Flagged, want, i == 1)
		}
	}
	out.Reset()
	if code := basinMain(context.Background(), []string{"check", "--cert", cert, root}, &out, &errb); code != 0 {
		t.Fatalf("exit %d: %s", code, errb.String())
	}
	if want := "worst violation, in run log.csv (" + filepath.Join(root, "vehicle=2", "log.csv") + ") at"; !strings.Contains(out.String(), want) {
		t.Errorf("the worst violation does not say which vehicle's log.csv (want %q):\n%s", want, out.String())
	}
	lines := strings.Split(out.String(), "\n")
	if h := strings.Fields(lines[0]); len(h) < 3 || h[0] != "vehicle" || h[1] != "run" || h[2] != "file" {
		t.Errorf("table header %q, want vehicle, run, file first", lines[0])
	}
	for i, v := range []string{"1", "2"} {
		if f := strings.Fields(lines[1+i]); len(f) < 3 || f[0] != v || !strings.HasSuffix(f[2], filepath.Join("vehicle="+v, "log.csv")) {
			t.Errorf("table row %q, want vehicle %s and its file", lines[1+i], v)
		}
	}
}
