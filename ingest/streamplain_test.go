package ingest

import (
	"bytes"
	"encoding/binary"
	"math"
	"math/rand/v2"
	"slices"
	"testing"
	"time"

	"github.com/apache/arrow/go/v15/arrow"
	"github.com/apache/arrow/go/v15/arrow/array"
	"github.com/apache/arrow/go/v15/arrow/memory"
	"github.com/apache/arrow/go/v15/parquet"
	"github.com/apache/arrow/go/v15/parquet/compress"
	"github.com/apache/arrow/go/v15/parquet/file"
	"github.com/apache/arrow/go/v15/parquet/pqarrow"
)

// unpackDictRef decodes a dictionary-encoded data page body as the
// Parquet format describes the RLE / bit-packed hybrid (its Encodings
// page, "Run Length Encoding / Bit-Packing Hybrid": a bit-width byte,
// then runs with a ULEB128 header whose low bit says bit-packed groups of
// 8 values, packed least significant bit first, or one value repeated,
// in ceil(bw/8) little-endian bytes), one bit at a time: the reference
// unpackDict's fast paths are checked against.
func unpackDictRef(out []float64, body []byte, dict []float64) bool {
	if len(body) < 1 || body[0] > 32 {
		return false
	}
	bw := int(body[0])
	p, k := 1, 0
	for k < len(out) {
		hdr, n := binary.Uvarint(body[p:])
		if n <= 0 {
			return false
		}
		p += n
		if hdr&1 == 0 {
			cnt, nb := int(hdr>>1), (bw+7)/8
			if p+nb > len(body) || cnt > len(out)-k {
				return false
			}
			v := 0
			for i := range nb {
				v |= int(body[p+i]) << (8 * i)
			}
			p += nb
			if v >= len(dict) {
				return false
			}
			for range cnt {
				out[k] = dict[v]
				k++
			}
			continue
		}
		if hdr>>1 > uint64(len(body)) {
			return false
		}
		vals := int(hdr>>1) * 8
		if p+vals*bw/8 > len(body) {
			return false
		}
		for i := 0; i < vals && k < len(out); i++ {
			v := 0
			for b := range bw {
				pos := i*bw + b
				v |= int(body[p+pos/8]>>(pos%8)&1) << b
			}
			if v >= len(dict) {
				return false
			}
			out[k] = dict[v]
			k++
		}
		p += vals * bw / 8
	}
	return true
}

// packPage appends to body a dictionary page's runs for the indices idx:
// runs of equal indices of at least rle as RLE runs, the rest bit-packed
// in runs of at most maxGroups groups (the last group padded with zero
// bits).
func packPage(bw int, idx []int, rle, maxGroups int, rng *rand.Rand) []byte {
	body := []byte{byte(bw)}
	for i := 0; i < len(idx); {
		j := i
		for j < len(idx) && idx[j] == idx[i] {
			j++
		}
		if j-i >= rle {
			body = binary.AppendUvarint(body, uint64(j-i)<<1)
			for b := range (bw + 7) / 8 {
				body = append(body, byte(idx[i]>>(8*b)))
			}
			i = j
			continue
		}
		groups := 1 + rng.IntN(maxGroups)
		n := min(groups*8, len(idx)-i)
		groups = (n + 7) / 8
		body = binary.AppendUvarint(body, uint64(groups)<<1|1)
		bits := make([]byte, groups*bw)
		for m := range n {
			for b := range bw {
				if idx[i+m]>>b&1 == 1 {
					pos := m*bw + b
					bits[pos/8] |= 1 << (pos % 8)
				}
			}
		}
		body = append(body, bits...)
		i += n
	}
	return body
}

