package ingest

import (
	"encoding/binary"
	"fmt"
	"math"
	"unsafe"
)

// littleEndian says float64 values are stored little-endian in memory,
// as PLAIN pages hold them.
var littleEndian = binary.NativeEndian.Uint16([]byte{1, 0}) == 1

// plainFloats is the fast path for a float64 column chunk without
// definition levels, uncompressed and PLAIN encoded on every page (what
// writers produce when dictionary encoding is off, or once it has given
// up on noisy data): the values are copied straight from the pages into
// dst, whose length is the chunk's value count. ok is false, and dst
// unspecified, when a page is of another kind (a dictionary page, another
// encoding, v2 levels): the caller then decodes the chunk in full. The
// page headers have been checked by checkChunk. An infinite value is a
// *ParseError on row row0+k+1.
func (tb *table) plainFloats(buf []byte, dst []float64, row0 int) (ok bool, err error) {
	pos, k := 0, 0
	for k < len(dst) {
		h, n, err := parsePageHeader(buf[pos:])
		if err != nil {
			return false, nil
		}
		pos += n
		if h.encoding != encPlain || h.compressed != h.uncompressed || h.values < 0 ||
			int64(h.compressed) != 8*int64(h.values) || int64(h.compressed) > int64(len(buf)-pos) || int(h.values) > len(dst)-k {
			return false, nil
		}
		switch {
		case h.typ == pageData:
		case h.typ == pageDataV2 && h.levels == 0 && !h.v2Compressed:
		default:
			return false, nil
		}
		body := buf[pos : pos+int(h.compressed)]
		pos += int(h.compressed)
		out := dst[k : k+int(h.values)]
		if littleEndian && len(out) > 0 {
			// the page holds the values' little-endian bytes, as memory does
			copy(unsafe.Slice((*byte)(unsafe.Pointer(&out[0])), 8*len(out)), body)
		} else {
			for i := range out {
				out[i] = math.Float64frombits(binary.LittleEndian.Uint64(body[8*i:]))
			}
		}
		k += len(out)
	}
	for i, x := range dst {
		if x-x != 0 && x == x { // infinite (NaN is a missing sample)
			return true, &ParseError{File: tb.file, Line: row0 + i + 1, Err: fmt.Errorf("%w: infinite value", ErrNotNumber)}
		}
	}
	return true, nil
}

// colStore is column storage reused from file to file: slot 0 for time,
// 1+k for state (or input) k. A nil *colStore hands out fresh slices.
// Reused slices are not cleared: every row is written before it is read.
type colStore struct{ f [][]float64 }

func (cs *colStore) floats(slot, n int) []float64 {
	if cs == nil {
		return make([]float64, n)
	}
	for len(cs.f) <= slot {
		cs.f = append(cs.f, nil)
	}
	if cap(cs.f[slot]) < n {
		cs.f[slot] = make([]float64, n)
	}
	return cs.f[slot][:n]
}
