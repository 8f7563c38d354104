package ingest

import (
	"math"
	"slices"

	"basin.example/internal/order"
)

// Constants of scaleOf's sampled bracket (the sample-based pivots of
// [FloydRivest1975]: the k-th smallest of n values
// lies, but for a small chance, between the sample's order statistics a
// few standard deviations of a sampled rank either side of k·s/n).
const (
	// scaleSample values are drawn, at even strides, to bracket a rank
	scaleSample = 512
	// scaleMargin sample ranks each side of the rank: 3.2 standard
	// deviations of a sampled median's rank, sqrt(512/4) = 11.3, so the
	// bracket misses (and a whole selection follows) about once in 700
	scaleMargin = 36
	// scaleSampled is the fewest values that are bracketed: below it one
	// selection costs about what the sample and the pass do
	scaleSampled = 4 * scaleSample
)

// scaleOf returns robustScale(v), the same value to the bit, by
// selection instead of sorting: the median and the median absolute
// deviation are order statistics, and any method that finds the k-th
// smallest value finds the same float64. It reuses w as scratch and
// returns it (grown as needed) with the scale. Values that are not all
// finite (a NaN or an infinite jump from infinite samples) go to
// robustScale, whose sorted order settles them.
//
// Both order statistics are found by sampled brackets ([bracketed]) on
// the subsample where it is read, v at robustScale's stride: one pass
// over it keeps the values inside the bracket, and only those are
// selected among; the deviations are taken in the second pass, not
// stored. A bracket that misses leaves it to two whole selections of
// the subsample.
func scaleOf(w, v []float64) ([]float64, float64) {
	if len(v) == 0 {
		return w, 0
	}
	step := max(1, len(v)/noiseSubsample)
	n := (len(v) + step - 1) / step // the subsample's size
	if n < scaleSampled {
		return gatherScale(w, v, step)
	}
	w = slices.Grow(w[:0], n+scaleSample)
	in, samp := w[:n], w[n:n+scaleSample]
	two := n%2 == 0
	lo, m, finite, ok := bracketed(v, step, in, samp, n/2, two, false, 0)
	if !finite {
		return w, robustScale(v)
	}
	if !ok {
		return gatherScale(w, v, step)
	}
	if two {
		m = (lo + m) / 2
	}
	lo, d, _, ok := bracketed(v, step, in, samp, n/2, two, true, m)
	if !ok {
		return gatherScale(w, v, step)
	}
	if two {
		d = (lo + d) / 2
	}
	return w, madGauss * d
}

// gatherScale is scaleOf by two whole selections of the subsample of v
// at stride step, gathered into w.
func gatherScale(w, v []float64, step int) ([]float64, float64) {
	w = w[:0]
	for i := 0; i < len(v); i += step {
		x := v[i]
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return w, robustScale(v)
		}
		w = append(w, x)
	}
	m := medianSelect(w)
	for i, x := range w {
		w[i] = math.Abs(x - m)
	}
	return w, madGauss * medianSelect(w)
}

// medianSelect returns the median of the finite values w (the middle
// one, or the mean of the two middle ones), reordering w.
func medianSelect(w []float64) float64 {
	n := len(w)
	order.Select(w, n/2)
	m := w[n/2]
	if n%2 == 0 {
		m = (slices.Max(w[:n/2]) + m) / 2 // w[:n/2] holds the n/2 smallest
	}
	return m
}

// bracketed returns the k-th smallest (0-based) of the values y_i =
// v[i·step], or y_i = |v[i·step] - c| when dev, and with two the
// (k-1)-th (k >= 1), without modifying v: sample len(samp) of the y at
// even strides into samp, select the sample's ranks scaleMargin either
// side of k's place as a bracket, write the y inside it to in (as long
// as the y) in one branch-free pass that counts those below it, and
// select among those only. finite reports every y finite; ok is false,
// and the values void, when it is not or when the ranks asked for fall
// outside the bracket.
func bracketed(v []float64, step int, in, samp []float64, k int, two, dev bool, c float64) (lo, hi float64, finite, ok bool) {
	n := len(in)
	for i := range samp {
		x := v[i*n/len(samp)*step]
		if dev {
			x = math.Abs(x - c)
		}
		samp[i] = x
	}
	r := k * len(samp) / n
	rl, rh := max(0, r-scaleMargin), min(len(samp)-1, r+scaleMargin)
	order.Select(samp, rl, rh)
	a, b := samp[rl], samp[rh]
	var below, m int
	switch {
	case dev && step == 1:
		below, m, finite = bracketPassDev(v[:n], in, a, b, c)
	case dev:
		below, m, finite = bracketPassDevStrided(v, step, in, a, b, c)
	case step == 1:
		below, m, finite = bracketPass(v[:n], in, a, b)
	default:
		below, m, finite = bracketPassStrided(v, step, in, a, b)
	}
	kk := k - below
	if !finite || kk >= m || kk < 0 || two && kk < 1 {
		return 0, 0, finite, false
	}
	in = in[:m]
	if two {
		order.Select(in, kk-1, kk)
		return in[kk-1], in[kk], true, true
	}
	order.Select(in, kk)
	return in[kk], in[kk], true, true
}

// bracketPass writes the values of v in [a, b] to the front of in (as
// long as v), in order, and returns how many of v lie below a, how many
// were written, and whether all of v is finite. Every value is stored,
// the count moving by the comparisons' outcome: no branch on them.
func bracketPass(v, in []float64, a, b float64) (below, m int, finite bool) {
	in = in[:len(v)]
	var z float64 // x - x summed: 0 unless a NaN or an infinity is in v
	for _, x := range v {
		in[m] = x
		z += x - x
		lt, ge, le := 0, 0, 0
		if x < a {
			lt = 1
		}
		if x >= a {
			ge = 1
		}
		if x <= b {
			le = 1
		}
		below += lt
		m += ge & le
	}
	return below, m, z == 0
}

// bracketPassStrided is bracketPass on v[i·step], i < len(in).
func bracketPassStrided(v []float64, step int, in []float64, a, b float64) (below, m int, finite bool) {
	var z float64
	for i := 0; i < len(v); i += step {
		x := v[i]
		in[m] = x
		z += x - x
		lt, ge, le := 0, 0, 0
		if x < a {
			lt = 1
		}
		if x >= a {
			ge = 1
		}
		if x <= b {
			le = 1
		}
		below += lt
		m += ge & le
	}
	return below, m, z == 0
}

// bracketPassDev is bracketPass on the deviations |v_i - c| of finite
// values (finite is true).
func bracketPassDev(v, in []float64, a, b, c float64) (below, m int, finite bool) {
	in = in[:len(v)]
	for _, x := range v {
		x = math.Abs(x - c)
		in[m] = x
		lt, ge, le := 0, 0, 0
		if x < a {
			lt = 1
		}
		if x >= a {
			ge = 1
		}
		if x <= b {
			le = 1
		}
		below += lt
		m += ge & le
	}
	return below, m, true
}

// bracketPassDevStrided is bracketPassStrided on the deviations
// |v[i·step] - c| of finite values (finite is true).
func bracketPassDevStrided(v []float64, step int, in []float64, a, b, c float64) (below, m int, finite bool) {
	for i := 0; i < len(v); i += step {
		x := math.Abs(v[i] - c)
		in[m] = x
		lt, ge, le := 0, 0, 0
		if x < a {
			lt = 1
		}
		if x >= a {
			ge = 1
		}
		if x <= b {
			le = 1
		}
		below += lt
		m += ge & le
	}
	return below, m, true
}
