package ingest

import (
	"fmt"
	"math"
	"path/filepath"
	"slices"
	"sort"
	"strings"
	"time"

	"basin.example/internal/order"
)

// noTime marks a missing date-time cell in table.tn.
const noTime = math.MinInt64

// keySpan is a run of consecutive rows with the same --run-col value.
type keySpan struct {
	key string
	n   int
}

// lineMark says that table row Row is on line Line; rows after it follow
// on consecutive lines until the next mark.
type lineMark struct{ row, line int }

// table is what a reader produces before runs are formed: every row, with
// NaN (or noTime) for missing cells.
type table struct {
	file     string
	states   []Column // the states, then nInput inputs
	stateCol []int    // 1-based source column of each state or input, for errors
	nInput   int
	timeCol  Column
	timeIdx  int     // 1-based source column of time; 0 if none
	rate     float64 // > 0 when there is no time column
	dateTime bool    // tn holds Unix nanoseconds, not t
	t        []float64
	tn       []int64
	x        [][]float64
	keys     []keySpan // nil without --run-col
	marks    []lineMark
	byRow    bool // line numbers are 1-based rows (Parquet), not lines
	rows     int
	ignored  []Column
	// unnamed: the line and column (1-based) of each column without a
	// header name whose first data row holds a value (CSV)
	unnamed [][2]int
	// latin: where a CSV file's text was first read as Windows-1252
	// (nil when all of it is UTF-8)
	latin *latinNote
	// finite: every cell of x is known to be finite, with no missing
	// cell (the CSV reader's fast row path took every row: it takes
	// finite numbers only), so that the runs need no look for holes
	finite bool
	// scratch: the noise and event passes' buffers, reused from file to
	// file by a Streamer (nil: fresh ones)
	scratch *tableScratch
}

// tableScratch holds the buffers of a table's noise and event passes,
// which a Streamer reuses from file to file (a fresh set per file was a
// tenth of a screen's time in allocation and garbage collection on
// files of 50,000 rows).
type tableScratch struct {
	ev    eventScratch
	noise []*noiseScratch // one per worker
	dts   []float64       // splitGroup's time steps
}

// noiseScratch holds one worker's buffers of noiseOf: the jump
// statistics of a state, and scaleOf's scratch.
type noiseScratch struct{ all, sel []float64 }

// scratchOf returns tb's scratch, a fresh one when it has none.
func (tb *table) scratchOf() *tableScratch {
	if tb.scratch == nil {
		tb.scratch = new(tableScratch)
	}
	return tb.scratch
}

// line returns the source line (CSV) or 1-based row (Parquet) of row i.
func (tb *table) line(i int) int {
	k := sort.Search(len(tb.marks), func(k int) bool { return tb.marks[k].row > i }) - 1
	if k < 0 {
		return i + 1
	}
	return tb.marks[k].line + (i - tb.marks[k].row)
}

// lineWord is what tb.line counts: "line" in a CSV file, "row" in a
// Parquet file.
func (tb *table) lineWord() string {
	if tb.byRow {
		return "row"
	}
	return "line"
}

// group is one recording before gap splitting: its rows in order.
type group struct {
	name  string
	spans [][2]int // [start, end) row ranges, in order
}

func (tb *table) groups() []group {
	base := filepath.Base(tb.file)
	if tb.file == "-" {
		base = "-"
	}
	if tb.keys == nil {
		return []group{{name: base, spans: [][2]int{{0, tb.rows}}}}
	}
	var gs []group
	idx := map[string]int{}
	row := 0
	for _, ks := range tb.keys {
		g, ok := idx[ks.key]
		if !ok {
			g = len(gs)
			idx[ks.key] = g
			gs = append(gs, group{name: base + "#" + ks.key})
		}
		sp := gs[g].spans
		if n := len(sp); n > 0 && sp[n-1][1] == row {
			sp[n-1][1] = row + ks.n
		} else {
			sp = append(sp, [2]int{row, row + ks.n})
		}
		gs[g].spans = sp
		row += ks.n
	}
	return gs
}

