package fit

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"basin.example/internal/order"
)

// TestMedianSelect: medianSelect gives, bit for bit, the median of the
// sorted values as order.Median defines it, the sort being the standard
// library's slices.Sort ([slices], an independent general-purpose sort;
// NaN first as it orders them), on random, constant, repeated and NaN-
// and Inf-holding samples of odd and even sizes.
func TestMedianSelect(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 0))
	inf := math.Inf(1)
	gen := []struct {
		name string
		f    func(i, n int) float64
	}{
		{"normal", func(int, int) float64 { return rng.NormFloat64() }},
		{"constant", func(int, int) float64 { return 2.5 }},
		{"reversed", func(i, _ int) float64 { return float64(-i) }},
		{"repeated", func(int, int) float64 { return float64(rng.IntN(3)) }},
		{"NaN and Inf", func(int, int) float64 {
			switch rng.IntN(6) {
			case 0:
				return math.NaN()
			case 1:
				return -inf
			case 2:
				return inf
			}
			return rng.NormFloat64()
		}},
		{"mostly NaN", func(int, int) float64 {
			if rng.IntN(3) > 0 {
				return math.NaN()
			}
			return rng.NormFloat64()
		}},
	}
	for _, g := range gen {
		for _, n := range []int{1, 2, 3, 5, 12, 13, 100, 1001, 4096, 20000} {
			x := make([]float64, n)
			for i := range x {
				x[i] = g.f(i, n)
			}
			s := slices.Clone(x)
			slices.Sort(s)
			// order.Median returns NaN for any NaN; the sorted middle
			// values are what the noise estimate has always taken.
			want := s[n/2]
			if n%2 == 0 {
				want = (s[n/2-1] + s[n/2]) / 2
			}
			if mid := s[(n-1)/2 : n/2+1]; !math.IsNaN(mid[0]) && order.Median(mid) != want {
				t.Fatalf("order.Median of the middle disagrees")
			}
			if got := medianSelect(slices.Clone(x)); math.Float64bits(got) != math.Float64bits(want) && !(got != got && want != want) {
				t.Fatalf("%s n=%d: median %v, sorted %v", g.name, n, got, want)
			}
		}
	}
}

func BenchmarkMedian(b *testing.B) {
	rng := rand.New(rand.NewPCG(9, 0))
	x := make([]float64, 200000)
	for i := range x {
		x[i] = math.Abs(rng.NormFloat64())
	}
	d := make([]float64, len(x))
	b.Run("sort", func(b *testing.B) {
		for b.Loop() {
			copy(d, x)
			slices.Sort(d)
			_ = order.Median(d)
		}
	})
	b.Run("select", func(b *testing.B) {
		for b.Loop() {
			copy(d, x)
			medianSelect(d)
		}
	})
}
