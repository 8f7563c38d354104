package ingest

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/stat"
)

// The kernels of the whole-file read (the span and resolution pass, the
// jump statistic, the robust scale, ...) are rewritten for speed; each is
// checked here against the straightforward loop it replaced, kept below,
// on inputs that reach every branch: NaN, ±Inf, signed zeros, ties,
// lengths 0 to 20 (every lane remainder) and long random runs. Where the
// kernel only reorders minima and maxima (or does the same operations
// per value), the results must agree to the bit.

// spanStepPlain is spanStep's loop before it took two integer lanes.
func spanStepPlain(x []float64, q float64) (lo, hi, qmin float64) {
	a, b := x[0], x[0]
	for i := 1; i < len(x); i++ {
		v := x[i]
		a, b = min(a, v), max(b, v)
		if d := math.Abs(v - x[i-1]); d > 0 && d < q {
			q = d
		}
	}
	return a, b, q
}

// sameBits reports whether a and b are the same float64, bit for bit,
// or both NaN (whose payload no arithmetic here promises).
func sameBits(a, b float64) bool {
	return math.Float64bits(a) == math.Float64bits(b) || a != a && b != b
}

// kernelInputs returns the test vectors of the kernels: every length 0
// to 20 of each kind below, then long ones.
func kernelInputs() [][]float64 {
	rng := rand.New(rand.NewPCG(20, 26))
	negZero := math.Copysign(0, -1)
	special := []float64{math.NaN(), math.Inf(1), math.Inf(-1), 0, negZero, 1, -1, math.MaxFloat64, -math.MaxFloat64, 5e-324, -5e-324}
	kinds := []func(i int) float64{
		func(int) float64 { return rng.NormFloat64() },
		func(int) float64 { return math.Round(3 * rng.NormFloat64()) }, // ties and zero steps
		func(i int) float64 { return float64(i) * 0.25 },               // sorted
		func(i int) float64 { return -float64(i) },                     // reversed
		func(int) float64 { return special[rng.IntN(len(special))] },
		func(int) float64 { // mostly finite, a special value now and then
			if rng.IntN(8) == 0 {
				return special[rng.IntN(len(special))]
			}
			return rng.NormFloat64()
		},
		func(int) float64 { return []float64{0, negZero}[rng.IntN(2)] },
		func(int) float64 { return 1e300 * rng.NormFloat64() }, // differences overflow
	}
	var out [][]float64
	for _, gen := range kinds {
		for n := 0; n <= 20; n++ {
			for range 20 {
				v := make([]float64, n)
				for i := range v {
					v[i] = gen(i)
				}
				out = append(out, v)
			}
		}
		for _, n := range []int{1000, 4099} {
			v := make([]float64, n)
			for i := range v {
				v[i] = gen(i)
			}
			out = append(out, v)
		}
	}
	return out
}

// TestSpanStep: spanStep gives spanStepPlain's span and resolution to
// the bit (min and max in any order, see spanStep), from q = +Inf and
// from a q already found, which must survive when nothing is smaller.
func TestSpanStep(t *testing.T) {
	checked, withNaN := 0, 0
	for _, x := range kernelInputs() {
		if len(x) == 0 {
			continue // the callers pass pieces, never empty
		}
		for _, q := range []float64{math.Inf(1), 0.5, 5e-324} {
			lo, hi, qq := spanStep(x, q)
			wlo, whi, wq := spanStepPlain(x, q)
			if !sameBits(lo, wlo) || !sameBits(hi, whi) || !sameBits(qq, wq) {
				t.Fatalf("spanStep(%v, %v) = %v %v %v, the plain loop %v %v %v", x, q, lo, hi, qq, wlo, whi, wq)
			}
			checked++
			if wlo != wlo {
				withNaN++
			}
		}
	}
	if checked < 3000 || withNaN < 100 {
		t.Fatalf("%d cases, %d with NaN: too few", checked, withNaN)
	}
}

// rangeResBefore is rangeRes before it took spanStep's pass: float
// comparisons, a NaN flag.
func rangeResBefore(x []float64) (lo, hi, res float64, ok bool) {
	lo, hi, res = math.Inf(1), math.Inf(-1), math.Inf(1)
	if len(x) == 0 {
		return lo, hi, res, true
	}
	prev := x[0]
	nan := prev != prev
	lo, hi = prev, prev
	for _, v := range x[1:] {
		if v < lo {
			lo = v
		}
		if v > hi {
			hi = v
		}
		if d := math.Abs(v - prev); d > 0 && d < res {
			res = d
		}
		nan = nan || v != v
		prev = v
	}
	return lo, hi, res, !nan
}

