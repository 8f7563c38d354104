package ingest

import (
	"strings"
	"testing"
)

// TestCollapseCopies: a run copied under another name, or with its times
// shifted, is removed with a note naming the original; a run that differs
// in one sample is kept.
func TestCollapseCopies(t *testing.T) {
	mk := func(name string, t0, last float64) Run {
		return Run{Name: name, Source: Source{File: name + ".csv"}, T: []float64{t0, t0 + 0.1, t0 + 0.2},
			X: [][]float64{{1, 0.5, last}, {0, -1, -0.5}}}
	}
	ds := &Dataset{Runs: []Run{mk("a", 0, 0.25), mk("b", 0, 0.25), mk("c", 5, 0.25), mk("d", 0, 0.26)}}
	notes := CollapseCopies(ds)
	var names []string
	for _, r := range ds.Runs {
		names = append(names, r.Name)
	}
	if strings.Join(names, " ") != "a d" {
		t.Errorf("kept %v, want a d", names)
	}
	if len(notes) != 2 || !strings.Contains(notes[0], "run b (b.csv) is a copy of run a (a.csv)") ||
		!strings.Contains(notes[1], "run c (c.csv) is a copy of run a") {
		t.Errorf("notes %q", notes)
	}
}
