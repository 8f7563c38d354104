package ingest

import (
	"encoding/binary"
	"fmt"
	"io"
	"math"
	"os"
	"slices"
	"unsafe"

	"github.com/apache/arrow/go/v15/parquet/compress"
	"github.com/golang/snappy"
)

// littleEndian says float64 values are stored little-endian in memory,
// as PLAIN pages hold them.
var littleEndian = binary.NativeEndian.Uint16([]byte{1, 0}) == 1

// plainFloats is the fast path for a float64 column chunk without
// definition levels and uncompressed (what writers produce for logged
// numbers with compression off): PLAIN pages are copied straight into
// dst, whose length is the chunk's value count, and dictionary-encoded
// pages (a PLAIN dictionary page, then RLE_DICTIONARY or PLAIN_DICTIONARY
// data pages: Arrow's default until its dictionary fills) are looked up
// in the dictionary as they are unpacked. ok is false, and dst
// unspecified, on anything else or anything inconsistent (another
// encoding, v2 levels, an index outside the dictionary): the caller then
// decodes the chunk with Arrow's reader, which reports what is wrong.
// The page headers have been checked by checkChunk. An infinite value is
// a *ParseError on row row0+k+1.
//
// The dictionary's values are used where they lie in buf when they
// start on an 8-byte boundary (little-endian, as memory holds them),
// else copied to sc.dict; sc.pad is set to the offset in sc.chunk that
// would have aligned them (see colScratch), for the next chunk.
//
// With codec Snappy, each page body is first decompressed (into dst
// itself for a PLAIN page, else into sc's buffers), as Arrow's reader
// would with the same library; a body that does not decompress to its
// header's size is left to Arrow's reader. Other codecs are not taken.
func (tb *table) plainFloats(buf []byte, dst []float64, row0 int, sc *colScratch, codec compress.Compression) (ok bool, err error) {
	if codec != compress.Codecs.Uncompressed && codec != compress.Codecs.Snappy {
		return false, nil
	}
	pos, k := 0, 0
	var dict []float64 // the dictionary: in buf, or in sc.dict
	// every value finite: the dictionary's (a dictionary-encoded value
	// is one of them) and the plain pages' values, each checked once
	finite := true
	for k < len(dst) {
		h, n, err := parsePageHeader(buf[pos:])
		if err != nil {
			return false, nil
		}
		pos += n
		if h.values < 0 || h.compressed < 0 || int64(h.compressed) > int64(len(buf)-pos) {
			return false, nil
		}
		body := buf[pos : pos+int(h.compressed)]
		pos += int(h.compressed)
		// a compressed body: every page of a chunk, but a v2 data page
		// that says it is not
		squeezed := codec != compress.Codecs.Uncompressed && (h.typ != pageDataV2 || h.v2Compressed)
		if !squeezed && h.compressed != h.uncompressed {
			return false, nil
		}
		if squeezed && h.typ == pageDictionary {
			// its own buffer: the data pages' bodies must not overwrite it
			if body, ok = unsnappy(&sc.unzDict, body, int(h.uncompressed)); !ok {
				return false, nil
			}
		}
		switch {
		case h.typ == pageDictionary:
			// encoding is not parsed for dictionary pages: it is PLAIN
			// (or PLAIN_DICTIONARY, the same bytes) for float64
			if len(dict) > 0 || int64(len(body)) != 8*int64(h.values) {
				return false, nil
			}
			var d []float64
			if mis := int(uintptr(unsafe.Pointer(unsafe.SliceData(body))) % 8); littleEndian && len(body) > 0 && mis == 0 {
				// the page holds the values' little-endian bytes, as memory does
				d = unsafe.Slice((*float64)(unsafe.Pointer(&body[0])), h.values)
			} else {
				if len(body) > 0 {
					sc.pad = (sc.pad + 8 - mis) % 8
				}
				d = slices.Grow(sc.dict[:0], int(h.values))[:h.values]
				if littleEndian && len(d) > 0 {
					copy(unsafe.Slice((*byte)(unsafe.Pointer(&d[0])), 8*len(d)), body)
				} else {
					for i := range d {
						d[i] = math.Float64frombits(binary.LittleEndian.Uint64(body[8*i:]))
					}
				}
				sc.dict = d
			}
			dict = d
			finite = allFinite(d)
			continue
		case h.typ == pageData:
		case h.typ == pageDataV2 && h.levels == 0:
		default:
			return false, nil
		}
		if int(h.values) > len(dst)-k {
			return false, nil
		}
		out := dst[k : k+int(h.values)]
		if squeezed && h.encoding == encPlain && littleEndian && len(out) > 0 && int64(h.uncompressed) == 8*int64(len(out)) {
			// the values' bytes decompress straight into their place
			into := unsafe.Slice((*byte)(unsafe.Pointer(&out[0])), 8*len(out))
			got, err := snappy.Decode(into, body)
			if err != nil || len(got) != len(into) || &got[0] != &into[0] {
				return false, nil
			}
			if !allFinite(out) {
				finite = false
			}
			k += len(out)
			continue
		}
		if squeezed {
			if body, ok = unsnappy(&sc.unz, body, int(h.uncompressed)); !ok {
				return false, nil
			}
		}
		switch h.encoding {
		case encPlain:
			if int64(len(body)) != 8*int64(h.values) {
				return false, nil
			}
			if littleEndian && len(out) > 0 {
				// the page holds the values' little-endian bytes, as memory does
				copy(unsafe.Slice((*byte)(unsafe.Pointer(&out[0])), 8*len(out)), body)
			} else {
				for i := range out {
					out[i] = math.Float64frombits(binary.LittleEndian.Uint64(body[8*i:]))
				}
			}
			if !allFinite(out) {
				finite = false
			}
		case encPlainDict, encRLEDict:
			if len(dict) == 0 || !unpackDict(out, body, dict) {
				return false, nil
			}
		default:
			return false, nil
		}
		k += len(out)
	}
	if finite {
		return true, nil
	}
	for i, x := range dst {
		if x-x != 0 && x == x { // infinite (NaN is a missing sample)
			return true, &ParseError{File: tb.file, Line: row0 + i + 1, Err: fmt.Errorf("%w: infinite value", ErrNotNumber)}
		}
	}
	return true, nil
}

