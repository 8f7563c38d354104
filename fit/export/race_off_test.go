//go:build !race

package export_test

import "testing"

// heavy marks a test that make test runs only in its pass without -race
// (see race_on_test.go); here it does nothing.
func heavy(t *testing.T) { t.Helper() }
