package validate

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/stat/distuv"
)

// TestScenarioTailBinomial compares the tail with gonum's binomial CDF,
// an independent implementation: sum_{i<d} = CDF(d-1). 1e-9 relative:
// both are float64 evaluations of the same sum, gonum through the
// regularised incomplete beta.
func TestScenarioTailBinomial(t *testing.T) {
	for _, n := range []int{10, 59, 300, 2000} {
		for _, d := range []int{1, 3, 6, 10} {
			for _, eps := range []float64{0.001, 0.01, 0.05, 0.2} {
				want := distuv.Binomial{N: float64(n), P: eps}.CDF(float64(d - 1))
				got := ScenarioTail(n, d, eps)
				if !scalar.EqualWithinAbs(got, want, 1e-9*math.Max(want, 1e-300)+1e-300) {
					t.Errorf("tail(%d,%d,%g) = %.12g, gonum %.12g", n, d, eps, got, want)
				}
			}
		}
	}
}

// TestMinSamples checks the exact smallest sample sizes of
// [Wilks1941] (Ann. Math. Stat. 12:91-96, 1941, d = 1) and those computed
// exactly from the tail of [CampiGaratti2008] (d > 1), and the tails beside them.
func TestMinSamples(t *testing.T) {
	for _, tc := range []struct {
		eps, beta        float64
		d, n             int
		tailN, tailBelow float64
	}{
		{0.05, 0.05, 1, 59, 0.0484945, 0.0510469},
		{0.10, 0.05, 1, 29, 0, 0},
		{0.01, 0.05, 1, 299, 0, 0},
		{0.10, 0.001, 1, 66, 0, 0},
		{0.10, 1e-3, 5, 143, 9.5662e-4, 1.03531e-3},
		{0.05, 1e-3, 3, 220, 9.9660e-4, 1.04034e-3},
		{0.05, 1e-6, 6, 498, 9.9797e-7, 1.04040e-6},
		{0.01, 1e-6, 6, 2532, 9.9218e-7, 1.00031e-6},
		{0.01, 1e-9, 10, 4158, 9.9648e-10, 1.00443e-9},
	} {
		if got := MinSamples(tc.eps, tc.beta, tc.d); got != tc.n {
			t.Errorf("MinSamples(%g,%g,%d) = %d, want %d", tc.eps, tc.beta, tc.d, got, tc.n)
		}
		// The tables give 5-6 significant digits: 1e-4 relative.
		if tc.tailN > 0 {
			if got := ScenarioTail(tc.n, tc.d, tc.eps); !scalar.EqualWithinAbs(got/tc.tailN, 1, 1e-4) {
				t.Errorf("tail at N=%d: %.6g, want %.6g", tc.n, got, tc.tailN)
			}
			if got := ScenarioTail(tc.n-1, tc.d, tc.eps); !scalar.EqualWithinAbs(got/tc.tailBelow, 1, 1e-4) {
				t.Errorf("tail at N=%d: %.6g, want %.6g", tc.n-1, got, tc.tailBelow)
			}
		}
	}
}

// TestSufficientSamples checks (2/eps)(ln(1/beta)+d) against the
// values computed from [CampiGaratti2008] and that it is never below the
// exact size (a property over a grid of eps, beta and d).
func TestSufficientSamples(t *testing.T) {
	for _, tc := range []struct {
		eps, beta float64
		d, n      int
	}{{0.05, 0.05, 1, 160}, {0.10, 1e-3, 5, 239}, {0.05, 1e-3, 3, 397}, {0.05, 1e-6, 6, 793}, {0.01, 1e-6, 6, 3964}, {0.01, 1e-9, 10, 6145}} {
		if got := SufficientSamples(tc.eps, tc.beta, tc.d); got != tc.n {
			t.Errorf("SufficientSamples(%g,%g,%d) = %d, want %d", tc.eps, tc.beta, tc.d, got, tc.n)
		}
	}
	for _, eps := range []float64{0.2, 0.1, 0.05, 0.02, 0.01} {
		for _, beta := range []float64{0.1, 1e-3, 1e-6, 1e-9} {
			for d := 1; d <= 50; d += 7 {
				ns := SufficientSamples(eps, beta, d)
				if ne := MinSamples(eps, beta, d); ns < ne {
					t.Errorf("(%g,%g,%d): sufficient %d < exact %d", eps, beta, d, ns, ne)
				}
				if tail := ScenarioTail(ns, d, eps); tail > beta {
					t.Errorf("(%g,%g,%d): tail %g at sufficient N", eps, beta, d, tail)
				}
			}
		}
	}
}

// TestViolationBound checks the inverse against [CampiGaratti2008] (rel.
// 1e-5 as stated there) and the closed form 1 - beta^(1/N) for d = 1.
func TestViolationBound(t *testing.T) {
	for _, tc := range []struct {
		n, d int
		beta float64
		eps  float64
	}{{100, 1, 0.05, 0.0295130}, {500, 3, 1e-3, 0.0222516}, {1000, 6, 1e-6, 0.0251547}, {2000, 10, 1e-9, 0.0206997}} {
		if got := ViolationBound(tc.n, tc.d, tc.beta); !scalar.EqualWithinAbs(got/tc.eps, 1, 1e-5) {
			t.Errorf("ViolationBound(%d,%d,%g) = %.7g, want %.7g", tc.n, tc.d, tc.beta, got, tc.eps)
		}
	}
	if got, want := ViolationBound(100, 1, 0.05), 1-math.Pow(0.05, 0.01); !scalar.EqualWithinAbs(got, want, 1e-10) {
		t.Errorf("d=1: %g, closed form %g", got, want)
	}
	// gonum's Beta quantile is the same inverse (I_{1-eps}(N-d+1, d) =
	// beta): eps = Beta(d, N-d+1).Quantile(1-beta).
	for _, n := range []int{50, 800, 5000} {
		for _, d := range []int{1, 4, 13} {
			want := distuv.Beta{Alpha: float64(d), Beta: float64(n - d + 1)}.Quantile(1 - 1e-6)
			if got := ViolationBound(n, d, 1e-6); !scalar.EqualWithinAbs(got/want, 1, 1e-6) {
				t.Errorf("ViolationBound(%d,%d) = %g, gonum Beta quantile %g", n, d, got, want)
			}
		}
	}
	if ViolationBound(3, 6, 1e-6) != 1 {
		t.Error("n < d must give 1")
	}
}

func TestAcfLag(t *testing.T) {
	// AR(1)-free check: a sine of period P has autocorrelation cos(2 pi l/P)
	// (for many periods), which falls below 1/e at l = P acos(1/e)/(2 pi).
	const P = 200
	x := make([]float64, 100*P)
	for i := range x {
		x[i] = math.Sin(2 * math.Pi * float64(i) / P)
	}
	want := P * math.Acos(1/math.E) / (2 * math.Pi) // 37.9
	if got := acfLag(x); !scalar.EqualWithinAbs(float64(got), want, 1.5) {
		t.Errorf("lag %d, want about %.1f", got, want)
	}
}
