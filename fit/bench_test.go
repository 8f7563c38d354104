package fit

import (
	"context"
	"math/rand/v2"
	"runtime"
	"sync"
	"testing"
	"time"

	"basin.example/fit/poly"
	"basin.example/ingest"
	"gonum.org/v1/gonum/mat"
)

// chain3 is three coupled, damped, hardening oscillators (6 states).
var chain3 = system{
	name:   "chain3",
	states: []string{"q1", "p1", "q2", "p2", "q3", "p3"},
	f: func(d, x []float64) {
		k := [3]float64{1, 1.5, 2}
		for i := 0; i < 3; i++ {
			q, p := x[2*i], x[2*i+1]
			next := x[(2*i+2)%6]
			d[2*i] = p
			d[2*i+1] = -k[i]*q - 0.3*p - 0.5*q*q*q + 0.2*(next-q)
		}
	},
}

var (
	benchOnce sync.Once
	benchDS   *ingest.Dataset
)

// benchData: 100 runs x 10,000 samples (100 s at 100 Hz) = 1,000,000
// samples of 6 states, 0.5% noise.
func benchData() *ingest.Dataset {
	benchOnce.Do(func() {
		rng := rand.New(rand.NewPCG(8, 0))
		var starts [][]float64
		for range 100 {
			x := make([]float64, 6)
			for j := range x {
				x[j] = 3*rng.Float64() - 1.5
			}
			starts = append(starts, x)
		}
		benchDS = simulate(chain3, starts, 99.99, 0.01, 1, 0.005, 9)
	})
	return benchDS
}

// oneSolve is the reference: one least-squares solve of the full library
// on every sample with given targets — library evaluation, normal
// equations by the same blocked syrk on both cores, and a Cholesky solve.
// Its targets (the exact field at the samples) are computed before timing.
func oneSolve(ds *ingest.Dataset, lib *poly.Library, targets [][][]float64) []float64 {
	n, p := len(ds.States), lib.Len()
	sums := make([]*groupSums, runtime.GOMAXPROCS(0))
	var wg sync.WaitGroup
	for w := range sums {
		sums[w] = newGroupSums(p, n)
		wg.Add(1)
		go func(w int) {
			defer wg.Done()
			rb := newRowBuffer(p, n)
			work := make([]float64, lib.WorkLen())
			z := make([]float64, n)
			for r := w; r < len(ds.Runs); r += len(sums) {
				run := &ds.Runs[r]
				for i := range run.T {
					phi, y := rb.row(sums[w])
					for j := 0; j < n; j++ {
						z[j] = run.X[j][i]
						y[j] = targets[r][j][i]
					}
					lib.EvalWorkTo(phi, work, z)
				}
			}
			rb.flush()
		}(w)
	}
	wg.Wait()
	tot := newGroupSums(p, n)
	for _, s := range sums {
		addSums(tot, s, 1)
	}
	tot.finish(p)
	var ch mat.Cholesky
	ch.Factorize(mat.NewSymDense(p, tot.G))
	var x mat.Dense
	ch.SolveTo(&x, mat.NewDense(p, n, tot.B))
	return x.RawMatrix().Data
}

// BenchmarkFit: the whole fit (Savitzky–Golay derivatives, normal
// equations, 5-fold CV over a 14x3 grid, 100 bootstrap refits, equilibria)
// on 1,000,000 samples of 6 states with the degree-3 library (84 terms),
// against one least-squares solve of the same library in the same run.
func BenchmarkFit(b *testing.B) {
	ds := benchData()
	lib := poly.NewLibrary(6, 0, 3)
	targets := make([][][]float64, len(ds.Runs))
	d := make([]float64, 6)
	x := make([]float64, 6)
	for r := range ds.Runs {
		run := &ds.Runs[r]
		targets[r] = make([][]float64, 6)
		for j := range targets[r] {
			targets[r][j] = make([]float64, run.Len())
		}
		for i := range run.T {
			for j := range x {
				x[j] = run.X[j][i]
			}
			chain3.f(d, x)
			for j := range d {
				targets[r][j][i] = d[j]
			}
		}
	}
	samples := ds.Samples()
	b.SetBytes(int64(samples * 7 * 8))
	b.ReportAllocs()
	var whole, one time.Duration
	var m *Model
	for b.Loop() {
		t0 := time.Now()
		var err error
		m, err = Field(context.Background(), ds, nil)
		if err != nil {
			b.Fatal(err)
		}
		t1 := time.Now()
		oneSolve(ds, lib, targets)
		whole += t1.Sub(t0)
		one += time.Since(t1)
	}
	b.ReportMetric(float64(samples)*float64(b.N)/whole.Seconds(), "samples/s")
	b.ReportMetric(whole.Seconds()/float64(b.N), "fit-s")
	b.ReportMetric(one.Seconds()/float64(b.N), "solve-s")
	b.ReportMetric(whole.Seconds()/one.Seconds(), "fit/solve")
	terms := 0
	for _, e := range m.Equations {
		terms += len(e.Coefficients)
	}
	b.ReportMetric(float64(terms), "terms")
}

// BenchmarkFieldDemo: the demo's size, 40 runs x 2,000 samples x 2 states.
func BenchmarkFieldDemo(b *testing.B) {
	rng := rand.New(rand.NewPCG(2, 0))
	var starts [][]float64
	for range 40 {
		starts = append(starts, []float64{2*rng.Float64() - 1, 2*rng.Float64() - 1})
	}
	ds := simulate(duffing, starts, 19.99, 0.01, 1, 0.005, 3)
	b.SetBytes(int64(ds.Samples() * 3 * 8))
	for b.Loop() {
		if _, err := Field(context.Background(), ds, nil); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(ds.Samples())*float64(b.N)/b.Elapsed().Seconds(), "samples/s")
}
