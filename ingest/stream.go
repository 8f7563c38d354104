package ingest

import (
	"context"
	"errors"
	"fmt"
	"path/filepath"
	"strings"
	"sync"
)

// DefaultWindow is the default [StreamOptions.Window]: files of at most
// this many rows are read whole, in one pass, into a [Streamer]'s reused
// buffers.
const DefaultWindow = 1 << 16

// StreamOptions controls a [Streamer]. A nil *StreamOptions means all
// defaults.
type StreamOptions struct {
	// Window is the most rows a file may have to be read whole, in one
	// pass, into the Streamer's buffers (reused from file to file); a
	// file with more rows is streamed: read once per pass, one Parquet
	// row group or CSV block at a time. Zero means DefaultWindow; a
	// negative Window streams every file that can be streamed.
	Window int
	// Prefetch decodes a streamed Parquet file's next row group on
	// another goroutine while the current one is processed: parallel
	// over row groups, for when there are fewer files than cores. False
	// means one goroutine per file.
	Prefetch bool
	// CSVWindow is the largest CSV file, in bytes, read whole in one
	// pass; a larger one is streamed, parsed once per pass (parsing
	// costs far more than holding the values, so the window is wider
	// than for Parquet). Zero means DefaultCSVWindow; negative streams
	// every CSV file that can be streamed.
	CSVWindow int64
	// LateRuns leaves the last planning pass (resting heads and events)
	// of a streamed file to its first Scan, which then finds the runs as
	// it gives their samples, in one read of the file instead of two:
	// StreamFile.Runs is empty after Open and complete after that Scan
	// (or [StreamFile.FindRuns]). The runs are the same.
	LateRuns bool
	// Tap, when not nil, is shown every block of a streamed file's first
	// read (see [BlockTap]): a caller's statistic over the whole file
	// gathered without a read of its own.
	Tap BlockTap
	// Hold is the most bytes of samples (8 a value, time included) a
	// streamed Parquet file's first read keeps in memory, so that its later
	// passes (planning's, then the Scans) take them from there instead
	// of decoding the file again; a larger file is read once per pass.
	// The memory is the Streamer's, reused from file to file, so it
	// bounds what a Streamer holds whatever the files' sizes. Zero means
	// DefaultHold; negative holds nothing.
	Hold int64
}

// A BlockTap is shown the rows of each streamed file in its first read,
// before the runs are known: Start once per file (rows is the file's
// row count when exact, else an estimate; states the number of state
// columns), then Block with consecutive blocks of rows from the first,
// as a Scan gives them but with every row of the file (NaN where a cell
// is missing). The slices are valid during the call only. A file that
// is read whole is not shown. The rows of a run that covers the file
// from its first row to its last (see [StreamRun.Rows]) are exactly the
// rows shown.
type BlockTap interface {
	Start(file string, rows int, exact bool, states int)
	Block(row0 int, t []float64, x [][]float64)
}

// ErrRescan is returned by the first Scan of a file opened with
// [StreamOptions.LateRuns] when the file turned out, part way, to need
// reading whole (see [StreamFile.Whole]): the samples given so far are
// void, the file is now held whole with its runs, and a new Scan gives
// them.
var ErrRescan = errors.New("ingest: the file is read whole now: scan it again")

// DefaultCSVWindow is the default [StreamOptions.CSVWindow].
const DefaultCSVWindow = 64 << 20

// A Streamer reads log files with the rules of [ReadFile] (the same
// runs, split at the same gaps, events and resting heads) in memory
// bounded by a row group or block, not by the file: see [Streamer.Open].
// It holds buffers reused from file to file; it is not safe for
// concurrent use (make one per goroutine).
type Streamer struct {
	prefetch  bool
	opts      Options
	window    int
	csvWindow int64
	store     *colStore // reused columns for files read whole in one pass
	late      bool      // StreamOptions.LateRuns
	tap       BlockTap  // StreamOptions.Tap
	src       streamScratch
	plan      *plan   // the last plan, whose buffers the next one reuses
	hold      int64   // StreamOptions.Hold, in bytes (<= 0: none)
	hb        holdBuf // the held samples of the file last opened

	csv csvBufs // a streamed CSV file's read buffers (see csvSource)
}