// TestUnpackDictPaths compares unpackDict (its two-load loop for widths
// up to 16 bits, its load per value, its bit reader for a run's last
// groups) with the bit-at-a-time reference on pages of every width,
// dictionaries holding NaN, ±Inf and -0, runs long and short, pages
// ending mid-group and bodies cut short or carrying an index past the
// dictionary: the same values, bit for bit, or the same refusal.
func TestUnpackDictPaths(t *testing.T) {
	rng := rand.New(rand.NewPCG(12, 1))
	specials := []float64{math.NaN(), math.Inf(1), math.Inf(-1), math.Copysign(0, -1), 0, math.SmallestNonzeroFloat64}
	for bw := 0; bw <= 32; bw++ {
		for trial := range 12 {
			nd := 1
			if bw > 0 {
				nd = 1 << min(bw, 14)
				if trial%3 == 1 && nd > 2 {
					nd = nd/2 + 1 + rng.IntN(nd/2-1) // indices up to the width's top bit
				}
			}
			dict := make([]float64, nd)
			for i := range dict {
				dict[i] = rng.NormFloat64()
				if rng.IntN(10) == 0 {
					dict[i] = specials[rng.IntN(len(specials))]
				}
			}
			n := 1 + rng.IntN(3000)
			idx := make([]int, n)
			for i := range idx {
				switch {
				case i > 0 && rng.IntN(4) == 0 && trial%2 == 0:
					idx[i] = idx[i-1] // repeats, some long enough for RLE runs
				case trial%4 == 3:
					idx[i] = i % nd // sequential, as a writer's first-seen order gives
				default:
					idx[i] = rng.IntN(nd)
				}
			}
			body := packPage(bw, idx, 3+rng.IntN(8), 1+rng.IntN(200), rng)
			for _, cut := range []int{0, 1 + rng.IntN(len(body)), len(body) - 1} {
				b := body[:len(body)-cut]
				// fewer values than the page holds: the last group pads
				m := n - rng.IntN(min(n, 8))
				if trial%5 == 4 {
					m = n + 1 // more than it holds: refused
				}
				got, want := make([]float64, m), make([]float64, m)
				okG, okW := unpackDict(got, b, dict), unpackDictRef(want, b, dict)
				if okG != okW {
					t.Fatalf("bw=%d nd=%d n=%d m=%d cut=%d: unpackDict %v, reference %v", bw, nd, n, m, cut, okG, okW)
				}
				if !okG {
					continue
				}
				for i := range got {
					if math.Float64bits(got[i]) != math.Float64bits(want[i]) {
						t.Fatalf("bw=%d nd=%d n=%d cut=%d: value %d = %v, want %v", bw, nd, n, cut, i, got[i], want[i])
					}
				}
			}
			if nd > 1 && bw > 0 {
				// a smaller dictionary: some index (half are past it, with
				// near certainty among the values drawn) is refused by both
				small := dict[:nd/2]
				got, want := make([]float64, n), make([]float64, n)
				okG, okW := unpackDict(got, body, small), unpackDictRef(want, body, small)
				if okG != okW {
					t.Fatalf("bw=%d nd=%d: past the dictionary: unpackDict %v, reference %v", bw, nd, okG, okW)
				}
			}
		}
	}
}

// BenchmarkUnpackDict decodes 64 Ki indices of 16 and 11 bits (Arrow's
// writer gives 16 for a row group of 64 Ki distinct values), bit-packed
// in runs of 63 groups.
func BenchmarkUnpackDict(b *testing.B) {
	for _, bw := range []int{11, 16} {
		rng := rand.New(rand.NewPCG(1, 2))
		nd := 1 << bw
		dict := make([]float64, nd)
		idx := make([]int, 1<<16)
		for i := range idx {
			idx[i] = i % nd
		}
		body := packPage(bw, idx, 1<<30, 63, rng)
		out := make([]float64, len(idx))
		b.Run("bw="+string(rune('0'+bw/10))+string(rune('0'+bw%10)), func(b *testing.B) {
			b.SetBytes(int64(8 * len(out)))
			for b.Loop() {
				if !unpackDict(out, body, dict) {
					b.Fatal("refused")
				}
			}
		})
	}
}

// dictChunk writes n distinct float64 values as one row group with
// Arrow's writer (dictionary encoding by default, uncompressed) and
// returns the column chunk's bytes and the values.
func dictChunk(t testing.TB, n int) ([]byte, []float64) {
	t.Helper()
	return chunkWith(t, n, parquet.WithDictionaryDefault(true))
}

