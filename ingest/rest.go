package ingest

import (
	"math"
	"slices"
)

// RestLink is how close two runs' settle points must be, per state, as a
// share of the state's span over every run, to be one rest point: the
// same tenth as SettleSpread, so that two settle points closer than the
// spread a settled tail may keep are not told apart, while wells that the
// runs travel between are.
const RestLink = 0.1

// A RestPoint is a cluster of the points runs settle on (see
// [RunSummary.Settled]): an equilibrium the data show runs coming to rest
// at.
type RestPoint struct {
	// Point is, per state, the median of the members' settle points.
	Point []float64
	// Runs counts the runs that settle there; RunNames lists them in
	// input order.
	Runs     int
	RunNames []string
}

// RestPoints clusters the settle points of the runs of ds that settle:
// two points are linked when every state differs by at most RestLink of
// its span over all runs, and a rest point is a set of linked points
// (single linkage). They are returned with the most runs first (ties in
// order of first appearance); nil when no run settles.
func RestPoints(ds *Dataset) []RestPoint {
	ns := len(ds.States)
	lo, hi := fill(ns, math.Inf(1)), fill(ns, math.Inf(-1))
	var names []string
	var pts [][]float64
	mn, mx := make([]float64, ns), make([]float64, ns)
	for i := range ds.Runs {
		r := &ds.Runs[i]
		if r.Len() == 0 {
			continue
		}
		for j := range ns {
			mn[j], mx[j] = minMax(r.X[j])
			lo[j], hi[j] = min(lo[j], mn[j]), max(hi[j], mx[j])
		}
		if ok, pt := settle(r, mn, mx); ok {
			names = append(names, r.Name)
			pts = append(pts, pt)
		}
	}
	span := make([]float64, ns)
	for j := range ns {
		span[j] = hi[j] - lo[j]
	}
	return clusterRest(names, pts, span)
}

// clusterRest groups settle points by single linkage (see [RestPoints]).
func clusterRest(names []string, pts [][]float64, span []float64) []RestPoint {
	n := len(pts)
	if n == 0 {
		return nil
	}
	// union-find over the points; n is the number of runs, so the n^2
	// comparisons are cheap next to reading the runs
	parent := make([]int, n)
	for i := range parent {
		parent[i] = i
	}
	var find func(int) int
	find = func(i int) int {
		for parent[i] != i {
			parent[i] = parent[parent[i]]
			i = parent[i]
		}
		return i
	}
	near := func(a, b []float64) bool {
		for j := range a {
			if math.Abs(a[j]-b[j]) > RestLink*span[j] {
				return false
			}
		}
		return true
	}
	for a := range n {
		for b := a + 1; b < n; b++ {
			if near(pts[a], pts[b]) {
				ra, rb := find(a), find(b)
				if ra != rb {
					parent[max(ra, rb)] = min(ra, rb) // the root is the first member
				}
			}
		}
	}
	byRoot := map[int]int{}
	var out []RestPoint
	var members [][]int
	for i := range n {
		r := find(i)
		k, ok := byRoot[r]
		if !ok {
			k = len(out)
			byRoot[r] = k
			out = append(out, RestPoint{})
			members = append(members, nil)
		}
		out[k].Runs++
		out[k].RunNames = append(out[k].RunNames, names[i])
		members[k] = append(members[k], i)
	}
	ns := len(span)
	v := make([]float64, 0, n)
	for k := range out {
		out[k].Point = make([]float64, ns)
		for j := range ns {
			v = v[:0]
			for _, i := range members[k] {
				v = append(v, pts[i][j])
			}
			out[k].Point[j] = median(v)
		}
	}
	// stable: ties keep the order of first appearance
	slices.SortStableFunc(out, func(a, b RestPoint) int { return b.Runs - a.Runs })
	return out
}
