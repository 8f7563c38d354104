package main

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"

	"basin.example/fit"
	"basin.example/validate"
)

// screenCert is certJSON (V = z0² + 0.1 z0 z1 + 0.3 z1², level 0.8) with a
// noise ball and a tolerance.
var screenCert = strings.Replace(certJSON, `"level": 0.8,`, `"level": 0.8, "noise_radius": 0.05, "tolerance": 1e-9,`, 1)

// writeRun writes a CSV run of z' = rate·z (z scaled as in screenCert:
// equilibrium (1.5, 0), scale (2, 10)) from z0, exact exponentials, 50 Hz.
func writeRun(t *testing.T, dir, name string, z0 [2]float64, rate float64, secs float64) string {
	t.Helper()
	var b strings.Builder
	b.WriteString("time [s],pitch [deg],rate [deg/s]\n")
	for i := 0; float64(i)*0.02 <= secs; i++ {
		tt := float64(i) * 0.02
		e := math.Exp(rate * tt)
		fmt.Fprintf(&b, "%g,%.17g,%.17g\n", tt, 1.5+2*z0[0]*e, 10*z0[1]*e)
	}
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func TestScreenCommand(t *testing.T) {
	dir := t.TempDir()
	cert := writeTestCert(t, screenCert)
	// Two runs settle (V falls as e^{-2t}); one starts inside and grows
	// (V rises, leaves); one starts outside and comes in (not flagged).
	writeRun(t, dir, "a-settles.csv", [2]float64{0.5, 0.3}, -1, 10)
	writeRun(t, dir, "b-settles.csv", [2]float64{-0.4, -0.6}, -0.7, 10)
	writeRun(t, dir, "c-grows.csv", [2]float64{0.2, 0.1}, 0.4, 10)
	writeRun(t, dir, "d-outside.csv", [2]float64{1.2, 0}, -1, 6)

	var out, errb bytes.Buffer
	code := basinMain(context.Background(), []string{"screen", dir, "--cert", cert, "--json"}, &out, &errb)
	if code != 1 {
		t.Fatalf("exit %d, want 1 (a run is flagged); stderr %s", code, errb.String())
	}
	var got struct {
		Runs    []validate.RunScreen `json:"runs"`
		States  []map[string]string  `json:"states"`
		Summary map[string]int       `json:"summary"`
	}
	if err := json.Unmarshal(out.Bytes(), &got); err != nil {
		t.Fatalf("%v\n%s", err, out.String())
	}
	if len(got.Runs) != 4 || got.Summary["runs"] != 4 || got.Summary["flagged"] != 1 {
		t.Fatalf("runs %d, summary %v", len(got.Runs), got.Summary)
	}
	for i, want := range []string{"a-settles.csv", "b-settles.csv", "c-grows.csv", "d-outside.csv"} {
		r := got.Runs[i]
		if r.Run != want || r.File != filepath.Join(dir, want) || r.Samples == 0 {
			t.Errorf("run %d: %+v, want %s in input order", i, r, want)
		}
		if r.Flagged != (want == "c-grows.csv") {
			t.Errorf("%s: flagged %v, flags %+v", want, r.Flagged, r.Flags)
		}
	}
	kinds := map[string]bool{}
	for _, f := range got.Runs[2].Flags {
		kinds[f.Kind] = true
	}
	if !kinds[validate.FlagRises] || !kinds[validate.FlagLeaves] {
		t.Errorf("growing run: flags %+v, want rises and leaves", got.Runs[2].Flags)
	}
	if got.States[0]["name"] != "pitch" || got.States[1]["unit"] != "deg/s" {
		t.Errorf("states %v", got.States)
	}
	if got.Runs[0].Flags == nil {
		t.Error("flags must be [] not null for unflagged runs")
	}

	// The table, and the exit code when nothing is flagged.
	out.Reset()
	code = basinMain(context.Background(), []string{"screen", "--cert", cert, filepath.Join(dir, "a-settles.csv"), filepath.Join(dir, "d-outside.csv")}, &out, &errb)
	if code != 0 || !strings.Contains(out.String(), "2 runs in 2 files, 802 samples: 0 flagged") {
		t.Errorf("exit %d, table:\n%s", code, out.String())
	}
}

func TestScreenBadInput(t *testing.T) {
	dir := t.TempDir()
	cert := writeTestCert(t, screenCert)
	good := writeRun(t, dir, "good.csv", [2]float64{0.5, 0.3}, -1, 2)
	bad := filepath.Join(dir, "bad.csv")
	os.WriteFile(bad, []byte("time,pitch,rate\n0,1,2\n0.02,1.5,x2\n"), 0o644)
	other := filepath.Join(dir, "other.csv")
	os.WriteFile(other, []byte("time,roll,yaw\n0,1,2\n0.02,1.5,2\n"), 0o644)
	cases := []struct {
		name string
		args []string
		msg  string
	}{
		{"no cert", []string{"screen", good}, "--cert FILE is required"},
		{"no inputs", []string{"screen", "--cert", cert}, "no INPUTS"},
		{"bad cell", []string{"screen", "--cert", cert, good, bad}, "bad.csv:3:3"},
		{"wrong columns", []string{"screen", "--cert", cert, other}, `other.csv: the certificate's states pitch,rate are not all columns of this file (no column "pitch")`},
		{"missing file", []string{"screen", "--cert", cert, filepath.Join(dir, "nope.csv")}, "nope.csv"},
		{"bad cert", []string{"screen", "--cert", writeTestCert(t, `{"format": "basin.model/1"}`), good}, "certificate.json"},
		{"negative tolerance", []string{"screen", "--cert", cert, "--rise-tol", "-1", good}, "--rise-tol"},
		{"negative tolerance, deprecated name", []string{"screen", "--cert", cert, "--tolerance", "-1", good}, "--rise-tol"},
		{"states count", []string{"screen", "--cert", cert, "--states", "pitch", good}, "--states names 1 states"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			var out, errb bytes.Buffer
			code := basinMain(context.Background(), tc.args, &out, &errb)
			if code != 2 || !strings.Contains(errb.String(), tc.msg) || strings.Count(errb.String(), "\n") != 1 || out.Len() != 0 {
				t.Errorf("exit %d, stdout %q, stderr %q; want 2 and one line with %q", code, out.String(), errb.String(), tc.msg)
			}
		})
	}
}