// chunkWith is dictChunk with the writer's properties (after a row group
// of n rows).
func chunkWith(t testing.TB, n int, opts ...parquet.WriterProperty) ([]byte, []float64) {
	t.Helper()
	rng := rand.New(rand.NewPCG(4, 4))
	v := make([]float64, n)
	for i := range v {
		v[i] = float64(i)*1e-3 + 1e-4*rng.NormFloat64()
	}
	sc := arrow.NewSchema([]arrow.Field{{Name: "x", Type: arrow.PrimitiveTypes.Float64}}, nil)
	rb := array.NewRecordBuilder(memory.NewGoAllocator(), sc)
	defer rb.Release()
	rb.Field(0).(*array.Float64Builder).AppendValues(v, nil)
	rec := rb.NewRecord()
	defer rec.Release()
	var buf bytes.Buffer
	props := parquet.NewWriterProperties(append([]parquet.WriterProperty{parquet.WithMaxRowGroupLength(int64(n))}, opts...)...)
	w, err := pqarrow.NewFileWriter(sc, &buf, props, pqarrow.DefaultWriterProps())
	if err != nil {
		t.Fatal(err)
	}
	if err := w.Write(rec); err != nil {
		t.Fatal(err)
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	pr, err := file.NewParquetReader(bytes.NewReader(buf.Bytes()))
	if err != nil {
		t.Fatal(err)
	}
	cc, err := pr.MetaData().RowGroup(0).ColumnChunk(0)
	if err != nil {
		t.Fatal(err)
	}
	start := cc.DataPageOffset()
	if cc.HasDictionaryPage() {
		start = min(start, cc.DictionaryPageOffset())
	}
	return buf.Bytes()[start : start+cc.TotalCompressedSize()], v
}

// TestPlainFloatsSnappy: plainFloats takes Snappy-compressed chunks
// (the default codec of many Parquet writers) of Arrow's writer,
// dictionary-encoded, plain, and in data pages of format v2, and
// decodes them to the values written, bit for bit; a chunk whose body
// does not decompress to its page's size is refused (left to Arrow's
// reader), as is another codec. The Snappy format [Snappy] is
// decompressed by the library Arrow's own reader uses.
func TestPlainFloatsSnappy(t *testing.T) {
	snappyOn := parquet.WithCompression(compress.Codecs.Snappy)
	for _, tc := range []struct {
		name string
		opts []parquet.WriterProperty
	}{
		{"dictionary", []parquet.WriterProperty{snappyOn, parquet.WithDictionaryDefault(true)}},
		{"plain", []parquet.WriterProperty{snappyOn, parquet.WithDictionaryDefault(false)}},
		{"plain v2", []parquet.WriterProperty{snappyOn, parquet.WithDictionaryDefault(false), parquet.WithDataPageVersion(parquet.DataPageV2)}},
		{"dictionary v2", []parquet.WriterProperty{snappyOn, parquet.WithDictionaryDefault(true), parquet.WithDataPageVersion(parquet.DataPageV2)}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			chunk, want := chunkWith(t, 5000, tc.opts...)
			tb := &table{file: "t.parquet"}
			var sc colScratch
			got := make([]float64, len(want))
			ok, err := tb.plainFloats(chunk, got, 0, &sc, compress.Codecs.Snappy)
			if !ok || err != nil {
				t.Fatalf("ok %v, err %v", ok, err)
			}
			for i := range got {
				if math.Float64bits(got[i]) != math.Float64bits(want[i]) {
					t.Fatalf("value %d = %v, want %v", i, got[i], want[i])
				}
			}
			// the same bytes said to be Zstandard: not taken
			if ok, _ := tb.plainFloats(chunk, got, 0, &sc, compress.Codecs.Zstd); ok {
				t.Error("a chunk of another codec taken")
			}
			// a first body declaring one byte more or less than its page
			// (the block's leading varint length, [Snappy]): refused
			_, n, err := parsePageHeader(chunk)
			if err != nil {
				t.Fatal(err)
			}
			for _, d := range []byte{1, 2} {
				bad := slices.Clone(chunk)
				bad[n] ^= d
				if ok, _ := tb.plainFloats(bad, got, 0, &sc, compress.Codecs.Snappy); ok {
					t.Errorf("a body declaring the wrong size (first byte %#x, was %#x) taken", bad[n], chunk[n])
				}
			}
		})
	}
}

