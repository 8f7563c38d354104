// Package order computes order statistics (quantiles and medians) of
// float64 samples, the one quantile of basin.
//
// # Definitions
//
// [Quantile] is definition 7 of Hyndman and Fan (1996), the default of R's
// quantile and NumPy's percentile: for n sorted values s[0] <= ... <=
// s[n-1] and 0 <= p <= 1, with h = p(n-1), it is s[floor(h)] +
// (h - floor(h)) (s[floor(h)+1] - s[floor(h)]), and s[n-1] at p = 1. It is
// continuous in p and equals s[0] at p = 0.
//
// [Median] is the classical median: the middle value for odd n and the
// mean of the two middle values for even n (mathematically Quantile at
// 0.5; computed as (a+b)/2). [HighMedian] is s[n/2], the upper of the two
// middle values for even n: always one of the samples (definition 1 of
// Hyndman and Fan, the inverse of the empirical distribution function,
// just above p = 1/2), which is what a robust centre that must be an
// observed value wants.
//
// # Input and NaN
//
// The statistics take a slice sorted ascending, as [slices.Sort] leaves it;
// they do not sort and do not allocate. An empty slice is a caller bug and
// panics, like an out-of-range index. [slices.Sort] puts NaN first, so a
// sorted slice holds a NaN exactly when s[0] is NaN: the statistics then
// return NaN. [Sorted] copies the non-NaN values of a slice into a scratch
// buffer and sorts them, for callers that want NaN left out (missing
// samples) rather than propagated.
package order

import (
	"math"
	"slices"
)

// Sorted appends the values of x that are not NaN to dst[:0], sorts them
// ascending and returns the result. It does not allocate when cap(dst) >=
// len(x); dst and x must not overlap unless dst is x[:0] (which filters x
// in place).
func Sorted(dst, x []float64) []float64 {
	dst = dst[:0]
	for _, v := range x {
		if !math.IsNaN(v) {
			dst = append(dst, v)
		}
	}
	slices.Sort(dst)
	return dst
}

// Quantile returns the p-quantile of s (sorted ascending) by linear
// interpolation between order statistics (Hyndman and Fan's definition 7).
// It returns NaN when s holds a NaN. It panics when s is empty or p is
// outside [0, 1].
func Quantile(s []float64, p float64) float64 {
	if len(s) == 0 {
		panic("order: quantile of no values")
	}
	if !(p >= 0 && p <= 1) {
		panic("order: probability outside [0, 1]")
	}
	if math.IsNaN(s[0]) {
		return math.NaN()
	}
	h := p * float64(len(s)-1)
	i := int(h)
	if i+1 >= len(s) {
		return s[len(s)-1]
	}
	return s[i] + (h-float64(i))*(s[i+1]-s[i])
}

// Median returns the median of s (sorted ascending): s[n/2] for odd n,
// (s[n/2-1] + s[n/2]) / 2 for even n. It returns NaN when s holds a NaN and
// panics when s is empty.
func Median(s []float64) float64 {
	n := len(s)
	if n == 0 {
		panic("order: median of no values")
	}
	if math.IsNaN(s[0]) {
		return math.NaN()
	}
	if n%2 == 1 {
		return s[n/2]
	}
	return (s[n/2-1] + s[n/2]) / 2
}

// HighMedian returns s[n/2] of s (sorted ascending): the median for odd n,
// the upper middle value for even n, always one of the samples. It returns
// NaN when s holds a NaN and panics when s is empty.
func HighMedian(s []float64) float64 {
	if len(s) == 0 {
		panic("order: median of no values")
	}
	if math.IsNaN(s[0]) {
		return math.NaN()
	}
	return s[len(s)/2]
}
