//go:build race

package export_test

import "testing"

// heavy skips a test of single-goroutine work under the race detector:
// the SQL parity tests run the screen and a pure-Go SQLite over
// thousands of rows, which under -race took over 20 minutes on a loaded
// 2-core machine and finds no race (the engines are not concurrent
// here). make test runs ./fit/... a second time without -race, where
// they run, so every case still runs in make test.
func heavy(t *testing.T) {
	t.Helper()
	t.Skip("heavy single-goroutine case: make test runs it without -race")
}
