package ingest

import (
	"context"
	"fmt"
	"math"
	"path/filepath"
	"slices"
)

// The plan of a streamed file: the runs [table.dataset] would form, found
// in passes over the file that each hold one block (a row group) and
// bounded statistics, never a column:
//
//  1. Rows with a missing cell split the recording into pieces; time must
//     increase; the time steps go into a histogram (dtHist) that brackets
//     their median, and so the gap limit (GapFactor times it), between
//     two bounds. When no step lies between the bounds, every step is on
//     a known side of the limit, whatever the median's exact value, and
//     the gap splits are those of the whole-column median; otherwise the
//     file is read whole. The noise statistics of events.go (the jump
//     statistic at every stride-th sample, the resolution, the span) are
//     gathered in the same pass on the guess that there is no gap split
//     and no missing row (the stride then follows from the footer's row
//     count).
//  2. Only when that guess fails: the gap splits and the noise statistics
//     again, now with the pieces known.
//  3. Resting head and events, from the noise: the head is held (at most
//     maxStreamHead samples, else the file is read whole) until the first
//     motion decides it; events are found as in findEvents over a ring
//     of the last samples, with the candidate loop of each state a
//     bounded distance behind the newest sample (a cluster of candidates
//     longer than that reads the file whole). The cuts split the pieces
//     into the runs.
//
// Pass 3 is left out when both the head and the events are kept.

const (
	// evRing is the samples of one state the event ring holds, and
	// evLook how far ahead of a candidate the samples must be read
	// before it is judged (its window reaches eventBlock+2 samples
	// ahead; the rest is room for a cluster of candidates).
	evRing = 1 << 13
	evLook = 1 << 11
	// evPush is the most samples pushed into the ring at once.
	evPush = 1 << 10
	// maxStreamHead bounds the samples a resting head may last before
	// its first motion, in a streamed file.
	maxStreamHead = 1 << 16
	// maxStreamPieces bounds the pieces (rows between missing ones) of a
	// streamed file.
	maxStreamPieces = 1 << 16
)

type plan struct {
	sf   *StreamFile
	src  source
	opts *Options
	name string
	ns   int

	// pass 1
	pieces  [][2]int // rows with no missing cell, split at missing rows
	total   int
	hist    dtHist
	maxDT   float64
	anyCell []bool // per column: some row has a value
	lo, hi  []float64
	// even: every three consecutive steps of pass 1's pieces are equal
	// (evenSteps), so every sample's jump statistic is on an even clock;
	// h1, h2 the piece's last two steps, nh how many it had (at most 2)
	even     bool
	h1, h2   float64
	nh       int
	blo, bhi []float64 // a block's range per state
	bres     []float64 // and its resolution (see rangeRes)

	// noise statistics, for the pieces split at the gaps, at each of
	// the strides
	final   [][2]int
	strides []int
	acc     []noiseAcc

	noise []stateNoise
	runs  [][2]int
	gaps  int
	evs   int

	ed  *evDetector
	hd  headState
	tap BlockTap // shown pass 1's blocks
	// pass 2's and pass 3's outputs (final may alias pieces, runs final)
	finalBuf, runBuf [][2]int
	selBuf           []float64    // scaleOf's scratch
	jc               [][]jumpCoef // segCoef's, per stride
}

// noiseAcc gathers what noiseOf computes for one state: the jump
// statistic at every stride-th sample (one list per stride tried), the
// resolution.
type noiseAcc struct {
	all   [][]float64
	q     float64
	prev  [3]float64 // the last three values of the piece
	prevT [3]float64 // and their times
}

// newPlan starts the plan of sf, reusing the buffers of prev (the
// Streamer's previous plan; nil for none).
func newPlan(sf *StreamFile, src source, opts *Options, prev *plan) *plan {
	pl := &plan{sf: sf, src: src, opts: opts, name: filepath.Base(sf.File), ns: -1}
	if prev != nil {
		pl.pieces, pl.finalBuf, pl.runBuf = prev.pieces[:0], prev.finalBuf[:0], prev.runBuf[:0]
		pl.acc, pl.strides, pl.ed, pl.hd = prev.acc, prev.strides[:0], prev.ed, prev.hd
		pl.anyCell, pl.lo, pl.hi, pl.noise = prev.anyCell, prev.lo, prev.hi, prev.noise
		pl.selBuf, pl.blo, pl.bhi, pl.jc = prev.selBuf, prev.blo, prev.bhi, prev.jc
		pl.hist = dtHist{dense: prev.hist.dense}
		clear(pl.hist.dense)
	}
	return pl
}

