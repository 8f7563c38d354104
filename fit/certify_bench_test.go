package fit

import (
	"context"
	"testing"
	"time"
)

// BenchmarkCertify: the whole Certify on demo-sized data, 40 runs x 2,000
// samples x 2 states (reverse-time Van der Pol started inside the cycle,
// 0.005 s steps, 0.01 of measurement noise, exact model), for V of degree
// 2 and 4. It reports the time a certify, the share spent in level
// searches (one search timed separately, times the searches made), and
// the LP figures.
func BenchmarkCertify(b *testing.B) {
	ds := certRuns(vdpReverse, [][2]float64{{-2.2, 2.2}, {-3, 3}}, 40, 0.005, 1999, 1, 0.01, 1, false)
	m := vdpReverse.model([]float64{1, 1})
	m.Noise = []float64{0.01, 0.01}
	for _, deg := range []int{2, 4} {
		b.Run("deg"+string(rune('0'+deg)), func(b *testing.B) {
			b.SetBytes(int64(ds.Samples() * 3 * 8))
			var c *Certificate
			for b.Loop() {
				var err error
				if c, err = Certify(context.Background(), m, ds, &CertifyOptions{Degree: deg}); err != nil {
					b.Fatal(err)
				}
			}
			per := b.Elapsed().Seconds() / float64(b.N)
			// One level search on the final V, timed alone.
			o := (&CertifyOptions{Degree: deg}).get()
			ck, _, _ := newChecker(context.Background(), m, ds, m.Equilibrium, []float64{1, 1}, o)
			ck.az = []float64{0, -1, 1, -1}
			t0 := time.Now()
			const reps = 3
			for range reps {
				ck.level(c.V.Coefficients)
			}
			lvl := time.Since(t0).Seconds() / reps
			b.ReportMetric(per, "certify-s")
			b.ReportMetric(float64(ds.Samples())/per, "samples/s")
			b.ReportMetric(lvl, "level-s")
			b.ReportMetric(lvl*float64(c.Region.Solves+1)/per, "level-share")
			b.ReportMetric(float64(c.Region.Solves), "lp-solves")
			b.ReportMetric(float64(c.Region.LPRounds), "lp-rounds")
			b.ReportMetric(float64(c.Region.LPRows), "active-rows")
			b.ReportMetric(c.Region.EnvelopeShare, "env-share")
		})
	}
}
