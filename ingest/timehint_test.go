package ingest

import (
	"errors"
	"strings"
	"testing"
)

// TestNoTimeColumnHint: with no column named as a time and no rate, the
// error is ErrNoTime; when a column carries a time unit in its header it
// names that column (line 1, its column number) and how to use it.
func TestNoTimeColumnHint(t *testing.T) {
	for _, tc := range []struct {
		name, in string
		col      int    // ParseError.Column; 0 when no column is named
		text     string // in the message
	}{
		{"a time unit under another name", "x [m],elapsed [ms]\n1,0\n2,10\n", 2, `the time unit "ms": if it is the time, name it with Options.TimeCol elapsed`},
		{"unit in parentheses, any case", "Elapsed (S),x\n0,1\n1,2\n", 1, "name it with Options.TimeCol Elapsed"},
		{"no time unit anywhere", "n,x [m]\n0,1\n1,2\n", 0, "no time column"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := ReadCSV(strings.NewReader(tc.in), "log.csv", nil)
			var pe *ParseError
			if !errors.Is(err, ErrNoTime) || !errors.As(err, &pe) {
				t.Fatalf("err = %v, want a *ParseError wrapping ErrNoTime", err)
			}
			if pe.Column != tc.col || !strings.Contains(err.Error(), tc.text) {
				t.Errorf("err = %v (column %d), want column %d with %q", err, pe.Column, tc.col, tc.text)
			}
			if tc.col == 0 && strings.Contains(err.Error(), "TimeCol ") {
				t.Errorf("err = %v names a column though none has a time unit", err)
			}
		})
	}
}
