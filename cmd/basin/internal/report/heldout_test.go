package report

import (
	"bytes"
	"html"
	"regexp"
	"strings"
	"testing"

	"basin.example/validate"
)

// TestHeldoutPieces: with inputs, the held-out runs are checked where the
// inputs rest, a run giving several pieces or none; the summary and the
// page count the runs held out and the pieces checked, and say the later
// counts are of pieces. Without a split the wording stays in runs.
func TestHeldoutPieces(t *testing.T) {
	tags := regexp.MustCompile(`(?s)<[^>]*>`)
	for _, tc := range []struct {
		name   string
		pieces []string // check names; nil keeps the fixture's (one per run)
		want   []string // in the summary
		page   []string // in the page's text
	}{
		{"whole runs", nil,
			[]string{"held-out: 3 runs; ", "of the 2 runs that started inside"},
			[]string{"held-out runs (not used to fit) 3"}},
		{"six pieces of three runs", []string{"run03@0", "run03@4.5", "run04@0", "run04@3", "run04@7", "run05@1"},
			[]string{"held-out: 3 runs (6 pieces where the inputs rest); ", "of the 6 pieces that entered the region"},
			[]string{"held-out pieces where the inputs rest (not used to fit), from 3 held-out runs 6", "held-out pieces that entered the region"}},
		// one run had no stretch at rest: two pieces from three runs
		{"two pieces of three runs", []string{"run03@2", "run05"},
			[]string{"held-out: 3 runs (2 pieces where the inputs rest); ", "of the 2 pieces that entered the region"},
			[]string{"from 3 held-out runs 2"}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			c := mustCert(fixtureCertJSON)
			in := fixture(c, nil)
			if tc.pieces != nil {
				v := *c.Validation
				v.HeldoutRuns, v.EnteredRuns, v.StartInside = len(tc.pieces), len(tc.pieces), 0
				v.Settled, v.InvarianceFraction = len(tc.pieces), 1
				c.Validation = &v
				in.Checks = nil
				for _, p := range tc.pieces {
					in.Checks = append(in.Checks, validate.RunScreen{Run: p, Samples: 100, Settled: true})
				}
			}
			var sum bytes.Buffer
			if err := Summary(&sum, in); err != nil {
				t.Fatal(err)
			}
			for _, w := range tc.want {
				if !strings.Contains(sum.String(), w) {
					t.Errorf("summary lacks %q:\n%s", w, sum.String())
				}
			}
			page := strings.Join(strings.Fields(html.UnescapeString(tags.ReplaceAllString(renderPage(t, in), " "))), " ")
			for _, w := range tc.page {
				if !strings.Contains(page, w) {
					t.Errorf("page lacks %q", w)
				}
			}
		})
	}
}
