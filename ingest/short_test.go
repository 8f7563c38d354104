package ingest

import (
	"context"
	"fmt"
	"strings"
	"testing"
)

// TestMinPiece: with Options.MinPiece, a piece that a gap cut too short
// is left out with one warning and counted; a recording never split is
// kept however short; zero keeps every piece.
func TestMinPiece(t *testing.T) {
	dir := t.TempDir()
	var b strings.Builder
	b.WriteString("t,x\n")
	// 3 samples, a gap (missing cell), then 20 samples
	for i := range 24 {
		if i == 3 {
			fmt.Fprintf(&b, "%g,\n", 0.1*float64(i))
			continue
		}
		fmt.Fprintf(&b, "%g,%g\n", 0.1*float64(i), 1/(1+0.1*float64(i)))
	}
	gap := writeFile(t, dir, "gap.csv", b.String())
	short := writeFile(t, dir, "short.csv", "t,x\n0,1\n0.1,0.9\n0.2,0.8\n")
	for _, tc := range []struct {
		min         int
		runs        []string
		shortPieces int
		warn        string
	}{
		{0, []string{"gap.csv", "gap.csv~1", "short.csv"}, 0, ""},
		{5, []string{"gap.csv~1", "short.csv"}, 1, "a piece of a split recording has 3 samples, fewer than 5, and is left out: gap.csv from 0 s"},
		{21, []string{"short.csv"}, 2, "2 pieces of split recordings have fewer than 21 samples and are left out (23 samples; gap.csv from 0 s first)"},
	} {
		t.Run(fmt.Sprint(tc.min), func(t *testing.T) {
			ds, err := Load(context.Background(), []string{gap, short}, &Options{MinPiece: tc.min})
			if err != nil {
				t.Fatal(err)
			}
			var names []string
			for _, r := range ds.Runs {
				names = append(names, r.Name)
			}
			if fmt.Sprint(names) != fmt.Sprint(tc.runs) {
				t.Errorf("runs %v, want %v", names, tc.runs)
			}
			if ds.ShortPieces != tc.shortPieces {
				t.Errorf("ShortPieces %d, want %d", ds.ShortPieces, tc.shortPieces)
			}
			found := tc.warn == ""
			for _, w := range ds.Warnings {
				if strings.Contains(w, "split recording") {
					if w != tc.warn {
						t.Errorf("warning %q, want %q", w, tc.warn)
					}
					found = true
				}
			}
			if !found {
				t.Errorf("no warning %q in %q", tc.warn, ds.Warnings)
			}
		})
	}
}
