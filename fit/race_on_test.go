//go:build race

package fit

// raceOn says the race detector is on (about 10x slower): the heaviest
// certificate cases are left to the normal run.
const raceOn = true
