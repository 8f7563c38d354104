package ingest

import (
	"fmt"
	"hash/fnv"
	"math"
)

// CollapseCopies removes from ds every run whose samples are a copy of an
// earlier run's (the same states and inputs, bit for bit, at the same times from the
// run's start, whatever its name or file): copies are not
// independent evidence, and counted twice they would shrink every bound
// computed over runs. It returns one line per run removed, naming the run
// it copies, in input order.
func CollapseCopies(ds *Dataset) []string {
	var notes []string
	first := map[uint64][]int{} // content hash -> indices of kept runs
	kept := ds.Runs[:0:0]
	for i := range ds.Runs {
		r := &ds.Runs[i]
		h := runHash(r)
		copyOf := -1
		for _, k := range first[h] {
			if sameSamples(&kept[k], r) {
				copyOf = k
				break
			}
		}
		if copyOf >= 0 {
			notes = append(notes, fmt.Sprintf("run %s (%s) is a copy of run %s (%s): counted once",
				r.Name, r.Source.File, kept[copyOf].Name, kept[copyOf].Source.File))
			continue
		}
		first[h] = append(first[h], len(kept))
		kept = append(kept, *r)
	}
	ds.Runs = kept
	return notes
}

func runHash(r *Run) uint64 {
	h := fnv.New64a()
	var b [8]byte
	put := func(v float64) {
		u := math.Float64bits(v)
		for i := range b {
			b[i] = byte(u >> (8 * i))
		}
		h.Write(b[:])
	}
	put(float64(len(r.T)))
	for _, col := range r.X {
		for _, v := range col {
			put(v)
		}
	}
	for _, col := range r.U {
		for _, v := range col {
			put(v)
		}
	}
	return h.Sum64()
}

func sameSamples(a, b *Run) bool {
	if len(a.T) != len(b.T) || len(a.X) != len(b.X) || len(a.U) != len(b.U) {
		return false
	}
	for i := range a.T {
		// Times from each run's start, equal up to the rounding of the
		// subtraction (a copy whose clock was shifted).
		da, db := a.T[i]-a.T[0], b.T[i]-b.T[0]
		if math.Abs(da-db) > 1e-9*math.Max(1, math.Max(math.Abs(a.T[i]), math.Abs(b.T[i]))) {
			return false
		}
	}
	eq := func(x, y [][]float64) bool {
		for j := range x {
			if len(x[j]) != len(y[j]) {
				return false
			}
			for i := range x[j] {
				if x[j][i] != y[j][i] {
					return false
				}
			}
		}
		return true
	}
	return eq(a.X, b.X) && eq(a.U, b.U)
}
