package poly_test

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"

	"basin.example/fit/poly"
)

// binomial returns C(n, k) exactly for small arguments.
func binomial(n, k int) int {
	r := 1
	for i := 1; i <= k; i++ {
		r = r * (n - k + i) / i
	}
	return r
}

// TestCount: the number of monomials of total degree <= p in n variables
// is C(n+p, p), of degree exactly d it is C(n+d-1, d) (elementary
// combinatorics; [MonomialCount] lists (2,3) 10, (3,2) 10, (3,3) 20,
// (3,5) 56, (2,5) 21, and (6,3) 84 is the benchmark's library).
func TestCount(t *testing.T) {
	for _, tc := range []struct{ n, p, want int }{{2, 3, 10}, {3, 2, 10}, {3, 3, 20}, {3, 5, 56}, {2, 5, 21}, {6, 3, 84}} {
		lib := poly.NewLibrary(tc.n, 0, tc.p)
		if lib.Len() != tc.want || poly.Count(tc.n, 0, tc.p) != tc.want || binomial(tc.n+tc.p, tc.p) != tc.want {
			t.Errorf("n=%d p=%d: library %d, Count %d, want %d", tc.n, tc.p, lib.Len(), poly.Count(tc.n, 0, tc.p), tc.want)
		}
	}
	for n := 1; n <= 6; n++ {
		for d := 0; d <= 6; d++ {
			if got, want := len(poly.Monomials(n, d)), binomial(n+d-1, d); got != want {
				t.Errorf("Monomials(%d, %d) = %d, want %d", n, d, got, want)
			}
			for lo := 1; lo <= d; lo++ { // degrees lo..d: C(n+d, d) - C(n+lo-1, lo-1)
				if got, want := poly.NewLibrary(n, lo, d).Len(), binomial(n+d, d)-binomial(n+lo-1, lo-1); got != want {
					t.Errorf("NewLibrary(%d, %d, %d).Len() = %d, want %d", n, lo, d, got, want)
				}
			}
		}
	}
}

// TestGradedOrder: the order documented in the package comment.
func TestGradedOrder(t *testing.T) {
	lib := poly.NewLibrary(2, 0, 2)
	var got []string
	for k := 0; k < lib.Len(); k++ {
		got = append(got, lib.Name(k, []string{"x", "y"}))
	}
	if want := "[1 x y x^2 x y y^2]"; fmt.Sprint(got) != want {
		t.Errorf("order %v, want %s", got, want)
	}
}

// TestEvalGrad checks evaluation against math.Pow and gradients against
// central finite differences (step 1e-5: truncation 1e-10 relative for
// degree-4 monomials of O(1) arguments, round-off 1e-11; tolerance 1e-7).
func TestEvalGrad(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for _, n := range []int{1, 2, 3, 5} {
		lib := poly.NewLibrary(n, 0, 4)
		p := lib.Len()
		x := make([]float64, n)
		for j := range x {
			x[j] = 2*rng.Float64() - 1
		}
		val := lib.EvalTo(make([]float64, p), x)
		grad := make([]float64, p*n)
		val2 := make([]float64, p)
		lib.GradWorkTo(grad, val2, make([]float64, lib.GradWorkLen()), x)
		for k := 0; k < p; k++ {
			want := 1.0
			for j, e := range lib.Exponents(k) {
				want *= math.Pow(x[j], float64(e))
			}
			if !scalar.EqualWithinAbs(val[k], want, 1e-14) || val2[k] != val[k] {
				t.Fatalf("n=%d term %d: %g, %g, want %g", n, k, val[k], val2[k], want)
			}
		}
		const h = 1e-5
		xp, xm := make([]float64, n), make([]float64, n)
		vp, vm := make([]float64, p), make([]float64, p)
		for j := 0; j < n; j++ {
			copy(xp, x)
			copy(xm, x)
			xp[j] += h
			xm[j] -= h
			lib.EvalTo(vp, xp)
			lib.EvalTo(vm, xm)
			for k := 0; k < p; k++ {
				fd := (vp[k] - vm[k]) / (2 * h)
				if !scalar.EqualWithinAbs(grad[k*n+j], fd, 1e-7) {
					t.Fatalf("n=%d term %s d/dx%d: %g, finite difference %g", n, lib.Name(k, make([]string, n)), j, grad[k*n+j], fd)
				}
			}
		}
		// Poly.GradTo against the same finite differences.
		pl := poly.Poly{Exponents: lib.Terms(), Coefficients: make([]float64, p)}
		for k := range pl.Coefficients {
			pl.Coefficients[k] = rng.NormFloat64()
		}
		g := pl.GradTo(make([]float64, n), x)
		for j := 0; j < n; j++ {
			copy(xp, x)
			copy(xm, x)
			xp[j] += h
			xm[j] -= h
			fd := (pl.Eval(xp) - pl.Eval(xm)) / (2 * h)
			if !scalar.EqualWithinAbs(g[j], fd, 1e-6) {
				t.Fatalf("Poly.GradTo n=%d j=%d: %g, finite difference %g", n, j, g[j], fd)
			}
		}
		if c := pl.Compile(n); !scalar.EqualWithinAbs(c.Eval(x), pl.Eval(x), 1e-12) {
			t.Fatalf("Compiled.Eval differs")
		}
	}
}

