package main

import (
	"bytes"
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"basin.example/fit"
)

// certifyFixture writes oscillator runs into dir/data and fits the model
// into dir/out/model.json.
func certifyFixture(t *testing.T) (data, out string) {
	t.Helper()
	dir := t.TempDir()
	data = filepath.Join(dir, "data")
	out = filepath.Join(dir, "out")
	if err := os.Mkdir(data, 0o755); err != nil {
		t.Fatal(err)
	}
	writeOscillator(t, data, 8, false)
	var o, e bytes.Buffer
	if code := basinMain(context.Background(), []string{"fit", data, "--out", out, "--bootstrap", "0", "--quiet"}, &o, &e); code != 0 {
		t.Fatalf("fit: exit %d: %s", code, e.String())
	}
	return data, out
}

func TestCertifyCommand(t *testing.T) {
	data, out := certifyFixture(t)
	model := filepath.Join(out, "model.json")
	var o, e bytes.Buffer
	if code := basinMain(context.Background(), []string{"certify", "--model", model, data, "--out", out}, &o, &e); code != 0 {
		t.Fatalf("exit %d: %s", code, e.String())
	}
	text := o.String()
	for _, want := range []string{"verdict: inconclusive", "V = ", "z_theta = theta/(", "level: V <= ", "rad/s", "not a proof", "certificate.json"} {
		if !strings.Contains(text, want) {
			t.Errorf("output lacks %q:\n%s", want, text)
		}
	}
	f, err := os.Open(filepath.Join(out, "certificate.json"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	c, err := fit.ReadCertificate(f)
	if err != nil {
		t.Fatal(err)
	}
	if !c.Found || c.Verdict != fit.Inconclusive || c.Level <= 0 || len(c.V.Coefficients) != 3 || len(c.Box) != 2 {
		t.Errorf("certificate: found %v verdict %s level %g V %v", c.Found, c.Verdict, c.Level, c.V)
	}
	// --json prints the certificate; --v-degree 4 gives 12 terms.
	o.Reset()
	if code := basinMain(context.Background(), []string{"certify", "--json", "--v-degree", "4", "--model", model, "--out", out, data}, &o, &e); code != 0 {
		t.Fatalf("exit %d: %s", code, e.String())
	}
	var cj fit.Certificate
	if err := json.Unmarshal(o.Bytes(), &cj); err != nil || cj.Format != fit.CertificateFormat || len(cj.V.Coefficients) != 12 {
		t.Fatalf("--json: %v %q %d terms", err, cj.Format, len(cj.V.Coefficients))
	}
}

func TestCertifyCommandBadInput(t *testing.T) {
	data, out := certifyFixture(t)
	model := filepath.Join(out, "model.json")
	wrong := filepath.Join(out, "wrong.json")
	b, _ := os.ReadFile(model)
	os.WriteFile(wrong, bytes.ReplaceAll(b, []byte(`"theta"`), []byte(`"phi"`)), 0o644)
	broken := filepath.Join(out, "broken.json")
	os.WriteFile(broken, b[:len(b)/2], 0o644)
	for _, tc := range []struct {
		name string
		args []string
		want string
	}{
		{"no model", []string{data}, "--model FILE is required"},
		{"missing model", []string{"--model", filepath.Join(out, "nope.json"), data}, "nope.json"},
		{"truncated model", []string{"--model", broken, data}, "broken.json: model:"},
		{"other states", []string{"--model", wrong, data}, `state 1 is "phi" in the model but "theta" in the data`},
		{"odd degree", []string{"--model", model, "--v-degree", "3", data}, "--v-degree must be even"},
		{"bad growth", []string{"--model", model, "--growth", "0", data}, "--growth must be 1..100"},
		{"no inputs", []string{"--model", model}, "no INPUTS"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			dst := filepath.Join(t.TempDir(), "o")
			var o, e bytes.Buffer
			code := basinMain(context.Background(), append([]string{"certify", "--out", dst}, tc.args...), &o, &e)
			if code != 2 || !strings.Contains(e.String(), tc.want) || strings.Count(e.String(), "\n") != 1 {
				t.Errorf("exit %d, stderr %q; want 2 and %q on one line", code, e.String(), tc.want)
			}
			if _, err := os.Stat(filepath.Join(dst, "certificate.json")); err == nil {
				t.Error("certificate.json written on bad input")
			}
		})
	}
}

// TestCertifyCommandConflict: basin certify records its settings once
// (the search's by fit.Certify, the model file and INPUTS by the
// command; no field or held-out keys, it did neither), and for a model
// turned into a saddle (omega' = +4 theta - 0.8 omega: an eigenvalue
// (-0.8 + sqrt(0.64 + 16))/2 > 0) prints the LP conflict's line and
// writes lp_conflict.
func TestCertifyCommandConflict(t *testing.T) {
	data, out := certifyFixture(t)
	model := filepath.Join(out, "model.json")
	f, err := os.Open(model)
	if err != nil {
		t.Fatal(err)
	}
	m, err := fit.ReadModel(f)
	f.Close()
	if err != nil {
		t.Fatal(err)
	}
	flipped := false
	for k, e := range m.Equations[1].Exponents {
		if e[0] == 1 && e[1] == 0 && m.Equations[1].Coefficients[k] < 0 {
			m.Equations[1].Coefficients[k] *= -1
			flipped = true
		}
	}
	if !flipped {
		t.Fatalf("no theta term to flip in %+v", m.Equations[1])
	}
	b, err := json.Marshal(m)
	if err != nil {
		t.Fatal(err)
	}
	saddle := filepath.Join(out, "saddle.json")
	if err := os.WriteFile(saddle, b, 0o644); err != nil {
		t.Fatal(err)
	}
	var o, e bytes.Buffer
	if code := basinMain(context.Background(), []string{"certify", "--model", saddle, data, "--out", out}, &o, &e); code != 0 {
		t.Fatalf("exit %d: %s", code, e.String())
	}
	if !strings.Contains(o.String(), "LP conflict: the fitted field contradicts every V of degree 2") {
		t.Errorf("output lacks the LP conflict:\n%s", o.String())
	}
	f, err = os.Open(filepath.Join(out, "certificate.json"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	c, err := fit.ReadCertificate(f)
	if err != nil {
		t.Fatal(err)
	}
	if c.ReasonKind != fit.ReasonUnstableLinearisation || c.LPConflict == nil || c.LPConflict.Rows == 0 {
		t.Errorf("kind %s conflict %+v", c.ReasonKind, c.LPConflict)
	}
	s := c.Settings
	if s == nil || s.Search == nil || s.Search.VDegree != 2 || s.Command == nil || s.Command.Model != saddle ||
		s.Command.Inputs != data || s.Field != nil || s.Holdout != nil {
		t.Errorf("settings %+v", s)
	}
}