// dataset forms runs: groups by --run-col, drops rows with a missing cell,
// checks that time strictly increases and splits at gaps.
func (tb *table) dataset(opts *Options) (*Dataset, error) {
	if tb.rows == 0 {
		return nil, &ParseError{File: tb.file, Err: fmt.Errorf("%w: a header but no data rows", ErrEmpty)}
	}
	for j, c := range tb.x {
		if allNaN(c) {
			return nil, &ParseError{File: tb.file, Column: tb.stateCol[j], Name: tb.states[j].Name, Err: ErrAllMissing}
		}
	}
	ns := len(tb.states) - tb.nInput
	ds := &Dataset{States: tb.states[:ns:ns], Time: tb.timeCol, files: []string{tb.file}}
	if tb.nInput > 0 {
		ds.Inputs = tb.states[ns:]
	}
	if !tb.dateTime && tb.rate <= 0 && tb.timeCol.Unit != "" {
		tb.convertTime(ds)
	}
	if tb.dateTime || tb.rate > 0 {
		tb.t = make([]float64, tb.rows)
	}
	for _, g := range tb.groups() {
		if err := tb.splitGroup(ds, g, opts); err != nil {
			return nil, err
		}
	}
	if len(ds.Runs) == 0 && ds.Window > 0 {
		return ds, nil // the time window left nothing here; finish decides
	}
	if len(ds.Runs) == 0 {
		return nil, &ParseError{File: tb.file, Err: fmt.Errorf("%w: every row has a missing cell", ErrEmpty)}
	}
	tb.tn = nil
	return ds, nil
}

// convertTime turns numeric times in a known unit into seconds (see
// [TimeUnits]), or warns about a unit that is not known.
func (tb *table) convertTime(ds *Dataset) {
	u := tb.timeCol.Unit
	f, ok := TimeUnits[u]
	if !ok {
		f, ok = TimeUnits[strings.ToLower(u)]
	}
	if !ok {
		ds.Warnings = append(ds.Warnings, fmt.Sprintf("%s: time column %q has unit %q, not a time unit known here; times are used as logged",
			tb.file, tb.timeCol.Name, u))
		return
	}
	if u != "s" {
		ds.TimeLogged = u
		ds.Time.Unit = "s"
	}
	switch {
	case f == 1:
	case f < 1: // division by 10^k is correctly rounded: 10 ms is exactly 0.01 s
		d := math.Round(1 / f)
		for i, v := range tb.t {
			tb.t[i] = v / d
		}
	default:
		for i, v := range tb.t {
			tb.t[i] = v * f
		}
	}
}

func allNaN(c []float64) bool {
	for _, v := range c {
		if v == v {
			return false
		}
	}
	return true
}

// stepRange returns the least and greatest time step between
// consecutive samples within the pieces (+Inf and -Inf when there is
// none): the steps the gap limit's median is taken over.
func (tb *table) stepRange(pieces [][][2]int) (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, p := range pieces {
		prev := -1
		for _, rg := range p {
			i := rg[0]
			if prev >= 0 && i < rg[1] {
				d := tb.t[i] - tb.t[prev]
				lo, hi = min(lo, d), max(hi, d)
			}
			if i >= rg[1] {
				continue
			}
			t := tb.t[i:rg[1]]
			for k := 1; k < len(t); k++ {
				d := t[k] - t[k-1]
				lo, hi = min(lo, d), max(hi, d)
			}
			prev = rg[1] - 1
		}
	}
	return lo, hi
}

