package lp

import (
	"math/rand/v2"
	"slices"
	"testing"
)

// TestTop checks the linear-time selection of the most violated rows
// against a full sort (common practice: a reference by sorting).
func TestTop(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 0))
	for _, m := range []int{1, 2, 7, 100, 5000} {
		for _, levels := range []int{3, 1 << 30} { // many ties, or few
			ev := &evaluator{viol: make([]float64, m)}
			var cand []int
			for i := range ev.viol {
				ev.viol[i] = float64(rng.IntN(levels))
				if rng.IntN(4) > 0 {
					cand = append(cand, i)
				}
			}
			if len(cand) == 0 {
				continue
			}
			for _, k := range []int{1, len(cand) / 3, len(cand)} {
				if k == 0 {
					continue
				}
				want := slices.Clone(cand)
				slices.SortStableFunc(want, func(a, b int) int { // descending violation, then index
					switch {
					case ev.viol[a] > ev.viol[b]:
						return -1
					case ev.viol[a] < ev.viol[b]:
						return 1
					}
					return a - b
				})
				want = want[:k]
				slices.Sort(want)
				got := ev.top(slices.Clone(cand), k)
				if !slices.Equal(got, want) {
					t.Fatalf("m=%d levels=%d k=%d: top differs from sort", m, levels, k)
				}
			}
		}
	}
}