// TestRangeRes: rangeRes finds a NaN where the comparison loop did and
// otherwise gives its resolution to the bit and its least and greatest
// value but for a zero's sign (the comparisons keep the first of -0 and
// +0; the span hi - lo, the only use, is +0 either way).
func TestRangeRes(t *testing.T) {
	checked, withNaN := 0, 0
	for _, x := range kernelInputs() {
		lo, hi, res, ok := rangeRes(x)
		wlo, whi, wres, wok := rangeResBefore(x)
		if ok != wok {
			t.Fatalf("rangeRes(%v): ok %v, the comparison loop %v", x, ok, wok)
		}
		checked++
		if !ok {
			withNaN++
			continue
		}
		if lo != wlo || hi != whi || !sameBits(res, wres) || !sameBits(hi-lo, whi-wlo) {
			t.Fatalf("rangeRes(%v) = %v %v %v, the comparison loop %v %v %v", x, lo, hi, res, wlo, whi, wres)
		}
	}
	if checked < 1000 || withNaN < 30 {
		t.Fatalf("%d cases, %d with NaN: too few", checked, withNaN)
	}
}

// TestOrderKey: orderKey orders float64 values as Go's min does (-0
// below +0; common practice for sorting floats as integers), and
// keyValue undoes it.
func TestOrderKey(t *testing.T) {
	negZero := math.Copysign(0, -1)
	v := []float64{math.Inf(-1), -math.MaxFloat64, -1, -5e-324, negZero, 0, 5e-324, 1, math.MaxFloat64, math.Inf(1)}
	for i := range v {
		if !sameBits(keyValue(orderKey(v[i])), v[i]) {
			t.Errorf("keyValue(orderKey(%v)) = %v", v[i], keyValue(orderKey(v[i])))
		}
		for j := range v {
			if got, want := orderKey(v[i]) < orderKey(v[j]), i < j; got != want {
				t.Errorf("orderKey(%v) < orderKey(%v) = %v, want %v", v[i], v[j], got, want)
			}
			if m := min(v[i], v[j]); !sameBits(m, v[min(i, j)]) {
				t.Fatalf("min(%v, %v) = %v: the order assumed here is not Go's", v[i], v[j], m)
			}
		}
	}
}

// robustScalePlain is robustScale before it took its medians by
// selection: a sort, then the MAD from the sorted values by bisection
// (madOfSorted), or by a second sort when NaN or an infinite median
// leave no order to merge by.
func robustScalePlain(v []float64) float64 {
	if len(v) == 0 {
		return 0
	}
	step := max(1, len(v)/noiseSubsample)
	w := make([]float64, 0, len(v)/step+1)
	for i := 0; i < len(v); i += step {
		w = append(w, v[i])
	}
	m := median(w)
	if math.IsNaN(w[0]) || math.IsInf(m, 0) {
		for i := range w {
			w[i] = math.Abs(w[i] - m)
		}
		return madGauss * median(w)
	}
	return madGauss * madOfSorted(w, m)
}

// TestRobustScale: robustScale (selection) gives robustScalePlain's
// scale (sort) to the bit, without touching its input, and selectMedian
// gives median's (to the bit, but for the sign of a zero median: neither
// the sort nor the selection orders -0 and +0), on every kernel input and on counts above
// noiseSubsample (strided).
func TestRobustScale(t *testing.T) {
	inputs := kernelInputs()
	rng := rand.New(rand.NewPCG(3, 3))
	for _, n := range []int{noiseSubsample, noiseSubsample + 1, 3*noiseSubsample + 7} {
		v := make([]float64, n)
		for i := range v {
			v[i] = math.Round(10 * rng.NormFloat64())
		}
		inputs = append(inputs, v)
	}
	checked, finite := 0, 0
	for _, x := range inputs {
		keep := slices.Clone(x)
		got, want := robustScale(x), robustScalePlain(slices.Clone(x))
		if !sameBits(got, want) {
			t.Fatalf("robustScale(%v) = %v, by sorting %v", x, got, want)
		}
		for i := range x {
			if !sameBits(x[i], keep[i]) {
				t.Fatalf("robustScale modified its input at %d", i)
			}
		}
		if len(x) > 0 {
			gm, wm := selectMedian(slices.Clone(x)), median(slices.Clone(x))
			if !sameBits(gm, wm) && !(gm == 0 && wm == 0) { // a zero median's sign is the sort's whim
				t.Fatalf("selectMedian(%v) = %v, median %v", x, gm, wm)
			}
		}
		checked++
		if !math.IsNaN(want) && !math.IsInf(want, 0) && want > 0 {
			finite++
		}
	}
	if checked < 3000 || finite < 1000 {
		t.Fatalf("%d cases, %d with a finite positive scale: too few", checked, finite)
	}
}

