package lp_test

import (
	"fmt"

	"github.com/basin-dev/basin/fit/lp"
)

// Chvátal's first example (Linear Programming, 1983, ch. 2): maximise
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