func (tb *table) splitGroup(ds *Dataset, g group, opts *Options) error {
	var epoch time.Time
	var t0 int64
	haveT0 := false
	local := 0 // row index within the group, for --rate
	// pieces of valid rows, split at missing rows; a piece is a list of
	// [start, end) row ranges (more than one only across --run-col spans)
	var pieces [][][2]int
	var cur [][2]int
	prevT, prevRow := math.Inf(-1), -1
	missing := 0
	for _, sp := range g.spans {
		ra := -1 // start of the open range
		// Most spans have no missing cell: then the rows need no look at
		// the columns (checked a column at a time, not a row at a time).
		holes := false
		for _, c := range tb.x {
			if !tb.finite && !allFinite(c[sp[0]:sp[1]]) {
				holes = true
				break
			}
		}
		for i := sp[0]; i < sp[1]; i++ {
			var ti float64
			switch {
			case tb.rate > 0:
				ti = float64(local) / tb.rate
				tb.t[i] = ti
			case tb.dateTime:
				n := tb.tn[i]
				if n == noTime {
					ti = math.NaN()
				} else {
					if !haveT0 {
						t0, haveT0 = n, true
						epoch = time.Unix(0, n).UTC()
					}
					ti = float64(n-t0) / 1e9
				}
				tb.t[i] = ti
			default:
				ti = tb.t[i]
			}
			local++
			ok := ti == ti
			for k := 0; holes && k < len(tb.x); k++ {
				if c := tb.x[k]; c[i] != c[i] {
					ok = false
					break
				}
			}
			if !ok {
				missing++
				if ra >= 0 {
					cur = append(cur, [2]int{ra, i})
					ra = -1
				}
				if len(cur) > 0 {
					pieces = append(pieces, cur)
					cur = nil
				}
				continue
			}
			if ti <= prevT {
				what := "repeats"
				if ti < prevT {
					what = "goes back"
				}
				return &ParseError{File: tb.file, Line: tb.line(i), Column: tb.timeIdx, Name: tb.timeCol.Name,
					Err: fmt.Errorf("%w: %s (%g after %g on %s %d)", ErrTimeOrder, what, ti, prevT, tb.lineWord(), tb.line(prevRow))}
			}
			prevT, prevRow = ti, i
			if ra < 0 {
				ra = i
			}
		}
		if ra >= 0 {
			cur = append(cur, [2]int{ra, sp[1]})
		}
	}
	if len(cur) > 0 {
		pieces = append(pieces, cur)
	}
	ds.Missing += missing
	if (opts.From > 0 || opts.To > 0) && len(pieces) > 0 {
		pieces = tb.window(ds, pieces, opts.From, opts.To)
		if len(pieces) == 0 {
			return nil
		}
	}
	// The gap limit: GapFactor times the median step over consecutive
	// valid samples within pieces. When no step exceeds GapFactor times
	// the least step, none exceeds the limit (the median is no less than
	// the least, and rounding keeps the order of the products), so the
	// median is not needed: the rule of an even clock, found in one pass
	// over the steps without storing them.
	var limit = math.Inf(1)
	if lo, hi := tb.stepRange(pieces); hi > GapFactor*lo {
		nrows := 0
		for _, sp := range g.spans {
			nrows += sp[1] - sp[0]
		}
		var dts []float64
		if tb.scratch != nil {
			dts = slices.Grow(tb.scratch.dts[:0], nrows)
		} else {
			dts = make([]float64, 0, nrows)
		}
		for _, p := range pieces {
			prev := -1
			for _, rg := range p {
				for i := rg[0]; i < rg[1]; i++ {
					if prev >= 0 {
						dts = append(dts, tb.t[i]-tb.t[prev])
					}
					prev = i
				}
			}
		}
		if n := len(dts); n > 0 {
			// the middle of dts by selection, not a sort: the same order
			// statistics (dts has no NaN: its times are not missing)
			order.Select(dts, (n-1)/2, n/2)
			limit = GapFactor * order.Median(dts[(n-1)/2:n/2+1])
		}
		if tb.scratch != nil {
			tb.scratch.dts = dts[:0]
		}
	}
	var final [][][2]int
	for _, p := range pieces {
		var out [][2]int
		prev := -1
		for _, rg := range p {
			a := rg[0]
			for i := rg[0]; i < rg[1]; i++ {
				if prev >= 0 && tb.t[i]-tb.t[prev] > limit {
					if i > a {
						out = append(out, [2]int{a, i})
					}
					final = append(final, out)
					out, a = nil, i
				}
				prev = i
			}
			out = append(out, [2]int{a, rg[1]})
		}
		final = append(final, out)
	}
	gaps := len(final) - 1
	ds.Gaps += gaps
	events := 0
	if ns := len(tb.x) - tb.nInput; ns > 0 && len(final) > 0 && (!opts.KeepHead || !opts.KeepEvents) {
		noise, err := tb.noiseOf(final, len(tb.x)) // the inputs too: a head ends when the drive starts
		if err != nil {
			return err
		}
		if !opts.KeepHead {
			if k := tb.restingHead(final[0], noise); k > 0 {
				p := final[0]
				first := pieceRow(p, k)
				ds.Heads = append(ds.Heads, Head{Run: g.name, Samples: k, Duration: tb.t[first] - tb.t[p[0][0]]})
				final[0] = subPiece(p, k, pieceLen(p))
			}
		}
		if !opts.KeepEvents {
			var split [][][2]int
			sc := &tb.scratchOf().ev
			for _, p := range final {
				cuts, err := tb.findEvents(ds, g.name, p, noise[:ns], sc)
				if err != nil {
					return err
				}
				out, dropped := splitAt(p, cuts)
				ds.Dropped += dropped
				events += len(out) - 1
				split = append(split, out...)
			}
			final = split
		}
	}
	for n, p := range final {
		r := Run{Name: g.name, Source: Source{File: tb.file, Line: tb.line(p[0][0])}, Epoch: epoch, Gaps: gaps, Events: events}
		if n > 0 {
			r.Name = fmt.Sprintf("%s~%d", g.name, n)
		}
		cols := make([][]float64, len(tb.x))
		if len(p) == 1 { // contiguous rows: share the table's storage
			a, b := p[0][0], p[0][1]
			r.T = tb.t[a:b:b]
			for j, c := range tb.x {
				cols[j] = c[a:b:b]
			}
		} else {
			r.T = gather(tb.t, p)
			for j, c := range tb.x {
				cols[j] = gather(c, p)
			}
		}
		ns := len(tb.x) - tb.nInput
		r.X = cols[:ns:ns]
		if tb.nInput > 0 {
			r.U = cols[ns:]
		}
		ds.Runs = append(ds.Runs, r)
	}
	return nil
}

