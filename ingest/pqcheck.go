package ingest

import (
	"encoding/binary"
	"errors"
	"fmt"

	"github.com/apache/arrow/go/v15/parquet/compress"
)

// Page types of the Parquet format (PageHeader.type).
const (
	pageData       = 0
	pageIndex      = 1
	pageDictionary = 2
	pageDataV2     = 3
)

// pageHeader is what checkChunk needs from a Parquet page header.
type pageHeader struct {
	typ          int32
	uncompressed int32
	compressed   int32
	values       int32 // data or dictionary page
	levels       int32 // v2: definition + repetition level bytes
	v2Compressed bool  // v2: is_compressed (default true)
	encoding     int32 // data page (v1 or v2): the values' encoding; -1 if not given
}

// encPlain is the Parquet PLAIN encoding's number (Encoding.PLAIN).
const encPlain = 0

// maxThriftDepth bounds the nesting of thrift structs and lists that
// skipping a field may enter: a page header nests three deep.
const maxThriftDepth = 8

var errThrift = errors.New("malformed page header")

// thriftReader walks the thrift compact protocol (the encoding of Parquet
// page headers) over a byte slice, without allocating.
type thriftReader struct {
	b   []byte
	pos int
	err error
}

func (r *thriftReader) byte() byte {
	if r.pos >= len(r.b) {
		r.err = errThrift
		return 0
	}
	c := r.b[r.pos]
	r.pos++
	return c
}

func (r *thriftReader) uvarint() uint64 {
	v, n := binary.Uvarint(r.b[min(r.pos, len(r.b)):])
	if n <= 0 {
		r.err = errThrift
		return 0
	}
	r.pos += n
	return v
}

func (r *thriftReader) varint() int64 {
	u := r.uvarint()
	return int64(u>>1) ^ -int64(u&1) // zigzag
}

func (r *thriftReader) i32() int32 {
	v := r.varint()
	if v < -1<<31 || v > 1<<31-1 {
		r.err = errThrift
	}
	return int32(v)
}

// field reads a field header; it returns type 0 at the struct's end.
func (r *thriftReader) field(last int16) (id int16, typ byte) {
	c := r.byte()
	typ = c & 0x0f
	if typ == 0 {
		return 0, 0
	}
	if d := c >> 4; d != 0 {
		return last + int16(d), typ
	}
	return int16(r.varint()), typ
}

// skip skips a value of compact type typ.
func (r *thriftReader) skip(typ byte, depth int) {
	if depth > maxThriftDepth {
		r.err = errThrift
		return
	}
	switch typ {
	case 1, 2: // bool in a field header
	case 3:
		r.byte()
	case 4, 5, 6:
		r.uvarint()
	case 7:
		r.pos += 8
	case 8:
		n := r.uvarint()
		if n > uint64(len(r.b)) {
			r.err = errThrift
			return
		}
		r.pos += int(n)
	case 9, 10: // list, set
		h := r.byte()
		n := uint64(h >> 4)
		if n == 15 {
			n = r.uvarint()
		}
		et := h & 0x0f
		if n > uint64(len(r.b)) {
			r.err = errThrift
			return
		}
		for i := uint64(0); i < n && r.err == nil; i++ {
			if et == 1 || et == 2 {
				r.byte() // a bool element takes a byte
			} else {
				r.skip(et, depth+1)
			}
		}
	case 11: // map
		n := r.uvarint()
		if n == 0 {
			break
		}
		kv := r.byte()
		if n > uint64(len(r.b)) {
			r.err = errThrift
			return
		}
		for i := uint64(0); i < n && r.err == nil; i++ {
			r.skip(kv>>4, depth+1)
			r.skip(kv&0x0f, depth+1)
		}
	case 12:
		var last int16
		for r.err == nil {
			id, t := r.field(last)
			if t == 0 {
				return
			}
			r.skip(t, depth+1)
			last = id
		}
	default:
		r.err = errThrift
	}
	if r.pos > len(r.b) {
		r.err = errThrift
	}
}

// sub reads the fields of a nested page header struct that carry the
// value count (field 1) and, for v2, the level lengths (5, 6) and
// is_compressed (7).
func (r *thriftReader) sub(h *pageHeader) {
	var last int16
	for r.err == nil {
		id, t := r.field(last)
		if t == 0 {
			return
		}
		switch {
		case id == 1 && t == 5:
			h.values = r.i32()
		case id == 2 && t == 5 && h.typ == pageData, id == 4 && t == 5 && h.typ == pageDataV2:
			h.encoding = r.i32()
		case (id == 5 || id == 6) && t == 5 && h.typ == pageDataV2:
			v := r.i32()
			if v < 0 || h.levels > 1<<30 {
				r.err = errThrift
			}
			h.levels += v
		case id == 7 && (t == 1 || t == 2) && h.typ == pageDataV2:
			h.v2Compressed = t == 1
		default:
			r.skip(t, 2)
		}
		last = id
	}
}

// parsePageHeader reads a page header at the start of b and returns it
// with its length in bytes.
func parsePageHeader(b []byte) (pageHeader, int, error) {
	r := thriftReader{b: b}
	h := pageHeader{typ: -1, uncompressed: -1, compressed: -1, values: -1, v2Compressed: true, encoding: -1}
	var last int16
	for r.err == nil {
		id, t := r.field(last)
		if r.err != nil || t == 0 {
			break
		}
		switch {
		case id == 1 && t == 5:
			h.typ = r.i32()
		case id == 2 && t == 5:
			h.uncompressed = r.i32()
		case id == 3 && t == 5:
			h.compressed = r.i32()
		case (id == 5 || id == 7 || id == 8) && t == 12:
			r.sub(&h)
		default:
			r.skip(t, 1)
		}
		last = id
	}
	if r.err != nil {
		return h, 0, r.err
	}
	if h.typ < 0 || h.uncompressed < 0 || h.compressed < 0 {
		return h, 0, errThrift
	}
	return h, r.pos, nil
}

