package validate

import (
	"math"
	"sort"

	"basin.example/ingest"
)

// ScenarioTail returns the exact binomial tail of the scenario approach,
//
//	sum_{i<d} C(n,i) eps^i (1-eps)^(n-i),
//
// the probability that n independent samples leave a d-variable convex
// program's solution with violation probability above eps (Campi &
// Garatti, SIAM J. Optim. 19(3), 2008). It is computed in logarithms, so n
// may be large. It panics if n < 0, d < 0 or eps is outside [0, 1].
func ScenarioTail(n, d int, eps float64) float64 {
	if n < 0 || d < 0 || !(eps >= 0 && eps <= 1) {
		panic("validate: ScenarioTail: bad argument")
	}
	if d == 0 {
		return 0
	}
	if d > n {
		return 1
	}
	switch eps {
	case 0:
		return 1
	case 1:
		return 0
	}
	le, l1e := math.Log(eps), math.Log1p(-eps)
	lgn, _ := math.Lgamma(float64(n + 1))
	terms := make([]float64, 0, d)
	top := math.Inf(-1)
	for i := 0; i < d; i++ {
		a, _ := math.Lgamma(float64(i + 1))
		b, _ := math.Lgamma(float64(n - i + 1))
		l := lgn - a - b + float64(i)*le + float64(n-i)*l1e
		terms = append(terms, l)
		top = max(top, l)
	}
	s := 0.0
	for _, l := range terms {
		s += math.Exp(l - top)
	}
	return math.Min(1, math.Exp(top)*s)
}

// ViolationBound returns the smallest eps with ScenarioTail(n, d, eps) <=
// beta: with confidence 1 - beta, a new sample violates the condition
// with probability at most eps. It returns 1 when n < d (no bound) and
// panics if beta is outside (0, 1) or n, d < 0. The tail falls with eps,
// so bisection to 1e-12 finds it.
func ViolationBound(n, d int, beta float64) float64 {
	if !(beta > 0 && beta < 1) || n < 0 || d < 0 {
		panic("validate: ViolationBound: bad argument")
	}
	if d == 0 {
		return 0
	}
	if n < d {
		return 1
	}
	lo, hi := 0.0, 1.0
	for hi-lo > 1e-12 {
		mid := (lo + hi) / 2
		if ScenarioTail(n, d, mid) <= beta {
			hi = mid
		} else {
			lo = mid
		}
	}
	return hi
}

// MinSamples returns the smallest n with ScenarioTail(n, d, eps) <= beta.
// It panics unless 0 < eps < 1, 0 < beta < 1 and d >= 1.
func MinSamples(eps, beta float64, d int) int {
	if !(eps > 0 && eps < 1) || !(beta > 0 && beta < 1) || d < 1 {
		panic("validate: MinSamples: bad argument")
	}
	hi := SufficientSamples(eps, beta, d)
	lo := d - 1 // tail is 1 > beta here
	for hi-lo > 1 {
		mid := (lo + hi) / 2
		if ScenarioTail(mid, d, eps) <= beta {
			hi = mid
		} else {
			lo = mid
		}
	}
	return hi
}

// SufficientSamples returns ceil((2/eps)(ln(1/beta) + d)), the simple
// sufficient sample size of the scenario approach; it is never below
// MinSamples.
func SufficientSamples(eps, beta float64, d int) int {
	return int(math.Ceil(2 / eps * (math.Log(1/beta) + float64(d))))
}

// Decorrelation estimates the decorrelation time of the runs, in
// seconds: per run and state, the smallest lag at which the sample
// autocorrelation of the state (mean removed) falls below 1/e, found by
// doubling the lag and then bisecting; the largest over states, times
// the run's median step; then the median over runs. A run whose
// autocorrelation never falls below 1/e counts its whole duration. Runs
// with fewer than 4 samples are skipped; with none left it returns 0.
func Decorrelation(runs []ingest.Run) float64 {
	var taus []float64
	for r := range runs {
		run := &runs[r]
		m := run.Len()
		if m < 4 {
			continue
		}
		dt := (run.T[m-1] - run.T[0]) / float64(m-1) // mean step
		worst := 0
		for _, x := range run.X {
			worst = max(worst, acfLag(x))
		}
		taus = append(taus, float64(worst)*dt)
	}
	if len(taus) == 0 {
		return 0
	}
	sort.Float64s(taus)
	k := len(taus)
	if k%2 == 1 {
		return taus[k/2]
	}
	return (taus[k/2-1] + taus[k/2]) / 2
}

// acfLag returns the smallest lag (searched by doubling then bisection)
// where the autocorrelation of x falls below 1/e; len(x) when it never
// does, 1 for a constant x.
func acfLag(x []float64) int {
	m := len(x)
	mean := 0.0
	for _, v := range x {
		mean += v
	}
	mean /= float64(m)
	c0 := 0.0
	for _, v := range x {
		c0 += (v - mean) * (v - mean)
	}
	if c0 == 0 {
		return 1
	}
	acf := func(l int) float64 {
		s := 0.0
		for i := 0; i+l < m; i++ {
			s += (x[i] - mean) * (x[i+l] - mean)
		}
		return s / c0
	}
	const thr = 1 / math.E
	lo, hi := 0, 1
	for acf(hi) >= thr {
		lo = hi
		hi *= 2
		if hi >= m {
			if acf(m-1) >= thr {
				return m
			}
			hi = m - 1
			break
		}
	}
	for hi-lo > 1 {
		mid := (lo + hi) / 2
		if acf(mid) < thr {
			hi = mid
		} else {
			lo = mid
		}
	}
	return hi
}
