package validate

import (
	"math"

	"basin.example/fit"
	"basin.example/fit/poly"
	"basin.example/ingest"
)

// lateRate returns a run's decay rate over the later half of its time
// from its first sample inside the region (index enter): minus the
// least-squares slope of log V against time over the samples of that half
// that lie inside the region and outside the noise ball, in 1/s; ok is
// false with fewer than DecayMinSamples of them. Over the whole run a
// transient that dies early (a fast state settling) can hide a slow rise
// of V that goes on to the end; the later half sees the rise alone.
func lateRate(cert *fit.Certificate, vp *poly.Compiled, run *ingest.Run, enter int) (float64, bool) {
	m := run.Len()
	if enter < 0 || enter >= m || len(run.T) != m {
		return 0, false
	}
	n := len(run.X)
	t0 := run.T[enter] + (run.T[m-1]-run.T[enter])/2
	r2 := cert.NoiseRadius * cert.NoiseRadius
	x, z := make([]float64, n), make([]float64, n)
	var k, st, stt, sy, sty float64
	for i := enter; i < m; i++ {
		t := run.T[i]
		if t < t0 {
			continue
		}
		for j := range x {
			x[j] = run.X[j][i]
		}
		cert.Z(z, x)
		zz := 0.0
		for _, v := range z {
			zz += v * v
		}
		v := vp.Eval(z)
		if !(zz > r2) || !(v > 0) || !cert.Inside(x, v) {
			continue
		}
		y := math.Log(v)
		dt := t - t0
		k++
		st += dt
		stt += dt * dt
		sy += y
		sty += dt * y
	}
	if k < DecayMinSamples {
		return 0, false
	}
	den := k*stt - st*st
	if !(den > 0) {
		return 0, false
	}
	r := -(k*sty - st*sy) / den
	if math.IsNaN(r) || math.IsInf(r, 0) {
		return 0, false
	}
	return r, true
}
