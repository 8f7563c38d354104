package lyapunov

import (
	"context"
	"math"
	"math/rand/v2"
	"reflect"
	"testing"

	"basin.example/fit/lp"
)

// TestCacheSame: the checks evaluated from the point caches (and with
// V-dot memoised per sample) give the same growth rounds, level and
// bound as the checks evaluated at each point, and the kept V's level
// result is the one level computes in full, bit for bit (reflect.DeepEqual on the results, which compares
// float64s exactly and fails on NaN), and the certificate LP read as a
// dense matrix gives the same optimum bit for bit as its rows generated
// on demand. A property of the implementation (the cache holds the
// numbers vEval computes at the point), not of an outside source; the
// systems are the search's own test systems.
func TestCacheSame(t *testing.T) {
	cases := []struct {
		name     string
		sys      *testSystem
		d        *Data
		sigma    float64
		deg      int
		nonRise  bool
		wantSome bool // the search must find a V, so the comparison covers the level and the bound
	}{
		{"vdp deg 2", vdpReverseZ(), vdpDataZ(), 0, 2, false, true},
		{"vdp deg 4 noisy", vdpReverseZ(), vdpReverseZ().runs([][2]float64{{-2.2, 2.2}, {-3, 3}}, 40, 0.005, 2000, 10, 0.01, 3), 0.01, 4, false, true},
		{"chain 3 deg 2", chainZ(3), chainZ(3).runs([][2]float64{{-1, 1}, {-1, 1}, {-1, 1}}, 30, 0.01, 600, 5, 0.002, 2), 0.002, 2, false, true},
		{"vdp non-rise path", vdpReverseZ(), vdpDataZ(), 0, 2, true, false},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			o := (&Options{Degree: tc.deg}).Defaults()
			build := func(cached bool) *checker {
				ck, err := newChecker(context.Background(), tc.d, tc.sys.system(tc.sigma), o, tc.nonRise)
				if err != nil {
					t.Fatal(err)
				}
				if ck.samples == nil || ck.samples.phi == nil || ck.samples.f == nil || ck.rayPts.grad == nil || ck.poolPts.phi == nil {
					t.Fatal("the test cases must fit in the caches")
				}
				if !cached {
					ck.samples, ck.rayPts, ck.poolPts = nil, nil, nil
					ck.dots.off = true
				}
				return ck
			}
			var outs [2]growth
			var levels [2]levelResult
			for i, cached := range []bool{true, false} {
				ck := build(cached)
				lin, _ := linearise(ck.az, ck.fam.n)
				c0, err := startV(ck.fam, lin)
				if err != nil {
					t.Fatal(err)
				}
				g, err := ck.grow(context.Background(), c0, tc.nonRise, o)
				if err != nil {
					t.Fatal(err)
				}
				outs[i] = g
				if g.best.res.ok {
					// The rounds leave a candidate's in-sample figures
					// out until it is kept: the kept one's must be
					// level's in full.
					if full := ck.level(g.best.c); !reflect.DeepEqual(full, g.best.res) {
						t.Errorf("cached %v: the kept V's level result %+v, level's in full %+v", cached, g.best.res, full)
					}
					levels[i] = ck.verify(g.best.c, g.best.res)
				}
			}
			if tc.wantSome && !(outs[0].best.res.ok && levels[0].ok && levels[0].level > 0) {
				t.Fatalf("no certified level (%s): the comparison would cover nothing", outs[0].best.res.reason)
			}
			if !reflect.DeepEqual(outs[0], outs[1]) {
				t.Errorf("growth differs:\ncached   %+v\nuncached %+v", outs[0].best, outs[1].best)
			}
			if !reflect.DeepEqual(levels[0], levels[1]) {
				t.Errorf("bounded level differs: cached %+v, uncached %+v", levels[0], levels[1])
			}
		})
	}
}

