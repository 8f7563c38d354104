package validate

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"

	"basin.example/ingest"
	"basin.example/internal/order"
)

// ScreenFile screens every run of sf into dst, grown to one result per
// run (reusing its storage, Flags included), and returns it; the results
// are those [Screener.Screen] gives on the runs of [ingest.ReadFile]. A
// file read whole is screened from its data set; a streamed one in one
// pass over its samples, after a first pass for the runs' own noise when
// the certificate's noise widens the tolerance (see runNoise.go) unless
// the file is one run whose noise [Screener.Tap] took. Each
// result's Flags must be copied before dst is reused. It stops with
// ctx's error when ctx is done, and returns the file's read errors.
//
// A piece that ends where its recording was split (at a gap, a missing
// sample or a one-sample jump: every piece of a recording but the last)
// is not judged on settling: see [JudgeLastPieces].
func (s *Screener) ScreenFile(ctx context.Context, dst []RunScreen, sf *ingest.StreamFile) ([]RunScreen, error) {
	dst, err := s.screenFile(ctx, dst, sf)
	if err != nil {
		return nil, err
	}
	JudgeLastPieces(dst)
	return dst, nil
}

// JudgeLastPieces drops the unsettled flag of every run in rs that is a
// piece of a split recording other than its last (named "name~N" as the
// readers name pieces, the recording "name" itself being its first
// piece): the piece ended where its recording was cut (a logger dropout,
// a hammer hit) and had no chance to settle, while the recording's last
// piece ends where the log does and is judged. Flagged is set again.
func JudgeLastPieces(rs []RunScreen) {
	last := map[string]int{} // recording (file and stem) -> its last piece's number
	key := func(r *RunScreen) (string, int) {
		stem, n := ingest.PieceOf(r.Run)
		return r.File + "\x00" + stem, n
	}
	for i := range rs {
		k, n := key(&rs[i])
		if m, ok := last[k]; !ok || n > m {
			last[k] = n
		}
	}
	for i := range rs {
		r := &rs[i]
		if k, n := key(r); n < last[k] {
			r.Flags = slices.DeleteFunc(r.Flags, func(f Flag) bool { return f.Kind == FlagUnsettled })
			r.Flagged = len(r.Flags) > 0
		}
	}
}

