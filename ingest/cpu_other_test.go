//go:build !unix

package ingest

import "time"

// cpuTime is not measured here: the CPU ratios of the benchmarks read 0
// or NaN.
func cpuTime() time.Duration { return 0 }
