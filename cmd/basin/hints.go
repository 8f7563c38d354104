package main

import (
	"errors"
	"fmt"
	"math"

	"basin.example/fit"
	"basin.example/ingest"
)

// levelsHint adds to a collinear-library error the column that takes the
// fewest distinct values when they are no more than degree: the powers of
// a column with k values up to k-1 span every higher power on the data,
// so the library is singular whatever else is recorded (an input held at
// a few setpoints, a state that only switches). Other errors, and
// collinear ones with no such column, are returned as they are.
func levelsHint(err error, ds *ingest.Dataset, degree int) error {
	if err == nil || ds == nil || degree < 1 || !errors.Is(err, fit.ErrCollinear) {
		return err
	}
	kind, name, fewest := "", "", degree+1
	count := func(col func(r *ingest.Run) []float64) int {
		seen := make(map[float64]bool, fewest)
		for i := range ds.Runs {
			for _, v := range col(&ds.Runs[i]) {
				if !math.IsNaN(v) && !seen[v] {
					seen[v] = true
					if len(seen) >= fewest {
						return len(seen)
					}
				}
			}
		}
		return len(seen)
	}
	for j, c := range ds.States {
		if k := count(func(r *ingest.Run) []float64 { return r.X[j] }); k < fewest {
			kind, name, fewest = "state", c.Name, k
		}
	}
	for j, c := range ds.Inputs {
		if k := count(func(r *ingest.Run) []float64 {
			if j < len(r.U) {
				return r.U[j]
			}
			return nil
		}); k < fewest {
			kind, name, fewest = "input", c.Name, k
		}
	}
	if name == "" || fewest < 2 {
		return err // a constant column has its own error
	}
	return fmt.Errorf("%w; %s %q takes only %d distinct values, so its powers above %d repeat the lower ones: give --degree %d or less, or record more levels of it",
		err, kind, printable(name), fewest, fewest-1, fewest-1)
}
