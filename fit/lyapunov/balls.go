package lyapunov

import (
	"math"
	"sort"
)

// ballsSubsample caps the samples that centre a ball.
const ballsSubsample = 3000

// ballsTrust returns the membership test of the union of balls of radius
// rho around (a subsample of) the samples, rho twice the median distance
// from a sample to the nearest sample of another run (the typical gap
// between neighbouring runs), inside the samples' box.
func ballsTrust(all []float64, runs []zRun, n int) func([]float64) bool {
	ns := len(all) / n
	stride := max(1, ns/ballsSubsample)
	var cz []float64
	var run []int
	lo, hi := make([]float64, n), make([]float64, n)
	for j := range lo {
		lo[j], hi[j] = math.Inf(1), math.Inf(-1)
	}
	idx := 0
	for ri := range runs {
		zs := runs[ri].z
		for k := 0; k+n <= len(zs); k += n {
			for j := 0; j < n; j++ {
				lo[j], hi[j] = math.Min(lo[j], zs[k+j]), math.Max(hi[j], zs[k+j])
			}
			if idx%stride == 0 {
				cz = append(cz, zs[k:k+n]...)
				run = append(run, ri)
			}
			idx++
		}
	}
	m := len(run)
	var gaps []float64
	for i := 0; i < m; i += max(1, m/300) {
		best := math.Inf(1)
		for k := 0; k < m; k++ {
			if run[k] == run[i] {
				continue
			}
			d := 0.0
			for j := 0; j < n; j++ {
				e := cz[i*n+j] - cz[k*n+j]
				d += e * e
			}
			best = math.Min(best, d)
		}
		if !math.IsInf(best, 1) {
			gaps = append(gaps, math.Sqrt(best))
		}
	}
	rho := 0.1
	if len(gaps) > 0 {
		sort.Float64s(gaps)
		rho = 2 * gaps[len(gaps)/2]
	}
	r2 := rho * rho
	return func(z []float64) bool {
		for j, v := range z {
			if v < lo[j] || v > hi[j] {
				return false
			}
		}
		for k := 0; k < m; k++ {
			d := 0.0
			for j := 0; j < n; j++ {
				e := z[j] - cz[k*n+j]
				d += e * e
				if d > r2 {
					break
				}
			}
			if d <= r2 {
				return true
			}
		}
		return false
	}
}