// gonumMedian is the classical median (the middle value, or the mean of
// the two middle values; common practice) of x, which it sorts, from
// gonum's order statistics: stat.Quantile with the Empirical cumulant
// gives the ceil(p n)-th smallest value, so p = 1/2 gives the middle (n
// odd) or the lower middle (n even), and p = (n/2 + 1/2)/n the upper.
func gonumMedian(x []float64) float64 {
	slices.Sort(x)
	n := len(x)
	lo := stat.Quantile(0.5, stat.Empirical, x, nil)
	if n%2 == 1 {
		return lo
	}
	return (lo + stat.Quantile((float64(n/2)+0.5)/float64(n), stat.Empirical, x, nil)) / 2
}

// TestRobustScaleWorked checks the MAD against a worked example and
// against gonum. The median absolute deviation of {1, 1, 2, 2, 4, 6, 9}
// is 1: median 2, absolute deviations {1, 1, 0, 0, 2, 4, 7}, whose median
// is 1 [WikipediaMAD] (from memory; recomputed by hand here). Then
// robustScale over random finite values against the MAD that gonum's
// order statistics give (gonumMedian of the deviations from
// gonumMedian): the same order statistics of the same values, averaged
// the same way, so equal to the bit.
func TestRobustScaleWorked(t *testing.T) {
	if got := robustScale([]float64{1, 1, 2, 2, 4, 6, 9}); !scalar.EqualWithinAbsOrRel(got, madGauss*1, 0, 1e-15) {
		t.Errorf("robustScale of {1, 1, 2, 2, 4, 6, 9} = %v, want %v (MAD 1)", got, madGauss)
	}
	if got := robustScale([]float64{9, 2, 1, 6, 2, 4, 1}); !scalar.EqualWithinAbsOrRel(got, madGauss*1, 0, 1e-15) {
		t.Errorf("robustScale of the example shuffled = %v, want %v (MAD 1)", got, madGauss)
	}
	rng := rand.New(rand.NewPCG(17, 4))
	checked := 0
	for trial := range 400 {
		n := 1 + rng.IntN(300)
		if trial%50 == 0 {
			n = noiseSubsample - rng.IntN(10) // below the stride: every value
		}
		x := make([]float64, n)
		for i := range x {
			x[i] = 1e3 + rng.NormFloat64()
			if trial%3 == 0 {
				x[i] = math.Round(4 * x[i]) // ties
			}
		}
		m := gonumMedian(slices.Clone(x))
		dev := make([]float64, n)
		for i, v := range x {
			dev[i] = math.Abs(v - m)
		}
		want := madGauss * gonumMedian(dev)
		if got := robustScale(x); got != want {
			t.Fatalf("n=%d: robustScale = %v, from gonum's order statistics %v", n, got, want)
		}
		checked++
	}
	if checked != 400 {
		t.Fatalf("%d cases checked", checked)
	}
}

