package report

import (
	"strings"
	"testing"

	"basin.example/fit"
)

// TestPageAveragedHeld: the page says when the model was fitted on
// averaged runs and at which constant input its equations hold, and
// says neither when not.
func TestPageAveragedHeld(t *testing.T) {
	in := fixture(mustCert(fixtureCertJSON), nil)
	plain := renderPage(t, in)
	for _, s := range []string{"averaged in blocks", "constant input"} {
		if strings.Contains(plain, s) {
			t.Errorf("a plain model's page says %q", s)
		}
	}
	in.Model.Average = 32
	in.Model.Held = []fit.HeldInput{{Name: "drive", Unit: "V", Value: 1.5}}
	page := renderPage(t, in)
	for _, s := range []string{"Fitted on the runs averaged in blocks of 32 samples", "--average 32", "constant input drive = 1.5 V"} {
		if !strings.Contains(page, s) {
			t.Errorf("the page lacks %q", s)
		}
	}
}