// setup sizes the plan for ns states, on the first block of pass 1 (a
// CSV file's columns are known once its first block is parsed), and
// picks the strides the noise statistics are gathered at on the guess
// that no gap splits: the stride for the row count given and for a few
// missing rows (lower strides), and when the count is an estimate, for
// counts near it.
func (pl *plan) setup(ns int) {
	pl.ns = ns
	pl.even, pl.nh = true, 0
	if len(pl.acc) != ns {
		pl.anyCell, pl.lo, pl.hi, pl.acc = make([]bool, ns), make([]float64, ns), make([]float64, ns), make([]noiseAcc, ns)
	}
	clear(pl.anyCell)
	for j := range pl.lo {
		pl.lo[j], pl.hi[j] = math.Inf(1), math.Inf(-1)
	}
	g := max(1, pl.src.rowsHint()/noiseSubsample)
	pl.strides = pl.strides[:0]
	bottom, top := -2, 2
	if ps, exact := unheld(pl.src).(*parquetSource); exact {
		top = 0 // the footer's count: missing rows can only lower the stride
		if ps.noNulls() {
			// only a NaN value can make a row missing: rare enough that
			// pass 2 may take the noise again when it lowers the stride
			bottom = 0
		}
	}
	for d := bottom; d <= top; d++ {
		if g+d >= 1 {
			pl.strides = append(pl.strides, g+d)
		}
	}
	pl.resetAcc()
	if pl.tap != nil {
		pl.tap.Start(pl.sf.File, pl.src.rowsHint(), top == 0, ns)
	}
}

// run plans the file's runs: passes 1 to 3. With late, pass 3 (when
// needed) is left to the first Scan, which gives the runs' samples as it
// finds them (see lateScan).
func (pl *plan) run(ctx context.Context, late bool) error {
	if err := pl.pass1(ctx); err != nil {
		return err
	}
	if pl.ns < 0 {
		return &errFallback{"error"} // no data rows
	}
	for _, ok := range pl.anyCell {
		if !ok {
			return &errFallback{"error"} // ErrAllMissing, as ReadFile words it
		}
	}
	if pl.total == 0 {
		return &errFallback{"error"}
	}
	a, ok := pl.hist.limitBounds()
	if !ok {
		return &errFallback{"a gap limit that only the whole column decides exactly"}
	}
	noGap := !(pl.maxDT > a)
	wantNoise := !pl.opts.KeepHead || !pl.opts.KeepEvents
	stride := max(1, pl.total/noiseSubsample)
	pick := slices.Index(pl.strides, stride)
	if noGap && (pick >= 0 || !wantNoise) {
		pl.final = pl.pieces
	} else {
		pl.strides = append(pl.strides[:0], stride)
		pick = 0
		pl.resetAcc()
		if err := pl.pass2(ctx, a, noGap); err != nil {
			return err
		}
	}
	pl.gaps = len(pl.final) - 1
	pl.runs = pl.final
	if wantNoise && pl.ns > 0 {
		if len(pl.noise) != pl.ns {
			pl.noise = make([]stateNoise, pl.ns)
		}
		for j := range pl.acc {
			var sc float64
			pl.selBuf, sc = scaleOf(pl.selBuf, pl.acc[j].all[pick])
			pl.noise[j] = stateNoise{s: sc, quant: pl.acc[j].q, span: pl.hi[j] - pl.lo[j]}
		}
		if late {
			pl.sf.late = pl // pass 3 comes with the first Scan (see lateScan)
			return nil
		}
		if err := pl.pass3(ctx, nil); err != nil {
			return err
		}
	}
	pl.setRuns()
	return nil
}

// runName is the name of run n of the file.
func (pl *plan) runName(n int) string {
	if n == 0 {
		return pl.name
	}
	return fmt.Sprintf("%s~%d", pl.name, n)
}

// setRuns sets the file's runs from pl.runs.
func (pl *plan) setRuns() {
	sf := pl.sf
	sf.Runs = slices.Grow(sf.Runs[:0], len(pl.runs))[:len(pl.runs)]
	for n, r := range pl.runs {
		sf.Runs[n] = StreamRun{Name: pl.runName(n), Source: Source{File: sf.File, Line: pl.src.line(r[0])}, Gaps: pl.gaps,
			Events: pl.evs, Samples: r[1] - r[0], rows: r}
	}
}

// openPiece starts a piece of consecutive rows at row, or gives up
// streaming when there are too many pieces to hold.
func (pl *plan) openPiece(row int) error {
	if len(pl.pieces) >= maxStreamPieces {
		return &errFallback{"too many missing rows to hold the pieces between them"}
	}
	pl.pieces = append(pl.pieces, [2]int{row, row})
	return nil
}

func (pl *plan) resetAcc() {
	for j := range pl.acc {
		a := &pl.acc[j]
		for len(a.all) < len(pl.strides) {
			a.all = append(a.all, nil)
		}
		a.all = a.all[:len(pl.strides)]
		for c := range a.all {
			a.all[c] = a.all[c][:0]
		}
		a.q = math.Inf(1)
	}
}

// add feeds the noise statistics the sample v, at time t, of state j at
// index q of its piece.
func (a *noiseAcc) add(v, t float64, q int, strides []int) {
	if q >= 1 {
		if d := math.Abs(v - a.prev[2]); d > 0 && d < a.q {
			a.q = d
		}
	}
	// the jump statistic at i = q-1 needs x[i-2], x[i-1], x[i], x[i+1]
	if i := q - 1; i >= 2 {
		for c, stride := range strides {
			if (i-2)%stride == 0 {
				a.all[c] = append(a.all[c], jumpAt(a.prev[0], a.prev[1], a.prev[2], v, a.prevT[0], a.prevT[1], a.prevT[2], t))
			}
		}
	}
	a.prev[0], a.prev[1], a.prev[2] = a.prev[1], a.prev[2], v
	a.prevT[0], a.prevT[1], a.prevT[2] = a.prevT[1], a.prevT[2], t
}

