package fit

import (
	"encoding/json"
	"fmt"
	"strings"
	"testing"
)

func certJSON(exps [][]int, states []string) string {
	coef := make([]float64, len(exps))
	for i := range coef {
		coef[i] = 1
	}
	c := map[string]any{
		"format": CertificateFormat, "verdict": "inconclusive", "states": states,
		"units": make([]string, len(states)), "equilibrium": make([]float64, len(states)),
		"level": 1.0,
		"V":     map[string]any{"exponents": exps, "coefficients": coef},
	}
	sc := make([]float64, len(states))
	for i := range sc {
		sc[i] = 1
	}
	c["scale"] = sc
	b, _ := json.Marshal(c)
	return string(b)
}

// TestReadCertificateHostile: terms beyond what the states allow, repeated
// monomials, a huge V and repeated state names are refused by the reader.
func TestReadCertificateHostile(t *testing.T) {
	two := []string{"theta", "omega"}
	many := make([][]int, 100000) // a hostile V: with 2 states only 45 terms of degree <= 8 exist
	for i := range many {
		many[i] = []int{i % 5, (i / 5) % 5}
	}
	for _, tc := range []struct {
		name, in, want string
	}{
		{"ok", certJSON([][]int{{2, 0}, {1, 1}, {0, 2}}, two), ""},
		{"exponent 16", certJSON([][]int{{16, 0}}, two), "out of range"},
		{"degree 10", certJSON([][]int{{5, 5}}, two), "total degree 10"},
		{"duplicate", certJSON([][]int{{2, 0}, {0, 2}, {2, 0}}, two), "terms 1 and 3 are the same monomial"},
		{"huge", certJSON(many, two), "terms 1 and 26 are the same monomial"},
		{"state twice", certJSON([][]int{{2, 0}}, []string{"x", "x"}), `state "x" named twice`},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := ReadCertificate(strings.NewReader(tc.in))
			switch {
			case tc.want == "" && err != nil:
				t.Errorf("refused: %v", err)
			case tc.want != "" && (err == nil || !strings.Contains(err.Error(), tc.want)):
				t.Errorf("err = %v, want %q", err, tc.want)
			}
		})
	}
}

// TestReadModelChecks: the scaling fields, repeated terms and data after
// the object are refused (a spread of 5e-324 was an internal failure).
func TestReadModelChecks(t *testing.T) {
	base := func(extra string) string {
		return fmt.Sprintf(`{"format": %q, "states": ["theta", "omega"], "units": ["rad", "rad/s"],
"equations": [{"state": "theta", "exponents": [[0, 1]], "coefficients": [1]},
 {"state": "omega", "exponents": [[1, 0], [0, 1]], "coefficients": [-4, -0.8]}],
"equilibrium": [0, 0]%s}`, ModelFormat, extra)
	}
	for _, tc := range []struct {
		name, in, want string
	}{
		{"ok", base(`, "centre": [0, 0], "spread": [1, 2], "noise": [0.001, 0], "lower": [-1, -2], "upper": [1, 2]`), ""},
		{"contract's minimal form", base(""), ""},
		{"subnormal spread", base(`, "spread": [5e-324, 1]`), "positive normal"},
		{"zero spread", base(`, "spread": [0, 1]`), "positive normal"},
		{"short centre", base(`, "centre": [0]`), "centre has 1 entries"},
		{"negative noise", base(`, "noise": [-1, 0]`), "negative"},
		{"lower above upper", base(`, "lower": [2, 0], "upper": [1, 1]`), "above upper"},
		{"trailing data", base("") + ` {}`, "data after the JSON object"},
		{"repeated term", strings.Replace(base(""), `[[1, 0], [0, 1]]`, `[[1, 0], [1, 0]]`, 1), "same monomial"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := ReadModel(strings.NewReader(tc.in))
			switch {
			case tc.want == "" && err != nil:
				t.Errorf("refused: %v", err)
			case tc.want != "" && (err == nil || !strings.Contains(err.Error(), tc.want)):
				t.Errorf("err = %v, want %q", err, tc.want)
			}
		})
	}
}
