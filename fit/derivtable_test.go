package fit

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

// TestDerivativeTable measures, per derivative method, whether the true
// support is recovered and the largest relative coefficient error, on a
// damped Duffing oscillator and on Van der Pol (mu = 1) at noise 0, 0.5%
// and 2% of each state's range, 12 runs of 10 s sampled at 100 Hz, and on
// a fast softening oscillator (the demo's kind of dynamics) at 200 Hz. It
// prints the table that chose DefaultDerivative and checks that the
// default recovers the support in every noisy case it is meant for. Skipped
// with -short.
func TestDerivativeTable(t *testing.T) {
	heavy(t)
	if testing.Short() {
		t.Skip("measurement table; run without -short")
	}
	methods := []string{DerivFornberg, DerivSavitzkyGolay, DerivIntegral, DerivAuto}
	var b strings.Builder
	fmt.Fprintf(&b, "| system | noise | %s |\n|---|---|%s\n", strings.Join(methods, " | "), strings.Repeat("---|", len(methods)))
	for _, sys := range []system{duffing, vanderpol, softening} {
		rng := rand.New(rand.NewPCG(3, 0))
		var starts [][]float64
		box, dt := 2.0, 0.01
		if sys.name == "softening" {
			box, dt = 0.2, 0.005 // inside the saddles' energy level
		}
		for range 12 {
			starts = append(starts, []float64{box * (2*rng.Float64() - 1), box * (2*rng.Float64() - 1)})
		}
		for _, noise := range []float64{0, 0.005, 0.02} {
			ds := simulate(sys, starts, 10, dt, 10, noise, 11)
			fmt.Fprintf(&b, "| %s | %.1f%% |", sys.name, 100*noise)
			for _, meth := range methods {
				m, err := Field(context.Background(), ds, &FieldOptions{Derivative: meth, Bootstrap: -1})
				if err != nil {
					t.Fatalf("%s %g %s: %v", sys.name, noise, meth, err)
				}
				sup, _, missed, extra := compareCount(m, sys)
				rel := foundError(m, sys) // over the true terms found
				mark := "yes"
				if !sup {
					mark = fmt.Sprintf("no (-%d +%d)", missed, extra)
				}
				fmt.Fprintf(&b, " %s %.2g%% (w %v) |", mark, 100*rel, m.Window)
				// The default must recover the support, except on the
				// softening oscillator at 2% noise, which defeats every
				// method here (its cubic term matters only in the first
				// second of each decaying run). On Duffing and Van der Pol
				// it must stay within 5% (the brief's bound for Lorenz at 1%
				// noise; measured under 1%); the softening oscillator's
				// error (5.0% at 0.5% noise) is reported, not bounded.
				hard := sys.name == "softening"
				if meth == DefaultDerivative && ((!sup && !(hard && noise > 0.01)) || (!hard && !(rel <= 0.05))) {
					t.Errorf("%s at %g%% noise: default %s: support %v, error %.3g", sys.name, 100*noise, meth, sup, rel)
				}
			}
			b.WriteString("\n")
		}
	}
	t.Log("\n" + b.String())
}

// foundError is the largest relative error over the true terms that the
// model has.
func foundError(m *Model, sys system) float64 {
	e := 0.0
	for i, eq := range m.Equations {
		for k, x := range eq.Exponents {
			if want, ok := sys.true[i][monoName(x, sys.states)]; ok {
				e = math.Max(e, math.Abs(eq.Coefficients[k]-want)/math.Abs(want))
			}
		}
	}
	return e
}