// NewStreamer returns a Streamer that reads with opts (nil: defaults)
// and so (nil: defaults). opts is copied.
func NewStreamer(opts *Options, so *StreamOptions) *Streamer {
	s := &Streamer{window: DefaultWindow, csvWindow: DefaultCSVWindow, store: &colStore{}, hold: DefaultHold}
	if opts != nil {
		s.opts = *opts
	}
	if so != nil && so.Window != 0 {
		s.window = so.Window
	}
	if so != nil {
		s.prefetch, s.late, s.tap = so.Prefetch, so.LateRuns, so.Tap
	}
	if so != nil && so.CSVWindow != 0 {
		s.csvWindow = so.CSVWindow
	}
	if so != nil && so.Hold != 0 {
		s.hold = so.Hold
	}
	return s
}

// A StreamFile is one log file opened by [Streamer.Open]: its columns,
// the runs that [ReadFile] would give, and [StreamFile.Scan] to visit
// their samples. It is valid until the next Open on the same Streamer or
// its Close, whichever comes first.
type StreamFile struct {
	File    string
	States  []Column
	Time    Column
	Ignored []Column
	// Warnings are as in [Dataset.Warnings].
	Warnings []string
	Runs     []StreamRun
	// Whole is empty when the file is streamed; otherwise it says why
	// the file was read whole: "window" (it has at most Window rows, and
	// is read once into reused buffers), or the reason it cannot be
	// streamed (a --run-col, a time window, inputs, date-time stamps,
	// stdin, a Parquet layout only the general decoder reads, a
	// gap limit that only the whole column decides exactly, ...).
	Whole string
	// Passes counts the reads of the file so far (1 when read whole).
	Passes int

	ds   *Dataset // read whole
	src  source   // streamed
	xbuf [][]float64
	late *plan // the plan whose pass 3 is left to the first Scan
	// wasHeld: the samples were held (see Held) when the file was closed
	wasHeld bool
}

// A StreamRun is one run of a [StreamFile], as [Run] without the samples.
type StreamRun struct {
	Name    string
	Source  Source
	Gaps    int
	Events  int
	Samples int
	rows    [2]int // [first, end) rows of the file, when streamed
}

// Rows returns the rows of a streamed file that hold the run's samples:
// first .. end-1, counted from 0 as [BlockTap] counts them. Both are 0
// for a file read whole.
func (r *StreamRun) Rows() (first, end int) { return r.rows[0], r.rows[1] }

// Held reports whether a streamed file's samples are held in memory
// from its first read (see [StreamOptions.Hold]): its later passes do
// not read the file. After Close it tells whether they were.
func (sf *StreamFile) Held() bool { return sf.wasHeld || sf.src != nil && held(sf.src) }

// Dataset returns the file's data set when it was read whole, nil when
// it is streamed.
func (sf *StreamFile) Dataset() *Dataset { return sf.ds }

// Close releases the file. It is safe to call more than once.
func (sf *StreamFile) Close() error {
	if sf.src != nil {
		sf.wasHeld = held(sf.src)
		err := sf.src.close()
		sf.src = nil
		return err
	}
	return nil
}

// errFallback says a file cannot be streamed exactly; it is read whole.
type errFallback struct{ why string }

func (e *errFallback) Error() string { return "read whole: " + e.why }