// TestScreenOrderAndWorkers: results come back in input order and are the
// same for one worker and many.
func TestScreenOrderAndWorkers(t *testing.T) {
	dir := t.TempDir()
	c, err := fit.ReadCertificate(strings.NewReader(screenCert))
	if err != nil {
		t.Fatal(err)
	}
	var files []string
	for i := range 24 {
		rate := -0.5
		if i%5 == 3 {
			rate = 0.5
		}
		files = append(files, writeRun(t, dir, fmt.Sprintf("r%02d.csv", i), [2]float64{0.3, -0.2}, rate, 4))
	}
	opts, _ := (&inputFlags{}).options()
	opts.States = c.States
	one, err := screenFiles(context.Background(), c, files, opts, nil, 1)
	if err != nil {
		t.Fatal(err)
	}
	many, err := screenFiles(context.Background(), c, files, opts, nil, 7)
	if err != nil {
		t.Fatal(err)
	}
	a, _ := json.Marshal(one[0].runs)
	for i := range files {
		a, _ = json.Marshal(one[i].runs)
		b, _ := json.Marshal(many[i].runs)
		if !bytes.Equal(a, b) || one[i].runs[0].File != files[i] {
			t.Fatalf("file %d: %s vs %s", i, a, b)
		}
		if one[i].runs[0].Flagged != (i%5 == 3) {
			t.Errorf("file %d flagged %v", i, one[i].runs[0].Flagged)
		}
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := screenFiles(ctx, c, files, opts, nil, 2); err == nil {
		t.Error("no error from a cancelled context")
	}
}

// TestScreenSlowCommand: with held-out decay rates in the certificate a
// run whose V decays below the bound is flagged slow and its rate is
// reported (V ∝ e^{2·rate·t} for writeRun's z' = rate·z); without them
// screen says once that it screens without the slow flag.
func TestScreenSlowCommand(t *testing.T) {
	dir := t.TempDir()
	writeRun(t, dir, "a.csv", [2]float64{0.5, 0.3}, -1, 10)     // decay rate 2
	writeRun(t, dir, "b.csv", [2]float64{-0.4, -0.6}, -0.5, 10) // decay rate 1
	withDecay := strings.Replace(screenCert, `"confidence": 0.999999}`,
		`"confidence": 0.999999, "decay": {"runs": 4, "rates": [3, 3.2, 3.4, 3.5], "min": 3, "median": 3.3, "max": 3.5, "lower_bound": 1.5, "false_alarm": 0, "rule": "test"}}`, 1)
	if withDecay == screenCert {
		t.Fatal("certificate fixture changed: no validation object to extend")
	}
	for _, tc := range []struct {
		name     string
		cert     string
		flagged  []bool
		warnings int
	}{
		{"with decay", withDecay, []bool{false, true}, 0},
		{"older certificate", screenCert, []bool{false, false}, 1},
	} {
		var out, errb bytes.Buffer
		code := basinMain(context.Background(), []string{"screen", dir, "--cert", writeTestCert(t, tc.cert), "--json"}, &out, &errb)
		var got struct {
			Runs      []validate.RunScreen `json:"runs"`
			SlowBound float64              `json:"slow_bound"`
		}
		if err := json.Unmarshal(out.Bytes(), &got); err != nil || len(got.Runs) != 2 {
			t.Fatalf("%s: exit %d, %v\n%s%s", tc.name, code, err, out.String(), errb.String())
		}
		for i, want := range []float64{2, 1} {
			r := got.Runs[i]
			// exact exponentials printed to 17 digits: the slope is the rate to rounding
			if !scalarClose(r.DecayRate, want, 1e-6) || r.Flagged != tc.flagged[i] {
				t.Errorf("%s: run %s rate %g flagged %v flags %+v; want rate %g flagged %v",
					tc.name, r.Run, r.DecayRate, r.Flagged, r.Flags, want, tc.flagged[i])
			}
		}
		if n := strings.Count(errb.String(), "without the slow flag"); n != tc.warnings {
			t.Errorf("%s: %d warnings about the slow flag, want %d: %s", tc.name, n, tc.warnings, errb.String())
		}
	}
}

// TestScreenStableCommand: against a certificate of strength stable, which
// claims that V does not rise and runs stay inside but not that they
// settle, screen flags no run unsettled or slow and says so in one
// warning, giving that reason and not a missing decay record; --json
// has settling_unclaimed. The run rests off the equilibrium (z = (0.3,
// 0.2) held, V constant as a lossless oscillator's energy is [Ogata],
// from memory): unsettled and slow (rate 0 below the bound 1.5) against
// the asymptotic twin, checked first so the stable case can fail; the
// decaying run (rate 2) is clean against both. export --lang sql gives
// the same warning.
func TestScreenStableCommand(t *testing.T) {
	dir := t.TempDir()
	writeRun(t, dir, "a.csv", [2]float64{0.5, 0.3}, -1, 10)
	writeRun(t, dir, "rest.csv", [2]float64{0.3, 0.2}, 0, 10)
	withDecay := strings.Replace(screenCert, `"confidence": 0.999999}`,
		`"confidence": 0.999999, "decay": {"runs": 4, "rates": [3, 3.2, 3.4, 3.5], "min": 3, "median": 3.3, "max": 3.5, "lower_bound": 1.5, "false_alarm": 0, "rule": "test"}}`, 1)
	stable := strings.Replace(withDecay, `"strength": "asymptotic"`, `"strength": "stable"`, 1)
	if withDecay == screenCert || stable == withDecay {
		t.Fatal("certificate fixture changed: no validation object or strength to edit")
	}
	for _, tc := range []struct {
		name      string
		cert      string
		rest      []string // the resting run's flag kinds
		unclaimed bool
	}{
		{"asymptotic", withDecay, []string{"unsettled", "slow"}, false},
		{"stable", stable, nil, true},
	} {
		var out, errb bytes.Buffer
		code := basinMain(context.Background(), []string{"screen", dir, "--cert", writeTestCert(t, tc.cert), "--json"}, &out, &errb)
		var got struct {
			Runs      []validate.RunScreen `json:"runs"`
			Unclaimed bool                 `json:"settling_unclaimed"`
			SlowBound float64              `json:"slow_bound"`
		}
		if err := json.Unmarshal(out.Bytes(), &got); err != nil || len(got.Runs) != 2 {
			t.Fatalf("%s: exit %d, %v\n%s%s", tc.name, code, err, out.String(), errb.String())
		}
		var kinds []string
		for _, f := range got.Runs[1].Flags {
			kinds = append(kinds, f.Kind)
		}
		if got.Runs[0].Flagged || strings.Join(kinds, ",") != strings.Join(tc.rest, ",") || got.Unclaimed != tc.unclaimed {
			t.Errorf("%s: decaying run flags %+v, resting run kinds %v, settling_unclaimed %v; want none, %v, %v",
				tc.name, got.Runs[0].Flags, kinds, got.Unclaimed, tc.rest, tc.unclaimed)
		}
		if wantCode := map[bool]int{true: 0, false: 1}[tc.unclaimed]; code != wantCode {
			t.Errorf("%s: exit %d, want %d", tc.name, code, wantCode)
		}
		warn := "strength stable: the certificate does not claim that runs settle, so runs are not checked for settling"
		n := 0
		if tc.unclaimed {
			n = 1
		}
		if c := strings.Count(errb.String(), warn); c != n || strings.Contains(errb.String(), "decay rates") {
			t.Errorf("%s: warnings %q; want %d of %q and none about decay rates", tc.name, errb.String(), n, warn)
		}
		if tc.unclaimed && got.SlowBound != 0 {
			t.Errorf("%s: slow_bound %g, want 0", tc.name, got.SlowBound)
		}
	}
	var out, errb bytes.Buffer
	if code := basinMain(context.Background(), []string{"export", "--lang", "sql", "--cert", writeTestCert(t, stable)}, &out, &errb); code != 0 {
		t.Fatalf("export: exit %d: %s", code, errb.String())
	}
	if w := "strength stable: the certificate does not claim that runs settle, so the query does not check for it"; !strings.Contains(errb.String(), w) ||
		strings.Contains(errb.String(), "decay rates") || !strings.Contains(out.String(), "0 AS unsettled") {
		t.Errorf("export: warnings %q, want %q and no word of decay rates; query has a constant unsettled: %v", errb.String(), w, strings.Contains(out.String(), "0 AS unsettled"))
	}
}

// TestSlowWarningReason: without a slow bound, screen's one warning
// gives the reason the certificate records.
func TestSlowWarningReason(t *testing.T) {
	c := &fit.Certificate{Strength: fit.Asymptotic, Validation: &fit.Validation{Decay: &fit.Decay{Runs: 2, Min: 0.4,
		Rule: "no bound: 2 held-out run(s) with a rate, smallest 0.4 1/s (a bound needs 3 runs and a positive smallest rate)"}}}
	for _, tc := range []struct {
		name string
		v    *fit.Validation
		want string
	}{
		{"rule", c.Validation, "no slow bound recorded (2 held-out run(s) with a rate, smallest 0.4 1/s (a bound needs 3 runs and a positive smallest rate)); X"},
		{"older", nil, "no held-out decay rates recorded (an older certificate, or no held-out run had a rate); X"},
		{"bound", &fit.Validation{Decay: &fit.Decay{Runs: 4, LowerBound: 1}}, ""},
	} {
		cc := *c
		cc.Validation = tc.v
		if got := settleWarning(&cc, "S", "X"); got != tc.want {
			t.Errorf("%s: %q, want %q", tc.name, got, tc.want)
		}
	}
}

func scalarClose(a, b, tol float64) bool { return scalar.EqualWithinAbsOrRel(a, b, tol, tol) }

// TestScreenPartitions: runs under key=value folders report their
// partition in --json (in path order), as columns in the table and in
// --format csv; a plain folder is skipped with a note unless --recursive;
// a key named twice in a path is an input error.
func TestScreenPartitions(t *testing.T) {
	root := t.TempDir()
	dir := func(rel string) string {
		p := filepath.Join(root, rel)
		if err := os.MkdirAll(p, 0o755); err != nil {
			t.Fatal(err)
		}
		return p
	}
	writeRun(t, dir("vehicle=17/day=2026-11-30"), "a.csv", [2]float64{0.5, 0.3}, -1, 4)
	writeRun(t, dir("vehicle=9/day=2026-12-01"), "b.csv", [2]float64{0.2, 0.1}, 0.4, 4) // grows: flagged
	writeRun(t, dir("vehicle=x%2Cy \"q\""), "c.csv", [2]float64{0.5, 0.3}, -1, 4)       // odd characters
	writeRun(t, dir("archive"), "d.csv", [2]float64{0.5, 0.3}, -1, 4)
	cert := writeTestCert(t, screenCert)

	var out, errb bytes.Buffer
	code := basinMain(context.Background(), []string{"screen", "--cert", cert, "--json", root}, &out, &errb)
	if code != 1 {
		t.Fatalf("exit %d; %s", code, errb.String())
	}
	var got struct {
		Runs []struct {
			Run       string          `json:"run"`
			Flagged   bool            `json:"flagged"`
			Partition json.RawMessage `json:"partition"`
		} `json:"runs"`
		Keys []string `json:"partition_keys"`
	}
	if err := json.Unmarshal(out.Bytes(), &got); err != nil {
		t.Fatal(err)
	}
	want := map[string]string{
		"a.csv": `{"vehicle":"17","day":"2026-11-30"}`,
		"b.csv": `{"vehicle":"9","day":"2026-12-01"}`,
		"c.csv": `{"vehicle":"x,y \"q\""}`,
	}
	if len(got.Runs) != 3 || strings.Join(got.Keys, ",") != "vehicle,day" {
		t.Fatalf("runs %+v keys %v", got.Runs, got.Keys)
	}
	for _, r := range got.Runs {
		var c bytes.Buffer
		if err := json.Compact(&c, r.Partition); err != nil || c.String() != want[r.Run] || r.Flagged != (r.Run == "b.csv") {
			t.Errorf("%s: partition %s flagged %v, want %s", r.Run, c.String(), r.Flagged, want[r.Run])
		}
	}
	if !strings.Contains(errb.String(), "archive: skipped folder") {
		t.Errorf("no note of the skipped folder: %s", errb.String())
	}

	out.Reset()
	errb.Reset()
	code = basinMain(context.Background(), []string{"screen", "--cert", cert, "--format", "csv", "--recursive", root}, &out, &errb)
	rows, err := csvRows(out.String())
	if code != 1 || err != nil || len(rows) != 5 {
		t.Fatalf("csv: exit %d, %v, %q; %s", code, err, out.String(), errb.String())
	}
	if strings.Join(rows[0], ",") != "vehicle,day,run,file,samples,flagged,rises,leaves,unsettled,slow,never_inside,decay_rate,stuck" {
		t.Errorf("csv header %v", rows[0])
	}
	if rows[1][2] != "d.csv" || rows[1][0] != "" || rows[4][0] != `x,y "q"` || rows[3][5] != "true" || rows[2][5] != "false" {
		t.Errorf("csv rows %v", rows[1:])
	}
	if strings.Contains(errb.String(), "skipped folder") {
		t.Errorf("--recursive still skipped: %s", errb.String())
	}

	for _, tc := range []struct {
		name string
		args []string
		err  string
	}{
		{"bad format", []string{"--format", "xml", root}, "--format must be table or csv"},
		{"json and csv", []string{"--format", "csv", "--json", root}, "choose one"},
		{"key twice", []string{dir("vehicle=1/vehicle=2")}, "partition key named twice"},
	} {
		if tc.name == "key twice" {
			writeRun(t, filepath.Join(root, "vehicle=1/vehicle=2"), "e.csv", [2]float64{0.5, 0.3}, -1, 4)
			tc.args = []string{root}
		}
		out.Reset()
		errb.Reset()
		code := basinMain(context.Background(), append([]string{"screen", "--cert", cert}, tc.args...), &out, &errb)
		if code != 2 || !strings.Contains(errb.String(), tc.err) || out.Len() != 0 {
			t.Errorf("%s: exit %d, stdout %q, stderr %q; want 2 and %q", tc.name, code, out.String(), errb.String(), tc.err)
		}
	}
}

func csvRows(s string) ([][]string, error) { return csv.NewReader(strings.NewReader(s)).ReadAll() }

// TestScreenJumpSplits: a log hit once (at 5 s the state jumps from near
// the equilibrium to well outside the region, then settles again) is
// split there as inspect and run split it; screen says so in the table
// and in --json (jump_splits per run and in the summary), and neither
// piece is flagged: the hit came from outside the system, and the piece
// after it starts outside the region and comes back in.
func TestScreenJumpSplits(t *testing.T) {
	dir := t.TempDir()
	cert := writeTestCert(t, screenCert)
	rng := rand.New(rand.NewPCG(3, 4))
	var b strings.Builder
	b.WriteString("time [s],pitch [deg],rate [deg/s]\n")
	for i := 0; i <= 750; i++ {
		tt := float64(i) * 0.02
		z0, s := [2]float64{0.5, 0.3}, tt
		if tt >= 5 {
			z0, s = [2]float64{1.2, 0}, tt-5
		}
		e := math.Exp(-s)
		fmt.Fprintf(&b, "%g,%.17g,%.17g\n", tt, 1.5+2*z0[0]*e+1e-4*rng.NormFloat64(), 10*z0[1]*e+1e-3*rng.NormFloat64())
	}
	hit := filepath.Join(dir, "hit.csv")
	if err := os.WriteFile(hit, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	calm := writeRun(t, dir, "calm.csv", [2]float64{0.5, 0.3}, -1, 10)
	var out, errb bytes.Buffer
	if code := basinMain(context.Background(), []string{"screen", "--json", "--cert", cert, hit, calm}, &out, &errb); code != 0 {
		t.Fatalf("exit %d, want 0; stderr %s\n%s", code, errb.String(), out.String())
	}
	var got struct {
		Runs []struct {
			Run        string `json:"run"`
			Flagged    bool   `json:"flagged"`
			JumpSplits int    `json:"jump_splits"`
		} `json:"runs"`
		Summary map[string]int `json:"summary"`
	}
	if err := json.Unmarshal(out.Bytes(), &got); err != nil {
		t.Fatal(err)
	}
	if len(got.Runs) != 3 || got.Summary["jump_splits"] != 1 || got.Summary["jump_files"] != 1 || got.Summary["flagged"] != 0 {
		t.Fatalf("runs %+v, summary %v", got.Runs, got.Summary)
	}
	for i, want := range []struct {
		run   string
		jumps int
	}{{"hit.csv", 1}, {"hit.csv~1", 1}, {"calm.csv", 0}} {
		if r := got.Runs[i]; r.Run != want.run || r.JumpSplits != want.jumps {
			t.Errorf("run %d: %+v, want %s with %d jump splits", i, r, want.run, want.jumps)
		}
	}
	out.Reset()
	if code := basinMain(context.Background(), []string{"screen", "--cert", cert, hit, calm}, &out, &errb); code != 0 ||
		!strings.Contains(out.String(), "jumps: 1 file split at 1 one-sample jump far beyond the noise") {
		t.Errorf("exit %d, table:\n%s", code, out.String())
	}
}
