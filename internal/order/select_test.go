package order

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// TestSelect checks Select against the standard library's
// slices.Sort ([slices], an independent general-purpose sort): every selected index
// holds the sorted value, NaN first as the sort puts it, on random,
// constant, sorted, reversed, heavily repeated and NaN- and Inf-holding
// samples of many sizes; and the entries left before (after) a selected
// index are no larger (no smaller) than it.
func TestSelect(t *testing.T) {
	t.Run("bad indices", func(t *testing.T) {
		for _, ks := range [][]int{{-1}, {3}, {2, 1}} {
			func() {
				defer func() {
					if recover() == nil {
						t.Errorf("Select(3 values, %v) did not panic", ks)
					}
				}()
				Select([]float64{3, 1, 2}, ks...)
			}()
		}
	})
	rng := rand.New(rand.NewPCG(3, 0))
	inf := math.Inf(1)
	gen := map[string]func(n int) []float64{
		"normal":   func(n int) []float64 { return fill(n, func(int) float64 { return rng.NormFloat64() }) },
		"constant": func(n int) []float64 { return fill(n, func(int) float64 { return 2.5 }) },
		"sorted":   func(n int) []float64 { return fill(n, func(i int) float64 { return float64(i) }) },
		"reversed": func(n int) []float64 { return fill(n, func(i int) float64 { return float64(-i) }) },
		"repeated": func(n int) []float64 { return fill(n, func(int) float64 { return float64(rng.IntN(3)) }) },
		"organ pipe": func(n int) []float64 {
			return fill(n, func(i int) float64 { return float64(min(i, n-i)) })
		},
		"NaN and Inf": func(n int) []float64 {
			return fill(n, func(int) float64 {
				switch rng.IntN(6) {
				case 0:
					return math.NaN()
				case 1:
					return -inf
				case 2:
					return inf
				}
				return rng.NormFloat64()
			})
		},
	}
	names := make([]string, 0, len(gen))
	for k := range gen {
		names = append(names, k)
	}
	slices.Sort(names)
	for _, name := range names {
		for _, n := range []int{1, 2, 3, 5, 12, 13, 100, 1001, 4096, 20000} {
			x := gen[name](n)
			want := slices.Clone(x)
			slices.Sort(want)
			for _, ks := range [][]int{{n / 2}, {0}, {n - 1}, {(n - 1) / 4, (n - 1) / 4, n / 2, 3 * (n - 1) / 4}, {max(0, n/2-1), n / 2}} {
				slices.Sort(ks) // ascending, as Select asks (n = 2 puts 3(n-1)/4 below n/2)
				got := slices.Clone(x)
				Select(got, ks...)
				for _, k := range ks {
					if !same(got[k], want[k]) {
						t.Fatalf("%s n=%d ks=%v: d[%d] = %g, sorted %g", name, n, ks, k, got[k], want[k])
					}
					for i, v := range got {
						if i < k && less(got[k], v) || i > k && less(v, got[k]) {
							t.Fatalf("%s n=%d ks=%v: d[%d] = %g on the wrong side of d[%d] = %g", name, n, ks, i, v, k, got[k])
						}
					}
				}
				s := slices.Clone(got)
				slices.Sort(s)
				if !slices.EqualFunc(s, want, same) {
					t.Fatalf("%s n=%d: selection lost or changed values", name, n)
				}
			}
		}
	}
}

func fill(n int, f func(int) float64) []float64 {
	x := make([]float64, n)
	for i := range x {
		x[i] = f(i)
	}
	return x
}

// same is equality with NaN equal to NaN.
func same(a, b float64) bool { return a == b || a != a && b != b }

// less is slices.Sort's order: NaN below everything.
func less(a, b float64) bool { return a < b || a != a && b == b }