// Open reads path's header and plans its runs: exactly the runs, names,
// sample counts and line numbers that [ReadFile] gives, without holding
// the file's samples. A file of at most Window rows, or one that cannot
// be streamed (see [StreamFile.Whole]), is read whole instead, and
// [StreamFile.Dataset] returns it. Planning makes two to three passes
// over a streamed file (see the package documentation of the passes);
// only the first reads it when its samples fit in [StreamOptions.Hold]. Errors are
// those of ReadFile, with the same text: a streamed file that turns out
// bad is read again whole to report its error as ReadFile would.
func (s *Streamer) Open(ctx context.Context, path string) (*StreamFile, error) {
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	opts := &s.opts
	why := s.streamable(path)
	if why == "" {
		sf, err := s.openStream(ctx, path)
		var fb *errFallback
		switch {
		case err == nil:
			return sf, nil
		case errors.As(err, &fb):
			why = fb.why
		case errors.Is(err, context.Canceled), errors.Is(err, context.DeadlineExceeded):
			return nil, err
		default:
			why = "error" // report it exactly as ReadFile does
		}
	}
	var ds *Dataset
	var err error
	if why == "window" {
		ds, err = s.readWindow(ctx, path)
	} else {
		ds, err = ReadFile(ctx, path, opts)
	}
	if err != nil {
		return nil, err
	}
	sf := &StreamFile{File: path, States: ds.States, Time: ds.Time, Ignored: ds.Ignored, Warnings: ds.Warnings,
		Whole: why, Passes: 1, ds: ds}
	for i := range ds.Runs {
		r := &ds.Runs[i]
		sf.Runs = append(sf.Runs, StreamRun{Name: r.Name, Source: r.Source, Gaps: r.Gaps, Events: r.Events, Samples: r.Len()})
	}
	return sf, nil
}

// streamable returns "" when path may be streamed with s's options, or
// why not.
func (s *Streamer) streamable(path string) string {
	o := &s.opts
	switch {
	case path == "-":
		return "stdin"
	case o.RunCol != "":
		return "a run column"
	case o.From > 0 || o.To > 0:
		return "a time window"
	case len(o.Inputs) > 0:
		return "input columns"
	case o.viaArrow:
		return "the general Parquet decoder"
	case o.MinPiece > 0:
		return "a minimum piece length" // its warning names the first short piece's time
	case o.Average >= 2:
		return "averaging"
	}
	return ""
}

// readWindow reads a Parquet file whole into s's reused columns, or a
// CSV file as ReadFile does.
func (s *Streamer) readWindow(ctx context.Context, path string) (*Dataset, error) {
	if !strings.EqualFold(filepath.Ext(path), ".parquet") {
		s.csv.cols = s.store
		defer func() { s.csv.cols = nil }()
		ds, err := readFileWith(ctx, path, &s.opts, &s.csv)
		if err != nil {
			return nil, err
		}
		return ds, finish(ds, &s.opts)
	}
	ds, err := readParquetStore(ctx, path, &s.opts, s.store)
	if errors.Is(err, errBudget) {
		s.store = &colStore{} // the stuck decoder may still write into the old one
	}
	if err != nil {
		return nil, err
	}
	return ds, finish(ds, &s.opts)
}

// openStream plans a streamed file; an *errFallback means read it whole.
func (s *Streamer) openStream(ctx context.Context, path string) (*StreamFile, error) {
	var src source
	var err error
	if strings.EqualFold(filepath.Ext(path), ".parquet") {
		src, err = s.openParquetSource(path)
	} else {
		src, err = s.openCSVSource(path)
	}
	if err != nil {
		return nil, err
	}
	sf := &StreamFile{File: path, src: src}
	ok := false
	defer func() {
		if !ok {
			src.close()
		}
	}()
	if err := src.header(sf); err != nil {
		return nil, err
	}
	if rows := src.rowsHint(); rows >= 0 && s.window > 0 && rows <= s.window {
		return nil, &errFallback{"window"}
	}
	src = holdSource(src, &s.hb, s.hold)
	sf.src = src
	pl := newPlan(sf, src, &s.opts, s.plan)
	pl.tap = s.tap
	s.plan = pl
	if err := pl.run(ctx, s.late); err != nil {
		return nil, err
	}
	ok = true
	return sf, nil
}