// unsnappy decompresses the Snappy block src into *buf (grown as needed,
// kept for the next page) and returns it; ok is false unless it
// decompresses to exactly n bytes.
func unsnappy(buf *[]byte, src []byte, n int) (out []byte, ok bool) {
	if dl, err := snappy.DecodedLen(src); err != nil || dl != n {
		return nil, false
	}
	if cap(*buf) < n {
		*buf = make([]byte, n)
	}
	out, err := snappy.Decode((*buf)[:n], src)
	if err != nil || len(out) != n {
		return nil, false
	}
	return out, true
}

// plainHeaderMax is the most bytes of a page header readPlainInto reads
// ahead of the page: a longer header (page statistics with long values)
// is read by the general path.
const plainHeaderMax = 256

// readPlainInto reads a float64 column chunk of PLAIN data pages only,
// uncompressed and without levels or dictionary, at [start, start+clen)
// of f, each page's values read straight into their place in dst (one
// copy, the read's, instead of a read into a buffer and a copy out). It
// takes exactly the chunks that checkChunk and plainFloats take as PLAIN
// pages, with the same values: pages whose values add up to len(dst),
// each inside the chunk; ok is false, having read nothing it keeps, on
// anything else (the caller then reads the chunk the general way, which
// reports what is wrong). A chunk read short says the file changed; an
// infinite value is a *ParseError on row row0+k+1.
func (tb *table) readPlainInto(f *os.File, start, clen int64, dst []float64, row0 int, sc *colScratch) (ok bool, err error) {
	if cap(sc.hdr) < plainHeaderMax {
		sc.hdr = make([]byte, plainHeaderMax)
	}
	changed := func(n, want int, err error) error {
		if n < want {
			if err == nil || err == io.EOF { // the footer's chunk lies past the end now
				return &ParseError{File: tb.file, Err: fmt.Errorf("%w: the file changed while it was read", ErrFormat)}
			}
			return err
		}
		return nil
	}
	pos, end := start, start+clen
	k := 0
	for k < len(dst) {
		hb := sc.hdr[:min(int64(plainHeaderMax), end-pos)]
		if len(hb) == 0 {
			return false, nil
		}
		n, rerr := f.ReadAt(hb, pos)
		if err := changed(n, len(hb), rerr); err != nil {
			return false, err
		}
		h, hn, err := parsePageHeader(hb)
		if err != nil || h.typ != pageData || h.encoding != encPlain || h.compressed != h.uncompressed ||
			h.values <= 0 || int(h.values) > len(dst)-k || int64(h.compressed) != 8*int64(h.values) ||
			int64(h.compressed) > end-pos-int64(hn) {
			return false, nil
		}
		out := dst[k : k+int(h.values)]
		b := unsafe.Slice((*byte)(unsafe.Pointer(&out[0])), 8*len(out))
		n, rerr = f.ReadAt(b, pos+int64(hn))
		if err := changed(n, len(b), rerr); err != nil {
			return false, err
		}
		k += len(out)
		pos += int64(hn) + int64(h.compressed)
	}
	if allFinite(dst) {
		return true, nil
	}
	for i, x := range dst {
		if x-x != 0 && x == x { // infinite (NaN is a missing sample)
			return true, &ParseError{File: tb.file, Line: row0 + i + 1, Err: fmt.Errorf("%w: infinite value", ErrNotNumber)}
		}
	}
	return true, nil
}

// Dictionary encodings (Encoding.PLAIN_DICTIONARY, RLE_DICTIONARY).
const (
	encPlainDict = 2
	encRLEDict   = 8
)

