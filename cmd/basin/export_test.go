package main

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// certJSON is a hand-made certificate in the contract's shape.
const certJSON = `{
  "format": "basin.certificate/1",
  "verdict": "certified",
  "strength": "asymptotic",
  "reason": "hand-made for a test",
  "empirical": true,
  "caveat": "Checked on recorded samples only; not a proof of stability.",
  "states": ["pitch", "rate"],
  "units": ["deg", "deg/s"],
  "equilibrium": [1.5, 0],
  "scale": [2, 10],
  "V": {"exponents": [[2, 0], [1, 1], [0, 2]], "coefficients": [1.0, 0.1, 0.3]},
  "level": 0.8,
  "box": [[-2, 5], [-30, 30]],
  "validation": {"heldout_runs": 4, "decrease_fraction": 0.998, "invariance_fraction": 1, "violation_bound": 0.004, "confidence": 0.999999}
}
`

func writeTestCert(t *testing.T, body string) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), "certificate.json")
	if err := os.WriteFile(p, []byte(body), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func TestExportCommand(t *testing.T) {
	good := writeTestCert(t, certJSON)
	cases := []struct {
		name     string
		args     []string
		code     int
		out, err string
	}{
		{"go", []string{"export", "--cert", good, "--lang", "go"}, 0, "func Inside(x *[N]float64) bool", ""},
		{"c", []string{"export", "--lang", "c", "--cert", good, "--prefix", "rig_"}, 0, "int rig_inside(const double x[RIG_N])", ""},
		{"python", []string{"export", "--cert", good, "--lang", "python"}, 0, "def inside(x):", ""},
		{"no cert", []string{"export", "--lang", "go"}, 2, "", "--cert FILE is required"},
		{"no lang", []string{"export", "--cert", good}, 2, "", "--lang is required"},
		{"bad lang", []string{"export", "--cert", good, "--lang", "rust"}, 2, "", `got "rust"`},
		{"missing file", []string{"export", "--cert", "/nonexistent/c.json", "--lang", "c"}, 2, "", "/nonexistent/c.json"},
		{"truncated", []string{"export", "--cert", writeTestCert(t, certJSON[:200]), "--lang", "c"}, 2, "", "certificate.json: certificate:"},
		{"bad package", []string{"export", "--cert", good, "--lang", "go", "--package", "my-pkg"}, 2, "", "not a valid identifier"},
		{"inputs", []string{"export", "--cert", good, "--lang", "go", "logs/"}, 2, "", "takes no INPUTS"},
		{"sql", []string{"export", "--cert", good, "--lang", "sql"}, 0, `FROM "samples"`, "without the slow column"},
		{"sql table", []string{"export", "--cert", good, "--lang", "sql", "--table", "lake.fleet_logs"}, 0, `FROM "lake"."fleet_logs"`, ""},
		{"sql bad table", []string{"export", "--cert", good, "--lang", "sql", "--table", "logs; DROP TABLE x"}, 2, "", "not a valid identifier"},
		{"sql rise-tol", []string{"export", "--cert", good, "--lang", "sql", "--rise-tol", "0.25"}, 0, "tolerated rise of V between samples: 0.25", ""},
		{"sql bad rise-tol", []string{"export", "--cert", good, "--lang", "sql", "--rise-tol", "-1"}, 2, "", "--rise-tol must be a finite number >= 0, got -1"},
		{"sql NaN rise-tol", []string{"export", "--cert", good, "--lang", "sql", "--rise-tol", "NaN"}, 2, "", "--rise-tol must be a finite number >= 0"},
		{"rise-tol without sql", []string{"export", "--cert", good, "--lang", "c", "--rise-tol", "0.1"}, 2, "", "--rise-tol applies to --lang sql only"},
		{"table without sql", []string{"export", "--cert", good, "--lang", "go", "--table", "t"}, 2, "", "--table applies to --lang sql only"},
		{"not certified", []string{"export", "--cert", writeTestCert(t, strings.Replace(certJSON, `"certified"`, `"inconclusive"`, 1)), "--lang", "python"}, 0, "NOT certified", "claims nothing"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			var out, errb bytes.Buffer
			code := basinMain(context.Background(), tc.args, &out, &errb)
			if code != tc.code {
				t.Fatalf("exit %d, want %d; stderr %q", code, tc.code, errb.String())
			}
			if !strings.Contains(out.String(), tc.out) {
				t.Errorf("stdout lacks %q:\n%s", tc.out, out.String())
			}
			if !strings.Contains(errb.String(), tc.err) {
				t.Errorf("stderr %q lacks %q", errb.String(), tc.err)
			}
			if tc.code == 2 && (out.Len() != 0 || strings.Count(errb.String(), "\n") != 1) {
				t.Errorf("exit 2 must print one line and nothing on stdout: %q / %q", out.String(), errb.String())
			}
		})
	}
}
