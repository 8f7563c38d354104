package order_test

import (
	"fmt"
	"math"

	"basin.example/internal/order"
)

func Example() {
	x := []float64{4, math.NaN(), 1, 3, 2}
	s := order.Sorted(make([]float64, 0, len(x)), x) // NaN left out, sorted
	fmt.Println(s)
	fmt.Println(order.Median(s), order.HighMedian(s), order.Quantile(s, 0.9))
	// Output:
	// [1 2 3 4]
	// 2.5 3 3.7
}
