package fit

import (
	"context"
	"encoding/json"
	"math/rand/v2"
	"testing"

	"basin.example/ingest"
)

// TestDerivativeCacheSame: fits on overlapping subsets of one data set
// (as validate's folds are) give the same model, bit for bit (compared
// as JSON, every float64 to its shortest round-tripping decimal), with a
// shared DerivativeCache as without one, for every derivative method, on
// an even clock and on a jittered one (Savitzky–Golay's two paths); and
// the cache is hit. A property of the implementation (the cache returns
// the numbers the run's own differentiation gives), not of a source.
func TestDerivativeCacheSame(t *testing.T) {
	starts := [][]float64{{1, 0}, {0, 2}, {-2, 1}, {0.5, -0.5}, {3, 0}, {-1, -2}}
	even := simulate(vanderpol, starts, 12, 0.01, 5, 0.01, 4)
	jittered := simulate(vanderpol, starts, 12, 0.01, 5, 0.01, 4)
	rng := rand.New(rand.NewPCG(9, 0))
	for r := range jittered.Runs {
		t0 := jittered.Runs[r].T
		tj := make([]float64, len(t0))
		for i := range t0 {
			tj[i] = t0[i] + 1e-4*(rng.Float64()-0.5) // 1% of the 10 ms step: still in time order
		}
		jittered.Runs[r].T = tj
	}
	subsets := func(ds *ingest.Dataset) []*ingest.Dataset {
		var out []*ingest.Dataset
		for leave := 0; leave < 3; leave++ {
			sub := &ingest.Dataset{States: ds.States, Time: ds.Time}
			for i := range ds.Runs {
				if i%3 != leave {
					sub.Runs = append(sub.Runs, ds.Runs[i])
				}
			}
			out = append(out, sub)
		}
		return out
	}
	for _, clock := range []struct {
		name string
		ds   *ingest.Dataset
	}{{"even", even}, {"jittered", jittered}} {
		for _, method := range []string{DerivAuto, DerivFornberg, DerivSavitzkyGolay, DerivIntegral} {
			t.Run(clock.name+"/"+method, func(t *testing.T) {
				cache := &DerivativeCache{}
				for k, sub := range subsets(clock.ds) {
					var got [2]string
					for i, c := range []*DerivativeCache{nil, cache} {
						m, err := Field(context.Background(), sub, &FieldOptions{Derivative: method, Bootstrap: -1, Derivatives: c})
						if err != nil {
							t.Fatal(err)
						}
						b, err := json.Marshal(m)
						if err != nil {
							t.Fatal(err)
						}
						got[i] = string(b)
					}
					if got[0] != got[1] {
						t.Errorf("subset %d: the fit with the cache differs:\n%s\n%s", k, got[0], got[1])
					}
				}
				if method != DerivIntegral && cache.hits == 0 {
					t.Errorf("the cache was never hit (%d runs kept)", len(cache.runs))
				}
				if method == DerivIntegral && len(cache.runs) != 0 {
					t.Errorf("%d runs cached for the integral method, which does not differentiate", len(cache.runs))
				}
			})
		}
	}
}