// allFinite reports whether every value of v is finite (neither NaN nor
// infinite). x - x is 0 for a finite x and NaN otherwise: four sums, to
// keep the additions independent, stay 0 unless some value is not.
func allFinite(v []float64) bool {
	var a0, a1, a2, a3 float64
	i := 0
	for ; i+4 <= len(v); i += 4 {
		a0 += v[i] - v[i]
		a1 += v[i+1] - v[i+1]
		a2 += v[i+2] - v[i+2]
		a3 += v[i+3] - v[i+3]
	}
	for ; i < len(v); i++ {
		a0 += v[i] - v[i]
	}
	return a0 == 0 && a1 == 0 && a2 == 0 && a3 == 0
}

func gather(src []float64, rgs [][2]int) []float64 {
	var dst []float64
	for _, rg := range rgs {
		dst = append(dst, src[rg[0]:rg[1]]...)
	}
	return dst
}

// median returns the median of v, reordering v (see [medianSorted]). v
// must not be empty.
func median(v []float64) float64 {
	slices.Sort(v)
	return medianSorted(v)
}

// medianSorted returns the median of v, sorted ascending as [slices.Sort]
// leaves it: [order.Median], the middle value or the mean of the two
// middle values. A NaN (sorted first) counts as a value below every
// number rather than making the median NaN, as the event pass and the
// streamed screen's selection ([scaleOf]) have always ranked it: with k
// NaN, the median is that of v[k:n-k] (taking k values off both ends
// keeps the middle), and NaN when the NaN reach the middle. v must not be
// empty.
func medianSorted(v []float64) float64 {
	k := 0
	for k < len(v) && math.IsNaN(v[k]) {
		k++
	}
	if len(v)-2*k <= 0 {
		return math.NaN()
	}
	return order.Median(v[k : len(v)-k])
}

// window keeps, of a recording's pieces, the rows with time in
// [t0+from, t0+to] (to = 0: no end), t0 being the recording's first
// sample. With nothing left it counts the recording in ds.Window.
func (tb *table) window(ds *Dataset, pieces [][][2]int, from, to float64) [][][2]int {
	first, last := pieces[0][0][0], 0
	lp := pieces[len(pieces)-1]
	last = lp[len(lp)-1][1] - 1
	t0 := tb.t[first]
	ds.longest = max(ds.longest, tb.t[last]-t0)
	lo, hi := t0+from, math.Inf(1)
	if to > 0 {
		hi = t0 + to
	}
	var out [][][2]int
	for _, p := range pieces {
		var q [][2]int
		for _, rg := range p {
			ts := tb.t[rg[0]:rg[1]]
			a := sort.SearchFloat64s(ts, lo)
			b := sort.Search(len(ts), func(i int) bool { return ts[i] > hi })
			if a < b {
				q = append(q, [2]int{rg[0] + a, rg[0] + b})
			}
		}
		if len(q) > 0 {
			out = append(out, q)
		}
	}
	if len(out) == 0 {
		ds.Window++
	}
	return out
}
