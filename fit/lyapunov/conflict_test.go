package lyapunov

import (
	"context"
	"math"
	"math/rand/v2"
	"testing"

	"basin.example/fit/lp"

	"gonum.org/v1/gonum/floats/scalar"
)

// saddleRuns samples the linear saddle z1' = z1, z2' = -2 z2 from its
// exact solution z1 = z1(0) e^t, z2 = z2(0) e^{-2t} (any ODE text), from
// starts on a ring of radius 0.5, every dt for steps steps.
func saddleRuns(runs, steps int, dt float64) *Data {
	d := &Data{}
	for r := 0; r < runs; r++ {
		a := 2 * math.Pi * (float64(r) + 0.5) / float64(runs)
		z1, z2 := 0.5*math.Cos(a), 0.5*math.Sin(a)
		run := Run{Name: "saddle" + string(rune('A'+r))}
		for k := 0; k <= steps; k++ {
			t := float64(k) * dt
			run.T = append(run.T, t)
			d.Z = append(d.Z, z1*math.Exp(t), z2*math.Exp(-2*t))
		}
		d.Runs = append(d.Runs, run)
	}
	return d
}

func saddleZ() *testSystem {
	return &testSystem{n: 2, f: []*Poly{
		NewPoly(2, [][]int{{1, 0}}, []float64{1}),
		NewPoly(2, [][]int{{0, 1}}, []float64{-2}),
	}}
}

// checkFarkas checks, from the LP's rows as generated (not the solver's
// figures), that c's weights are a Farkas certificate (Farkas' lemma,
// [Schrijver1986] §7.3): y >= 0, G'y - yLower + yUpper = 0 and
// h'y - lower'yLower + upper'yUpper = -1 < 0, with the certificate LP's
// bounds (|coefficient| <= lpCoefBound, |g| <= lpMarginBound) and, for a
// negative margin, the added row -g <= 0.
//
// Tolerance: the weights come from the dual simplex's basis inverse,
// refactorised by LU every 100 pivots, so the cancellation in G'y holds
// to rounding relative to the size of the terms that cancel,
// sum_i y_i |g_i|; 1e-9 of it is well inside the LP's own feasibility
// tolerance (1e-7 relative, lp.CutOptions.Tol) and far above the 1e-16
// of double rounding (the measured residuals are 1e-14 to 1e-13 of it).
func checkFarkas(t *testing.T, c *Conflict) {
	t.Helper()
	m := c.rows.Len()
	w := len(c.yl)
	if len(c.y) != m+1 || len(c.yu) != w {
		t.Fatalf("certificate sizes: y %d (want %d), yl %d, yu %d", len(c.y), m+1, len(c.yl), len(c.yu))
	}
	r := make([]float64, w)
	g := make([]float64, w)
	scale, yh := 0.0, 0.0
	for i := 0; i < m; i++ {
		if !(c.y[i] >= 0) {
			t.Fatalf("y[%d] = %g < 0", i, c.y[i])
		}
		if c.y[i] == 0 {
			continue
		}
		h := c.rows.RowTo(g, i)
		for k, v := range g {
			r[k] += c.y[i] * v
			scale += c.y[i] * math.Abs(v)
		}
		yh += c.y[i] * h
	}
	// The margin row -g <= 0.
	r[w-1] -= c.y[m]
	scale += c.y[m]
	for k := 0; k < w; k++ {
		if !(c.yl[k] >= 0) || !(c.yu[k] >= 0) {
			t.Fatalf("bound weights %g, %g < 0", c.yl[k], c.yu[k])
		}
		bound := lpCoefBound
		if k == w-1 {
			bound = lpMarginBound
		}
		r[k] += -c.yl[k] + c.yu[k]
		scale += c.yl[k] + c.yu[k]
		yh += bound*c.yl[k] + bound*c.yu[k] // -lower'yl + upper'yu with lower = -bound
	}
	res := 0.0
	for _, v := range r {
		res = math.Max(res, math.Abs(v))
	}
	if !(res <= 1e-9*scale) {
		t.Errorf("|G'y - yl + yu| = %g, above 1e-9 of %g", res, scale)
	}
	if !(yh < 0) || !scalar.EqualWithinAbs(yh, -1, 1e-9) {
		t.Errorf("y'h = %.12g, want -1 (< 0)", yh)
	}
	t.Logf("%s: %d of %d rows weighted, |G'y| %.2g (of %.3g), y'h %.12g", c.Kind, c.Rows, m, res, scale, yh)
}

