package ingest

import (
	"bytes"
	"context"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"
	"time"
	"unicode/utf8"

	"github.com/apache/arrow/go/v15/arrow"
	"github.com/apache/arrow/go/v15/arrow/array"
	"github.com/apache/arrow/go/v15/arrow/memory"
	"github.com/apache/arrow/go/v15/parquet"
	"github.com/apache/arrow/go/v15/parquet/compress"
	"github.com/apache/arrow/go/v15/parquet/file"
	"github.com/apache/arrow/go/v15/parquet/metadata"
	"github.com/apache/arrow/go/v15/parquet/pqarrow"
)

// bounded runs f and fails the test when it allocates more than maxAlloc
// bytes in total (runtime.MemStats.TotalAlloc, every goroutine): the work
// a reader does on hostile input, measured in what it allocates rather
// than in seconds (a loaded machine stretches seconds, not bytes). A
// reader that hangs is stopped by go test's -timeout (the Makefile sets
// it), not by a clock in the test.
func bounded(t *testing.T, maxAlloc uint64, f func()) {
	t.Helper()
	var m0, m1 runtime.MemStats
	runtime.GC()
	runtime.ReadMemStats(&m0)
	f()
	runtime.ReadMemStats(&m1)
	if a := m1.TotalAlloc - m0.TotalAlloc; a > maxAlloc {
		t.Errorf("allocated %d MB, limit %d MB", a>>20, maxAlloc>>20)
	}
}

// wantFormatError checks that err is a one-line, printable *ParseError
// wrapping ErrFormat and containing want.
func wantFormatError(t *testing.T, err error, want string) {
	t.Helper()
	var pe *ParseError
	if err == nil || !errors.As(err, &pe) || !errors.Is(err, ErrFormat) {
		t.Fatalf("err = %v, want a *ParseError wrapping ErrFormat", err)
	}
	msg := err.Error()
	if !strings.Contains(msg, want) || strings.ContainsRune(msg, '\n') || !utf8.ValidString(msg) {
		t.Fatalf("message %q, want one printable line containing %q", msg, want)
	}
	for _, r := range msg {
		if r < ' ' || r == 0x7f {
			t.Fatalf("message %q has a control character", msg)
		}
	}
}

// repeatReader yields prefix, then n copies of fill, then suffix,
// without holding them in memory.
type repeatReader struct {
	prefix, suffix string
	fill           byte
	n              int
	pos            int
}

func (r *repeatReader) Read(p []byte) (int, error) {
	total := len(r.prefix) + r.n + len(r.suffix)
	if r.pos >= total {
		return 0, io.EOF
	}
	k := 0
	for k < len(p) && r.pos < total {
		switch {
		case r.pos < len(r.prefix):
			p[k] = r.prefix[r.pos]
		case r.pos < len(r.prefix)+r.n:
			p[k] = r.fill
		default:
			p[k] = r.suffix[r.pos-len(r.prefix)-r.n]
		}
		k++
		r.pos++
	}
	return k, nil
}