// segCoef stores in jc[c], for each stride c, the clock coefficients
// (see jumpCoef) of the samples that addSeg gives the jump statistic,
// for the consecutive times t of one piece, t[0] at index q0: the states
// share them.
func segCoef(jc [][]jumpCoef, t []float64, q0 int, strides []int) [][]jumpCoef {
	for len(jc) < len(strides) {
		jc = append(jc, nil)
	}
	jc = jc[:len(strides)]
	n := len(t)
	for c, stride := range strides {
		jc[c] = jc[c][:0]
		if n <= 3 {
			continue
		}
		i := q0 + 2 // k = 3
		if r := (i - 2) % stride; r != 0 {
			i += stride - r
		}
		for k := i - q0 + 1; k < n; k += stride {
			jc[c] = append(jc[c], clockCoef(t[k-3], t[k-2], t[k-1], t[k]))
		}
	}
	return jc
}

// addSeg is add for the consecutive samples x, at times t, of one
// piece, x[0] at index q0 of the piece; jc is segCoef's for t, res is
// the least nonzero |x[k]-x[k-1]| over k >= 1 (or more: +Inf) as
// rangeRes gives it.
func (a *noiseAcc) addSeg(x, t []float64, q0 int, strides []int, jc [][]jumpCoef, res float64) {
	n := len(x)
	head := min(n, 3)
	for k := range head {
		a.add(x[k], t[k], q0+k, strides)
	}
	if n <= 3 {
		return
	}
	a.q = min(a.q, res) // the pairs from k = 3 on, in res
	// the jump statistic at piece index i uses x[k-3..k], k = i-q0+1,
	// for k >= 3 (the first three were added above)
	for c, stride := range strides {
		i := q0 + 2 // k = 3
		if r := (i - 2) % stride; r != 0 {
			i += stride - r
		}
		all := a.all[c]
		for m, k := 0, i-q0+1; k < n; m, k = m+1, k+stride {
			all = append(all, jc[c][m].jump(x[k-3], x[k-2], x[k-1], x[k]))
		}
		a.all[c] = all
	}
	a.prev[0], a.prev[1], a.prev[2] = x[n-3], x[n-2], x[n-1]
	a.prevT[0], a.prevT[1], a.prevT[2] = t[n-3], t[n-2], t[n-1]
}

// rangeRes returns the least and greatest of x and the least nonzero
// |x[k]-x[k-1]| (+Inf when none), in one pass; ok is false when x holds
// a NaN (the three are then void). It is [spanStep]'s integer-keyed
// pass (1.6 times as fast as comparisons of floats on a block of 64 Ki
// values): a zero's sign aside, which no span hi-lo shows, the same
// values.
func rangeRes(x []float64) (lo, hi, res float64, ok bool) {
	if len(x) == 0 {
		return math.Inf(1), math.Inf(-1), math.Inf(1), true
	}
	lo, hi, res = spanStep(x, math.Inf(1))
	return lo, hi, res, lo == lo
}

// pass1 finds the pieces, checks time order, fills the step histogram
// and the noise statistics on the guess of no gap split.
func (pl *plan) pass1(ctx context.Context) error {
	prevT := math.Inf(-1)
	prevRow := -2
	open := false
	pl.sf.Passes++
	return pl.src.pass(ctx, func(row0 int, t []float64, x [][]float64) error {
		if pl.ns < 0 {
			pl.setup(len(x))
		}
		if len(t) == 0 {
			return nil
		}
		if pl.tap != nil {
			pl.tap.Block(row0, t, x)
		}
		whole := true // no missing cell in the block
		for _, v := range t {
			if v != v {
				whole = false
				break
			}
		}
		// each state's range over the block, taken only if no cell is
		// missing (comparisons, not min and max: no NaN can be in it)
		if len(pl.blo) != len(x) {
			pl.blo, pl.bhi = make([]float64, len(x)), make([]float64, len(x))
		}
		if len(pl.bres) != len(x) {
			pl.bres = make([]float64, len(x))
		}
		for j := 0; j < len(x) && whole; j++ {
			pl.blo[j], pl.bhi[j], pl.bres[j], whole = rangeRes(x[j])
		}
		if whole {
			// the block is one segment of valid rows: column by column
			cont := open && prevRow == row0-1
			maxDT := pl.maxDT
			// equal keys in a row are counted at once
			var key uint64
			cnt := 0
			// the last two steps of the piece, and how many it has had
			h1, h2, nh, even := pl.h1, pl.h2, pl.nh, pl.even
			if !cont {
				nh = 0
			}
			for k, ti := range t {
				if !(ti > prevT) {
					return &errFallback{"error"} // ErrTimeOrder, as ReadFile words it
				}
				if k > 0 || cont {
					dt := ti - prevT
					if kk := dtKey(dt); kk != key || cnt == 0 {
						if cnt > 0 {
							pl.hist.addKey(key, cnt)
						}
						key, cnt = kk, 0
					}
					cnt++
					if dt > maxDT {
						maxDT = dt
					}
					if nh == 2 {
						even = even && evenSteps(h1, h2, dt)
					} else {
						nh++
					}
					h1, h2 = h2, dt
				}
				prevT = ti
			}
			pl.h1, pl.h2, pl.nh, pl.even = h1, h2, nh, even
			if cnt > 0 {
				pl.hist.addKey(key, cnt)
			}
			pl.maxDT = maxDT
			if !cont {
				if err := pl.openPiece(row0); err != nil {
					return err
				}
			}
			open = true
			q0 := row0 - pl.pieces[len(pl.pieces)-1][0]
			pl.jc = segCoef(pl.jc, t, q0, pl.strides)
			for j := range x {
				pl.anyCell[j] = true
				if pl.blo[j] < pl.lo[j] {
					pl.lo[j] = pl.blo[j]
				}
				if pl.bhi[j] > pl.hi[j] {
					pl.hi[j] = pl.bhi[j]
				}
				pl.acc[j].addSeg(x[j], t, q0, pl.strides, pl.jc, pl.bres[j])
			}
			prevRow = row0 + len(t) - 1
			pl.total += len(t)
			pl.pieces[len(pl.pieces)-1][1] = row0 + len(t)
			return nil
		}
		pl.even = false // (not followed row by row: the detector computes the clock)
		for k, ti := range t {
			row := row0 + k
			ok := ti == ti
			for j := range x {
				if v := x[j][k]; v != v {
					ok = false
				} else {
					pl.anyCell[j] = true
				}
			}
			if !ok {
				if open {
					pl.pieces[len(pl.pieces)-1][1] = row
					open = false
				}
				continue
			}
			if ti <= prevT {
				return &errFallback{"error"} // ErrTimeOrder, as ReadFile words it
			}
			if open && prevRow == row-1 {
				dt := ti - prevT
				pl.hist.add(dt)
				pl.maxDT = max(pl.maxDT, dt)
			} else {
				if err := pl.openPiece(row); err != nil {
					return err
				}
				open = true
			}
			q := row - pl.pieces[len(pl.pieces)-1][0]
			for j := range x {
				v := x[j][k]
				pl.lo[j], pl.hi[j] = min(pl.lo[j], v), max(pl.hi[j], v)
				pl.acc[j].add(v, ti, q, pl.strides)
			}
			prevT, prevRow = ti, row
			pl.total++
		}
		if open {
			pl.pieces[len(pl.pieces)-1][1] = row0 + len(t)
		}
		return nil
	})
}

