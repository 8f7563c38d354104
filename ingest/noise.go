package ingest

import (
	"math"

	"basin.example/internal/order"
)

// NoiseDiffs bounds the fourth differences [FourthDiffNoise] uses: every
// stride-th from the first, stride = max(1, (len(x)-4)/NoiseDiffs), so at
// most NoiseDiffs+1 of them. The median of 4,096 is within about 2% of
// the whole run's (the relative standard error of a median-based σ is
// about 1.17/√N for Gaussian noise; common practice).
const NoiseDiffs = 4096

// FourthDiffNoise returns the standard deviation of white measurement
// noise on the samples x, 1.4826·median|Δ⁴x|/√70 (white noise gives the
// fourth difference a variance of 70σ², C(8,4); a smooth, densely sampled
// signal adds little, and the median keeps the few rough places out),
// over the fourth differences [NoiseDiffs] allows. Fewer than five
// samples give 0. buf is scratch space, grown as needed and returned for
// the next call.
func FourthDiffNoise(buf, x []float64) (float64, []float64) {
	total := len(x) - 4
	if total <= 0 {
		return 0, buf
	}
	stride := max(1, total/NoiseDiffs)
	d := buf[:0]
	for i := 0; i+4 < len(x) && len(d) <= NoiseDiffs; i += stride {
		d = append(d, math.Abs(x[i]-4*x[i+1]+6*x[i+2]-4*x[i+3]+x[i+4]))
	}
	lo, hi := (len(d)-1)/2, len(d)/2
	order.Select(d, lo, hi)
	return 1.4826 * order.Median(d[lo:hi+1]) / math.Sqrt(70), d
}