// TestDenseRowsSame: the certificate LP's rows computed once into an
// lp.DenseRows are RowTo's rows, and the LP over them has the same
// optimum bit for bit as over the rows generated on demand (the solver
// reads the same numbers). A property of the implementation.
func TestDenseRowsSame(t *testing.T) {
	for _, deg := range []int{2, 4} {
		ck := mustChecker(t, vdpReverseZ(), vdpDataZ(), 0, deg)
		o := (&Options{Degree: deg}).Defaults()
		lin, _ := linearise(ck.az, ck.fam.n)
		c0, err := startV(ck.fam, lin)
		if err != nil {
			t.Fatal(err)
		}
		rows := ck.lpRows(c0, 0.5, 0.5*growOuter, 0, o, rand.New(rand.NewPCG(1, 0)))
		dense, ok := rows.solverRows().(lp.DenseRows)
		if !ok || dense.Len() != rows.Len() || rows.Len() == 0 {
			t.Fatalf("degree %d: dense rows %v (%d of %d)", deg, ok, dense.Len(), rows.Len())
		}
		p := ck.fam.Len()
		obj := make([]float64, p+1)
		obj[p] = -1
		lower, upper := make([]float64, p+1), make([]float64, p+1)
		for k := 0; k < p; k++ {
			lower[k], upper[k] = -lpCoefBound, lpCoefBound
		}
		lower[p], upper[p] = -lpMarginBound, lpMarginBound
		a, errA := lp.SolveCuts(obj, rows, lower, upper, nil)
		b, errB := lp.SolveCuts(obj, dense, lower, upper, nil)
		if errA != nil || errB != nil {
			t.Fatalf("degree %d: %v, %v", deg, errA, errB)
		}
		if a.Status != lp.Optimal || !(math.Abs(a.X[p]) < lpMarginBound) {
			t.Fatalf("degree %d: status %v margin %g", deg, a.Status, a.X[p])
		}
		if !reflect.DeepEqual(a.X, b.X) || a.Rounds != b.Rounds {
			t.Errorf("degree %d: on demand %v (%d rounds), dense %v (%d rounds)", deg, a.X, a.Rounds, b.X, b.Rounds)
		}
	}
}

// TestTrustSampleLeverage: the samples' leverage NewTrust computes from
// the columns it kept is Leverage at each sample, bit for bit. A
// property of the implementation.
func TestTrustSampleLeverage(t *testing.T) {
	sys := vdpReverseZ().system(0)
	d := vdpDataZ()
	tr, err := NewTrust(2, sys.Terms, d.Z)
	if err != nil {
		t.Fatal(err)
	}
	if len(tr.HSamples) != len(d.Z)/2 || len(tr.HSamples) == 0 {
		t.Fatalf("%d leverages for %d samples", len(tr.HSamples), len(d.Z)/2)
	}
	for i, h := range tr.HSamples {
		if want := tr.Leverage(d.Z[2*i : 2*i+2]); h != want || !(h > 0) {
			t.Fatalf("sample %d: leverage %v, Leverage %v", i, h, want)
		}
	}
}

// TestColumnEval: a trust region column evaluates to Poly.Eval's value
// bit for bit (signed zeros included), on random points with exact
// zeros and negative entries. A property of the implementation.
func TestColumnEval(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 0))
	exps := [][]int{{0, 0, 0}, {1, 0, 0}, {0, 2, 1}, {3, 0, 2}, {1, 1, 1}}
	z := make([]float64, 3)
	for _, e := range exps {
		p := NewPoly(3, [][]int{e}, []float64{rng.NormFloat64()})
		col := newColumn(p)
		for k := 0; k < 200; k++ {
			for j := range z {
				z[j] = rng.NormFloat64()
				if rng.IntN(5) == 0 {
					z[j] = math.Copysign(0, z[j])
				}
			}
			got, want := col.eval(z), p.Eval(z)
			if math.Float64bits(got) != math.Float64bits(want) {
				t.Fatalf("%v at %v: column %v, Eval %v", e, z, got, want)
			}
		}
	}
}

// TestFirstStrided: lpRows's strided walk over the runs visits exactly
// the samples whose count over all runs (from 1) is a multiple of the
// stride, as a count over every sample does. A property of the
// implementation, checked by brute force.
func TestFirstStrided(t *testing.T) {
	for _, lens := range [][]int{{7}, {5, 0, 9, 3}, {1, 1, 1, 40}, {17, 23, 31}} {
		for stride := 1; stride <= 12; stride++ {
			var want, got []int
			idx, off := 0, 0
			for _, m := range lens {
				for k := 0; k < m; k++ {
					idx++
					if idx%stride == 0 {
						want = append(want, off+k)
					}
				}
				for k := firstStrided(off, stride); k < m; k += stride {
					got = append(got, off+k)
				}
				off += m
			}
			if !reflect.DeepEqual(got, want) {
				t.Errorf("runs %v stride %d: visits %v, want %v", lens, stride, got, want)
			}
		}
	}
}