// TestConflictSaddle: a saddle's linearisation is unstable, so the
// search certifies nothing; the one LP it poses for the finding has a
// negative best margin, and its multipliers are a Farkas certificate
// that no V of the family falls along the rows with g >= 0.
func TestConflictSaddle(t *testing.T) {
	sys := saddleZ()
	d := saddleRuns(12, 60, 0.02)
	for _, deg := range []int{2, 4} {
		res, err := Certify(context.Background(), d, sys.system(0), &Options{Degree: deg})
		if err != nil {
			t.Fatal(err)
		}
		c := res.Conflict
		if res.Outcome != Unstable || c == nil {
			t.Fatalf("degree %d: outcome %s, conflict %v", deg, res.Outcome, c)
		}
		if c.Kind != ConflictNegativeMargin || !(c.Margin < 0) || c.Rows == 0 || len(c.Top) == 0 || len(c.Families) == 0 {
			t.Fatalf("degree %d: conflict %+v", deg, *c)
		}
		checkFarkas(t, c)
		share := 0.0
		for _, f := range c.Families {
			if !(f.Share > 0) || f.Rows <= 0 {
				t.Errorf("family %+v", f)
			}
			share += f.Share
		}
		if !scalar.EqualWithinAbs(share, 1, 1e-9) {
			t.Errorf("family shares sum to %g, want 1", share)
		}
		for i, r := range c.Top {
			if !(r.Share > 0) || (i > 0 && r.Share > c.Top[i-1].Share) {
				t.Errorf("top rows not positive and falling: %+v", c.Top)
			}
			if r.Sample >= 0 && !pointOf(d, r.Run, r.Sample, r.Z) {
				t.Errorf("row %+v: not the run's sample", r)
			}
		}
		// The weight lies where V must rise: off the stable axis z1 = 0.
		if z := c.Top[0].Z; z != nil && !(math.Abs(z[0]) > 1e-3) {
			t.Errorf("strongest row at %v, on the stable axis", z)
		}
	}
}

// pointOf reports whether sample k of the run named name is z.
func pointOf(d *Data, name string, k int, z []float64) bool {
	off := 0
	for _, r := range d.Runs {
		if r.Name == name {
			return k < len(r.T) && d.Z[2*(off+k)] == z[0] && d.Z[2*(off+k)+1] == z[1]
		}
		off += len(r.T)
	}
	return false
}

// TestConflictInfeasible: rows that no V meets at any margin (a target
// V(z) <= 1 and an exclusion V(z/2) >= 1 on the same ray; a quadratic V
// has V(z/2) = V(z)/4) make the LP infeasible, and the solver's Farkas
// ray is summarised and checked.
func TestConflictInfeasible(t *testing.T) {
	sys := saddleZ()
	d := saddleRuns(12, 60, 0.02)
	o := (&Options{Degree: 2}).Defaults()
	ck, err := newChecker(context.Background(), d, sys.system(0), o, false)
	if err != nil {
		t.Fatal(err)
	}
	rows := newCertRows(ck.fam, 0)
	f := make([]float64, 2)
	rng := rand.New(rand.NewPCG(3, 0))
	for i := 0; i < 12; i++ {
		z := []float64{rng.Float64() - 0.5, rng.Float64() - 0.5}
		rows.addPoint(z, ck.field(f, z), true)
	}
	z := []float64{0.4, 0.3}
	rows.addPoint(z, ck.field(f, z), true)
	rows.addExcluded([]float64{0.2, 0.15})
	out := solveCertLP(ck.fam, rows, false)
	if out.res == nil || out.res.Status != lp.Infeasible {
		t.Fatalf("LP: %v, status %v", out.err, out.res != nil)
	}
	c := ck.conflict(rows, out)
	if c == nil || c.Kind != ConflictInfeasible {
		t.Fatalf("conflict %+v", c)
	}
	checkFarkas(t, c)
	fams := map[string]bool{}
	for _, f := range c.Families {
		fams[f.Family] = true
	}
	if !fams[FamilyTarget] || !fams[FamilyExclusion] {
		t.Errorf("families %+v: want the target and the exclusion rows", c.Families)
	}
}
