package main

import (
	"bytes"
	"context"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"

	"basin.example/fit"

	"gonum.org/v1/gonum/floats/scalar"
)

// TestInspectInputs: --inputs takes a column out of the states and
// inspect reports it in an inputs list, in the table and in --json; bad
// input roles exit 2 with one line naming the column.
func TestInspectInputs(t *testing.T) {
	dir := t.TempDir()
	in := "t [s],disp [mm],vel [mm/s],drive [N]\n"
	for i := range 50 {
		in += ftoa(float64(i)*0.01) + "," + ftoa(float64(i%7)) + "," + ftoa(float64(i%5)) + "," + ftoa(float64(i%3)) + "\n"
	}
	path := filepath.Join(dir, "shaker.csv")
	if err := os.WriteFile(path, []byte(in), 0o644); err != nil {
		t.Fatal(err)
	}
	var stdout, stderr bytes.Buffer
	if code := basinMainIn(context.Background(), []string{"inspect", "--inputs", "drive", "--json", path}, &stdout, &stderr, nil); code != 0 {
		t.Fatalf("exit %d: %s", code, stderr.String())
	}
	var doc struct {
		States []struct{ Name, Unit string } `json:"states"`
		Inputs []struct {
			Name, Unit string
			Min, Max   float64
		} `json:"inputs"`
	}
	if err := json.Unmarshal(stdout.Bytes(), &doc); err != nil {
		t.Fatal(err)
	}
	if len(doc.States) != 2 || doc.States[1].Name != "vel" || len(doc.Inputs) != 1 || doc.Inputs[0].Name != "drive" ||
		doc.Inputs[0].Unit != "N" || doc.Inputs[0].Min != 0 || doc.Inputs[0].Max != 2 {
		t.Errorf("states %+v inputs %+v", doc.States, doc.Inputs)
	}
	stdout.Reset()
	if code := basinMainIn(context.Background(), []string{"inspect", "--inputs", "drive", path}, &stdout, &stderr, nil); code != 0 ||
		!strings.Contains(stdout.String(), "drive (input)") {
		t.Errorf("table: exit %d\n%s", code, stdout.String())
	}
	for _, tc := range []struct {
		args []string
		want string
	}{
		{[]string{"--inputs", "drive", "--states", "disp,drive"}, `column "drive": named both as a state and as an input`},
		{[]string{"--inputs", "force"}, `column "force": bad input column: no column has this name`},
		{[]string{"--inputs", "drive,"}, `--inputs: empty name`},
	} {
		stdout.Reset()
		stderr.Reset()
		code := basinMainIn(context.Background(), append(append([]string{"inspect"}, tc.args...), path), &stdout, &stderr, nil)
		if msg := stderr.String(); code != 2 || stdout.Len() != 0 || strings.Count(msg, "\n") != 1 || !strings.Contains(msg, tc.want) {
			t.Errorf("%v: exit %d, stderr %q; want 2 and one line with %q", tc.args, code, msg, tc.want)
		}
	}
}

// TestInspectEvents: a hit in a run and a resting start are listed by
// inspect (table and --json); a reversed window and one after every
// run's end exit 2 with one line naming it.
func TestInspectEvents(t *testing.T) {
	dir := t.TempDir()
	// at rest for 100 samples, then a decaying oscillation (50 samples a
	// period) hit at sample 300, with a little deterministic "noise"
	in := "t [s],x [mm],v [mm/s]\n"
	x, v := 0.0, 0.0
	for i := range 600 {
		if i == 100 {
			x = 5
		}
		if i == 300 {
			v += 80
		}
		nz := 0.01 * math.Sin(1.7*float64(i)*float64(i))
		in += ftoa(float64(i)*0.01) + "," + ftoa(x+nz) + "," + ftoa(v-nz) + "\n"
		if i >= 100 { // semi-implicit Euler of x'' = -0.2 x' - 16 x
			v += 0.01 * (-0.2*v - 16*x)
			x += 0.01 * v
		}
	}
	path := filepath.Join(dir, "hit.csv")
	if err := os.WriteFile(path, []byte(in), 0o644); err != nil {
		t.Fatal(err)
	}
	var stdout, stderr bytes.Buffer
	if code := basinMainIn(context.Background(), []string{"inspect", "--json", path}, &stdout, &stderr, nil); code != 0 {
		t.Fatalf("exit %d: %s", code, stderr.String())
	}
	var doc struct {
		Events []struct {
			Run, State, Kind string
			Time             float64
		} `json:"events"`
		Heads []struct {
			Run      string
			Samples  int
			Duration float64
		} `json:"heads"`
		Summary struct{ Events, Heads int } `json:"summary"`
	}
	if err := json.Unmarshal(stdout.Bytes(), &doc); err != nil {
		t.Fatal(err)
	}
	found := false
	for _, ev := range doc.Events {
		found = found || (ev.State == "v" && ev.Kind == "step" && ev.Time == 3)
	}
	if !found || len(doc.Heads) != 1 || doc.Heads[0].Samples != 100 || doc.Summary.Heads != 1 || doc.Summary.Events != len(doc.Events) {
		t.Errorf("events %+v, heads %+v, summary %+v", doc.Events, doc.Heads, doc.Summary)
	}
	if w := stderr.String(); !strings.Contains(w, "far beyond the noise") || !strings.Contains(w, "resting start") {
		t.Errorf("warnings %q", w)
	}
	stdout.Reset()
	if code := basinMainIn(context.Background(), []string{"inspect", path}, &stdout, &stderr, nil); code != 0 ||
		!strings.Contains(stdout.String(), "one-sample jump") || !strings.Contains(stdout.String(), "hit.csv: 1 s (100 samples)") {
		t.Errorf("table: exit %d\n%s", code, stdout.String())
	}
	for _, tc := range []struct {
		args []string
		want string
	}{
		{[]string{"--from", "5", "--to", "2"}, "--from 5 is after --to 2"},
		{[]string{"--from", "-1"}, "--from must be 0 or more"},
		{[]string{"--from", "60"}, "time window: no samples from 60 s after their start: every run ends before, the longest lasts 5.99 s"},
	} {
		stdout.Reset()
		stderr.Reset()
		code := basinMainIn(context.Background(), append(append([]string{"inspect"}, tc.args...), path), &stdout, &stderr, nil)
		if msg := stderr.String(); code != 2 || stdout.Len() != 0 || strings.Count(msg, "\n") != 1 || !strings.Contains(msg, tc.want) {
			t.Errorf("%v: exit %d, stderr %q; want 2 and one line with %q", tc.args, code, msg, tc.want)
		}
	}
}

