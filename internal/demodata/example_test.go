package demodata_test

import (
	"fmt"

	"basin.example/internal/demodata"
)

func ExampleGenerate() {
	runs, err := demodata.Generate(1, nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	t := demodata.NewTruth(1, nil, runs)
	fmt.Printf("%d runs, saddles at ±%.3f rad, leaving: %v\n", len(runs), t.Params.SaddleOffset(), t.Leaving)
	// Output:
	// 40 runs, saddles at ±0.346 rad, leaving: [run-08.csv run-09.csv run-22.csv run-25.csv run-37.csv]
}
