package order

import (
	"math"
	"math/rand/v2"
	"slices"
	"strconv"
	"testing"
)

// selectRangeBefore is selectRange before the branchless partitions, kept
// for BenchmarkSelect: Select on d[lo:hi], free of NaN, for the ks (absolute
// indices into d) in [lo, hi).
func selectRangeBefore(d []float64, lo, hi int, ks []int, depth int) {
	for len(ks) > 0 && hi-lo > 1 {
		if hi-lo <= 12 || depth == 0 {
			slices.Sort(d[lo:hi])
			return
		}
		depth--
		lt, gt := partition3Before(d, lo, hi)
		// d[lo:lt] < pivot, d[lt:gt] == pivot, d[gt:hi] > pivot.
		i := 0
		for i < len(ks) && ks[i] < lt {
			i++
		}
		j := i
		for j < len(ks) && ks[j] < gt {
			j++
		}
		if i > 0 {
			selectRangeBefore(d, lo, lt, ks[:i], depth)
		}
		lo, ks = gt, ks[j:]
	}
}

// partition3Before partitions d[lo:hi] (no NaN, hi-lo >= 3) around the median
// of its first, middle and last values and returns the bounds of the
// pivot's run: d[lo:lt] < p, d[lt:gt] == p, d[gt:hi] > p.
func partition3Before(d []float64, lo, hi int) (lt, gt int) {
	a, b, c := d[lo], d[lo+(hi-lo)/2], d[hi-1]
	p := math.Max(math.Min(a, b), math.Min(math.Max(a, b), c))
	lt, gt = lo, hi
	for i := lo; i < gt; {
		switch v := d[i]; {
		case v < p:
			d[i], d[lt] = d[lt], d[i]
			lt++
			i++
		case v > p:
			gt--
			d[i], d[gt] = d[gt], d[i]
		default:
			i++
		}
	}
	return lt, gt
}

// BenchmarkSelect times the median selection of 4,096 and 16,384
// values (the sizes of the streamed noise estimates) against the code
// before the branchless partitions (selectRangeBefore), interleaved, on
// Gaussian values, on values of a few levels (quantised jumps) and on
// the third differences of a sampled smooth sine (the jump statistic of
// a state logged without noise: a periodic pattern on which fixed pivot
// positions took ten times as long).
func BenchmarkSelect(b *testing.B) {
	rng := rand.New(rand.NewPCG(5, 1))
	for _, n := range []int{4096, 16384} {
		for _, kind := range []string{"normal", "levels", "sine"} {
			x := make([]float64, n)
			for i := range x {
				switch kind {
				case "normal":
					x[i] = rng.NormFloat64()
				case "sine":
					s := func(k int) float64 { return math.Sin(float64(k) * 0.001) }
					k := 3*i + 2
					x[i] = s(k+1) - 3*s(k) + 3*s(k-1) - s(k-2)
				default:
					x[i] = math.Abs(float64(rng.IntN(9) - 4))
				}
			}
			w := make([]float64, n)
			for _, impl := range []string{"now", "before"} {
				b.Run(kind+"/n="+strconv.Itoa(n)+"/"+impl, func(b *testing.B) {
					for b.Loop() {
						copy(w, x)
						if impl == "now" {
							Select(w, n/2-1, n/2)
						} else {
							selectRangeBefore(w, 0, n, []int{n/2 - 1, n / 2}, 40)
						}
					}
					s := slices.Clone(x)
					slices.Sort(s)
					if w[n/2] != s[n/2] || w[n/2-1] != s[n/2-1] {
						b.Fatal("wrong median")
					}
				})
			}
		}
	}
}