// TestClockCoefsLanes: the jump statistic from clockCoefs (four lanes on
// an even clock, two elsewhere) is the per-sample jumpAt's, to the bit,
// with the same finiteness, on every kernel input (every length 0 to
// 20: each lane remainder) and on an even clock, a decimal clock (steps
// differing in their last bits, even within evenStepTol), a jittered
// one and one uneven at a single sample; set's even flag says whether
// every sample is of jumpAt's even case.
func TestClockCoefsLanes(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 8))
	var co clockCoefs
	checked, infinite := map[bool]int{}, 0
	for _, x := range kernelInputs() {
		n := len(x)
		clocks := map[string][]float64{}
		even, dec, jit, one := make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
		for i := range n {
			even[i] = float64(i) * 0.25
			dec[i] = float64(i) * 0.01
			jit[i] = float64(i) + 0.3*rng.Float64()
			one[i] = float64(i)
			if i == n/2 {
				one[i] += 0.5
			}
		}
		clocks["even"], clocks["decimal"], clocks["jittered"], clocks["one uneven"] = even, dec, jit, one
		for name, tm := range clocks {
			co.set(tm)
			allEven := true
			for i := 2; i < n-1; i++ {
				allEven = allEven && clockCoef(tm[i-2], tm[i-1], tm[i], tm[i+1]).even
			}
			if co.even != allEven {
				t.Fatalf("%s clock of %d samples: even %v, per sample %v", name, n, co.even, allEven)
			}
			got, gf := co.jumpStat(nil, x)
			want, wf := jumpStatFinite(nil, x, tm)
			if gf != wf || len(got) != len(want) {
				t.Fatalf("%s clock, x = %v: finite %v, %d values; jumpAt's %v, %d", name, x, gf, len(got), wf, len(want))
			}
			for i := range want {
				if !sameBits(got[i], want[i]) {
					t.Fatalf("%s clock, x = %v: s[%d] = %v, jumpAt %v", name, x, i, got[i], want[i])
				}
			}
			checked[co.even]++
			if !wf {
				infinite++
			}
		}
	}
	if checked[true] < 1000 || checked[false] < 1000 || infinite < 100 {
		t.Fatalf("%d even and %d uneven clocks, %d statistics not finite: too few", checked[true], checked[false], infinite)
	}
}

// clockJumpStatPlain is clockCoefs.jumpStat before its lanes: one sum
// for the finite test, whose additions chain from sample to sample.
func clockJumpStatPlain(c *clockCoefs, dst, x []float64) ([]float64, bool) {
	n := len(x)
	dst = slices.Grow(dst[:0], n)[:n]
	if n < 4 {
		clear(dst)
		return dst, true
	}
	dst[0], dst[1], dst[n-1] = 0, 0, 0
	ca, cb, cs := c.a[:n], c.b[:n], c.sc[:n]
	acc := 0.0
	for i := 2; i < n-1; i++ {
		x0, x1, x2, x3 := x[i-2], x[i-1], x[i], x[i+1]
		var v float64
		if sc := cs[i]; sc < 0 {
			v = 1.5*(x2-x1) + 0.5*(x0-x3)
		} else {
			v = ((x2 - x1) - 0.5*(ca[i]*(x1-x0)+cb[i]*(x3-x2))) * sc
		}
		dst[i] = v
		acc += v - v
	}
	return dst, acc == 0
}

// clockSetPlain is clockCoefs.set before it slid the steps along: three
// differences of the times at every sample.
func clockSetPlain(c *clockCoefs, t []float64) {
	n := len(t)
	c.a = slices.Grow(c.a[:0], n)[:n]
	c.b = slices.Grow(c.b[:0], n)[:n]
	c.sc = slices.Grow(c.sc[:0], n)[:n]
	for i := 2; i < n-1; i++ {
		k := clockCoef(t[i-2], t[i-1], t[i], t[i+1])
		if k.even {
			c.sc[i] = -1
			continue
		}
		c.a[i], c.b[i], c.sc[i] = k.a, k.b, k.sc
	}
}

// firstBeyondPlain is restingHead's search for the first motion before
// firstBeyond.
func firstBeyondPlain(x []float64, base, lim float64) int {
	for i := range x {
		if math.Abs(x[i]-base) > lim {
			return i
		}
	}
	return len(x)
}

// TestFirstBeyond: firstBeyond finds the plain loop's index on every
// kernel input, with limits that stop it anywhere (or never), a NaN
// limit (never) and a NaN base.
func TestFirstBeyond(t *testing.T) {
	checked, inside := 0, 0
	for _, x := range kernelInputs() {
		for _, base := range []float64{0, 0.5, math.NaN()} {
			for _, lim := range []float64{0, 0.5, 2, 1e301, math.Inf(1), math.NaN()} {
				got, want := firstBeyond(x, base, lim), firstBeyondPlain(x, base, lim)
				if got != want {
					t.Fatalf("firstBeyond(%v, %v, %v) = %d, the plain loop %d", x, base, lim, got, want)
				}
				checked++
				if want > 0 && want < len(x) {
					inside++
				}
			}
		}
	}
	if checked < 10000 || inside < 1000 {
		t.Fatalf("%d cases, %d stopping inside: too few", checked, inside)
	}
}
