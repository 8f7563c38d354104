package lp_test

import (
	"fmt"
	"math"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"

	"basin.example/fit/lp"
	"basin.example/fit/lp/internal/certlp"
)

// TestCertLPCutsMatchWhole solves a small certificate LP both whole and by
// cutting planes: the optima must agree (the whole LP is the reference).
func TestCertLPCutsMatchWhole(t *testing.T) {
	for _, tc := range []struct {
		n, d, samples int
		box           float64
		f             func(dst, x []float64)
	}{
		{2, 2, 2000, 2, certlp.Duffing2},
		{2, 4, 2000, 2, certlp.Duffing2},
		{3, 4, 1000, 1, certlp.Poly3},
	} {
		t.Run(fmt.Sprintf("n%d_d%d", tc.n, tc.d), func(t *testing.T) {
			c := certlp.New(tc.n, tc.d, tc.samples, tc.box, tc.f, 1)
			obj, lo, up := c.Bounds()
			m, w := c.Len(), c.Unknowns()
			p := &lp.Problem{C: obj, G: make([]float64, m*w), H: make([]float64, m), Lower: lo, Upper: up}
			for i := 0; i < m; i++ {
				p.H[i] = c.RowTo(p.G[i*w:(i+1)*w], i)
			}
			whole, err := lp.Solve(p, nil)
			if err != nil {
				t.Fatal(err)
			}
			r, err := lp.SolveCuts(obj, c, lo, up, nil)
			if err != nil {
				t.Fatal(err)
			}
			// Both optimal to the default 1e-8 relative gap.
			if !scalar.EqualWithinAbs(r.Objective, whole.Objective, 1e-7*(1+math.Abs(whole.Objective))) {
				t.Errorf("cuts %.10g, whole %.10g", r.Objective, whole.Objective)
			}
			checkKKT(t, p, r, 1e-7)
			t.Logf("g = %.6g; whole: %d iterations; cuts: %d rounds, %d of %d rows, %d iterations",
				-r.Objective, whole.Iterations, r.Rounds, len(r.Active), m, r.Iterations)
		})
	}
}

// BenchmarkCertificateLP runs SolveCuts on the certificate LP shapes of
// the side-by-side comparison (make bench-lp, which also times HiGHS on
// the same rows), with the dual simplex and with the interior point, and
// the whole LP solved at once by Solve. SetBytes is
// the size of the whole dense LP, so MB/s compares shapes.
func BenchmarkCertificateLP(b *testing.B) {
	for _, bc := range certlp.Cases {
		c := bc.LP()
		obj, lo, up := c.Bounds()
		size := int64(c.Len()) * int64(c.Unknowns()) * 8
		// The dual simplex (the default) and the interior point in the
		// same cutting-plane loop, side by side.
		for _, m := range []struct {
			name   string
			method lp.Method
		}{{"cuts", lp.Auto}, {"cuts-ipm", lp.InteriorPoint}} {
			b.Run(bc.Name()+"/"+m.name, func(b *testing.B) {
				b.SetBytes(size)
				b.ReportAllocs()
				var r *lp.Result
				for b.Loop() {
					var err error
					if r, err = lp.SolveCuts(obj, c, lo, up, &lp.CutOptions{Method: m.method}); err != nil {
						b.Fatal(err)
					}
				}
				b.ReportMetric(float64(r.Rounds), "rounds")
				b.ReportMetric(float64(r.Iterations), "iters")
				b.ReportMetric(float64(len(r.Active)), "active")
				b.ReportMetric(-r.Objective, "g")
			})
		}
		// The dual simplex loop on the rows held as a dense matrix, as
		// make bench-lp times it (the rows are generated outside the
		// timed loop).
		b.Run(bc.Name()+"/cuts-dense", func(b *testing.B) {
			d := c.Dense()
			b.SetBytes(size)
			b.ReportAllocs()
			var r *lp.Result
			for b.Loop() {
				var err error
				if r, err = lp.SolveCuts(d.C, lp.DenseRows{G: d.G, H: d.H}, d.Lower, d.Upper, nil); err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric(float64(r.Rounds), "rounds")
			b.ReportMetric(float64(len(r.Active)), "active")
			b.ReportMetric(-r.Objective, "g")
		})
		// The whole LP at once with Solve (the rows are generated outside
		// the timed loop).
		b.Run(bc.Name()+"/whole", func(b *testing.B) {
			if testing.Short() {
				b.Skip("whole LP is large")
			}
			d := c.Dense()
			p := &lp.Problem{C: d.C, G: d.G, H: d.H, Lower: d.Lower, Upper: d.Upper}
			b.SetBytes(size)
			b.ReportAllocs()
			var r *lp.Result
			for b.Loop() {
				var err error
				if r, err = lp.Solve(p, nil); err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric(float64(r.Iterations), "iters")
			b.ReportMetric(-r.Objective, "g")
		})
	}
}
