package validate_test

import (
	"fmt"

	"github.com/basin-dev/basin/validate"
)

// With 1000 decorrelated samples and the 6 decision variables of a
// quadratic V in 3 states, a new sample violates the decrease condition
// with probability at most 2.5%, with confidence 1 - 1e-6.
func ExampleViolationBound() {
	eps := validate.ViolationBound(1000, 6, 1e-6)
	fmt.Printf("%.4f\n", eps)
	// Output: 0.0252
}