// TestHostileCSV: each hostile input gives a clear error with bounded
// memory. The allocation bounds are well under the size of the
// hostile part (a reader that held it would fail) and well above what
// the reader needs (a few 1 MiB blocks, the line buffer up to
// MaxLineLength, doubled while growing).
func TestHostileCSV(t *testing.T) {
	const mib = 1 << 20
	for _, tc := range []struct {
		name     string
		in       io.Reader
		want     string
		maxAlloc uint64
	}{
		{"100 MB line", &repeatReader{prefix: "t,x\n0,1\n1,", fill: '7', n: 100 * mib, suffix: "\n"},
			fmt.Sprintf("x.csv:3: not a readable log file: line 3 longer than the limit of %d bytes", MaxLineLength), 80 * mib},
		{"100 MB line, no line end at all", &repeatReader{prefix: "t,x\n", fill: '1', n: 100 * mib},
			"longer than the limit", 80 * mib},
		{"a million columns", &repeatReader{prefix: "t", fill: ',', n: 1e6, suffix: "\n0\n"},
			"1000001 columns, more than the limit of 4096", 16 * mib},
		{"5000 columns", strings.NewReader("t" + strings.Repeat(",c", 4999) + "\n0\n"),
			"5000 columns, more than the limit of 4096", 4 * mib},
		{"deeply quoted field", strings.NewReader("t,x\n0,\"" + strings.Repeat(`""`, 1<<20) + "\"\n"),
			"", 64 * mib},
		{"unbalanced quotes", strings.NewReader("t,x\n0,1\n1," + strings.Repeat(`"`, 1<<20+1) + "\n"),
			"unbalanced quote", 64 * mib},
		// 0xFF 0xFE are ÿþ in Windows-1252, which reads them; 0x81 it
		// leaves undefined [CP1252]
		{"neither UTF-8 nor Windows-1252 in the header", strings.NewReader("t,x\x81\xfe\n0,1\n"),
			`x.csv:1:2: not a readable log file: header cell "x\x81\xfe" is neither UTF-8 nor Windows-1252 (Latin-1) text (byte 0x81 at byte 2 of the cell)`, mib},
		{"control character in the header", strings.NewReader("t,x\x1b[31m\n0,1\n"),
			`header cell "x\x1b[31m" has a non-printable character U+001B`, mib},
		{"NUL bytes", strings.NewReader("t,x\n0,1\n1,\x00\x00\x00\n"),
			"binary data, not text (a NUL byte on line 3): not a text log", mib},
		{"NUL bytes after the first block", &repeatReader{prefix: "t,x\n", fill: '\n', n: 3 * mib, suffix: "0,1\x00\n"},
			fmt.Sprintf("a NUL byte on line %d", 3*mib+2), 32 * mib},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var err error
			bounded(t, tc.maxAlloc, func() { _, err = ReadCSV(tc.in, "x.csv", nil) })
			var pe *ParseError
			if !errors.As(err, &pe) {
				t.Fatalf("err = %v, want a *ParseError", err)
			}
			if tc.want == "" { // the deeply quoted cell is not a number: say so, briefly
				if !errors.Is(err, ErrNotNumber) || len(err.Error()) > 200 {
					t.Fatalf("err = %.300v", err)
				}
				return
			}
			wantFormatError(t, err, tc.want)
		})
	}
}

