package lyapunov

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
	vdp := vdpReverseZ()
	d := vdp.runs([][2]float64{{-2.2, 2.2}, {-3, 3}}, 40, 0.005, 1999, 1, 0.01, 1)
	sys := vdp.system(0.01)
	samples := len(d.Z) / 2
	for _, deg := range []int{2, 4} {
		b.Run("deg"+string(rune('0'+deg)), func(b *testing.B) {
			b.SetBytes(int64(samples * 3 * 8))
			var res *Result
			for b.Loop() {
				var err error
				if res, err = Certify(context.Background(), d, sys, &Options{Degree: deg}); err != nil {
					b.Fatal(err)
				}
			}
			if res.Outcome != Found {
				b.Fatalf("no V: %s %s", res.Outcome, res.Detail)
			}
			per := b.Elapsed().Seconds() / float64(b.N)
			// One level search on the final V, timed alone.
			ck := mustChecker(b, vdp, d, 0.01, deg)
			t0 := time.Now()
			const reps = 3
			for range reps {
				ck.level(res.V.Coefficients)
			}
			lvl := time.Since(t0).Seconds() / reps
			b.ReportMetric(per, "certify-s")
			b.ReportMetric(float64(samples)/per, "samples/s")
			b.ReportMetric(lvl, "level-s")
			b.ReportMetric(lvl*float64(res.Solves+1)/per, "level-share")
			b.ReportMetric(float64(res.Solves), "lp-solves")
			b.ReportMetric(float64(res.LPRounds), "lp-rounds")
			b.ReportMetric(float64(res.LPRows), "active-rows")
			b.ReportMetric(res.Share, "env-share")
		})
	}
}

// BenchmarkLevelCache: the growth rounds' level search of one V (the
// sampled search, in-sample figures left out) with the point caches and
// without them (each point's monomials, gradients and field computed when
// needed), interleaved in one loop on demo-sized data (as
// BenchmarkCertify); it reports both times and their ratio.
func BenchmarkLevelCache(b *testing.B) {
	vdp := vdpReverseZ()
	d := vdp.runs([][2]float64{{-2.2, 2.2}, {-3, 3}}, 40, 0.005, 1999, 1, 0.01, 1)
	for _, deg := range []int{2, 4} {
		b.Run("deg"+string(rune('0'+deg)), func(b *testing.B) {
			cached := mustChecker(b, vdp, d, 0.01, deg)
			plain := mustChecker(b, vdp, d, 0.01, deg)
			plain.samples, plain.rayPts, plain.poolPts = nil, nil, nil
			plain.dots.off = true
			lin, _ := linearise(cached.az, cached.fam.n)
			c, err := startV(cached.fam, lin)
			if err != nil {
				b.Fatal(err)
			}
			var tc, tp time.Duration
			for b.Loop() {
				t0 := time.Now()
				rc := cached.levelOf(c, false)
				t1 := time.Now()
				rp := plain.levelOf(c, false)
				tp += time.Since(t1)
				tc += t1.Sub(t0)
				if !rc.ok || rc.level != rp.level {
					b.Fatalf("levels %v (%v), %v (%v)", rc.level, rc.ok, rp.level, rp.ok)
				}
			}
			b.ReportMetric(tc.Seconds()/float64(b.N), "cached-s")
			b.ReportMetric(tp.Seconds()/float64(b.N), "plain-s")
			b.ReportMetric(tp.Seconds()/tc.Seconds(), "speedup")
		})
	}
}
