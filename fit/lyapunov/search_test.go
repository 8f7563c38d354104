package lyapunov

import (
	"context"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/floats"
)

func TestLevelVanDerPolKhalil(t *testing.T) {
	// The quadratic V = 1.5x1² - x1x2 + x2² from the Lyapunov equation with
	// Q = I (Khalil, Nonlinear Systems, 3rd ed., §8.2; [Khalil2002])
	// has its best level at c* = 2.3044776 (computed there with mpmath):
	// a sound level search must stay at or below c* + 1e-3, and should
	// reach 2.2 ([Khalil2002]).
	ck := mustChecker(t, vdpReverseZ(), vdpDataZ(), 0, 2)
	c := []float64{1.5, -1, 1} // terms z1², z1 z2, z2²
	r := ck.verify(c, ck.level(c))
	if !r.ok {
		t.Fatalf("no level: %s", r.reason)
	}
	if r.level > 2.3044776+1e-3 || r.level < 2.2 {
		t.Errorf("level %.5f, want in [2.2, 2.3055]", r.level)
	}
	t.Logf("Khalil's P: level %.5f (c* = 2.30448), limited by %s at %v; bound: %+v", r.level, r.limit, r.limitZ, r.bound)
}

func TestLinearLP(t *testing.T) {
	// On a stable linear system the LP's quadratic must satisfy A'P + PA
	// negative definite (Lyapunov's theorem for linear systems, e.g.
	// [Khalil2002] Theorem 4.6); checked by its eigenvalues.
	// A = [[0, 1], [-2, -3]] ([Ogata]).
	sys := &testSystem{n: 2, f: []*Poly{
		NewPoly(2, [][]int{{0, 1}}, []float64{1}),
		NewPoly(2, [][]int{{1, 0}, {0, 1}}, []float64{-2, -3}),
	}}
	d := sys.runs([][2]float64{{-1, 1}, {-1, 1}}, 20, 0.01, 600, 5, 0, 2)
	o := (&Options{}).Defaults()
	ck := mustChecker(t, sys, d, 0, 2)
	if a := []float64{0, 1, -2, -3}; !floats.Equal(ck.az, a) {
		t.Fatalf("Jacobian %v, want %v", ck.az, a)
	}
	// Start from the identity (not the Lyapunov solution), so the LP must
	// find the decrease itself.
	prev := ck.fam.quadratic(eye(2))
	rows := ck.lpRows(prev, 0.5, 0.5, 0, o, rand.New(rand.NewPCG(1, 0)))
	out := solveCertLP(ck.fam, rows, false)
	if out.err != nil || !(out.g > 0) {
		t.Fatalf("LP: %v, margin %g", out.err, out.g)
	}
	p := ck.fam.quadMatrix(out.c)
	lam, ok := ck.linearDecay(out.c)
	ev := symEigen(p, 2)
	if !ok || !(ev[0] > 0) {
		t.Errorf("P = %v (eigenvalues %v), A'P+PA largest eigenvalue %g: want P > 0 and A'P+PA < 0", p, ev, lam)
	}
	// The margin bounds the decrease: z'(A'P+PA)z <= -g|z|², so
	// lambda_max <= -g up to the LP tolerance (1e-7 relative, sampled
	// directions only: 1e-3 slack).
	if lam > -out.g*(1-1e-3) {
		t.Errorf("lambda_max(A'P+PA) = %g, margin %g: want <= -margin", lam, out.g)
	}
}

// twoWellsZ is the double well x” = x - x³ - 0.6 x' about its right well
// (1, 0) in z = ((x - 1)/s1, v/s2): z1' = (s2/s1) z2, z2' = (-2 s1 z1 -
// 3 s1² z1² - s1³ z1³)/s2 - 0.6 z2, with the saddle at z1 = -1/s1 and
// the left well at z1 = -2/s1.
func twoWellsZ(s1, s2 float64) *testSystem {
	return &testSystem{n: 2, f: []*Poly{
		NewPoly(2, [][]int{{0, 1}}, []float64{s2 / s1}),
		NewPoly(2, [][]int{{1, 0}, {2, 0}, {3, 0}, {0, 1}}, []float64{-2 * s1 / s2, -3 * s1 * s1 / s2, -s1 * s1 * s1 / s2, -0.6}),
	}, others: [][]float64{{-1 / s1, 0}, {-2 / s1, 0}}}
}

func TestGrowFirstTargetShrinks(t *testing.T) {
	// The double well in the z of a certificate whose scales are the
	// spreads of logs over both wells (position 1.45, velocity 0.285:
	// most samples rest, so the velocity's spread is small), with 0.3%
	// noise per state's range (z noise 0.0077 and 0.032). The quadratic
	// of the Lyapunov equation has no level beyond the noise ball, and
	// every growth round's target stayed at nine times V's largest value
	// on the ball or more, a set on which no quadratic falls: every LP's
	// margin was negative (no V was found). The region found must stay
	// short of the saddle.
	s1, s2 := 1.45, 0.285
	sys := twoWellsZ(s1, s2)
	d := sys.runs([][2]float64{{-0.55, 0.55}, {-5, 5}}, 40, 0.01, 1500, 1, 0, 3)
	rng := rand.New(rand.NewPCG(3, 1))
	sigma := []float64{0.0077, 0.032}
	for i := range d.Z {
		d.Z[i] += sigma[i%2] * rng.NormFloat64()
	}
	s := sys.system(0)
	copy(s.Noise, sigma)
	res, err := Certify(context.Background(), d, s, &Options{Degree: 2})
	if err != nil {
		t.Fatal(err)
	}
	if res.Outcome != Found {
		t.Fatalf("outcome %s: %s", res.Outcome, res.Detail)
	}
	t.Logf("level %.4g, share %.3f, box %v..%v, limit %s", res.Level, res.Share, res.Lo, res.Hi, res.Limit)
	if res.Lo[0] <= -1/s1 {
		t.Errorf("region reaches z1 = %.4g, at or past the saddle at %.4g", res.Lo[0], -1/s1)
	}
}
