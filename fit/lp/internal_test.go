package lp

import (
	"errors"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/floats/scalar"
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

// TestDualWarmStart: after the pool's optimum, one added cut costs a
// pivot or two from the previous basis, and the warm answer is the cold
// one. The polygon of 64 sides around the unit circle, max x1 on
// [-2, 2]²: with the sides at angles k·2pi/64 the optimum is x1 = 1 at the
// side k = 0 (elementary geometry).
func TestDualWarmStart(t *testing.T) {
	const N = 64
	row := func(k int) ([]float64, float64) {
		th := 2 * math.Pi * float64(k) / N
		return []float64{math.Cos(th), math.Sin(th)}, 1
	}
	c := []float64{-1, 0}
	lo, up := []float64{-2, -2}, []float64{2, 2}
	warm, err := newDual(c, lo, up, N)
	if err != nil {
		t.Fatal(err)
	}
	for _, k := range []int{8, 56} { // 45 degrees either side: the vertex (1, ±0.414) is not the optimum
		g, h := row(k)
		warm.addRow(g, h, k)
	}
	warm.start()
	if st := warm.run(1000); st != Optimal {
		t.Fatalf("first pool: %v", st)
	}
	for _, k := range []int{0, 1, 63} {
		g, h := row(k)
		warm.addRow(g, h, k)
		before := warm.iters
		if st := warm.run(1000); st != Optimal {
			t.Fatalf("after row %d: %v", k, st)
		}
		if p := warm.iters - before; p > 2 || (k == 0 && p == 0) { // row 0 cuts the old vertex off
			t.Errorf("row %d cost %d pivots from the warm basis", k, p)
		}
	}
	cold, _ := newDual(c, lo, up, N)
	for _, k := range []int{8, 56, 0, 1, 63} {
		g, h := row(k)
		cold.addRow(g, h, k)
	}
	cold.start()
	if st := cold.run(1000); st != Optimal {
		t.Fatalf("cold: %v", st)
	}
	if !floats.EqualApprox(warm.x, cold.x, 1e-14) || !scalar.EqualWithinAbs(warm.x[0], 1, 1e-14) {
		t.Errorf("warm x = %v, cold x = %v, want x1 = 1", warm.x, cold.x)
	}
}

// TestSolveCutsFallback: when the dual simplex gives up (here: a pivot
// limit of one), Auto answers with the interior point, at the optimum
// the dual simplex finds with its normal limit, and DualSimplex alone
// reports the limit as an error.
func TestSolveCutsFallback(t *testing.T) {
	g := []float64{2, 3, 1, 4, 1, 2, 3, 4, 2} // [Chvatal1983] ch. 2, first example
	h := []float64{5, 11, 8}
	c := []float64{-5, -4, -3}
	lo := []float64{0, 0, 0}
	want, err := SolveCuts(c, DenseRows{G: g, H: h}, lo, nil, nil)
	if err != nil || want.Method != DualSimplex {
		t.Fatalf("normal limit: %v by %v", err, want.Method)
	}
	saved := dualMaxPivots
	dualMaxPivots = func(int, int) int { return 1 }
	defer func() { dualMaxPivots = saved }()
	r, err := SolveCuts(c, DenseRows{G: g, H: h}, lo, nil, nil)
	if err != nil || r.Method != InteriorPoint {
		t.Fatalf("fallback: %v by %v", err, r.Method)
	}
	// The interior point works to 1e-8 relative by default.
	if !scalar.EqualWithinAbsOrRel(r.Objective, want.Objective, 1e-7, 1e-7) || !scalar.EqualWithinAbs(want.Objective, -13, 1e-12) {
		t.Errorf("interior point %.12g, dual simplex %.12g, want -13", r.Objective, want.Objective)
	}
	if _, err := SolveCuts(c, DenseRows{G: g, H: h}, lo, nil, &CutOptions{Method: DualSimplex}); !errors.Is(err, ErrIterations) {
		t.Errorf("dual simplex alone: got %v, want ErrIterations", err)
	}
}