// chunkLimits bounds what a column chunk's pages may claim.
type chunkLimits struct {
	values       int64 // the chunk's value count (its row group's rows)
	uncompressed int64 // total uncompressed bytes over its pages
}

// checkChunk walks the page headers of one column chunk (its bytes in
// buf) before any of it is decoded. Every page must lie inside the chunk,
// be of a known type, and the pages together must hold exactly
// lim.values values and claim at most lim.uncompressed bytes once
// uncompressed; a Snappy or Zstandard page must declare, in its own
// header, the size its page header claims. This is what keeps a corrupt
// or hostile file from making the decoder allocate without bound or
// loop: the decoder then only ever sees pages whose sizes agree.
func checkChunk(buf []byte, codec compress.Compression, lim chunkLimits) error {
	pos := 0
	var seen, total int64
	for page := 1; seen < lim.values; page++ {
		if pos >= len(buf) {
			return fmt.Errorf("column chunk ends after %d of %d values", seen, lim.values)
		}
		h, n, err := parsePageHeader(buf[pos:])
		if err != nil {
			return fmt.Errorf("page %d at byte %d of its column chunk: %w", page, pos, err)
		}
		pos += n
		if int64(h.compressed) > int64(len(buf)-pos) {
			return fmt.Errorf("page %d claims %d bytes, %d left in its column chunk", page, h.compressed, len(buf)-pos)
		}
		total += int64(h.uncompressed)
		if total > lim.uncompressed {
			return fmt.Errorf("pages claim %d bytes or more uncompressed for %d values (limit %d)", total, lim.values, lim.uncompressed)
		}
		body := buf[pos : pos+int(h.compressed)]
		pos += int(h.compressed)
		switch h.typ {
		case pageData, pageDataV2:
			if h.values < 0 {
				return fmt.Errorf("page %d: %d values", page, h.values)
			}
			seen += int64(h.values)
		case pageDictionary:
			if h.values < 0 {
				return fmt.Errorf("dictionary page: %d values", h.values)
			}
		default:
			return fmt.Errorf("page %d: unsupported page type %d", page, h.typ)
		}
		want := int64(h.uncompressed) // what the codec must produce
		if h.typ == pageDataV2 {
			if h.levels > h.compressed || h.levels > h.uncompressed {
				return fmt.Errorf("page %d: %d level bytes in a %d-byte page", page, h.levels, h.compressed)
			}
			if !h.v2Compressed {
				if h.compressed != h.uncompressed {
					return fmt.Errorf("page %d: uncompressed, but %d bytes stored and %d claimed", page, h.compressed, h.uncompressed)
				}
				continue
			}
			body = body[h.levels:]
			want -= int64(h.levels)
		}
		if err := checkCodecSize(codec, body, want); err != nil {
			return fmt.Errorf("page %d: %w", page, err)
		}
	}
	if seen != lim.values {
		return fmt.Errorf("pages hold %d values, the row group %d", seen, lim.values)
	}
	return nil
}

// checkCodecSize checks the size a compressed page body declares for
// itself against want, for the codecs that would otherwise allocate what
// the body declares (Snappy, Zstandard). Gzip and Brotli decode into a
// buffer of the page header's size and cannot overrun it.
func checkCodecSize(codec compress.Compression, body []byte, want int64) error {
	switch codec {
	case compress.Codecs.Uncompressed, compress.Codecs.Gzip, compress.Codecs.Brotli:
		return nil
	case compress.Codecs.Snappy:
		n, k := binary.Uvarint(body)
		if k <= 0 || n != uint64(want) {
			return fmt.Errorf("Snappy data declares %d bytes, the page %d", n, want)
		}
		return nil
	case compress.Codecs.Zstd:
		n, ok := zstdContentSize(body)
		if !ok || n != uint64(want) {
			return fmt.Errorf("Zstandard frame does not declare the page's %d bytes", want)
		}
		return nil
	}
	return fmt.Errorf("unsupported compression %v", codec)
}

// zstdContentSize returns the content size a Zstandard frame header
// declares (RFC 8878, section 3.1.1.1); ok is false when the frame does
// not declare one or is not a Zstandard frame.
func zstdContentSize(b []byte) (uint64, bool) {
	if len(b) < 5 || binary.LittleEndian.Uint32(b) != 0xFD2FB528 {
		return 0, false
	}
	d := b[4]
	fcsFlag, single, dictFlag := d>>6, d&0x20 != 0, d&0x03
	pos := 5
	if !single {
		pos++ // window descriptor
	}
	pos += [4]int{0, 1, 2, 4}[dictFlag]
	size := [4]int{0, 2, 4, 8}[fcsFlag]
	if fcsFlag == 0 && single {
		size = 1
	}
	if size == 0 || len(b) < pos+size {
		return 0, false
	}
	switch size {
	case 1:
		return uint64(b[pos]), true
	case 2:
		return uint64(binary.LittleEndian.Uint16(b[pos:])) + 256, true
	case 4:
		return uint64(binary.LittleEndian.Uint32(b[pos:])), true
	}
	return binary.LittleEndian.Uint64(b[pos:]), true
}
