//go:build race

package validate

// raceOn is true under the race detector (slow tests skip).
const raceOn = true