// unpackDict fills out from a dictionary-encoded data page body: a byte
// giving the bit width, then the indices in the RLE / bit-packed hybrid
// of the Parquet format (runs whose varint header says, in its low bit,
// bit-packed groups of 8 or one repeated value), each looked up in dict.
// It returns false on anything inconsistent.
func unpackDict(out []float64, body []byte, dict []float64) bool {
	if len(body) < 1 {
		return false
	}
	bw := int(body[0])
	if bw > 32 {
		return false
	}
	p := 1
	k := 0
	nd := uint64(len(dict))
	for k < len(out) {
		hdr, n := binary.Uvarint(body[p:])
		if n <= 0 {
			return false
		}
		p += n
		if hdr&1 == 0 { // a run of one value, in ceil(bw/8) bytes
			cnt := hdr >> 1
			nb := (bw + 7) / 8
			if p+nb > len(body) || cnt > uint64(len(out)-k) {
				return false
			}
			var v uint64
			for i := range nb {
				v |= uint64(body[p+i]) << (8 * i)
			}
			p += nb
			if v >= nd {
				return false
			}
			x := dict[v]
			for i := range int(cnt) {
				out[k+i] = x
			}
			k += int(cnt)
			continue
		}
		groups := hdr >> 1 // of 8 values, bw bits each, least significant bit first
		if groups > uint64(len(body)) {
			return false
		}
		nbytes := int(groups) * bw
		if p+nbytes > len(body) {
			return false
		}
		vals := int(groups) * 8
		var acc uint64
		bits := 0
		q := p
		mask := uint64(1)<<bw - 1
		if bw >= 1 && bw <= 16 {
			// whole groups of 8 values in two 64-bit loads: values 0-3
			// in the low 4·bw bits at q, values 4-7 from bit 4·bw, that
			// is byte bw/2 and bit 4·(bw odd), at most 4 + 4·15 bits on
			var ok bool
			k, q, vals, ok = unpackNarrow(out, k, body, q, vals, uint(bw), dict)
			if !ok {
				return false
			}
		}
		// whole groups of 8 values with 8 readable bytes past their
		// last value's first byte: value i of a group starts at bit
		// i·bw of its bw bytes, read with one 64-bit load
		for ; vals >= 8 && len(out)-k >= 8 && q+bw+8 <= len(body); vals -= 8 {
			o := out[k : k+8]
			for i := range o {
				bit := i * bw
				v := binary.LittleEndian.Uint64(body[q+bit>>3:]) >> (bit & 7) & mask
				if v >= nd {
					return false
				}
				o[i] = dict[v]
			}
			k += 8
			q += bw
		}
		for i := 0; i < vals; i++ {
			for bits < bw {
				acc |= uint64(body[q]) << bits
				q++
				bits += 8
			}
			v := acc & mask
			acc >>= bw
			bits -= bw
			if k < len(out) { // the last group may pad past the page's values
				if v >= nd {
					return false
				}
				out[k] = dict[v]
				k++
			}
		}
		p += nbytes
	}
	return true
}

// unpackNarrow is unpackDict's loop over the whole groups of 8 values of
// bw bits, 1 <= bw <= 16, of a bit-packed run at body[q:] (vals values
// left in the run) that have 8 readable bytes past the start of their
// second half and 8 values to fill at out[k:]: two 64-bit loads a group
// instead of a load per value. It returns k, q and vals past the groups
// done, and false on an index outside dict.
func unpackNarrow(out []float64, k int, body []byte, q, vals int, bw uint, dict []float64) (int, int, int, bool) {
	half := int(bw >> 1)
	s1 := (4 * bw) & 7
	b1, b2, b3 := bw&63, (2*bw)&63, (3*bw)&63
	mask := uint64(1)<<bw - 1
	nd := uint64(len(dict))
	for ; vals >= 8 && len(out)-k >= 8 && q+half+8 <= len(body); vals -= 8 {
		w0 := binary.LittleEndian.Uint64(body[q:])
		w1 := binary.LittleEndian.Uint64(body[q+half:]) >> s1
		i0, i1, i2, i3 := w0&mask, w0>>b1&mask, w0>>b2&mask, w0>>b3&mask
		i4, i5, i6, i7 := w1&mask, w1>>b1&mask, w1>>b2&mask, w1>>b3&mask
		if i0 >= nd || i1 >= nd || i2 >= nd || i3 >= nd || i4 >= nd || i5 >= nd || i6 >= nd || i7 >= nd {
			return k, q, vals, false
		}
		o := out[k : k+8 : k+8]
		o[0], o[1], o[2], o[3] = dict[i0], dict[i1], dict[i2], dict[i3]
		o[4], o[5], o[6], o[7] = dict[i4], dict[i5], dict[i6], dict[i7]
		k += 8
		q += int(bw)
	}
	return k, q, vals, true
}

// colStore is column storage reused from file to file: slot 0 for time,
// 1+k for state (or input) k. A nil *colStore hands out fresh slices.
// Reused slices are not cleared: every row is written before it is read.
// It also holds the noise and event passes' buffers (see tableScratch),
// reused from file to file with it.
type colStore struct {
	f   [][]float64
	scr tableScratch
	sc  []*colScratch // readDirect's, one per worker
}

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
