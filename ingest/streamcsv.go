package ingest

import (
	"context"
	"os"
)

// csvSource streams a CSV file: each pass parses it again, with the
// parsed blocks handed over in order by the parser's csvSink hook
// instead of being joined into a table, their buffers reused.
type csvSource struct {
	path  string
	opts  Options
	size  int64
	sf    *StreamFile
	ns    int // -1 until the first block
	conv  *timeConv
	hint  int
	lines table    // marks, for line numbers
	bufs  *csvBufs // the Streamer's, reused from pass to pass and file to file
}

func (s *Streamer) openCSVSource(path string) (source, error) {
	st, err := os.Stat(path)
	if err != nil {
		return nil, err
	}
	if s.csvWindow > 0 && st.Size() <= s.csvWindow {
		return nil, &errFallback{"window"}
	}
	// one worker per file, as a Parquet file without Prefetch: the
	// files are on the other cores (and the read buffers stay one wave's)
	s.csv.workers = 1
	if s.prefetch {
		s.csv.workers = 0
	}
	return &csvSource{path: path, opts: s.opts, size: st.Size(), ns: -1, hint: -1, bufs: &s.csv}, nil
}

func (cs *csvSource) header(sf *StreamFile) error {
	cs.sf = sf // filled on the first block
	return nil
}

// rowsHint is an estimate from the first block's rows per byte, once it
// is parsed (a guess the plan checks, not a count).
func (cs *csvSource) rowsHint() int { return cs.hint }

func (cs *csvSource) line(row int) int { return cs.lines.line(row) }

func (cs *csvSource) close() error { return nil }

func (cs *csvSource) pass(ctx context.Context, fn func(row0 int, t []float64, x [][]float64) error) error {
	f, err := os.Open(cs.path)
	if err != nil {
		return err
	}
	defer f.Close()
	first := cs.ns < 0
	row := 0
	var ferr error
	o := cs.opts
	o.csvSink = func(tb *table, c *chunk) {
		if ferr != nil {
			return
		}
		if ferr = ctx.Err(); ferr != nil {
			return
		}
		if cs.ns < 0 {
			switch {
			case tb.dateTime:
				ferr = &errFallback{"date-time stamps"}
				return
			case tb.keys != nil || tb.nInput > 0:
				ferr = &errFallback{"a run column or inputs"}
				return
			}
			cs.ns = len(tb.states)
			sf := cs.sf
			sf.States, sf.Ignored = tb.states[:cs.ns:cs.ns], tb.ignored
			if tb.latin != nil {
				sf.Warnings = append(sf.Warnings, tb.latin.warning(cs.path))
			}
			cs.conv = newTimeConv(tb, sf)
			if len(c.data) > 0 {
				cs.hint = int(float64(c.rows) * float64(cs.size) / float64(len(c.data)))
			}
		}
		if first {
			for _, m := range c.marks {
				cs.lines.marks = append(cs.lines.marks, lineMark{row: row + m.row, line: m.line})
			}
		}
		t := c.t
		if tb.rate > 0 {
			b := cs.bufs
			if cap(b.rt) < c.rows {
				b.rt = make([]float64, c.rows)
			}
			t = b.rt[:c.rows]
			for k := range t {
				t[k] = float64(row+k) / tb.rate
			}
		} else {
			cs.conv.convert(t)
		}
		ferr = fn(row, t[:c.rows], c.x[:cs.ns])
		row += c.rows
	}
	if _, err := readCSVBlocks(f, cs.path, &o, cs.bufs); err != nil {
		return err
	}
	return ferr
}
