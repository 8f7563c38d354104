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

// TestDiverse: of rows nearly parallel, only the most violated is taken;
// rows at larger angles all are, most violated first (angles by hand:
// cos 0.9999 for (1, 0.01) against (1, 0), 0 for (0, 1)).
func TestDiverse(t *testing.T) {
	g := []float64{
		1, 0, // 0: violation 1
		1, 0.01, // 1: violation 3, parallel to 0 within cos 0.99995
		0, 1, // 2: violation 2
		-1, 1, // 3: violation 0.5, cos 0.707 with 1 and 2
		2, 0, // 4: violation 4, the same direction as 0
	}
	ev := &evaluator{n: 2, viol: []float64{1, 3, 2, 0.5, 4}}
	rows := DenseRows{G: g, H: make([]float64, 5)}
	for _, tc := range []struct {
		k    int
		want []int
	}{
		{5, []int{4, 2, 3}}, // 1 and 0 are parallel to 4
		{2, []int{4, 2}},
		{1, []int{4}},
	} {
		got := ev.diverse([]int{0, 1, 2, 3, 4}, tc.k, rows, 0.99)
		if !slices.Equal(got, tc.want) {
			t.Errorf("k=%d: got %v, want %v", tc.k, got, tc.want)
		}
	}
}
