package lyapunov

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"
)

// TestBounderEnclosure: the Taylor-form bounds enclose every sampled value
// of a random cubic over random boxes (the enclosure property of a
// centred form; Moore, Kearfott & Cloud, Introduction to Interval
// Analysis, 2009, ch. 6, from memory), and are exact for a box of width 0.
func TestBounderEnclosure(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	var exps [][]int
	var coef []float64
	for a := 0; a <= 3; a++ {
		for b := 0; a+b <= 3; b++ {
			for c := 0; a+b+c <= 3; c++ {
				exps = append(exps, []int{a, b, c})
				coef = append(coef, rng.NormFloat64())
			}
		}
	}
	p := NewPoly(3, exps, coef)
	bd := NewBounder(p)
	z := make([]float64, 3)
	for trial := 0; trial < 200; trial++ {
		c := []float64{rng.NormFloat64(), rng.NormFloat64(), rng.NormFloat64()}
		r := []float64{rng.Float64(), rng.Float64(), rng.Float64()}
		lo, hi := bd.Bounds(c, r)
		for s := 0; s < 200; s++ {
			for j := range z {
				z[j] = c[j] + r[j]*(2*rng.Float64()-1)
			}
			v := p.Eval(z)
			if !(v >= lo-1e-9 && v <= hi+1e-9) {
				t.Fatalf("value %g outside [%g, %g] at %v (box %v ± %v)", v, lo, hi, z, c, r)
			}
		}
		lo, hi = bd.Bounds(c, []float64{0, 0, 0})
		if v := p.Eval(c); !scalar.EqualWithinAbsOrRel(lo, v, 1e-9, 1e-9) || !scalar.EqualWithinAbsOrRel(hi, v, 1e-9, 1e-9) {
			t.Fatalf("point box: [%g, %g], value %g", lo, hi, v)
		}
	}
}

// TestLeverageHatMatrix: h at the samples equals the diagonal of the hat
// matrix Q Q' from gonum's QR of the library matrix (an independent
// computation; Montgomery, Peck & Vining, Introduction to Linear
// Regression Analysis, on the hat matrix, from memory), and the
// polynomial form H agrees with the direct evaluation.
func TestLeverageHatMatrix(t *testing.T) {
	rng := rand.New(rand.NewPCG(2, 2))
	const ns = 200
	z := make([]float64, 2*ns)
	for i := range z {
		z[i] = 2*rng.Float64() - 1
	}
	terms := [][]int{{1, 0}, {0, 1}, {2, 1}, {0, 3}}
	tr, err := NewTrust(2, terms, z)
	if err != nil {
		t.Fatal(err)
	}
	// The downward closure: 1, z1, z2, z1², z1 z2, z2², z1² z2, z2³.
	closure := [][]int{{0, 0}, {1, 0}, {0, 1}, {2, 0}, {1, 1}, {0, 2}, {2, 1}, {0, 3}}
	if tr.Terms != len(closure) {
		t.Fatalf("%d columns, want %d", tr.Terms, len(closure))
	}
	a := mat.NewDense(ns, len(closure), nil)
	for i := 0; i < ns; i++ {
		for k, e := range closure {
			a.Set(i, k, math.Pow(z[2*i], float64(e[0]))*math.Pow(z[2*i+1], float64(e[1])))
		}
	}
	var qr mat.QR
	qr.Factorize(a)
	var q mat.Dense
	qr.QTo(&q)
	hmax := 0.0
	for i := 0; i < ns; i++ {
		h := 0.0
		for k := range closure {
			h += q.At(i, k) * q.At(i, k)
		}
		hmax = math.Max(hmax, h)
		if !scalar.EqualWithinAbsOrRel(tr.HSamples[i], h, 1e-9, 1e-7) {
			t.Fatalf("sample %d: h %g, hat matrix %g", i, tr.HSamples[i], h)
		}
		if hp := tr.H.Eval(z[2*i : 2*i+2]); !scalar.EqualWithinAbsOrRel(hp, h, 1e-9, 1e-6) {
			t.Fatalf("sample %d: polynomial h %g, hat matrix %g", i, hp, h)
		}
	}
	if !scalar.EqualWithinAbsOrRel(tr.HMax, hmax, 1e-9, 1e-7) {
		t.Errorf("HMax %g, want %g", tr.HMax, hmax)
	}
	if tr.Inside([]float64{3, 3}) {
		t.Error("a point far outside the samples is trusted")
	}
	// A collinear library: the second state is twice the first.
	for i := 0; i < ns; i++ {
		z[2*i+1] = 2 * z[2*i]
	}
	if _, err := NewTrust(2, terms, z); err == nil {
		t.Error("collinear library: no error")
	}
}

// TestVerifyQuadratic: for V = |z|² and f = -z (V-dot = -2|z|²) inside a
// trust region that is the whole box [-1, 1]², the largest level whose
// box stays in the domain is 1 (the circle touching the box; exact);
// with another equilibrium at (0.5, 0) it is below V there, 0.25.
func TestVerifyQuadratic(t *testing.T) {
	v := NewPoly(2, [][]int{{2, 0}, {0, 2}}, []float64{1, 1})
	vd := NewPoly(2, [][]int{{2, 0}, {0, 2}}, []float64{-2, -2})
	p := &Problem{N: 2, V: v, VDot: vd, Grad: []*Poly{Deriv(v, 0), Deriv(v, 1)},
		Lo: []float64{-1, -1}, Hi: []float64{1, 1}, Exempt: 0.01, PosEps: 1e-3}
	r := Verify(p, 4, []float64{-2, -2}, []float64{2, 2})
	if r.Level > 1 || r.Level < 0.95 {
		t.Errorf("level %g, want in [0.95, 1] (limit %s)", r.Level, r.Limit)
	}
	p.Others = [][]float64{{0.5, 0}}
	r = Verify(p, 4, []float64{-2, -2}, []float64{2, 2})
	if r.Level >= 0.25 || r.Level < 0.2 || r.Limit != LimitOther {
		t.Errorf("with an equilibrium at V = 0.25: level %g limit %s", r.Level, r.Limit)
	}
}
