package ingest_test

import (
	"fmt"
	"strings"

	"basin.example/ingest"
)

func ExampleReadCSV() {
	log := `# gimbal bench, 200 Hz
time [s];pitch [rad];rate (rad/s)
0.000;0.10;0.0
0.005;0.09;-1.9
0.010;;-1.8
0.015;0.07;-1.7
0.020;0.06;-1.6
`
	ds, err := ingest.ReadCSV(strings.NewReader(log), "bench.csv", nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println("states:", ds.States)
	for _, r := range ds.Runs {
		fmt.Printf("%s from line %d: t=%v pitch=%v\n", r.Name, r.Source.Line, r.T, r.X[0])
	}
	fmt.Println("gaps:", ds.Gaps, "missing:", ds.Missing)
	// Output:
	// states: [{pitch rad} {rate rad/s}]
	// bench.csv from line 3: t=[0 0.005] pitch=[0.1 0.09]
	// bench.csv~1 from line 6: t=[0.015 0.02] pitch=[0.07 0.06]
	// gaps: 1 missing: 1
}

func ExampleReadCSV_error() {
	_, err := ingest.ReadCSV(strings.NewReader("t,theta\n0,0.1\n0.005,0.1.2\n"), "run7.csv", nil)
	fmt.Println(err)
	// Output:
	// run7.csv:3:2: column "theta": not a number "0.1.2"
}

func ExampleSummarise() {
	ds, _ := ingest.ReadCSV(strings.NewReader("t,x\n0,4\n1,2\n2,1\n3,0.5\n"), "decay.csv", nil)
	s := ingest.Summarise(ds)
	fmt.Printf("%d samples, %.3g Hz, x in [%g, %g]\n", s.Total.Samples, s.Total.RateHz, s.States[0].Min, s.States[0].Max)
	// Output:
	// 4 samples, 1 Hz, x in [0.5, 4]
}