// TestInspectRestPoints: runs that settle on two points are reported as
// two rest points with their counts, in the table and in --json.
func TestInspectRestPoints(t *testing.T) {
	dir := t.TempDir()
	// x' = -x + c for 200 samples: runs settle at c = -1 (2 runs) or 2 (3)
	for k, c := range []float64{2, -1, 2, -1, 2} {
		in := "t,x\n"
		x := c + 3 + 0.1*float64(k) // distinct runs (exact copies are counted once)
		for i := range 200 {
			in += ftoa(float64(i)*0.05) + "," + ftoa(x+0.001*math.Sin(float64(i*i))) + "\n"
			x += 0.05 * (c - x)
		}
		if err := os.WriteFile(filepath.Join(dir, "r"+strconv.Itoa(k)+".csv"), []byte(in), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	var stdout, stderr bytes.Buffer
	if code := basinMainIn(context.Background(), []string{"inspect", "--json", dir}, &stdout, &stderr, nil); code != 0 {
		t.Fatalf("exit %d: %s", code, stderr.String())
	}
	var doc struct {
		Summary struct {
			Settle     []float64 `json:"settle"`
			RestPoints []struct {
				Point    []float64 `json:"point"`
				Runs     int       `json:"runs"`
				RunNames []string  `json:"run_names"`
			} `json:"rest_points"`
		} `json:"summary"`
	}
	if err := json.Unmarshal(stdout.Bytes(), &doc); err != nil {
		t.Fatal(err)
	}
	rp := doc.Summary.RestPoints
	// the runs end 10 s, ten time constants, after a start 3.4 away at
	// most: e^-10 * 3.4 = 1.5e-4 from c
	if len(rp) != 2 || rp[0].Runs != 3 || rp[1].Runs != 2 || !scalar.EqualWithinAbs(rp[0].Point[0], 2, 1e-3) || !scalar.EqualWithinAbs(rp[1].Point[0], -1, 1e-3) ||
		strings.Join(rp[1].RunNames, " ") != "r1.csv r3.csv" || doc.Summary.Settle[0] != rp[0].Point[0] {
		t.Errorf("rest points %+v, settle %v", rp, doc.Summary.Settle)
	}
	stdout.Reset()
	if code := basinMainIn(context.Background(), []string{"inspect", dir}, &stdout, &stderr, nil); code != 0 ||
		!strings.Contains(stdout.String(), "2 rest points") || !strings.Contains(stdout.String(), ": 3 of 5 settled runs") {
		t.Errorf("table: exit %d\n%s", code, stdout.String())
	}
}

// TestFitConstantInput: fitting with an input that never changes takes
// it as a known constant: one warning naming it with its value and unit,
// exit 0, and a model without the input that records it as held, its
// equation the states' alone. The truth: x = exp(-t/10) solves
// x' = -0.1 x whatever the constant u (exact, sampled without noise), so
// the coefficient of x is -0.1 to the derivative's error on a smooth
// exponential (1e-3 relative is far above it) and no other term is kept.
func TestFitConstantInput(t *testing.T) {
	dir := t.TempDir()
	data := filepath.Join(dir, "data")
	if err := os.Mkdir(data, 0o755); err != nil {
		t.Fatal(err)
	}
	for r, x0 := range []float64{1, -1, 2, -2, 0.5, -0.5} { // runs to hold out, too
		in := "t,x [m],u [V]\n"
		for i := range 200 {
			in += ftoa(float64(i)*0.1) + "," + ftoa(x0*math.Exp(-0.01*float64(i))) + ",2\n"
		}
		if err := os.WriteFile(filepath.Join(data, "c"+strconv.Itoa(r)+".csv"), []byte(in), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	warn := "basin: warning: input u is constant (2 V in every sample): its effect cannot be told from a constant term, so it is taken as known, held at 2 V and folded into the states' equations (the model has no input u)\n"
	for _, cmd := range []string{"fit", "run"} {
		out := filepath.Join(dir, "out-"+cmd)
		var stdout, stderr bytes.Buffer
		code := basinMainIn(context.Background(), []string{cmd, "--inputs", "u", "--out", out, data}, &stdout, &stderr, nil)
		msg := stderr.String()
		if code != 0 || !strings.HasPrefix(msg, warn) || strings.Count(msg, "is constant") != 1 || strings.Contains(msg, "basin "+cmd+":") {
			t.Errorf("%s: exit %d, stderr %q", cmd, code, msg)
			continue
		}
		m, err := fit.ReadModel(mustOpen(t, filepath.Join(out, "model.json")))
		if err != nil {
			t.Fatal(err)
		}
		if len(m.Inputs) != 0 || len(m.Held) != 1 || m.Held[0] != (fit.HeldInput{Name: "u", Unit: "V", Value: 2}) {
			t.Errorf("%s: inputs %v, held %v", cmd, m.Inputs, m.Held)
		}
		eq := m.Equations[0]
		if len(eq.Coefficients) != 1 || !slices.Equal(eq.Exponents[0], []int{1}) || !scalar.EqualWithinRel(eq.Coefficients[0], -0.1, 1e-3) {
			t.Errorf("%s: d(x)/dt terms %v coefficients %v, want -0.1 x", cmd, eq.Exponents, eq.Coefficients)
		}
		if cmd == "fit" && !strings.Contains(stdout.String(), "the equations hold at the constant input u = 2 V") {
			t.Errorf("fit summary does not say u is held:\n%s", stdout.String())
		}
		if cmd == "run" {
			c, err := fit.ReadCertificate(mustOpen(t, filepath.Join(out, "certificate.json")))
			if err != nil {
				t.Fatal(err)
			}
			sum, err := os.ReadFile(filepath.Join(out, "summary.txt"))
			if err != nil {
				t.Fatal(err)
			}
			if len(c.Held) != 1 || c.Held[0] != m.Held[0] || !strings.Contains(string(sum), "at the constant input u = 2 V (it never changed") {
				t.Errorf("certificate held %v; summary:\n%s", c.Held, sum)
			}
		}
	}
}

// TestInspectLatin1: a header written in Windows-1252 [CP1252] (0xB0 the
// degree sign, 0xB5 the micro sign) is read with one warning naming the
// file and the code page, and --json gives the units as UTF-8; a byte the
// code page leaves undefined (0x81) is one line naming file, line and
// column, exit 2.
func TestInspectLatin1(t *testing.T) {
	dir := t.TempDir()
	var sb strings.Builder
	sb.WriteString("Zeit [s];Temperatur [\xb0C];Weg [\xb5m]\n")
	for i := range 50 {
		sb.WriteString(ftoa(float64(i)*0.1) + ";" + ftoa(math.Exp(-0.1*float64(i))) + ";" + ftoa(math.Cos(0.3*float64(i))) + "\n")
	}
	good := filepath.Join(dir, "good.csv")
	bad := filepath.Join(dir, "bad.csv")
	if err := os.WriteFile(good, []byte(sb.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(bad, []byte(strings.Replace(sb.String(), "[\xb5m]", "[\x81m]", 1)), 0o644); err != nil {
		t.Fatal(err)
	}
	var stdout, stderr bytes.Buffer
	code := basinMainIn(context.Background(), []string{"inspect", "--json", "--time-col", "Zeit", good}, &stdout, &stderr, nil)
	want := "basin: warning: " + good + `:1:2: header cell "Temperatur [°C]" is not UTF-8 text: the file's text is read as Windows-1252 (Latin-1)` + "\n"
	if code != 0 || stderr.String() != want {
		t.Fatalf("exit %d, stderr %q, want %q", code, stderr.String(), want)
	}
	var doc struct {
		States []struct{ Name, Unit string }
	}
	if err := json.Unmarshal(stdout.Bytes(), &doc); err != nil {
		t.Fatal(err)
	}
	if len(doc.States) != 2 || doc.States[0].Unit != "°C" || doc.States[1].Unit != "\u00b5m" || !strings.Contains(stdout.String(), `"°C"`) {
		t.Errorf("states %+v", doc.States)
	}
	stdout.Reset()
	stderr.Reset()
	code = basinMainIn(context.Background(), []string{"inspect", "--time-col", "Zeit", bad}, &stdout, &stderr, nil)
	msg := stderr.String()
	if code != 2 || strings.Count(msg, "\n") != 1 || !strings.Contains(msg, bad+":1:3: ") || !strings.Contains(msg, "byte 0x81") {
		t.Errorf("exit %d, stderr %q", code, msg)
	}
}