// pass2 splits the pieces at steps above a (the gap limit's lower
// bound, no step lying between the bounds) and gathers the noise
// statistics over the split pieces.
func (pl *plan) pass2(ctx context.Context, a float64, noGap bool) error {
	pl.final = pl.finalBuf[:0]
	defer func() { pl.finalBuf = pl.final }()
	p := 0 // the piece at or after the current row
	prevT := 0.0
	pl.sf.Passes++
	return pl.src.pass(ctx, func(row0 int, t []float64, x [][]float64) error {
		end := row0 + len(t)
		for p < len(pl.pieces) && pl.pieces[p][0] < end {
			pc := pl.pieces[p]
			ra, rb := max(pc[0], row0), min(pc[1], end)
			for row := ra; row < rb; row++ {
				k := row - row0
				ti := t[k]
				if row == pc[0] || (!noGap && ti-prevT > a) {
					if len(pl.final) >= maxStreamPieces {
						return &errFallback{"too many gaps to hold the pieces between them"}
					}
					pl.final = append(pl.final, [2]int{row, row})
				}
				f := &pl.final[len(pl.final)-1]
				f[1] = row + 1
				q := row - f[0]
				for j := range x {
					pl.acc[j].add(x[j][k], ti, q, pl.strides)
				}
				prevT = ti
			}
			if pc[1] > end {
				break
			}
			p++
		}
		return nil
	})
}

