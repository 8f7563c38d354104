//go:build !race

package fit

// raceOn says the race detector is on; see race_on_test.go.
const raceOn = false
