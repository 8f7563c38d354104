package order

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/stat"
)

// randomSorted returns n sorted values from a seeded source: normal, with
// repeats (rounded to a grid) in every third case, so ties are tried.
func randomSorted(rng *rand.Rand, n int) []float64 {
	s := make([]float64, n)
	ties := rng.IntN(3) == 0
	for i := range s {
		s[i] = 3 * rng.NormFloat64()
		if ties {
			s[i] = math.Round(s[i])
		}
	}
	slices.Sort(s)
	return s
}

// TestQuantileGonum checks Quantile against gonum's stat.Quantile
// [gonum]. gonum's LinInterp puts the k-th smallest of n values at
// cumulative share k/n (Hyndman and Fan's definition 4 [HyndmanFan1996]);
// definition 7 puts it at (k-1)/(n-1). So definition 7 at p is
// definition 4 at p' = (p(n-1) + 1)/n, and the two must agree up to the
// rounding of p' and of the two interpolation formulas: a few ulps of the
// data's range (|s| < 20 here), so 1e-13 absolute.
func TestQuantileGonum(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 0))
	checked := 0
	for trial := 0; trial < 300; trial++ {
		n := 1 + rng.IntN(60)
		s := randomSorted(rng, n)
		for _, p := range []float64{0, 1, 0.5, 0.025, 0.975, 0.25, 0.75, rng.Float64()} {
			got := Quantile(s, p)
			want := stat.Quantile((p*float64(n-1)+1)/float64(n), stat.LinInterp, s, nil)
			if !scalar.EqualWithinAbs(got, want, 1e-13) {
				t.Fatalf("n=%d p=%g: Quantile = %v, gonum LinInterp at p' = %v (s = %v)", n, p, got, want, s)
			}
			checked++
		}
	}
	if checked == 0 {
		t.Fatal("no case checked")
	}
}

// TestMedianGonum checks Median (definition 7 at 1/2, computed as the
// mean of the middle pair) and HighMedian against gonum [gonum]:
// HighMedian is s[n/2], which gonum's Empirical (the smallest s[i] with
// (i+1)/n >= p, definition 1 [HyndmanFan1996]) returns for any p in
// (floor(n/2)/n, (floor(n/2)+1)/n], exactly; so compare bit for bit at the
// middle of that interval.
func TestMedianGonum(t *testing.T) {
	rng := rand.New(rand.NewPCG(2, 0))
	for trial := 0; trial < 300; trial++ {
		n := 1 + rng.IntN(60)
		s := randomSorted(rng, n)
		want := stat.Quantile((float64(n-1)*0.5+1)/float64(n), stat.LinInterp, s, nil)
		if got := Median(s); !scalar.EqualWithinAbs(got, want, 1e-13) {
			t.Fatalf("n=%d: Median = %v, gonum LinInterp = %v (s = %v)", n, got, want, s)
		}
		p := (float64(n/2) + 0.5) / float64(n)
		if got, want := HighMedian(s), stat.Quantile(p, stat.Empirical, s, nil); got != want {
			t.Fatalf("n=%d: HighMedian = %v, gonum Empirical at %g = %v (s = %v)", n, got, p, want, s)
		}
	}
}

// TestWorked checks small cases by hand. The values of definition 7 on
// {1, 2, 3, 4} are those R's quantile(1:4, c(0, .25, .5, .9, 1)) prints
// (1, 1.75, 2.5, 3.7, 4) [HyndmanFan1996] (from memory), recomputed by hand from the
// definition: h = 3p.
func TestWorked(t *testing.T) {
	s := []float64{1, 2, 3, 4}
	for _, tc := range []struct {
		p, want float64
	}{{0, 1}, {0.25, 1.75}, {0.5, 2.5}, {0.9, 3.7}, {1, 4}} {
		// one rounding in h and one in the interpolation: 1e-15 relative
		if got := Quantile(s, tc.p); !scalar.EqualWithinAbsOrRel(got, tc.want, 0, 1e-15) {
			t.Errorf("Quantile(%v, %g) = %v, want %v", s, tc.p, got, tc.want)
		}
	}
	for _, tc := range []struct {
		s          []float64
		med, hiMed float64
	}{
		{[]float64{5}, 5, 5},
		{[]float64{1, 3}, 2, 3},
		{[]float64{-2, 0, 7}, 0, 0},
		{[]float64{1, 2, 10, 11}, 6, 10},
	} {
		if got := Median(tc.s); got != tc.med {
			t.Errorf("Median(%v) = %v, want %v", tc.s, got, tc.med)
		}
		if got := HighMedian(tc.s); got != tc.hiMed {
			t.Errorf("HighMedian(%v) = %v, want %v", tc.s, got, tc.hiMed)
		}
	}
}

func TestNaN(t *testing.T) {
	x := []float64{3, math.NaN(), 1, 2, math.NaN()}
	s := slices.Clone(x)
	slices.Sort(s)
	for name, got := range map[string]float64{
		"Quantile":   Quantile(s, 0.5),
		"Median":     Median(s),
		"HighMedian": HighMedian(s),
	} {
		if !math.IsNaN(got) {
			t.Errorf("%s of a sorted slice with NaN = %v, want NaN", name, got)
		}
	}
	buf := make([]float64, 0, len(x))
	f := Sorted(buf, x)
	if !slices.Equal(f, []float64{1, 2, 3}) {
		t.Fatalf("Sorted(%v) = %v, want [1 2 3]", x, f)
	}
	if &f[0] != &buf[:1][0] {
		t.Error("Sorted did not reuse dst")
	}
	if got := Median(f); got != 2 {
		t.Errorf("Median without NaN = %v, want 2", got)
	}
}

func TestPanics(t *testing.T) {
	for name, fn := range map[string]func(){
		"empty quantile":    func() { Quantile(nil, 0.5) },
		"p above 1":         func() { Quantile([]float64{1}, 1.5) },
		"p NaN":             func() { Quantile([]float64{1}, math.NaN()) },
		"empty median":      func() { Median(nil) },
		"empty high median": func() { HighMedian(nil) },
	} {
		func() {
			defer func() {
				if recover() == nil {
					t.Errorf("%s: no panic", name)
				}
			}()
			fn()
		}()
	}
}

func TestSortedAllocs(t *testing.T) {
	x := []float64{4, 1, math.NaN(), 3}
	dst := make([]float64, 0, len(x))
	if a := testing.AllocsPerRun(100, func() { dst = Sorted(dst, x) }); a != 0 {
		t.Errorf("Sorted allocates %v times per call with room in dst", a)
	}
}
