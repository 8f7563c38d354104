package validate

import (
	"math"

	"basin.example/fit"
	"basin.example/ingest"
)

// runNoise widens a Screener's tolerance for a run noisier than the
// certificate assumed. The certificate's Tolerance is computed from the
// fitted model's noise, pooled over the fit runs; when the noise is a
// share of each run's own spread (one sensor range per test), the pooled
// figure is the quiet runs' and a loud run's noise alone breaks it. Each
// run screened is therefore given the tolerance times the largest ratio,
// over states, of its own noise ([fit.RunNoise]) to the certificate's
// Noise, when that ratio exceeds 1 (never narrower than the
// certificate's). The tolerance is first order in the noise, so it scales
// with it. An explicit ScreenOptions.Tolerance is kept as given.
type runNoise struct {
	on  bool
	ref []float64 // the certificate's Noise
	est fit.NoiseEstimator
	buf []float64
}

func (s *Screener) initRunNoise() {
	c := s.cert
	if s.opts.Tolerance > 0 || len(c.Noise) != s.n {
		return
	}
	for _, v := range c.Noise {
		if !(v > 0) || math.IsInf(v, 0) {
			return
		}
	}
	s.noise = runNoise{on: true, ref: c.Noise, buf: make([]float64, s.n)}
}

// runTol returns the tolerance for run.
func (s *Screener) runTol(run *ingest.Run) float64 {
	if !s.noise.on || run.Len() < 5 {
		return s.baseTol
	}
	s.noise.est.RunTo(s.noise.buf, run)
	ratio := 1.0
	for j, v := range s.noise.buf {
		if r := v / s.noise.ref[j]; r > ratio {
			ratio = r
		}
	}
	return s.baseTol * ratio
}
