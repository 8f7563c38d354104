//go:build race

package fit

import "testing"

// raceOn says the race detector is on (about 10x slower): the heaviest
// certificate cases are left to the normal run.
const raceOn = true

// heavy skips a test of single-goroutine numerical work under the race
// detector (where it takes minutes and finds nothing the other tests'
// concurrency does not): make test runs ./fit/... a second time without
// -race, where it runs. Every case therefore runs in make test.
func heavy(t *testing.T) {
	t.Helper()
	t.Skip("heavy numerical case: make test runs it without -race")
}