// Scan calls fn with the samples of every run of sf, in run order, a
// block of consecutive samples at a time: k is the run's index in
// sf.Runs, t the times in seconds and x[j] the values of state j (each
// as long as t). The slices are valid during the call only. A streamed
// file is read once more; a file read whole is not. fn's error stops the
// scan and is returned.
func (sf *StreamFile) Scan(ctx context.Context, fn func(k int, t []float64, x [][]float64) error) error {
	return sf.ScanRuns(ctx, nil, fn)
}

// ScanRuns is Scan for the runs k with need(k) true (nil: every run):
// the others are not given, and a streamed Parquet file's row groups
// outside the rows from the first run needed to the last are not read.
// The runs' samples are those Scan gives. With runs still to be found
// (see [StreamFile.Late]) need must be nil.
func (sf *StreamFile) ScanRuns(ctx context.Context, need func(k int) bool, fn func(k int, t []float64, x [][]float64) error) error {
	if need != nil && sf.late != nil {
		return errors.New("ingest: ScanRuns with a selection before the runs are found")
	}
	if need != nil {
		inner := fn
		fn = func(k int, t []float64, x [][]float64) error {
			if !need(k) {
				return nil
			}
			return inner(k, t, x)
		}
	}
	if sf.ds != nil {
		for k := range sf.ds.Runs {
			if err := ctx.Err(); err != nil {
				return err
			}
			r := &sf.ds.Runs[k]
			if err := fn(k, r.T, r.X); err != nil {
				return err
			}
		}
		return nil
	}
	if sf.src == nil {
		return errors.New("ingest: Scan after Close")
	}
	if sf.late != nil {
		return sf.lateScan(ctx, fn)
	}
	sf.Passes++
	k := 0
	ns := len(sf.States)
	if len(sf.xbuf) != ns {
		sf.xbuf = make([][]float64, ns)
	}
	// the rows of the runs needed (the row groups outside are skipped),
	// and the last run needed
	var lim [2]int // all
	last := len(sf.Runs) - 1
	if need != nil {
		last = -1
		for k, r := range sf.Runs {
			if need(k) {
				if last < 0 {
					lim[0] = r.rows[0]
				}
				lim[1], last = r.rows[1], k
			}
		}
		if last < 0 {
			return nil // no run needed: nothing to read
		}
	}
	if ps, ok := unheld(sf.src).(*parquetSource); ok {
		ps.lim = lim
		defer func() { ps.lim = [2]int{} }()
	}
	err := sf.src.pass(ctx, func(row0 int, t []float64, x [][]float64) error {
		end := row0 + len(t)
		for k < len(sf.Runs) && sf.Runs[k].rows[0] < end {
			r := sf.Runs[k].rows
			a, b := max(r[0], row0), min(r[1], end)
			if a < b {
				for j := range sf.xbuf {
					sf.xbuf[j] = x[j][a-row0 : b-row0]
				}
				if err := fn(k, t[a-row0:b-row0], sf.xbuf); err != nil {
					return err
				}
			}
			if r[1] > end {
				break
			}
			k++
		}
		return nil
	})
	var fb *errFallback
	if (err == nil && k <= last) || errors.As(err, &fb) {
		// fewer rows than planned, or a source that now refuses to stream
		return &ParseError{File: sf.File, Err: fmt.Errorf("%w: the file changed while it was read", ErrFormat)}
	}
	return err
}

// Late reports whether sf's runs are still to be found: opened with
// [StreamOptions.LateRuns], before the first Scan or FindRuns.
func (sf *StreamFile) Late() bool { return sf.late != nil }

// FindRuns finds the runs of a file whose Open left them to later (see
// [StreamOptions.LateRuns]), by one more read of it, without giving
// their samples; it does nothing otherwise. A file that turns out to
// need reading whole is read whole (sf.Dataset is then not nil).
func (sf *StreamFile) FindRuns(ctx context.Context) error {
	pl := sf.late
	if pl == nil {
		return nil
	}
	sf.late = nil
	err := pl.pass3(ctx, nil)
	var fb *errFallback
	if errors.As(err, &fb) {
		return sf.readWhole(ctx, pl.opts, fb.why)
	}
	if err != nil {
		return err
	}
	pl.setRuns()
	return nil
}

