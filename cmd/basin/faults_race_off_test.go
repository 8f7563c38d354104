//go:build !race

package main

// raceBuild says the tests run under the race detector.
const raceBuild = false