func (s *Screener) screenFile(ctx context.Context, dst []RunScreen, sf *ingest.StreamFile) ([]RunScreen, error) {
	pre := false // the runs' tolerances (s.tols, s.known) from the first Scan
	if sf.Late() && len(sf.States) == s.n {
		if !s.noise.on {
			return s.screenLate(ctx, dst, sf, s.baseTol, -1)
		}
		rows, ok := s.tap.rowsOf(sf.File)
		if !ok {
			// the runs' own noise needs their lengths first
			if err := sf.FindRuns(ctx); err != nil {
				return nil, err
			}
		} else {
			// Screened as their runs are found with the tolerance of the
			// file's noise taken as one run (the tap's, from the first
			// read), while each run's own noise is taken on the guess
			// that it ends at the file's last row: a run whose guess
			// holds and whose tolerance is the one screened with is done.
			tol := s.baseTol
			if v, ok := s.tap.guess(rows); ok {
				tol = s.tolFor(v)
			}
			got, err := s.screenLate(ctx, dst, sf, tol, rows)
			if err != nil || sf.Dataset() != nil { // an error, or read whole and screened from it
				return got, err
			}
			dst, pre = got, true
			all := true
			for k := range sf.Runs {
				s.done[k] = s.known[k] && s.tols[k] == tol
				all = all && s.done[k]
			}
			if all {
				return dst, nil
			}
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
	if !pre {
		s.runSlots(n)
		for k := range n {
			s.tols[k], s.known[k], s.done[k] = s.baseTol, !s.noise.on, false
		}
	}
	tols, known, done := s.tols, s.known, s.done
	if slices.Contains(known, false) {
		acc := &s.stream
		acc.init(s.n)
		cur := -1
		finish := func() {
			if cur >= 0 && sf.Runs[cur].Samples >= 5 {
				tols[cur] = s.tolFor(acc.noise())
			}
		}
		err := sf.ScanRuns(ctx, func(k int) bool { return !known[k] }, func(k int, t []float64, x [][]float64) error {
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
	err := sf.ScanRuns(ctx, func(k int) bool { return !done[k] }, func(k int, t []float64, x [][]float64) error {
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

// runSlots sizes the per-run tolerances and flags for n runs, keeping
// the first ones' values.
func (s *Screener) runSlots(n int) {
	s.tols = resize(s.tols, n)
	s.known = resize(s.known, n)
	s.done = resize(s.done, n)
}

// resize returns v with length n, its first min(n, len(v)) elements
// kept.
func resize[T any](v []T, n int) []T {
	if n <= len(v) {
		return v[:n]
	}
	return append(v, make([]T, n-len(v))...)
}

// screenLate screens a file whose runs its Scan finds (see
// ingest.StreamOptions.LateRuns): in one pass that finds them and
// screens them, each with the tolerance tol. With rows >= 0 (the file's
// row count) it also takes each run's own noise on the guess that the
// run ends at the last row, and stores in s.tols the run's tolerance
// and in s.known whether it is known: the guess held, or the run is too
// short for its noise to count.
func (s *Screener) screenLate(ctx context.Context, dst []RunScreen, sf *ingest.StreamFile, tol float64, rows int) ([]RunScreen, error) {
	dst = dst[:0]
	cur := -1
	acc := &s.stream
	acc.init(s.n)
	s.runSlots(0)
	finish := func() { // the noise of run cur, all of whose samples came
		if rows < 0 {
			return
		}
		r := &sf.Runs[cur]
		a, _ := r.Rows()
		s.runSlots(cur + 1)
		s.tols[cur], s.known[cur] = s.baseTol, true
		switch {
		case r.Samples < 5:
		case r.Samples == rows-a:
			s.tols[cur] = s.tolFor(acc.noise())
		default:
			s.known[cur] = false
		}
	}
	err := sf.Scan(ctx, func(k int, t []float64, x [][]float64) error {
		if k != cur {
			if cur >= 0 {
				s.End()
				finish()
			}
			cur = k
			if k < cap(dst) {
				dst = dst[:k+1] // keeps the Flags storage
			} else {
				dst = append(dst[:cap(dst)], make([]RunScreen, k+1-cap(dst))...)
			}
			s.Begin(&dst[k], sf.File, sf.Runs[k].Name)
			s.tol = tol
			if rows >= 0 {
				a, _ := sf.Runs[k].Rows()
				acc.begin(rows - a)
			}
		}
		if rows >= 0 {
			acc.add(x)
		}
		s.Feed(x, t)
		return nil
	})
	if cur >= 0 {
		s.End()
		if err == nil {
			finish()
		}
	}
	if errors.Is(err, ingest.ErrRescan) { // now read whole
		return s.ScreenFile(ctx, dst, sf)
	}
	if err != nil {
		return nil, err
	}
	if len(dst) != len(sf.Runs) || (rows >= 0 && len(s.known) != len(sf.Runs)) {
		return nil, fmt.Errorf("validate: %s: %d runs screened of %d found", sf.File, len(dst), len(sf.Runs))
	}
	return dst, nil
}

// Tap returns the [ingest.BlockTap] to give the Streamer whose files s
// screens ([ingest.StreamOptions.Tap]; one Streamer per Screener), or
// nil when the certificate's noise does not widen the tolerance: with
// it, a streamed file that is one run is screened in one read after the
// Streamer's first, as without the widening.
func (s *Screener) Tap() ingest.BlockTap {
	if !s.noise.on {
		return nil
	}
	return &s.tap
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
const runNoiseCap = ingest.NoiseDiffs

// noiseStride is the stride of the noise estimate of a run of m samples.
func noiseStride(m int) int { return max(1, (m-4)/runNoiseCap) }

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
	a.stride = noiseStride(m)
	for j := range a.d {
		a.d[j] = a.d[j][:0]
	}
}

func (a *streamNoise) add(x [][]float64) {
	n := len(x[0])
	q, stride := a.q, a.stride
	// the differences at i (a multiple of stride) need samples i .. i+4:
	// the first not yet taken is at or after q-4
	i0 := max(0, q-4)
	if r := i0 % stride; r != 0 {
		i0 += stride - r
	}
	for j, xj := range x {
		d := a.d[j]
		l := &a.last[j] // samples q-4 .. q-1
		i := i0
		// those reaching back into the last block's samples
		for ; i < q && i+4 < q+n && len(d) < runNoiseCap+1; i += stride {
			var w [5]float64
			for k := range w {
				if g := i + k; g < q {
					w[k] = l[g-(q-4)]
				} else {
					w[k] = xj[g-q]
				}
			}
			d = append(d, math.Abs(w[0]-4*w[1]+6*w[2]-4*w[3]+w[4]))
		}
		for k := i - q; k+4 < n && len(d) < runNoiseCap+1; k += stride {
			d = append(d, math.Abs(xj[k]-4*xj[k+1]+6*xj[k+2]-4*xj[k+3]+xj[k+4]))
		}
		a.d[j] = d
		if n >= 4 {
			copy(l[:], xj[n-4:])
		} else {
			copy(l[:], l[n:])
			copy(l[4-n:], xj)
		}
	}
	a.q += n
}

func (a *streamNoise) noise() []float64 {
	for j, d := range a.d {
		if len(d) == 0 {
			a.out[j] = 0
			continue
		}
		// the middle values as the sort would leave them (NaN first)
		if len(d)%2 == 0 {
			order.Select(d, len(d)/2-1, len(d)/2)
		} else {
			order.Select(d, len(d)/2)
		}
		med := d[len(d)/2]
		if len(d)%2 == 0 {
			med = (d[len(d)/2-1] + d[len(d)/2]) / 2
		}
		a.out[j] = 1.4826 * med / math.Sqrt(70)
	}
	return a.out
}

// noiseTap is a Screener's [ingest.BlockTap]: the noise estimate of a
// streamed file's first read taken as one run (every row, from the
// first), at each stride its estimated row count allows. When the file
// turns out to be one run of all its rows, that is the run's own noise
// (the same samples at the same stride, so the same value to the bit),
// known before the run is screened: the screen then needs no read for
// it (see ScreenFile).
type noiseTap struct {
	file string
	ok   bool // Start was called and guess not yet
	rows int  // rows shown
	acc  []streamNoise
}

func (tp *noiseTap) Start(file string, rows int, exact bool, states int) {
	tp.file, tp.ok, tp.rows = file, true, 0
	g := noiseStride(max(rows, 0))
	lo, hi := g, g
	if !exact { // an estimate: the strides of counts near it
		lo, hi = max(1, g-g/16-2), g+g/16+2
	}
	n := hi - lo + 1
	for len(tp.acc) < n {
		tp.acc = append(tp.acc, streamNoise{})
	}
	tp.acc = tp.acc[:n]
	for c := range tp.acc {
		a := &tp.acc[c]
		a.init(states)
		a.begin(0)
		a.stride = lo + c
	}
}

func (tp *noiseTap) Block(row0 int, t []float64, x [][]float64) {
	if !tp.ok || row0 != tp.rows || len(x) == 0 || (len(tp.acc) > 0 && len(x) != tp.acc[0].n) {
		tp.ok = false
		return
	}
	for c := range tp.acc {
		tp.acc[c].add(x)
	}
	tp.rows += len(t)
}

// rowsOf returns the rows the tap saw of file's first read, when it saw
// it whole; it can be taken once per read.
func (tp *noiseTap) rowsOf(file string) (rows int, ok bool) {
	if !tp.ok || tp.file != file {
		return 0, false
	}
	tp.ok = false
	return tp.rows, true
}

// guess returns the noise per state of the file's rows taken as one run,
// when the tap gathered it at the stride of their count, rows.
func (tp *noiseTap) guess(rows int) (noise []float64, ok bool) {
	if rows < 5 {
		return nil, false
	}
	stride := noiseStride(rows)
	for c := range tp.acc {
		if a := &tp.acc[c]; a.stride == stride && a.q == rows {
			return a.noise(), true
		}
	}
	return nil, false
}