// lateScan is Scan's first read of a file whose runs are found on the
// way (see StreamOptions.LateRuns).
func (sf *StreamFile) lateScan(ctx context.Context, fn func(k int, t []float64, x [][]float64) error) error {
	pl := sf.late
	sf.late = nil
	sf.Runs = sf.Runs[:0]
	err := pl.pass3(ctx, &lateEmit{fn: fn})
	var fb *errFallback
	if errors.As(err, &fb) && fb.why == "error" { // fewer rows than planned
		return &ParseError{File: sf.File, Err: fmt.Errorf("%w: the file changed while it was read", ErrFormat)}
	}
	if errors.As(err, &fb) {
		if err := sf.readWhole(ctx, pl.opts, fb.why); err != nil {
			return err
		}
		return ErrRescan
	}
	if err != nil {
		return err
	}
	pl.setRuns()
	return nil
}

// readWhole reads sf's file whole, as Open does a file it cannot stream.
func (sf *StreamFile) readWhole(ctx context.Context, opts *Options, why string) error {
	ds, err := ReadFile(ctx, sf.File, opts)
	if err != nil {
		return err
	}
	sf.src.close()
	sf.src = nil
	if why == "error" {
		why = "the file changed while it was read"
	}
	sf.States, sf.Time, sf.Ignored, sf.Warnings, sf.Whole, sf.ds = ds.States, ds.Time, ds.Ignored, ds.Warnings, why, ds
	sf.Passes++
	sf.Runs = sf.Runs[:0]
	for i := range ds.Runs {
		r := &ds.Runs[i]
		sf.Runs = append(sf.Runs, StreamRun{Name: r.Name, Source: r.Source, Gaps: r.Gaps, Events: r.Events, Samples: r.Len()})
	}
	return nil
}

// source is a file read block by block, once per pass.
type source interface {
	// header fills sf's columns.
	header(sf *StreamFile) error
	// rowsHint is the file's row count when known before reading, else -1.
	rowsHint() int
	// pass calls fn with consecutive blocks of rows from the first:
	// row0 is the block's first row (0-based), t its times in seconds
	// (converted as ReadFile converts them; NaN when missing) and x[j]
	// state j's values (NaN when missing). The slices are reused.
	pass(ctx context.Context, fn func(row0 int, t []float64, x [][]float64) error) error
	// line returns the source line (CSV) or 1-based row (Parquet) of
	// row, valid after the first pass.
	line(row int) int
	close() error
}

// streamScratch is a Streamer's buffers for streamed sources.
type streamScratch struct {
	bufs [2]groupBuf
	sc   []colScratch
}

// timeConv converts a block of numeric times to seconds as
// [table.convertTime] does, with the same warning.
type timeConv struct {
	tb *table
	ds Dataset
}

func newTimeConv(tb *table, sf *StreamFile) *timeConv {
	tc := &timeConv{tb: &table{file: tb.file, timeCol: tb.timeCol}}
	if tb.dateTime || tb.rate > 0 || tb.timeCol.Unit == "" {
		sf.Time = tb.timeCol
		return nil
	}
	tc.ds.Time = tb.timeCol
	tc.tb.t = nil
	tc.tb.convertTime(&tc.ds) // on no samples: the unit decides
	sf.Time = tc.ds.Time
	sf.Warnings = append(sf.Warnings, tc.ds.Warnings...)
	return tc
}

func (tc *timeConv) convert(t []float64) {
	if tc == nil {
		return
	}
	tc.tb.t = t
	tc.ds.Warnings = tc.ds.Warnings[:0]
	tc.tb.convertTime(&tc.ds)
	tc.tb.t = nil
}

