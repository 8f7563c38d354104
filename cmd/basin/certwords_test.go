package main

import (
	"bytes"
	"strings"
	"testing"

	"basin.example/fit"
	"basin.example/fit/poly"
)

// TestZDefinition: 'basin certify' writes each scaled coordinate with its
// units and the equilibrium's sign folded in. A trial latch resting at
// latch = -1 mm read "z_latch = (latch - -1)/0.737 mm", the unit only on
// the scale and the rate's "(latch_rate - 0)".
func TestZDefinition(t *testing.T) {
	tests := []struct {
		state, unit string
		eq, scale   float64
		want        string
	}{
		{"latch", "mm", -1, 0.737, "z_latch = (latch + 1 mm)/(0.737 mm)"},
		{"latch_rate", "mm/s", 0, 0.9318, "z_latch_rate = latch_rate/(0.9318 mm/s)"},
		{"plate", "degC", 22.03, 6.123, "z_plate = (plate - 22.03 degC)/(6.123 degC)"},
		{"a", "", 0.5, 2, "z_a = (a - 0.5)/2"},
		{"b", "", -3e-17, 2, "z_b = b/2"}, // round-off beside the scale shows as 0
	}
	for _, tt := range tests {
		if got := zDefinition(tt.state, tt.unit, tt.eq, tt.scale); got != tt.want {
			t.Errorf("%s: got %q, want %q", tt.state, got, tt.want)
		}
	}
}

// TestCertifyShareWords: the region's share is printed as the trust
// region's, as the certificate's reason and fit's computation have it
// (fit.TestEnvelopeShareIsTrustShare), not as "the envelope the data
// cover".
func TestCertifyShareWords(t *testing.T) {
	c := &fit.Certificate{Verdict: fit.Inconclusive, Strength: fit.NoClaim, Found: true,
		States: []string{"x", "v"}, Units: []string{"m", "m/s"}, Equilibrium: []float64{0, 0}, Scale: []float64{1, 1},
		V:     poly.Poly{Exponents: [][]int{{2, 0}, {0, 2}}, Coefficients: []float64{1, 1}},
		Level: 1, Region: fit.Region{EnvelopeShare: 0.977, Extent: [][2]float64{{-1, 1}, {-1, 1}}}}
	var b bytes.Buffer
	printCertificate(&b, c)
	if !strings.Contains(b.String(), "region: 97.7% of the model's trust region") {
		t.Errorf("the share is not given as the trust region's:\n%s", b.String())
	}
	if strings.Contains(b.String(), "envelope the data cover\n") {
		t.Errorf("the share is given as the envelope's:\n%s", b.String())
	}
}