// pass3 trims the resting head and splits the pieces at events.
//
// With em, the runs' samples are given to em.fn as the cuts become
// final, from the detector's ring (see lateEmit), and the runs are
// added to the file's as they start.
func (pl *plan) pass3(ctx context.Context, em *lateEmit) error {
	ns := pl.ns
	runs := pl.runBuf[:0]
	if pl.ed == nil || len(pl.ed.ring) != ns {
		pl.ed = newEvDetector(ns)
	}
	ed := pl.ed
	ed.emit = nil
	ed.allEven = pl.even
	if em != nil {
		em.pl, em.ed, em.runs = pl, ed, &runs
		ed.emit = em.advance
		defer func() { ed.emit = nil }()
	}
	hd := &pl.hd
	p := 0
	pieceStart := -1 // the first row of piece p given to the detector, or -1
	startPiece := func(first int) {
		pieceStart = first
		ed.reset(pl.final[p][1]-first, pl.noise)
		if em != nil {
			em.start(first)
		}
	}
	endPiece := func() error {
		cuts, err := ed.finish()
		if err != nil {
			return err
		}
		if em != nil {
			pieceStart = -1
			return em.end()
		}
		sp := [][2]int{{pieceStart, pl.final[p][1]}}
		if pl.opts.KeepEvents {
			cuts = nil
		}
		out, _ := splitAt(sp, cuts)
		pl.evs += len(out) - 1
		for _, o := range out {
			runs = append(runs, o[0])
		}
		pieceStart = -1
		return nil
	}
	first := true
	if pl.opts.KeepHead || pl.final[0][1]-pl.final[0][0] < 2*MinHead {
		first = false
	} else {
		hd.init(ns, pl.final[0][1]-pl.final[0][0], pl.noise)
	}
	pl.sf.Passes++
	err := pl.src.pass(ctx, func(row0 int, t []float64, x [][]float64) error {
		end := row0 + len(t)
		for p < len(pl.final) && pl.final[p][0] < end {
			pc := pl.final[p]
			ra, rb := max(pc[0], row0), min(pc[1], end)
			if p == 0 && first {
				k, done, err := hd.push(x, t, ra-row0, rb-row0)
				if err != nil {
					return err
				}
				if done {
					first = false
					startPiece(pc[0] + k)
					if pl.opts.KeepEvents {
						ed.off = true
					}
					if err := ed.pushHead(hd, k); err != nil {
						return err
					}
				}
			} else {
				if pieceStart < 0 {
					startPiece(pc[0])
					ed.off = pl.opts.KeepEvents
				}
				if err := ed.push(x, t, ra-row0, rb-row0); err != nil {
					return err
				}
			}
			if pc[1] > end {
				break
			}
			if p == 0 && first { // the piece ended undecided: no motion, no head
				first = false
				startPiece(pc[0])
				ed.off = pl.opts.KeepEvents
				if err := ed.pushHead(hd, 0); err != nil {
					return err
				}
			}
			if err := endPiece(); err != nil {
				return err
			}
			p++
		}
		return nil
	})
	if err != nil {
		return err
	}
	if p != len(pl.final) {
		return &errFallback{"error"} // fewer rows than pass 1 read: the file changed
	}
	pl.runs, pl.runBuf = runs, runs
	return nil
}

// lateEmit gives the samples of each run to fn as pass 3 finds the runs
// (see [StreamOptions.LateRuns]): the samples of a piece below the
// detector's frontier have their cuts final, so they are given (or
// dropped) as [splitAt] would split the piece, from the detector's ring,
// which holds them until then (the frontier trails the newest sample by
// at most evLook+evPush samples).
type lateEmit struct {
	fn   func(k int, t []float64, x [][]float64) error
	pl   *plan
	ed   *evDetector
	runs *[][2]int // the runs so far, file rows
	base int       // the file row of the piece's first sample
	emit int       // the piece's samples below emit are given or dropped
	segA int       // the first sample of the current segment
	open bool      // the current segment is a run, the last of runs
	cuts int       // cuts applied in the piece
	kept int       // runs kept from the piece
	xs   [][]float64
	ks   []cut
}

// start starts a piece whose first sample is file row first.
func (em *lateEmit) start(first int) {
	em.base, em.emit, em.segA, em.open, em.cuts, em.kept = first, 0, 0, false, 0, 0
}

// advance gives or drops the piece's samples below f, applying the cuts
// below f in order, as splitAt does.
func (em *lateEmit) advance(f int, last bool) error {
	if f <= em.emit {
		return nil
	}
	em.ks = em.ks[:0]
	for k, drop := range em.ed.marks {
		if k >= em.emit && k < f {
			em.ks = append(em.ks, cut{k, drop})
		}
	}
	slices.SortFunc(em.ks, func(a, b cut) int { return a.k - b.k })
	pos := em.emit
	for _, c := range em.ks {
		if err := em.give(pos, c.k); err != nil {
			return err
		}
		if em.open { // splitAt's keep(start, c.k): the run ends at the cut
			em.open = false
			em.kept++
		}
		em.cuts++
		em.segA = max(em.segA, c.k)
		if c.drop {
			em.segA = max(em.segA, c.k+1)
		}
		pos = max(pos, c.k, em.segA)
	}
	if err := em.give(pos, f); err != nil {
		return err
	}
	em.emit = f
	return nil
}

// give gives samples [a, b) of the current segment, once the segment is
// known to be kept (minEventPiece samples before any cut).
func (em *lateEmit) give(a, b int) error {
	a = max(a, em.segA)
	if b <= a {
		return nil
	}
	if !em.open {
		if b-em.segA < minEventPiece {
			return nil // not known yet: the samples wait in the ring
		}
		em.openRun()
		a = em.segA
	}
	return em.send(a, b)
}

func (em *lateEmit) openRun() {
	pl, sf := em.pl, em.pl.sf
	row := em.base + em.segA
	*em.runs = append(*em.runs, [2]int{row, row})
	n := len(*em.runs) - 1
	sf.Runs = append(sf.Runs, StreamRun{Name: pl.runName(n), Source: Source{File: sf.File, Line: pl.src.line(row)},
		Gaps: pl.gaps, rows: [2]int{row, row}})
	em.open = true
}

// send calls fn with samples [a, b) of the open run, from the ring.
func (em *lateEmit) send(a, b int) error {
	ed := em.ed
	if len(em.xs) != len(ed.ring) {
		em.xs = make([][]float64, len(ed.ring))
	}
	k := len(*em.runs) - 1
	(*em.runs)[k][1] = em.base + b
	sr := &em.pl.sf.Runs[k]
	sr.Samples += b - a
	sr.rows[1] = em.base + b
	for a < b {
		p := a & (evRing - 1)
		l := min(b-a, evRing-p)
		for j, r := range ed.ring {
			em.xs[j] = r[p : p+l]
		}
		if err := em.fn(k, ed.tring[p:p+l], em.xs); err != nil {
			return err
		}
		a += l
	}
	return nil
}