// parquetSource streams a Parquet file read by readDirect's decoder, one
// row group at a time into reused buffers.
type parquetSource struct {
	po   *pqFile
	s    *streamScratch
	jobs []*colJob // time (unless a rate), then the states
	tIdx int       // index of the time job, -1 with a rate
	conv *timeConv
	pool sync.Pool
	// prefetch decodes the next row group while fn runs on this one
	prefetch bool
	// lim: pass reads only the row groups holding rows lim[0] ..
	// lim[1]-1 (all when lim[1] is 0), the others skipped by their row
	// counts
	lim [2]int
	// hold, when not nil, has a column per job of the file's length:
	// decode writes each row group into its rows there, not into the
	// scratch buffers (see heldSource)
	hold *holdBuf
}

// skip reports whether the row group of rows rows from row0 lies
// outside ps.lim.
func (ps *parquetSource) skip(row0, rows int) bool {
	return ps.lim[1] > 0 && (row0+rows <= ps.lim[0] || row0 >= ps.lim[1])
}

func (s *Streamer) openParquetSource(path string) (source, error) {
	po, err := openParquet(path, &s.opts)
	if err != nil {
		return nil, &errFallback{"error"}
	}
	ps := &parquetSource{po: po, s: &s.src, tIdx: -1, prefetch: s.prefetch}
	if !po.direct {
		po.f.Close()
		return nil, &errFallback{"the general Parquet decoder"}
	}
	r := po.r
	for j := range po.fields {
		switch {
		case r.role[j] == roleTime && po.kinds[j] == kindTimestamp:
			po.f.Close()
			return nil, &errFallback{"date-time stamps"}
		case r.role[j] == roleTime:
			ps.tIdx = len(ps.jobs)
			ps.jobs = append(ps.jobs, &colJob{j: j, kind: po.kinds[j]})
		}
	}
	for k := range r.states {
		for j := range po.fields {
			if r.role[j] == roleState && r.stateOf[j] == k {
				ps.jobs = append(ps.jobs, &colJob{j: j, kind: po.kinds[j]})
			}
		}
	}
	return ps, nil
}

func (ps *parquetSource) header(sf *StreamFile) error {
	tb := ps.po.tb
	ns := len(tb.states) - tb.nInput
	sf.States = tb.states[:ns:ns]
	sf.Ignored = tb.ignored
	if tb.rows == 0 {
		return &errFallback{"error"}
	}
	ps.conv = newTimeConv(tb, sf)
	return nil
}

func (ps *parquetSource) rowsHint() int { return ps.po.tb.rows }

// noNulls reports whether no column read can hold a null (none has
// definition levels).
func (ps *parquetSource) noNulls() bool {
	sc := ps.po.pr.MetaData().Schema
	for _, jb := range ps.jobs {
		if sc.Column(jb.j).MaxDefinitionLevel() > 0 {
			return false
		}
	}
	return true
}

func (ps *parquetSource) line(row int) int { return row + 1 }

func (ps *parquetSource) close() error { return ps.po.f.Close() }

func (ps *parquetSource) pass(ctx context.Context, fn func(row0 int, t []float64, x [][]float64) error) error {
	sc := ps.s
	for len(sc.sc) < len(ps.jobs) {
		sc.sc = append(sc.sc, colScratch{})
	}
	ng := ps.po.pr.NumRowGroups()
	if !ps.prefetch {
		row0 := 0
		for i := 0; i < ng; i++ {
			if err := ctx.Err(); err != nil {
				return err
			}
			if n := ps.groupRows(i); ps.skip(row0, n) {
				row0 += n
				continue
			}
			g := &sc.bufs[0]
			rows, err := ps.decode(i, row0, g)
			if err != nil {
				return err
			}
			if rows > 0 {
				if err := fn(row0, g.t, g.x); err != nil {
					return err
				}
			}
			row0 += rows
		}
		return nil
	}
	// Row groups are decoded one ahead on another goroutine, into two
	// buffers taken in turn.
	type group struct {
		row0, rows int
		g          *groupBuf
		err        error
	}
	done := make(chan struct{})
	out := make(chan group, 1)
	free := make(chan *groupBuf, 2)
	free <- &sc.bufs[0]
	free <- &sc.bufs[1]
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		defer close(out)
		row0 := 0
		for i := 0; i < ng; i++ {
			if n := ps.groupRows(i); ps.skip(row0, n) {
				row0 += n
				continue
			}
			var g *groupBuf
			select {
			case g = <-free:
			case <-done:
				return
			}
			rows, err := 0, ctx.Err()
			if err == nil {
				rows, err = ps.decode(i, row0, g)
			}
			select {
			case out <- group{row0, rows, g, err}:
			case <-done:
				return
			}
			if err != nil {
				return
			}
			row0 += rows
		}
	}()
	defer wg.Wait() // the decoder's scratch is free for the next pass
	defer close(done)
	for r := range out {
		if r.err != nil {
			return r.err
		}
		if r.rows > 0 {
			if err := fn(r.row0, r.g.t, r.g.x); err != nil {
				return err
			}
		}
		free <- r.g
	}
	return nil
}