// TestTimeUnits: a time column's unit converts to seconds; an unknown
// unit is kept as logged with a warning. The factors are the SI
// definitions (ms, us, ns) and the units accepted for use with the SI
// (min = 60 s, h = 3600 s): BIPM, "The International System of Units",
// 9th edition (2019), Table 8.
func TestTimeUnits(t *testing.T) {
	for _, tc := range []struct {
		unit   string
		t1     float64 // the logged 10 in seconds
		logged string  // Dataset.TimeLogged
		warn   bool
	}{
		{"", 10, "", false},
		{"s", 10, "", false},
		{"ms", 0.01, "ms", false},
		{"us", 1e-5, "us", false},
		{"µs", 1e-5, "µs", false},
		{"μs", 1e-5, "μs", false},
		{"ns", 1e-8, "ns", false},
		{"min", 600, "min", false},
		{"h", 36000, "h", false},
		{"MS", 0.01, "MS", false},
		{"ticks", 10, "", true},
	} {
		t.Run(tc.unit, func(t *testing.T) {
			head := "time"
			if tc.unit != "" {
				head += " [" + tc.unit + "]"
			}
			ds, err := ReadCSV(strings.NewReader(head+",x\n0,1\n10,2\n20,3\n"), "u.csv", nil)
			if err != nil {
				t.Fatal(err)
			}
			r := ds.Runs[0]
			// 10/1000 and 10/1e5 are correctly rounded divisions: equal to the literals
			if r.T[0] != 0 || r.T[1] != tc.t1 || r.T[2] != 2*tc.t1 {
				t.Errorf("times %v, want 0, %g, %g", r.T, tc.t1, 2*tc.t1)
			}
			wantUnit := "s"
			if tc.unit == "" || tc.warn {
				wantUnit = tc.unit
			}
			if ds.Time.Unit != wantUnit || ds.TimeLogged != tc.logged {
				t.Errorf("unit %q, logged %q; want %q, %q", ds.Time.Unit, ds.TimeLogged, wantUnit, tc.logged)
			}
			if got := len(ds.Warnings) > 0; got != tc.warn {
				t.Errorf("warnings %q", ds.Warnings)
			}
		})
	}
	// files in ms and s load together, in seconds
	dir := t.TempDir()
	os.WriteFile(filepath.Join(dir, "a.csv"), []byte("time [ms],x\n0,1\n500,2\n"), 0o644)
	os.WriteFile(filepath.Join(dir, "b.csv"), []byte("time [s],x\n0,1\n0.5,2\n"), 0o644)
	ds, err := Load(context.Background(), []string{dir}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if ds.Runs[0].T[1] != 0.5 || ds.Runs[1].T[1] != 0.5 || ds.Time.Unit != "s" {
		t.Errorf("loaded %v %v %q", ds.Runs[0].T, ds.Runs[1].T, ds.Time.Unit)
	}
}

// writeTwoColumns writes t (0.001 s steps) and x (zero, highly
// compressible) as one row group, without dictionary encoding.
func writeTwoColumns(t *testing.T, path string, rows int, codec compress.Compression) {
	t.Helper()
	sc := arrow.NewSchema([]arrow.Field{
		{Name: "t", Type: arrow.PrimitiveTypes.Float64},
		{Name: "x", Type: arrow.PrimitiveTypes.Float64},
	}, nil)
	b := array.NewRecordBuilder(memory.NewGoAllocator(), sc)
	defer b.Release()
	for i := range rows {
		b.Field(0).(*array.Float64Builder).Append(float64(i) * 1e-3)
		b.Field(1).(*array.Float64Builder).Append(0)
	}
	rec := b.NewRecord()
	defer rec.Release()
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	tbl := array.NewTableFromRecords(sc, []arrow.Record{rec})
	defer tbl.Release()
	props := parquet.NewWriterProperties(parquet.WithDictionaryDefault(false), parquet.WithCompression(codec),
		parquet.WithMaxRowGroupLength(int64(rows)))
	if err := pqarrow.WriteTable(tbl, f, int64(rows), props, pqarrow.DefaultWriterProps()); err != nil {
		t.Fatal(err)
	}
}

// splitFooter returns a Parquet file's body (before the footer) and its
// parsed footer.
func splitFooter(t *testing.T, data []byte) ([]byte, *metadata.FileMetaData) {
	t.Helper()
	n := int(binary.LittleEndian.Uint32(data[len(data)-8:]))
	pr, err := file.NewParquetReader(bytes.NewReader(data))
	if err != nil {
		t.Fatal(err)
	}
	return data[:len(data)-8-n], pr.MetaData()
}

// joinFooter writes body, then md as the footer.
func joinFooter(t *testing.T, path string, body []byte, md *metadata.FileMetaData) {
	t.Helper()
	var ft bytes.Buffer
	if _, err := md.WriteTo(&ft, nil); err != nil {
		t.Fatal(err)
	}
	out := append(bytes.Clone(body), ft.Bytes()...)
	out = binary.LittleEndian.AppendUint32(out, uint32(ft.Len()))
	out = append(out, "PAR1"...)
	if err := os.WriteFile(path, out, 0o644); err != nil {
		t.Fatal(err)
	}
}

// TestHostileParquet: files whose footer or page headers claim sizes the
// data cannot have are refused before anything of the claimed size is
// allocated, and before the decoder starts on them. The files are
// Arrow's writer's output, edited: the footer through Arrow's own
// metadata serialiser, a page header by re-encoding one varint.
func TestHostileParquet(t *testing.T) {
	const rows = 20000
	dir := t.TempDir()
	good := filepath.Join(dir, "good.parquet")
	writeTwoColumns(t, good, rows, compress.Codecs.Snappy)
	data, err := os.ReadFile(good)
	if err != nil {
		t.Fatal(err)
	}
	// the unedited file reads, and the snappy-compressed zeros (about
	// 20x smaller on disk) expand to exactly what they hold
	ds, err := ReadParquet(context.Background(), good, nil)
	if err != nil || ds.Samples() != rows {
		t.Fatalf("good file: %v", err)
	}
	const mib = 1 << 20
	for _, tc := range []struct {
		name string
		edit func(md *metadata.FileMetaData, body []byte) []byte
		want string
	}{
		{"footer claims 2^40 rows", func(md *metadata.FileMetaData, body []byte) []byte {
			md.NumRows, md.RowGroups[0].NumRows = 1<<40, 1<<40
			return body
		}, "footer claims 1099511627776 rows"},
		{"row groups disagree with the footer", func(md *metadata.FileMetaData, body []byte) []byte {
			md.NumRows = rows * 1000
			return body
		}, "footer claims 20000000 rows, its row groups 20000"},
		{"chunk claims 1 TB compressed", func(md *metadata.FileMetaData, body []byte) []byte {
			md.RowGroups[0].Columns[1].MetaData.TotalCompressedSize = 1 << 40
			return body
		}, "outside the file"},
		{"chunk claims 1 TB uncompressed", func(md *metadata.FileMetaData, body []byte) []byte {
			md.RowGroups[0].Columns[1].MetaData.TotalUncompressedSize = 1 << 40
			return body
		}, "bytes uncompressed from a"},
		{"page claims 1 GiB uncompressed", func(md *metadata.FileMetaData, body []byte) []byte {
			cm := md.RowGroups[0].Columns[1].MetaData
			off := int(cm.DataPageOffset)
			_, n, err := parsePageHeader(body[off:])
			if err != nil || body[off] != 0x15 || body[off+2] != 0x15 {
				t.Fatalf("unexpected page header % x: %v", body[off:off+8], err)
			}
			_, l := binary.Uvarint(body[off+3:]) // field 2, uncompressed_page_size
			hdr := append(bytes.Clone(body[off:off+3]), binary.AppendUvarint(nil, 2<<30)...)
			hdr = append(hdr, body[off+3+l:off+n]...)
			cm.TotalCompressedSize += int64(len(hdr) - n)
			out := append(bytes.Clone(body[:off]), hdr...)
			return append(out, body[off+n:]...)
		}, "pages claim 1073741824 bytes or more uncompressed for 20000 values"},
		{"page count disagrees", func(md *metadata.FileMetaData, body []byte) []byte {
			md.RowGroups[0].Columns[1].MetaData.NumValues = rows + 1
			return body
		}, "20001 values for 20000 rows"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			body, md := splitFooter(t, data)
			body = tc.edit(md, bytes.Clone(body))
			p := filepath.Join(dir, "bad.parquet")
			joinFooter(t, p, body, md)
			var err error
			bounded(t, 8*mib, func() { _, err = ReadParquet(context.Background(), p, nil) })
			wantFormatError(t, err, tc.want)
		})
	}
}

// TestParquetCrasherRefused: the file the fuzzer found to send Arrow's
// decoder into an endless allocating loop is refused by the checks before
// decoding, well inside the time budget (which is raised here so that
// only the checks can refuse it).
func TestParquetCrasherRefused(t *testing.T) {
	raw, err := os.ReadFile("testdata/fuzz/FuzzReadParquet/9533698ecca110d4")
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.SplitN(string(raw), "\n", 3)
	lit := strings.TrimSuffix(strings.TrimPrefix(lines[1], "[]byte("), ")")
	var s string
	if _, err := fmt.Sscanf(lit, "%q", &s); err != nil {
		t.Fatal(err)
	}
	p := filepath.Join(t.TempDir(), "crasher.parquet")
	if err := os.WriteFile(p, []byte(s), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, viaArrow := range []bool{false, true} { // both paths check pages first
		opts := &Options{viaArrow: viaArrow, decodeBudget: time.Hour}
		bounded(t, 16<<20, func() { _, err = ReadParquet(context.Background(), p, opts) })
		wantFormatError(t, err, "malformed page header")
	}
}
