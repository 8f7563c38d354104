package fit

import "basin.example/internal/order"

// medianSelect returns the median of d as slices.Sort(d) would give it
// ([order.Median] of the sorted d: the middle value for odd length, the
// mean of the two middle ones for even length; NaN when the sort puts a
// NaN there), without sorting: [order.Select] puts the middle values in
// place, and the window they form is sorted. It reorders d and panics
// when d is empty.
func medianSelect(d []float64) float64 {
	n := len(d)
	if n == 0 {
		panic("fit: median of no values")
	}
	lo, hi := (n-1)/2, n/2
	order.Select(d, lo, hi)
	return order.Median(d[lo : hi+1])
}
