package ingest

import (
	"context"
	"slices"
)

// DefaultHold is the default [StreamOptions.Hold]: 32 MiB of samples
// (4 Mi float64 values, a file of 1 Mi rows of a time and three
// states) per Streamer.
const DefaultHold = 32 << 20

// holdBuf is a Streamer's memory for the samples of a streamed Parquet
// file's first read (see [StreamOptions.Hold]): the columns, time
// first, a row group after another, and the row groups' first rows and
// lengths. It is reused from file to file; owner is the source whose
// samples it holds.
type holdBuf struct {
	owner  *heldSource
	cols   [][]float64 // time, then one per state
	blocks [][2]int    // row0 and length of each block, in order
	rows   int         // the rows held: the sum of the lengths
	xs     [][]float64 // the block views given to a pass
}

// heldSource is a Parquet source whose first pass, when the file's
// samples fit within limit values, is decoded into buf, so that every
// later pass gives the same blocks from memory instead of decoding the
// file again. A first pass that ends early (an error, a fallback) keeps
// nothing, and every pass then reads the file.
type heldSource struct {
	source
	buf   *holdBuf
	limit int // the most float64 values held
	state int // heldNone (before the first pass), heldAll, heldOff
}

const (
	heldNone = iota
	heldAll
	heldOff
)

// holdSource wraps a Parquet source so that its samples, when they fit
// in limit bytes, are read once. limit <= 0, or another source, returns
// src: a CSV file is streamed only above the CSV window (64 MiB of text
// by default, some four million values), so its samples would seldom
// fit, and copying them as they are parsed until they outgrow the limit
// costs memory for nothing.
func holdSource(src source, buf *holdBuf, limit int64) source {
	if _, ok := src.(*parquetSource); !ok || limit <= 0 {
		return src
	}
	return &heldSource{source: src, buf: buf, limit: int(limit / 8)}
}

// unheld returns the source under src's hold, or src.
func unheld(src source) source {
	if h, ok := src.(*heldSource); ok {
		return h.source
	}
	return src
}

// held reports whether src gives its passes from memory.
func held(src source) bool {
	h, ok := src.(*heldSource)
	return ok && h.state == heldAll && h.buf.owner == h
}

func (h *heldSource) pass(ctx context.Context, fn func(row0 int, t []float64, x [][]float64) error) error {
	b := h.buf
	if h.state == heldAll && b.owner == h {
		return h.replay(ctx, fn)
	}
	if h.state != heldNone { // off, or held once and the buffer since taken
		return h.source.pass(ctx, fn)
	}
	h.state = heldOff // until the first pass has kept every row
	ps := h.source.(*parquetSource)
	// the footer's exact count: the decoder writes into the held columns
	// themselves, and the blocks are only recorded
	ns := len(ps.po.tb.states)
	n := ps.rowsHint()
	if n <= 0 || n*(ns+1) > h.limit {
		return h.source.pass(ctx, fn)
	}
	if len(b.cols) != ns+1 {
		b.cols = make([][]float64, ns+1)
	}
	for j := range b.cols {
		b.cols[j] = slices.Grow(b.cols[j][:0], n)[:n]
	}
	b.owner, b.blocks, b.rows = h, b.blocks[:0], 0
	ps.hold = b
	defer func() {
		ps.hold = nil
		ps.s.bufs = [2]groupBuf{} // they point into the held columns
	}()
	keep := true
	err := h.source.pass(ctx, func(row0 int, t []float64, x [][]float64) error {
		if keep && len(t) > 0 {
			// each block in its place in the held columns, in order
			keep = row0 == b.rows && row0+len(t) <= n && &t[0] == &b.cols[0][row0]
			b.blocks = append(b.blocks, [2]int{row0, len(t)})
			b.rows += len(t)
		}
		return fn(row0, t, x)
	})
	if err == nil && keep && b.rows == n && b.owner == h {
		h.state = heldAll
	} else if b.owner == h {
		b.owner = nil
	}
	return err
}

// replay gives the held blocks, as the first pass gave them.
func (h *heldSource) replay(ctx context.Context, fn func(row0 int, t []float64, x [][]float64) error) error {
	b := h.buf
	ns := len(b.cols) - 1
	if len(b.xs) != ns {
		b.xs = make([][]float64, ns)
	}
	at := 0
	for _, bl := range b.blocks {
		if err := ctx.Err(); err != nil {
			return err
		}
		e := at + bl[1]
		for j := range b.xs {
			b.xs[j] = b.cols[j+1][at:e:e]
		}
		if err := fn(bl[0], b.cols[0][at:e:e], b.xs); err != nil {
			return err
		}
		at = e
	}
	return nil
}

func (h *heldSource) close() error {
	if h.buf.owner == h {
		h.buf.owner = nil
	}
	return h.source.close()
}