// TestPlainFloatsInPlace checks that plainFloats decodes a dictionary
// chunk (Arrow's writer) to the values written, with its dictionary read
// copied (a byte off the boundary) and in place (at the pad it learnt),
// and that the pad it learns aligns the dictionary.
func TestPlainFloatsInPlace(t *testing.T) {
	chunk, want := dictChunk(t, 5000)
	tb := &table{file: "t.parquet"}
	var sc colScratch
	mem := make([]byte, len(chunk)+16)
	got := make([]float64, len(want))
	for trial, off := range []int{1, -1, 0} { // misaligned, at the learnt pad, then at 0
		if off < 0 {
			off = sc.pad
		}
		sc.pad = off // where readGroup reads the chunk
		buf := mem[off : off+len(chunk)]
		copy(buf, chunk)
		clear(got)
		sc.dict = sc.dict[:0]
		ok, err := tb.plainFloats(buf, got, 0, &sc, compress.Codecs.Uncompressed)
		if !ok || err != nil {
			t.Fatalf("trial %d: ok %v, err %v", trial, ok, err)
		}
		for i := range got {
			if math.Float64bits(got[i]) != math.Float64bits(want[i]) {
				t.Fatalf("trial %d (offset %d): value %d = %v, want %v", trial, off, i, got[i], want[i])
			}
		}
		if trial == 1 && len(sc.dict) > 0 {
			t.Errorf("at the learnt pad %d the dictionary was copied", off)
		}
	}
}

// BenchmarkPlainFloats decodes a dictionary chunk of 64 Ki distinct
// values (a row group of Arrow's writer) with its dictionary read in
// place ("in-place") and, a byte off the boundary, copied out first as
// before ("copy"), alternately in one loop; it reports each one's
// median ns per chunk and the median of the per-pair ratios (x-copy).
func BenchmarkPlainFloats(b *testing.B) {
	chunk, _ := dictChunk(b, 1<<16)
	tb := &table{file: "b.parquet"}
	var sc colScratch
	mem := make([]byte, len(chunk)+16)
	dst := make([]float64, 1<<16)
	copy(mem, chunk)
	tb.plainFloats(mem[:len(chunk)], dst, 0, &sc, compress.Codecs.Uncompressed) // learns the pad
	aligned := mem[sc.pad : sc.pad+len(chunk)]
	copy(aligned, chunk)
	off := append([]byte(nil), mem[:len(chunk)+16]...)
	mis := off[(sc.pad+1)%8 : (sc.pad+1)%8+len(chunk)]
	copy(mis, chunk)
	var now, before, ratio []float64
	for b.Loop() {
		pad := sc.pad
		t0 := time.Now()
		okA, _ := tb.plainFloats(aligned, dst, 0, &sc, compress.Codecs.Uncompressed)
		t1 := time.Now()
		okB, _ := tb.plainFloats(mis, dst, 0, &sc, compress.Codecs.Uncompressed)
		t2 := time.Now()
		sc.pad = pad
		if !okA || !okB {
			b.Fatal("refused")
		}
		a, c := float64(t1.Sub(t0)), float64(t2.Sub(t1))
		now, before, ratio = append(now, a), append(before, c), append(ratio, a/c)
	}
	med := func(s []float64) float64 { slices.Sort(s); return s[len(s)/2] }
	b.ReportMetric(med(now), "in-place-ns")
	b.ReportMetric(med(before), "copy-ns")
	b.ReportMetric(med(ratio), "x-copy")
}
