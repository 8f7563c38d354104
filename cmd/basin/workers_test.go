package main

import (
	"bytes"
	"context"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestRunWorkers: --workers sets how many folds are fitted and checked at
// once and nothing else: one worker and three write the same bytes. Out
// of range it is a one-line usage error that writes nothing.
func TestRunWorkers(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the whole job twice")
	}
	dir := t.TempDir()
	data := filepath.Join(dir, "data")
	os.Mkdir(data, 0o755)
	noisy := func(x []float64, rng *rand.Rand) []float64 {
		return []float64{x[0] + 1e-3*rng.NormFloat64(), x[1] + 1e-3*rng.NormFloat64()}
	}
	writeNumRuns(t, data, numCase{header: "time [s],theta [rad],omega [rad/s]", cols: noisy}, 12)
	outs := map[string]map[string][]byte{}
	for _, w := range []string{"1", "3"} {
		out := filepath.Join(dir, "out"+w)
		var o, e bytes.Buffer
		if code := basinMain(context.Background(), []string{"run", "--quiet", "--workers", w, "--bootstrap", "10", "--out", out, data}, &o, &e); code != 0 {
			t.Fatalf("--workers %s: exit %d: %s", w, code, e.String())
		}
		outs[w] = map[string][]byte{}
		for _, f := range []string{"model.json", "certificate.json", "report.html", "summary.txt"} {
			b, err := os.ReadFile(filepath.Join(out, f))
			if err != nil {
				t.Fatal(err)
			}
			outs[w][f] = b
		}
	}
	for f, b := range outs["1"] {
		if !bytes.Equal(b, outs["3"][f]) {
			t.Errorf("%s differs between --workers 1 and 3", f)
		}
	}
	for _, w := range []string{"-1", "1025"} {
		out := filepath.Join(dir, "bad"+w)
		var o, e bytes.Buffer
		code := basinMain(context.Background(), []string{"run", "--workers", w, "--out", out, data}, &o, &e)
		if msg := e.String(); code != 2 || !strings.Contains(msg, "--workers must be 0..1024") || strings.Count(msg, "\n") != 1 {
			t.Errorf("--workers %s: exit %d, stderr %q", w, code, msg)
		}
		if _, err := os.Stat(out); err == nil {
			t.Errorf("--workers %s left %s", w, out)
		}
	}
}
