package report_test

import (
	"os"

	"basin.example/cmd/basin/internal/report"
	"basin.example/fit"
	"basin.example/fit/poly"
)

// ExampleSummary prints the text summary of a hand-made certificate.
func ExampleSummary() {
	cert := &fit.Certificate{
		Format: fit.CertificateFormat, Verdict: fit.Inconclusive, Strength: fit.NoClaim,
		Reason: "no held-out runs", States: []string{"pitch", "rate"}, Units: []string{"deg", "deg/s"},
		Equilibrium: []float64{1.5, 0}, Scale: []float64{2, 10},
		V:      poly.Poly{Exponents: [][]int{{2, 0}, {0, 2}}, Coefficients: []float64{1, 0.5}},
		Level:  0.8,
		Region: fit.Region{Extent: [][2]float64{{-0.29, 3.29}, {-12.6, 12.6}}, Limit: "envelope edge"},
	}
	if err := report.Summary(os.Stdout, &report.Input{Cert: cert}); err != nil {
		panic(err)
	}
	// Output:
	// verdict: inconclusive (strength none)
	//   no held-out runs
	// equilibrium: pitch = 1.5 deg, rate = 0 deg/s
	// V(z) = 1 z_pitch^2 + 0.5 z_rate^2
	//   z = (x - equilibrium) / scale, scale: pitch 2 deg, rate 10 deg/s
	// region {V <= 0.8}:
	//   pitch from -0.29 to 3.29 deg
	//   rate from -12.6 to 12.6 deg/s
	//   limited by: envelope edge: the region reached the edge of the states the runs cover; to let it grow, add runs from larger kicks that start outside pitch -0.29 to 3.29 deg, rate -12.6 to 12.6 deg/s
	// held-out: none, so the verdict cannot be certified: hold out runs (split holdout in a manifest) or record more runs
	// caveat: Empirical evidence from recorded samples only, not a proof of stability; nothing is claimed outside the envelope the data cover, and safety-relevant decisions defer to the applicable codes and to licensed engineering judgement.
}
