//go:build !race

package validate

const raceOn = false