// pieceBoxRef is pieceBox as it was before its shortcuts (every sample's
// ray checked in full), the reference of TestPieceBoxSame.
func (ck *checker) pieceBoxRef(ve *vEval, c []float64, level float64) (lo, hi []float64) {
	n := ck.fam.n
	lo, hi = make([]float64, n), make([]float64, n)
	tl, th := ck.trust.Lo, ck.trust.Hi
	add := func(z []float64) {
		for j, v := range z {
			lo[j], hi[j] = math.Min(lo[j], v), math.Max(hi[j], v)
		}
	}
	for ri := range ck.rays {
		ry := &ck.rays[ri]
		mx := 0.0
		for k := 0; k < rayPoints; k++ {
			z := ry.z[k*n : (k+1)*n]
			mx = math.Max(mx, ve.value(z))
			if mx > level {
				break
			}
			add(z)
		}
	}
	buf := make([]float64, n)
	for ri := range ck.runs {
		zs := ck.runs[ri].z
		for k := 0; k+n <= len(zs); k += n {
			z := zs[k : k+n]
			if ve.value(z) <= level && rayMax(ve, z, buf) <= level {
				add(z)
			}
		}
	}
	for j := range lo {
		w := hi[j] - lo[j]
		lo[j], hi[j] = math.Max(lo[j]-w*boxMargin, tl[j]), math.Min(hi[j]+w*boxMargin, th[j])
	}
	return lo, hi
}

// TestPieceBoxSame: the piece's box of a V of degree 4 (its samples
// checked only outside the box so far, their rays stopped at the first
// point above the level) is the box of checking every sample's whole
// ray, bit for bit, at levels from a tenth of the found one to ten times
// it; and rayMaxBelow says below exactly when rayMax is below the
// limit, with rayMax's value then. Properties of the implementation.
func TestPieceBoxSame(t *testing.T) {
	d := vdpReverseZ().runs([][2]float64{{-2.2, 2.2}, {-3, 3}}, 40, 0.005, 2000, 10, 0.01, 3)
	ck := mustChecker(t, vdpReverseZ(), d, 0.01, 4)
	o := (&Options{Degree: 4}).Defaults()
	lin, _ := linearise(ck.az, ck.fam.n)
	c0, err := startV(ck.fam, lin)
	if err != nil {
		t.Fatal(err)
	}
	g, err := ck.grow(context.Background(), c0, false, o)
	if err != nil || !g.best.res.ok {
		t.Fatalf("no V of degree 4: %v %s", err, g.best.res.reason)
	}
	ve := newVEval(ck.fam, g.best.c)
	for _, f := range []float64{0.1, 0.5, 1, 2, 10} {
		level := f * g.best.res.level
		lo, hi := ck.pieceBox(ve, g.best.c, level)
		wlo, whi := ck.pieceBoxRef(ve, g.best.c, level)
		if !reflect.DeepEqual(lo, wlo) || !reflect.DeepEqual(hi, whi) || !(hi[0] > lo[0]) {
			t.Errorf("level %g: box %v..%v, full check %v..%v", level, lo, hi, wlo, whi)
		}
	}
	buf := make([]float64, 2)
	rng := rand.New(rand.NewPCG(8, 0))
	for k := 0; k < 2000; k++ {
		z := []float64{4 * (rng.Float64() - 0.5), 6 * (rng.Float64() - 0.5)}
		limit := g.best.res.level * 3 * rng.Float64()
		full := rayMax(ve, z, buf)
		mx, below := rayMaxBelow(ve, z, buf, limit)
		if below != (full < limit) || (below && mx != full) {
			t.Fatalf("at %v limit %g: rayMaxBelow %g %v, rayMax %g", z, limit, mx, below, full)
		}
	}
}