// TestEvalColumns: column-wise evaluation agrees with EvalTo point by point.
func TestEvalColumns(t *testing.T) {
	lib := poly.NewLibrary(3, 1, 3)
	rng := rand.New(rand.NewPCG(3, 4))
	m := 50
	X := make([][]float64, 3)
	for j := range X {
		X[j] = make([]float64, m)
		for i := range X[j] {
			X[j][i] = rng.NormFloat64()
		}
	}
	dst := make([][]float64, lib.Len())
	for k := range dst {
		dst[k] = make([]float64, m)
	}
	lib.EvalColumnsTo(dst, X)
	v := make([]float64, lib.Len())
	for i := 0; i < m; i++ {
		lib.EvalTo(v, []float64{X[0][i], X[1][i], X[2][i]})
		for k := range v {
			if dst[k][i] != v[k] {
				t.Fatalf("point %d term %d: %g vs %g", i, k, dst[k][i], v[k])
			}
		}
	}
}

// TestFromExponentsSparse: a library that is not closed under division
// (x^3 y alone) still evaluates, through its hidden parents.
func TestFromExponentsSparse(t *testing.T) {
	lib := poly.FromExponents(2, [][]int{{3, 1}, {0, 2}})
	v := lib.EvalTo(make([]float64, 2), []float64{2, 3})
	if v[0] != 24 || v[1] != 9 || lib.WorkLen() <= lib.Len() {
		t.Errorf("values %v, work %d", v, lib.WorkLen())
	}
}

func BenchmarkEvalWorkTo(b *testing.B) {
	for _, tc := range []struct{ n, d int }{{2, 3}, {6, 3}, {3, 5}} {
		b.Run(fmt.Sprintf("n%d_d%d", tc.n, tc.d), func(b *testing.B) {
			lib := poly.NewLibrary(tc.n, 0, tc.d)
			dst := make([]float64, lib.Len())
			work := make([]float64, lib.WorkLen())
			x := make([]float64, tc.n)
			for j := range x {
				x[j] = 0.3 + 0.1*float64(j)
			}
			b.ReportAllocs()
			b.SetBytes(int64(8 * tc.n))
			for b.Loop() {
				lib.EvalWorkTo(dst, work, x)
			}
			b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(lib.Len()), "ns/term")
		})
	}
}

func BenchmarkGradWorkTo(b *testing.B) {
	// n2_d2-2 is the demo's quadratic V (degrees 2..2 in two states).
	for _, tc := range []struct{ n, lo, hi int }{{6, 0, 3}, {2, 2, 2}, {2, 2, 6}, {3, 2, 4}} {
		b.Run(fmt.Sprintf("n%d_d%d-%d", tc.n, tc.lo, tc.hi), func(b *testing.B) {
			lib := poly.NewLibrary(tc.n, tc.lo, tc.hi)
			grad := make([]float64, lib.Len()*tc.n)
			val := make([]float64, lib.Len())
			work := make([]float64, lib.GradWorkLen())
			x := make([]float64, tc.n)
			for j := range x {
				x[j] = 0.1 * float64(j+1)
			}
			b.ReportAllocs()
			for b.Loop() {
				lib.GradWorkTo(grad, val, work, x)
			}
			b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(lib.Len()), "ns/term")
		})
	}
}

// TestEvalAllocs: the hot-loop kernels do not allocate.
func TestEvalAllocs(t *testing.T) {
	lib := poly.NewLibrary(6, 0, 3)
	dst := make([]float64, lib.Len())
	work := make([]float64, lib.WorkLen())
	grad := make([]float64, lib.Len()*6)
	gw := make([]float64, lib.GradWorkLen())
	x := []float64{0.1, 0.2, 0.3, 0.4, 0.5, 0.6}
	if a := testing.AllocsPerRun(100, func() { lib.EvalWorkTo(dst, work, x); lib.GradWorkTo(grad, dst, gw, x) }); a != 0 {
		t.Errorf("%g allocations per call", a)
	}
}

func ExampleLibrary() {
	lib := poly.NewLibrary(2, 0, 2)
	v := lib.EvalTo(make([]float64, lib.Len()), []float64{2, 3})
	for k := 0; k < lib.Len(); k++ {
		fmt.Printf("%s=%g ", lib.Name(k, []string{"x", "y"}), v[k])
	}
	fmt.Println()
	// Output: 1=1 x=2 y=3 x^2=4 x y=6 y^2=9
}
