package ingest

import "testing"

// TestPieceOf: the names the readers give pieces ("name~N", N from 1)
// split back into recording and number; a name whose '~' is not such a
// suffix is a recording's first piece, whole.
func TestPieceOf(t *testing.T) {
	for _, tc := range []struct {
		name, rec string
		n         int
	}{
		{"log.csv", "log.csv", 0},
		{"log.csv~2", "log.csv", 2},
		{"f.csv#7~1", "f.csv#7", 1},
		{"a~b.csv", "a~b.csv", 0},
		{"log.csv~01", "log.csv~01", 0},
		{"log.csv~0", "log.csv~0", 0},
		{"log.csv~+3", "log.csv~+3", 0},
		{"~3", "~3", 0},
	} {
		if rec, n := PieceOf(tc.name); rec != tc.rec || n != tc.n {
			t.Errorf("PieceOf(%q) = %q, %d; want %q, %d", tc.name, rec, n, tc.rec, tc.n)
		}
	}
}