// end finishes the piece, all of whose samples advance has seen: with no
// cut at all the piece is one run whatever its length (splitAt).
func (em *lateEmit) end() error {
	n := em.ed.n
	switch {
	case em.open:
		em.open = false
		em.kept++
	case em.cuts == 0 && em.segA < n:
		em.openRun()
		if err := em.send(em.segA, n); err != nil {
			return err
		}
		em.open = false
		em.kept++
	}
	em.pl.evs += em.kept - 1
	return nil
}

// headState decides the resting head of the first piece as restingHead
// does, holding its samples until the first motion.
type headState struct {
	n     int // the piece's length
	noise []stateNoise
	buf   [][]float64
	tbuf  []float64 // the times of buf's samples
	bases []float64
	end   int // first sample that moves, -1 while none
}

func (hd *headState) init(ns, n int, noise []stateNoise) {
	hd.n, hd.noise, hd.end = n, noise, -1
	if len(hd.buf) != ns {
		hd.buf = make([][]float64, ns)
		hd.bases = make([]float64, ns)
	}
	for j := range hd.buf {
		hd.buf[j] = hd.buf[j][:0]
	}
	hd.tbuf = hd.tbuf[:0]
}

// push adds block samples [a, b) of x, at times t. done reports the
// head decided, k its length (0: none).
func (hd *headState) push(x [][]float64, t []float64, a, b int) (k int, done bool, err error) {
	have := len(hd.buf[0])
	for j := range hd.buf {
		hd.buf[j] = append(hd.buf[j], x[j][a:b]...)
	}
	hd.tbuf = append(hd.tbuf, t[a:b]...)
	m := len(hd.buf[0])
	if m < MinHead {
		return 0, false, nil
	}
	from := have
	if have < MinHead { // the levels are known now: check from the first sample
		head := make([]float64, MinHead)
		for j := range hd.buf {
			copy(head, hd.buf[j][:MinHead])
			hd.bases[j] = median(head)
		}
		from = 0
	}
	for i := from; i < m && hd.end < 0; i++ {
		for j, sn := range hd.noise {
			if math.Abs(hd.buf[j][i]-hd.bases[j]) > RestSigmas*sn.floor() {
				hd.end = i
				break
			}
		}
	}
	if hd.end < 0 {
		if m > maxStreamHead && m < hd.n {
			return 0, false, &errFallback{"a resting head too long to hold"}
		}
		return 0, false, nil
	}
	return hd.decide(), true, nil
}

// decide is restingHead's verdict once the first motion is known.
func (hd *headState) decide() int {
	end := hd.end
	if end < MinHead || end == hd.n {
		return 0
	}
	h := end / 2
	for j, sn := range hd.noise {
		m1, m2 := mean(hd.buf[j][:h]), mean(hd.buf[j][h:end])
		se := sn.floor() * math.Sqrt(1/float64(h)+1/float64(end-h))
		if math.Abs(m2-m1) > restDrift*se {
			return 0
		}
	}
	return end
}

// evDetector finds the events of one piece as findEvents does, over a
// ring of its last evRing samples per state.
type evDetector struct {
	n     int // the piece's length
	off   bool
	ring  [][]float64
	tring []float64 // the times of the ring's samples
	have  int       // samples pushed
	// the jump statistic's clock coefficients (see jumpCoef) of each
	// sample of the ring, shared by the states, computed up to cdone:
	// even[p] says sample p's clock is even, and coef[p] holds them only
	// when it is not
	coef    []jumpCoef
	even    []bool
	cdone   int
	allEven bool // every sample's clock is even (pass 1 saw it)
	// emit, when not nil, is called with the frontier after each
	// advance (see lateEmit); the ring then always holds the samples
	emit  func(f int, last bool) error
	st    []evLoop
	noise []stateNoise
	marks map[int]bool
	win   []float64
}

// evLoop is one state's place in findEvents' candidate loop.
type evLoop struct {
	skip bool
	base float64
	i    int
}

func newEvDetector(ns int) *evDetector {
	ed := &evDetector{ring: make([][]float64, ns), tring: make([]float64, evRing), coef: make([]jumpCoef, evRing),
		even: make([]bool, evRing),
		st:   make([]evLoop, ns), marks: map[int]bool{}}
	for j := range ed.ring {
		ed.ring[j] = make([]float64, evRing)
	}
	return ed
}

func (ed *evDetector) reset(n int, noise []stateNoise) {
	ed.n, ed.have, ed.noise, ed.off, ed.cdone = n, 0, noise, false, 2
	clear(ed.marks)
	for j, sn := range noise {
		ed.st[j] = evLoop{skip: math.IsInf(sn.quant, 1), base: sn.jumpFloor(), i: 2}
	}
}

// pushHead gives the detector the held head samples from k on.
func (ed *evDetector) pushHead(hd *headState, k int) error {
	return ed.push(hd.buf, hd.tbuf, k, len(hd.buf[0]))
}

