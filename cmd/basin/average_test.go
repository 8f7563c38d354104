package main

import (
	"bytes"
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestAverageCarried: runs averaged with --average are fitted, certified,
// checked and screened as averaged: model.json and certificate.json
// record the block, certify, check and screen average new logs the same
// way without the flag, refuse another block or none with a usage error
// (exit 2), and the SQL export averages the table's rows the same way.
func TestAverageCarried(t *testing.T) {
	dir := t.TempDir()
	data, out := filepath.Join(dir, "data"), filepath.Join(dir, "out")
	if err := os.Mkdir(data, 0o755); err != nil {
		t.Fatal(err)
	}
	writeOscillator(t, data, 8, false)
	run := func(args ...string) (int, string, string) {
		var o, e bytes.Buffer
		code := basinMain(context.Background(), args, &o, &e)
		return code, o.String(), e.String()
	}
	if code, _, e := run("fit", data, "--out", out, "--bootstrap", "0", "--average", "2"); code != 0 {
		t.Fatalf("fit: exit %d: %s", code, e)
	} else if !strings.Contains(e, "averaged in blocks of 2 samples") {
		t.Errorf("fit: no averaging warning: %s", e)
	}
	model := filepath.Join(out, "model.json")
	average := func(path string) int {
		b, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		var v struct {
			Average int `json:"average"`
		}
		if err := json.Unmarshal(b, &v); err != nil {
			t.Fatal(err)
		}
		return v.Average
	}
	if got := average(model); got != 2 {
		t.Fatalf("model.json average %d, want 2", got)
	}
	if code, _, e := run("certify", "--model", model, data, "--out", out, "--average", "3"); code != 2 || !strings.Contains(e, "--average 2") {
		t.Errorf("certify with another block: exit %d: %s", code, e)
	}
	if code, _, e := run("certify", "--model", model, data, "--out", out); code != 0 {
		t.Fatalf("certify: exit %d: %s", code, e)
	} else if !strings.Contains(e, "averaged in blocks of 2 samples") {
		t.Errorf("certify did not average as the model: %s", e)
	}
	cert := filepath.Join(out, "certificate.json")
	if got := average(cert); got != 2 {
		t.Fatalf("certificate.json average %d, want 2", got)
	}
	code, o, e := run("screen", "--cert", cert, "--json", data)
	if code != 0 && code != 1 {
		t.Fatalf("screen: exit %d: %s", code, e)
	}
	var sj struct {
		Runs []struct {
			Samples int `json:"samples"`
		} `json:"runs"`
	}
	if err := json.Unmarshal([]byte(o), &sj); err != nil || len(sj.Runs) == 0 {
		t.Fatalf("screen --json: %v: %s", err, o)
	}
	// the samples screened are the averaged ones: half the logged
	// samples of each run, rounded down, as inspect counts them
	var ij struct {
		Runs []struct {
			Samples int `json:"samples"`
		} `json:"runs"`
	}
	_, io, _ := run("inspect", "--json", data)
	if err := json.Unmarshal([]byte(io), &ij); err != nil || len(ij.Runs) != len(sj.Runs) {
		t.Fatalf("inspect --json: %v (%d runs, screen %d)", err, len(ij.Runs), len(sj.Runs))
	}
	for i := range ij.Runs {
		if sj.Runs[i].Samples != ij.Runs[i].Samples/2 {
			t.Errorf("run %d: screened %d samples, logged %d", i, sj.Runs[i].Samples, ij.Runs[i].Samples)
		}
	}
	_, raw, _ := run("screen", "--cert", cert, "--json", "--average", "2", data)
	if raw != o {
		t.Errorf("screen with --average 2 differs from screen adopting the certificate's")
	}
	if code, _, e := run("screen", "--cert", cert, "--average", "4", data); code != 2 || !strings.Contains(e, "blocks of 2 samples") {
		t.Errorf("screen with another block: exit %d: %s", code, e)
	}
	if code, _, e := run("check", "--cert", cert, data); code != 0 {
		t.Errorf("check: exit %d: %s", code, e)
	}
	if code, o, e := run("export", "--cert", cert, "--lang", "sql"); code != 0 || !strings.Contains(o, "HAVING COUNT(*) = 2") {
		t.Errorf("export sql of an averaged certificate: exit %d: %s", code, e)
	}
	// a model fitted without averaging refuses --average
	plain := filepath.Join(dir, "plain")
	if code, _, e := run("fit", data, "--out", plain, "--bootstrap", "0", "--quiet"); code != 0 {
		t.Fatalf("fit: exit %d: %s", code, e)
	}
	if code, _, e := run("certify", "--model", filepath.Join(plain, "model.json"), data, "--out", plain, "--average", "2"); code != 2 || !strings.Contains(e, "not averaged") {
		t.Errorf("certify --average of a plain model: exit %d: %s", code, e)
	}
}
