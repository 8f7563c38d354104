package ingest

import (
	"context"
	"strings"
	"testing"
)

// TestUnnamedColumn: a column with no header name that holds values (a
// state someone forgot to name, or a data-frame export's row index) is
// listed among the ignored columns with a warning naming its line and
// column; an empty column after a trailing delimiter is neither. Cells
// as [RFC4180] splits them.
func TestUnnamedColumn(t *testing.T) {
	for _, tc := range []struct {
		name, text string
		warn       string // "" for none
		ignored    string
	}{
		{"unnamed state", "time,,v\n0,1,2\n0.1,1.1,2.1\n0.2,1.2,2.2\n", "u.csv:2:2: a column with no name", "(column 2, unnamed)"},
		{"row index", ",t,x\n0,0,1\n1,0.1,1.1\n2,0.2,1.2\n", "u.csv:2:1: a column with no name", "(column 1, unnamed)"},
		{"trailing delimiter", "t,x,\n0,1,\n0.1,1.1,\n0.2,1.2,\n", "", ""},
	} {
		path := writeFile(t, t.TempDir(), "u.csv", tc.text)
		ds, err := Load(context.Background(), []string{path}, nil)
		if err != nil {
			t.Fatalf("%s: %v", tc.name, err)
		}
		var warn string
		for _, w := range ds.Warnings {
			if strings.Contains(w, "no name in the header") {
				warn = w
			}
		}
		if (tc.warn == "") != (warn == "") || tc.warn != "" && !strings.Contains(warn, tc.warn) {
			t.Errorf("%s: warning %q, want one holding %q", tc.name, warn, tc.warn)
		}
		var ign []string
		for _, c := range ds.Ignored {
			ign = append(ign, c.Name)
		}
		if got := strings.Join(ign, ","); got != tc.ignored {
			t.Errorf("%s: ignored %q, want %q", tc.name, got, tc.ignored)
		}
		if len(ds.States) == 0 {
			t.Errorf("%s: no states", tc.name)
		}
	}
}