// push gives the detector samples [a, b) of x, at times t.
func (ed *evDetector) push(x [][]float64, t []float64, a, b int) error {
	if (ed.off || ed.n < 5) && ed.emit == nil {
		ed.have += b - a
		return nil
	}
	for a < b {
		c := min(b, a+evPush)
		at := ed.have & (evRing - 1)
		for j, r := range ed.ring {
			k := copy(r[at:], x[j][a:c])
			copy(r, x[j][a+k:c])
		}
		k := copy(ed.tring[at:], t[a:c])
		copy(ed.tring, t[a+k:c])
		ed.have += c - a
		a = c
		if !ed.off && ed.n >= 5 {
			// sample i's coefficients need the times of i-2 .. i+1
			ed.cdone = ed.setCoef(ed.cdone, ed.have-1)
			if err := ed.advance(); err != nil {
				return err
			}
		} // else no events to find: the ring only holds the samples to emit
		if ed.emit != nil {
			if err := ed.emit(ed.frontier(), false); err != nil {
				return err
			}
		}
	}
	return nil
}

// setCoef computes the clock coefficients of samples [i, e) (each needs
// the times of i-2 .. i+1 in the ring) and returns e: evenSteps' test on
// the ring's times, contiguous where the window does not wrap, and
// clockCoef's divisions only for a sample whose steps are uneven.
func (ed *evDetector) setCoef(i, e int) int {
	const m = evRing - 1
	tr, ev := ed.tring, ed.even
	if ed.allEven {
		for ; i < e; i++ {
			ev[i&m] = true
		}
		return i
	}
	for i < e {
		p := i & m
		if p < 2 || p+1 >= evRing { // the window wraps
			c := clockCoef(tr[(i-2)&m], tr[(i-1)&m], tr[p], tr[(i+1)&m])
			ev[p] = c.even
			if !c.even {
				ed.coef[p] = c
			}
			i++
			continue
		}
		l := min(e-i, evRing-1-p)
		t := tr[p-2 : p+l+1]
		evs := ev[p : p+l]
		for k := range evs {
			h1, h2, h3 := t[k+1]-t[k], t[k+2]-t[k+1], t[k+3]-t[k+2]
			even := evenSteps(h1, h2, h3)
			evs[k] = even
			if !even {
				ed.coef[p+k] = clockCoef(t[k], t[k+1], t[k+2], t[k+3])
			}
		}
		i += l
	}
	return i
}

// jumpAt is the jump statistic of state j at piece index i, from the
// ring: the value of clockCoef(..).jump(..), to the bit.
func (ed *evDetector) jumpAt(j, i int) float64 {
	const m = evRing - 1
	r := ed.ring[j]
	x0, x1, x2, x3 := r[(i-2)&m], r[(i-1)&m], r[i&m], r[(i+1)&m]
	if ed.even[i&m] {
		return 1.5*(x2-x1) + 0.5*(x0-x3)
	}
	return ed.coef[i&m].jump(x0, x1, x2, x3)
}

// quietTo returns the first piece index in [i, lim) whose jump statistic
// of state j is not within base (|s| <= base false: NaN is not), or lim:
// the test findEvents' candidate loop stops at, over the ring's samples
// in contiguous stretches. An i at or past lim is returned as it is.
func (ed *evDetector) quietTo(j, i, lim int, base float64) int {
	const m = evRing - 1
	r, ev := ed.ring[j], ed.even
	for i < lim {
		p := i & m
		if p < 2 || p+1 >= evRing { // the window wraps
			if !(math.Abs(ed.jumpAt(j, i)) <= base) {
				return i
			}
			i++
			continue
		}
		l := min(lim-i, evRing-1-p)
		x := r[p-2 : p+l+1]
		evs := ev[p : p+l]
		for k, even := range evs {
			var v float64
			if even {
				v = 1.5*(x[k+2]-x[k+1]) + 0.5*(x[k]-x[k+3])
			} else {
				v = ed.coef[p+k].jump(x[k], x[k+1], x[k+2], x[k+3])
			}
			if !(math.Abs(v) <= base) {
				return i + k
			}
		}
		i += l
	}
	return i // lim, or i when it started past lim
}

// frontier returns the piece index below which the cuts are final: a
// state's candidate loop at i marks no sample below i-1 from then on.
func (ed *evDetector) frontier() int {
	f := ed.have
	if ed.off || ed.n < 5 {
		return f
	}
	for j := range ed.st {
		if lp := &ed.st[j]; !lp.skip {
			f = min(f, lp.i-1)
		}
	}
	return max(f, 0)
}

// finish judges the candidates left and returns the cuts, sorted.
func (ed *evDetector) finish() ([]cut, error) {
	if ed.off || ed.n < 5 {
		if ed.emit != nil {
			return nil, ed.emit(ed.n, true)
		}
		return nil, nil
	}
	if err := ed.advance(); err != nil {
		return nil, err
	}
	if ed.emit != nil {
		return nil, ed.emit(ed.n, true)
	}
	cuts := make([]cut, 0, len(ed.marks))
	for k, drop := range ed.marks {
		cuts = append(cuts, cut{k, drop})
	}
	slices.SortFunc(cuts, func(a, b cut) int { return a.k - b.k })
	return cuts, nil
}

