package report

import (
	"bytes"
	"strings"
	"testing"

	"basin.example/fit"
	"basin.example/validate"
)

// TestCheckedLine: the summary's count of flagged held-out runs says
// what the flags were and which bear on the claim. The cases are the
// trial's: a two-rest-point latch whose held-out runs settling at the
// other rest point never enter the region (flagged unsettled: "flagged:
// 4" beside "certified"), a lossless oscillator certified with strength
// stable whose runs never settle, and a run that leaves the region.
func TestCheckedLine(t *testing.T) {
	unsettled := []validate.Flag{{Kind: validate.FlagUnsettled, Time: 8}}
	tests := []struct {
		name     string
		strength fit.Strength
		checks   []validate.RunScreen
		want     string
	}{
		{"none flagged", fit.Asymptotic, []validate.RunScreen{{Run: "a", EverInside: true}, {Run: "b", EverInside: true}},
			"checked runs: 2, flagged: 0\n"},
		{"latch: settle elsewhere", fit.Asymptotic, []validate.RunScreen{
			{Run: "a", EverInside: true},
			{Run: "b", Flagged: true, Flags: unsettled},
			{Run: "c", Flagged: true, Flags: unsettled}},
			"checked runs: 3, flagged: 2 (2 unsettled; 2 of the flagged never entered the region, so they lie outside its claim)\n"},
		{"one outside", fit.Asymptotic, []validate.RunScreen{
			{Run: "a", EverInside: true},
			{Run: "b", Flagged: true, Flags: unsettled}},
			"checked runs: 2, flagged: 1 (1 unsettled; 1 of the flagged never entered the region, so it lies outside its claim)\n"},
		{"oscillator: strength stable", fit.Stable, []validate.RunScreen{
			{Run: "a", EverInside: true, Flagged: true, Flags: unsettled},
			{Run: "b", EverInside: true, Flagged: true, Flags: unsettled}},
			"checked runs: 2, flagged: 2 (2 unsettled; strength stable claims no settling, so unsettled runs do not contradict it)\n"},
		{"leaves and rises", fit.Asymptotic, []validate.RunScreen{
			{Run: "a", EverInside: true, Flagged: true, Flags: []validate.Flag{{Kind: validate.FlagLeaves}, {Kind: validate.FlagLeaves}, {Kind: validate.FlagRises}}},
			{Run: "b", EverInside: true, Flagged: true, Flags: []validate.Flag{{Kind: validate.FlagRises}}}},
			"checked runs: 2, flagged: 2 (1 leaves, 2 rises)\n"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			c := mustCert(fixtureCertJSON)
			c.Strength = tt.strength
			in := fixture(c, nil)
			in.Checks = tt.checks
			var b bytes.Buffer
			if err := Summary(&b, in); err != nil {
				t.Fatal(err)
			}
			var got string
			for _, l := range strings.SplitAfter(b.String(), "\n") {
				if strings.HasPrefix(l, "checked runs: ") {
					got = l
				}
			}
			if got != tt.want {
				t.Errorf("got %q, want %q", got, tt.want)
			}
		})
	}
}

// TestPageShareWords: the page gives the region's share as the trust
// region's (fit.TestEnvelopeShareIsTrustShare shows that it is), not as
// "the envelope the recorded data span".
func TestPageShareWords(t *testing.T) {
	page := renderPage(t, fixture(mustCert(fixtureCertJSON), nil))
	if !strings.Contains(page, "of the model's trust region") {
		t.Error("the page does not give the share as the trust region's")
	}
	if strings.Contains(page, "of the envelope the recorded data span") {
		t.Error("the page gives the share as the envelope's")
	}
}
