package ingest

import (
	"math"
	"slices"

	"basin.example/internal/order"
)

// scaleOf returns robustScale(v), the same value to the bit, by
// selection instead of sorting: the median and the median absolute
// deviation are order statistics, and any method that finds the k-th
// smallest value finds the same float64. It reuses w as scratch and
// returns it (grown as needed) with the scale. Values that are not all
// finite (a NaN or an infinite jump from infinite samples) go to
// robustScale, whose sorted order settles them.
func scaleOf(w, v []float64) ([]float64, float64) {
	if len(v) == 0 {
		return w, 0
	}
	step := max(1, len(v)/noiseSubsample)
	w = w[:0]
	for i := 0; i < len(v); i += step {
		x := v[i]
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return w, robustScale(v)
		}
		w = append(w, x)
	}
	n := len(w)
	order.Select(w, n/2)
	m := w[n/2]
	if n%2 == 0 {
		m = (slices.Max(w[:n/2]) + m) / 2 // w[:n/2] holds the n/2 smallest
	}
	for i, x := range w {
		w[i] = math.Abs(x - m)
	}
	order.Select(w, n/2)
	d := w[n/2]
	if n%2 == 0 {
		d = (slices.Max(w[:n/2]) + d) / 2
	}
	return w, madGauss * d
}