// advance runs each state's candidate loop as far as the samples read
// allow: to the piece's end once all are in.
func (ed *evDetector) advance() error {
	n := ed.n
	all := ed.have >= n
	for j := range ed.st {
		lp := &ed.st[j]
		if lp.skip {
			continue
		}
		sv := func(i int) float64 { return ed.jumpAt(j, i) }
		far := func(i int) bool {
			if math.Abs(sv(i)) <= lp.base {
				return false
			}
			ed.win = ed.win[:0]
			for k := max(2, i-eventBlock); k < min(n-1, i+eventBlock+1); k++ {
				ed.win = append(ed.win, sv(k))
			}
			med := median(ed.win)
			for k := range ed.win {
				ed.win[k] = math.Abs(ed.win[k] - med)
			}
			return math.Abs(sv(i)-med) > EventSigmas*madGauss*median(ed.win)
		}
		s := func(i int) float64 {
			if i < 2 || i >= n-1 {
				return 0
			}
			return sv(i)
		}
		// needed reports whether sample index i+eventBlock+2 (the
		// farthest a judgement at i reads) is in; past the piece's end
		// nothing more comes.
		ready := func(i int) bool { return all || i+eventBlock+3 <= ed.have }
		lim := n - 1
		if !all {
			lim = min(lim, ed.have-evLook+1) // i+evLook <= have
		}
		for ; lp.i < n-1; lp.i++ {
			// far's first test, over a stretch: most samples stop there
			lp.i = ed.quietTo(j, lp.i, lim, lp.base)
			if lp.i >= lim {
				break
			}
			i := lp.i
			if !far(i) {
				continue
			}
			c, end := i, i
			for k := i + 1; k < n-1 && k <= end+2; k++ {
				if !ready(k) {
					return &errFallback{"a run of event candidates too long to hold"}
				}
				if far(k) {
					end = k
					if math.Abs(s(k)) > math.Abs(s(c)) {
						c = k
					}
				}
			}
			if !ready(c + 3) {
				return &errFallback{"a run of event candidates too long to hold"}
			}
			lp.i = end
			m := -1
			switch {
			case c+1 < n-1 && math.Abs(s(c)+s(c+1)) < spikeMatch*math.Abs(s(c)):
				m = c
			case c-1 >= 2 && math.Abs(s(c)+s(c-1)) < spikeMatch*math.Abs(s(c)):
				m = c - 1
			}
			k, spike := c, false
			if m >= 1 && m+1 < n {
				kink := false
				if m-1 >= 2 && m+2 < n-1 {
					kink = (s(m+2)-s(m-1))/2/s(m) < kinkOuter
				}
				if kink {
					k = m + 1
				} else {
					k, spike = m, true
				}
			}
			ed.marks[k] = ed.marks[k] || spike
		}
	}
	return nil
}

// dtHist counts time steps by the top 12 bits of their mantissa (and
// their exponent): enough to bracket their median within a relative
// 2^-12 without holding them.
type dtHist struct {
	n     int
	base  uint64 // dense counts cover keys [base, base+dtDense)
	dense []int32
	far   map[uint64]int
}

const dtDense = 1 << 14

func dtKey(dt float64) uint64 { return math.Float64bits(dt) >> 40 }

func (h *dtHist) add(dt float64) { h.addKey(dtKey(dt), 1) }

// addKey counts c steps of key k.
func (h *dtHist) addKey(k uint64, c int) {
	if h.n == 0 {
		if h.dense == nil {
			h.dense = make([]int32, dtDense)
		}
		h.base = max(k, dtDense/2) - dtDense/2
	}
	h.n += c
	if k-h.base < dtDense {
		h.dense[k-h.base] += int32(c)
		return
	}
	if h.far == nil {
		h.far = map[uint64]int{}
	}
	h.far[k] += c
}

// limitBounds returns a, the least value GapFactor times the median step
// can take given the histogram, when no step lies strictly between a and
// the greatest value it can take (so a step is a gap exactly when it
// exceeds a); ok is false otherwise. With no steps a is +Inf.
func (h *dtHist) limitBounds() (a float64, ok bool) {
	if h.n == 0 {
		return math.Inf(1), true
	}
	type kc struct {
		k uint64
		n int
	}
	var keys []kc
	for i, c := range h.dense {
		if c > 0 {
			keys = append(keys, kc{h.base + uint64(i), int(c)})
		}
	}
	for k, c := range h.far {
		keys = append(keys, kc{k, c})
	}
	slices.SortFunc(keys, func(a, b kc) int {
		switch {
		case a.k < b.k:
			return -1
		case a.k > b.k:
			return 1
		}
		return 0
	})
	// the sorted steps' ranks (n-1)/2 and n/2 hold the median
	r1, r2 := (h.n-1)/2, h.n/2
	var k1, k2 uint64
	seen := 0
	for _, e := range keys {
		if r1 >= seen && r1 < seen+e.n {
			k1 = e.k
		}
		if r2 >= seen && r2 < seen+e.n {
			k2 = e.k
			break
		}
		seen += e.n
	}
	lo, hi := math.Float64frombits(k1<<40), math.Float64frombits((k2+1)<<40)
	a, b := GapFactor*lo, GapFactor*hi
	for _, e := range keys {
		elo, ehi := math.Float64frombits(e.k<<40), math.Float64frombits((e.k+1)<<40)
		if ehi > a && elo <= b { // steps of this bucket may lie in (a, b]
			return 0, false
		}
	}
	return a, true
}
