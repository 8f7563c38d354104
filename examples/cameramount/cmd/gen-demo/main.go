// Command gen-demo writes basin's demo data set (the invented camera mount
// of package cameramount) into a directory: one CSV file a run and
// truth.json saying which runs leave the basin.
//
// Usage:
//
//	go run ./examples/cameramount/cmd/gen-demo [-seed N] [-out DIR] [-parquet]
package main

import (
	"context"
	"flag"
	"fmt"
	"os"

	"basin.example/examples/cameramount"
)

func main() {
	out := flag.String("out", "basin-demo/data", "write the data set to `DIR`")
	seed := flag.Uint64("seed", 1, "random seed `N`")
	pq := flag.Bool("parquet", false, "write Parquet files instead of CSV")
	flag.Parse()
	if flag.NArg() > 0 {
		fmt.Fprintln(os.Stderr, "gen-demo: unexpected arguments; usage: gen-demo [-seed N] [-out DIR] [-parquet] [-parquet]")
		os.Exit(2)
	}
	write := cameramount.WriteDir
	if *pq {
		write = cameramount.WriteParquetDir
	}
	t, err := write(context.Background(), *out, *seed, nil)
	if err != nil {
		fmt.Fprintln(os.Stderr, "gen-demo:", err)
		os.Exit(1)
	}
	fmt.Printf("wrote %d runs to %s (%d leave the basin: %v)\n", len(t.Runs), *out, len(t.Leaving), t.Leaving)
}
