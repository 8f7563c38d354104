package order

import (
	"math"
	"slices"
)

// Select reorders d so that d[k], for every k in ks, holds the value
// [slices.Sort] would leave at index k (NaN counting as the smallest
// value, as slices.Sort orders it), and every other entry lies on the
// side of each d[k] that the sort would put it. So a window d[i:j] of
// consecutive selected indices is sorted, and the statistics of this
// package apply to it: after Select(d, (n-1)/2, n/2), Median(d[(n-1)/2 :
// n/2+1]) is Median of the sorted d, bit for bit.
//
// It costs O(len(d)) comparisons on average for a few order statistics,
// against O(len(d) log len(d)) for the sort: Hoare's selection (FIND,
// Comm. ACM 4(7), 1961) with a median-of-three pivot (three positions drawn by a hash) and a three-way
// split (so runs of equal values cost no extra) made of two branchless
// Lomuto partitions (below the pivot; then, only when an index lies past
// those, at most the pivot), falling back to
// slices.Sort on a part that needed more than 2 log2(len(d)) + 8
// partitions, which bounds the worst case. It does not allocate. It
// panics when ks is not ascending or holds an index outside [0, len(d)).
func Select(d []float64, ks ...int) {
	for i, k := range ks {
		if k < 0 || k >= len(d) || i > 0 && k < ks[i-1] {
			panic("order: Select: indices not ascending within the slice")
		}
	}
	nan := 0
	for i, v := range d {
		if v != v {
			d[i], d[nan] = d[nan], d[i]
			nan++
		}
	}
	for len(ks) > 0 && ks[0] < nan { // d[:nan] are the NaNs the sort puts first
		ks = ks[1:]
	}
	depth := 8
	for m := len(d) - nan; m > 1; m >>= 1 {
		depth += 2
	}
	selectRange(d, nan, len(d), ks, depth)
}

// selectRange is Select on d[lo:hi], free of NaN, for the ks (absolute
// indices into d) in [lo, hi).
func selectRange(d []float64, lo, hi int, ks []int, depth int) {
	for len(ks) > 0 && hi-lo > 1 {
		if hi-lo <= 12 || depth == 0 {
			slices.Sort(d[lo:hi])
			return
		}
		depth--
		p := pivot(d, lo, hi)
		// d[lo:lt] < p, d[lt:gt] == p, d[gt:hi] > p, the second split
		// made only when an index lies at or past lt.
		lt := partitionBelow(d[lo:hi], p) + lo
		i := 0
		for i < len(ks) && ks[i] < lt {
			i++
		}
		if i > 0 {
			selectRange(d, lo, lt, ks[:i], depth)
		}
		ks = ks[i:]
		if len(ks) == 0 {
			return
		}
		gt := partitionAtMost(d[lt:hi], p) + lt
		j := 0
		for j < len(ks) && ks[j] < gt {
			j++
		}
		lo, ks = gt, ks[j:]
	}
}

// pivot returns the median of three values of d[lo:hi] (no NaN, hi-lo
// >= 3) at positions drawn by a hash of lo and hi, one from each third:
// fixed positions (the ends and the middle) fall into a pattern on
// sampled periodic signals, whose values recur at the same places, and
// a selection on such data took close to its depth limit of partitions
// (ten times the time on the jump statistic of a smooth sine). The
// positions depend only on lo and hi, so Select stays deterministic.
func pivot(d []float64, lo, hi int) float64 {
	n := uint64(hi - lo)
	h := mix(uint64(lo)<<32 ^ uint64(hi))
	third := n / 3
	ia := lo + int(h%third)
	ib := lo + int(third+(h>>21)%third)
	ic := lo + int(2*third+(h>>42)%(n-2*third))
	a, b, c := d[ia], d[ib], d[ic]
	return math.Max(math.Min(a, b), math.Min(math.Max(a, b), c))
}

// mix is the finaliser of SplitMix64 (a bijection that spreads every
// input bit over the output; common practice).
func mix(z uint64) uint64 {
	z += 0x9e3779b97f4a7c15
	z = (z ^ z>>30) * 0xbf58476d1ce4e5b9
	z = (z ^ z>>27) * 0x94d049bb133111eb
	return z ^ z>>31
}

// partitionBelow moves the values of d (no NaN) below p to its front and
// returns how many there are. It is Lomuto's partition without a branch
// on the comparison (every value is swapped, the boundary moves by the
// comparison's outcome): the outcome of comparisons against a median is
// a coin toss that a branch predictor loses half the time.
func partitionBelow(d []float64, p float64) int {
	lt := 0
	for i, v := range d {
		d[i] = d[lt]
		d[lt] = v
		b := 0
		if v < p {
			b = 1
		}
		lt += b
	}
	return lt
}

// partitionAtMost is partitionBelow for the values at most p: those
// below the next float above p (none is above +Inf: all are at most it).
func partitionAtMost(d []float64, p float64) int {
	if math.IsInf(p, 1) {
		return len(d)
	}
	return partitionBelow(d, math.Nextafter(p, math.Inf(1)))
}
