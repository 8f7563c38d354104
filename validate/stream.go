package validate

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"

	"basin.example/ingest"
)

// ScreenFile screens every run of sf into dst, grown to one result per
// run (reusing its storage, Flags included), and returns it; the results
// are those [Screener.Screen] gives on the runs of [ingest.ReadFile]. A
// file read whole is screened from its data set; a streamed one in one
// pass over its samples, after a first pass for the runs' own noise when
// the certificate's noise widens the tolerance (see runNoise.go). Each
// result's Flags must be copied before dst is reused. It stops with
// ctx's error when ctx is done, and returns the file's read errors.
func (s *Screener) ScreenFile(ctx context.Context, dst []RunScreen, sf *ingest.StreamFile) ([]RunScreen, error) {
	if sf.Late() && len(sf.States) == s.n {
		if !s.noise.on {
			return s.screenLate(ctx, dst, sf)
		}
		// the runs' own noise needs their lengths first
		if err := sf.FindRuns(ctx); err != nil {
			return nil, err
		}
	}
	n := len(sf.Runs)
	if cap(dst) < n {
		dst = append(dst[:cap(dst)], make([]RunScreen, n-cap(dst))...)
	}
	dst = dst[:n]
	if ds := sf.Dataset(); ds != nil || len(sf.States) != s.n {
		if ds == nil {
			panic("validate: ScreenFile on a streamed file with the wrong number of states")
		}
		for k := range ds.Runs {
			if err := ctx.Err(); err != nil {
				return nil, err
			}
			s.Screen(&dst[k], sf.File, &ds.Runs[k])
		}
		return dst, nil
	}
	tols := s.tols[:0]
	for range n {
		tols = append(tols, s.baseTol)
	}
	s.tols = tols
	if s.noise.on {
		acc := &s.stream
		acc.init(s.n)
		cur := -1
		finish := func() {
			if cur >= 0 && sf.Runs[cur].Samples >= 5 {
				tols[cur] = s.tolFor(acc.noise())
			}
		}
		err := sf.Scan(ctx, func(k int, t []float64, x [][]float64) error {
			if k != cur {
				finish()
				cur = k
				acc.begin(sf.Runs[k].Samples)
			}
			acc.add(x)
			return nil
		})
		if err != nil {
			return nil, err
		}
		finish()
	}
	cur := -1
	err := sf.Scan(ctx, func(k int, t []float64, x [][]float64) error {
		if k != cur {
			if cur >= 0 {
				s.End()
			}
			cur = k
			s.Begin(&dst[k], sf.File, sf.Runs[k].Name)
			s.tol = tols[k]
		}
		s.Feed(x, t)
		return nil
	})
	if err != nil {
		if cur >= 0 {
			s.End()
		}
		return nil, err
	}
	if cur >= 0 {
		s.End()
	}
	return dst, nil
}

// screenLate screens a file whose runs its Scan finds (see
// ingest.StreamOptions.LateRuns): in one pass that finds them and
// screens them, with the certificate's tolerance (no noise widening).
func (s *Screener) screenLate(ctx context.Context, dst []RunScreen, sf *ingest.StreamFile) ([]RunScreen, error) {
	dst = dst[:0]
	cur := -1
	err := sf.Scan(ctx, func(k int, t []float64, x [][]float64) error {
		if k != cur {
			if cur >= 0 {
				s.End()
			}
			cur = k
			if k < cap(dst) {
				dst = dst[:k+1] // keeps the Flags storage
			} else {
				dst = append(dst[:cap(dst)], make([]RunScreen, k+1-cap(dst))...)
			}
			s.Begin(&dst[k], sf.File, sf.Runs[k].Name)
		}
		s.Feed(x, t)
		return nil
	})
	if cur >= 0 {
		s.End()
	}
	if errors.Is(err, ingest.ErrRescan) { // now read whole
		return s.ScreenFile(ctx, dst, sf)
	}
	if err != nil {
		return nil, err
	}
	if len(dst) != len(sf.Runs) {
		return nil, fmt.Errorf("validate: %s: %d runs screened of %d found", sf.File, len(dst), len(sf.Runs))
	}
	return dst, nil
}

// tolFor is runTol's tolerance for a run whose noise per state is v.
func (s *Screener) tolFor(v []float64) float64 {
	ratio := 1.0
	for j, x := range v {
		if r := x / s.noise.ref[j]; r > ratio {
			ratio = r
		}
	}
	return s.baseTol * ratio
}

// runNoiseCap, runNoiseScale: the estimate of fit.NoiseEstimator (see
// [fit.RunNoise]), computed here over a stream of samples: 1.4826 times
// the median of |fourth difference| at every stride-th sample, stride =
// max(1, (m-4)/runNoiseCap), over sqrt(70) (the fourth difference of
// white noise has variance 70 sigma^2). TestStreamNoise keeps the two
// equal.
const runNoiseCap = 4096

// streamNoise computes a run's noise per state from its samples in
// order, holding the last four and at most runNoiseCap+1 differences per
// state.
type streamNoise struct {
	n      int
	m      int // the run's length
	stride int
	q      int // samples seen
	last   [][4]float64
	d      [][]float64
	out    []float64
}

func (a *streamNoise) init(n int) {
	if len(a.d) != n {
		a.n = n
		a.last = make([][4]float64, n)
		a.d = make([][]float64, n)
		for j := range a.d {
			a.d[j] = make([]float64, 0, runNoiseCap+1)
		}
		a.out = make([]float64, n)
	}
}

func (a *streamNoise) begin(m int) {
	a.m, a.q = m, 0
	a.stride = max(1, (m-4)/runNoiseCap)
	for j := range a.d {
		a.d[j] = a.d[j][:0]
	}
}

func (a *streamNoise) add(x [][]float64) {
	for i := range x[0] {
		q := a.q
		// the difference at q-4 needs samples q-4 .. q
		if i0 := q - 4; i0 >= 0 && i0%a.stride == 0 && len(a.d[0]) < runNoiseCap+1 {
			for j := range a.d {
				l := &a.last[j]
				v := x[j][i]
				a.d[j] = append(a.d[j], math.Abs(l[0]-4*l[1]+6*l[2]-4*l[3]+v))
			}
		}
		for j := range a.last {
			l := &a.last[j]
			l[0], l[1], l[2], l[3] = l[1], l[2], l[3], x[j][i]
		}
		a.q++
	}
}

func (a *streamNoise) noise() []float64 {
	for j, d := range a.d {
		if len(d) == 0 {
			a.out[j] = 0
			continue
		}
		slices.Sort(d)
		med := d[len(d)/2]
		if len(d)%2 == 0 {
			med = (d[len(d)/2-1] + d[len(d)/2]) / 2
		}
		a.out[j] = 1.4826 * med / math.Sqrt(70)
	}
	return a.out
}
