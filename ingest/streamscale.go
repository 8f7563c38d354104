package ingest

import (
	"math"
	"math/bits"
	"slices"
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
	m := selectKth(w, n/2)
	if n%2 == 0 {
		m = (slices.Max(w[:n/2]) + m) / 2 // w[:n/2] holds the n/2 smallest
	}
	for i, x := range w {
		w[i] = math.Abs(x - m)
	}
	d := selectKth(w, n/2)
	if n%2 == 0 {
		d = (slices.Max(w[:n/2]) + d) / 2
	}
	return w, madGauss * d
}

// selectKth returns the k-th smallest value (from 0) of a, which holds
// no NaN, and leaves a partitioned about it: a[:k] holds values at most
// a[k], a[k+1:] values at least a[k]. It is Hoare's FIND (quickselect)
// with a median-of-three pivot; a partition that shrinks the range too
// slowly too often falls back to sorting it, so the time is O(n) on
// typical input and O(n log n) at worst. It panics if k is out of range.
func selectKth(a []float64, k int) float64 {
	if k < 0 || k >= len(a) {
		panic("ingest: selectKth: k out of range")
	}
	lo, hi := 0, len(a)-1
	budget := 2 * bits.Len(uint(len(a)))
	for hi-lo >= 16 {
		if budget == 0 {
			slices.Sort(a[lo : hi+1])
			return a[k]
		}
		budget--
		mid := lo + (hi-lo)/2
		if a[mid] < a[lo] {
			a[mid], a[lo] = a[lo], a[mid]
		}
		if a[hi] < a[lo] {
			a[hi], a[lo] = a[lo], a[hi]
		}
		if a[hi] < a[mid] {
			a[hi], a[mid] = a[mid], a[hi]
		}
		p := a[mid]
		// Hoare's partition: afterwards a[lo:j+1] <= p, a[i:hi+1] >= p,
		// j < i, and a[j+1:i] (if any) == p.
		i, j := lo, hi
		for i <= j {
			for a[i] < p {
				i++
			}
			for a[j] > p {
				j--
			}
			if i <= j {
				a[i], a[j] = a[j], a[i]
				i++
				j--
			}
		}
		switch {
		case k <= j:
			hi = j
		case k >= i:
			lo = i
		default:
			return a[k]
		}
	}
	// insertion sort of the short range left
	for i := lo + 1; i <= hi; i++ {
		x := a[i]
		j := i - 1
		for ; j >= lo && a[j] > x; j-- {
			a[j+1] = a[j]
		}
		a[j+1] = x
	}
	return a[k]
}
