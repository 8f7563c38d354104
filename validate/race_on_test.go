//go:build race

package validate

import "testing"

// raceOn is true under the race detector (slow tests skip).
const raceOn = true

// heavy skips a long numerical test under the race detector: make test
// runs ./validate a second time without -race, where it runs.
func heavy(t *testing.T) {
	t.Helper()
	t.Skip("heavy numerical case: make test runs it without -race")
}