// groupRows returns row group i's row count from the footer (0 when it
// claims fewer than none).
func (ps *parquetSource) groupRows(i int) int {
	return max(0, int(ps.po.pr.MetaData().RowGroup(i).NumRows()))
}

// groupBuf holds one decoded row group: times and states.
type groupBuf struct {
	t []float64
	x [][]float64
}

// jb0bad is the error of a row group that lies past the rows the
// footer counts (the file changed).
func jb0bad(ps *parquetSource, i, row0, rows int) error {
	jb := ps.jobs[0]
	return jb.bad(ps.po.tb.file, ps.po.cols[jb.j], "row group %d: rows %d to %d past the file's %d", i, row0, row0+rows, ps.po.tb.rows)
}

// decode decodes row group i, whose first row is row0, into g and
// returns its row count. A panic in the decoder (corrupt data that the
// checks let through) is an error.
func (ps *parquetSource) decode(i, row0 int, g *groupBuf) (rows int, err error) {
	po := ps.po
	tb := po.tb
	sc := ps.s
	cur := 0 // the job decoding, for a panic's message
	defer func() {
		if p := recover(); p != nil {
			for i := range sc.sc {
				sc.sc[i].pages = nil // their state is unknown
			}
			jb := ps.jobs[cur]
			rows, err = 0, jb.bad(tb.file, po.cols[jb.j], "corrupt Parquet data (%v)", p)
		}
	}()
	rows = int(po.pr.MetaData().RowGroup(i).NumRows())
	if rows == 0 {
		return 0, nil
	}
	ns := len(tb.states)
	if len(g.x) != ns {
		g.x = make([][]float64, ns)
	}
	if h := ps.hold; h != nil {
		// the rows' place in the held columns (g is reset after the pass)
		e := row0 + rows
		if len(h.cols) != ns+1 || e > len(h.cols[0]) {
			return 0, jb0bad(ps, i, row0, rows)
		}
		g.t = h.cols[0][row0:e:e]
		for k := range g.x {
			g.x[k] = h.cols[k+1][row0:e:e]
		}
	}
	if cap(g.t) < rows {
		g.t = make([]float64, rows)
	}
	g.t = g.t[:rows]
	for k := range g.x {
		if cap(g.x[k]) < rows {
			g.x[k] = make([]float64, rows)
		}
		g.x[k] = g.x[k][:rows]
	}
	for q, jb := range ps.jobs {
		cur = q
		if q == ps.tIdx {
			jb.dst = g.t
		} else {
			jb.dst = g.x[q-ps.tIdx-1]
		}
		jb.base = row0
		n, err := tb.readGroup(po.f, po.pr, jb, po.cols[jb.j], &sc.sc[q], &ps.pool, po.size, i, 0)
		if err != nil {
			return 0, err
		}
		if n != rows {
			return 0, jb.bad(tb.file, po.cols[jb.j], "row group %d: %d values for %d rows", i, n, rows)
		}
	}
	switch {
	case ps.tIdx < 0:
		for k := range g.t {
			g.t[k] = float64(row0+k) / tb.rate
		}
	default:
		ps.conv.convert(g.t)
	}
	return rows, nil
}
