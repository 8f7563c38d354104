package lp_test

import (
	"fmt"
	"math"

	"basin.example/fit/lp"
)

// Chvátal's first example ([Chvatal1983] ch. 2): maximise
// 5x1 + 4x2 + 3x3 subject to three rows and x >= 0. The optimum is 13 at
// (2, 0, 1), with dual (1, 0, 1).
func ExampleSolve() {
	p := &lp.Problem{
		C: []float64{-5, -4, -3}, // minimise the negative
		G: []float64{
			2, 3, 1,
			4, 1, 2,
			3, 4, 2,
		},
		H:     []float64{5, 11, 8},
		Lower: []float64{0, 0, 0},
	}
	r, err := lp.Solve(p, nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("%v: z = %.6f at x = %.6f, dual %.6f\n", r.Status, -r.Objective, r.X, r.Z)
	// Output:
	// optimal: z = 13.000000 at x = [2.000000 0.000000 1.000000], dual [1.000000 0.000000 1.000000]
}

// A regular polygon of 10,000 sides around the unit circle, one row per
// side, read on demand: SolveCuts keeps only a fraction of the rows.
func ExampleSolveCuts() {
	const n = 10000
	g := make([]float64, 2*n)
	h := make([]float64, n)
	for i := range h {
		th := 2 * math.Pi * float64(i) / n
		g[2*i], g[2*i+1], h[i] = math.Cos(th), math.Sin(th), 1
	}
	// Maximise x + y: on the circle it would be sqrt(2); the polygon's
	// facet at 45 degrees (i = 1250) touches the circle there.
	r, err := lp.SolveCuts([]float64{-1, -1}, lp.DenseRows{G: g, H: h}, nil, nil, nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("%v: x + y = %.6f, fewer than half the rows active: %v\n", r.Status, -r.Objective, len(r.Active) < n/2)
	// Output:
	// optimal: x + y = 1.414214, fewer than half the rows active: true
}
