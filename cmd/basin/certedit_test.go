package main

import (
	"bytes"
	"context"
	"strings"
	"testing"
)

// TestEditedCertificate: a certificate.json truncated or edited by hand is
// refused by every command that reads one, with the reason, in one line
// and exit 2, before any input is read (never half-used).
func TestEditedCertificate(t *testing.T) {
	data := t.TempDir()
	writeRun(t, data, "a.csv", [2]float64{0.5, 0.3}, -1, 2)
	edit := func(old, new string) string {
		if !strings.Contains(certJSON, old) {
			t.Fatalf("certJSON lacks %q", old)
		}
		return strings.Replace(certJSON, old, new, 1)
	}
	for _, tc := range []struct {
		name, body, want string
	}{
		{"empty", "", "empty file, not JSON"},
		{"truncated", certJSON[:len(certJSON)/2], "the JSON ends early"},
		{"not JSON", "verdict: certified\n", "invalid character"},
		{"wrong format", edit(`basin.certificate/1`, `basin.model/1`), "not a basin file"},
		{"short equilibrium", edit(`"equilibrium": [1.5, 0]`, `"equilibrium": [1.5]`), "one entry per state"},
		{"long scale", edit(`"scale": [2, 10]`, `"scale": [2, 10, 3]`), "one entry per state"},
		{"V exponent length", edit(`[[2, 0], [1, 1], [0, 2]]`, `[[2, 0, 0], [1, 1, 0], [0, 2, 0]]`), "exponent vector of length 3"},
		{"V coefficient count", edit(`[1.0, 0.1, 0.3]`, `[1.0, 0.1]`), "differ in length"},
		{"NaN as a string", edit(`"level": 0.8`, `"level": "NaN"`), "field level: a JSON string where float64 belongs"},
		{"bare NaN", edit(`"level": 0.8`, `"level": NaN`), "invalid character"},
		{"overflowing number", edit(`"level": 0.8`, `"level": 1e400`), "field level: a JSON number 1e400 where float64 belongs"},
		{"negative scale", edit(`"scale": [2, 10]`, `"scale": [-2, 10]`), "scale must be positive"},
		{"zero scale", edit(`"scale": [2, 10]`, `"scale": [2, 0]`), "scale must be positive"},
		{"unknown verdict", edit(`"verdict": "certified"`, `"verdict": "proven"`), `unknown verdict "proven"`},
		{"verdict in capitals", edit(`"verdict": "certified"`, `"verdict": "Certified"`), `unknown verdict "Certified"`},
		{"zero level", edit(`"level": 0.8`, `"level": 0`), "positive level"},
		{"negative level", edit(`"level": 0.8`, `"level": -1`), "positive level"},
		{"no V", edit(`"V": {"exponents": [[2, 0], [1, 1], [0, 2]], "coefficients": [1.0, 0.1, 0.3]}`, `"V": {"exponents": [], "coefficients": []}`), "without a V"},
		{"exponent 1e9", edit(`[[2, 0], [1, 1], [0, 2]]`, `[[1000000000, 0], [1, 1], [0, 2]]`), "exponent 1000000000 out of range"},
		{"exponent 1e9 as float", edit(`[[2, 0], [1, 1], [0, 2]]`, `[[1e9, 0], [1, 1], [0, 2]]`), "field V.exponents: a JSON number 1e9 where int belongs"},
		{"negative exponent", edit(`[[2, 0], [1, 1], [0, 2]]`, `[[-2, 0], [1, 1], [0, 2]]`), "exponent -2 out of range"},
		{"box reversed", edit(`[[-2, 5], [-30, 30]]`, `[[5, -2], [-30, 30]]`), "lower bound 5 above upper bound -2"},
		{"box short", edit(`[[-2, 5], [-30, 30]]`, `[[-2, 5]]`), "box must have one entry per state"},
		{"two objects", certJSON + certJSON, "data after the JSON object"},
		{"trailing brace", certJSON + "}\n", "data after the JSON object"},
	} {
		for _, cmd := range [][]string{{"screen", data}, {"check", data}, {"export", "--lang", "go"}} {
			t.Run(tc.name+"/"+cmd[0], func(t *testing.T) {
				path := writeTestCert(t, tc.body)
				var o, e bytes.Buffer
				args := append([]string{cmd[0], "--cert", path}, cmd[1:]...)
				code := basinMain(context.Background(), args, &o, &e)
				msg := e.String()
				if code != 2 || !oneLine(msg) || !strings.Contains(msg, tc.want) || !strings.Contains(msg, path) {
					t.Errorf("exit %d, stderr %q; want 2 and one line naming %s with %q", code, msg, path, tc.want)
				}
				if o.Len() != 0 {
					t.Errorf("stdout %q from a refused certificate", o.String())
				}
			})
		}
	}
	// The unedited file is accepted by all three (so the refusals above
	// are the edits' doing).
	path := writeTestCert(t, certJSON)
	for _, args := range [][]string{{"screen", data}, {"check", data}, {"export", "--lang", "go"}} {
		var o, e bytes.Buffer
		if code := basinMain(context.Background(), append([]string{args[0], "--cert", path}, args[1:]...), &o, &e); code == 2 || code == 3 {
			t.Errorf("%s: exit %d on the unedited certificate: %s", args[0], code, e.String())
		}
	}
}
