package ingest

import (
	"context"
	"fmt"
	"io"
	"math"
	"os"
	"runtime"
	"strconv"
	"sync"

	"github.com/apache/arrow/go/v15/arrow"
	"github.com/apache/arrow/go/v15/arrow/memory"
	"github.com/apache/arrow/go/v15/parquet"
	"github.com/apache/arrow/go/v15/parquet/compress"
	"github.com/apache/arrow/go/v15/parquet/file"
	"github.com/apache/arrow/go/v15/parquet/metadata"
)

// directKind says how readDirect turns a column's physical values into
// float64 (or time, or run keys).
type directKind int8

const (
	kindNone directKind = iota
	kindFloat64
	kindFloat32
	kindInt32  // int8, int16, int32
	kindUint32 // uint8, uint16, uint32 (stored as int32)
	kindInt64
	kindUint64
	kindTimestamp // int64 in the unit of the Arrow timestamp type
	kindString    // a --run-col of text
)

// directKinds decides whether every column that is read can go through
// readDirect, and how: flat (not repeated) columns of numeric, timestamp
// or, for --run-col, text or signed integer types, in files without
// encryption and not from a parquet-mr writer older than 1.2.9 (whose
// chunk sizes need a correction). ok is false otherwise, and the file is
// read through pqarrow.
func directKinds(pr *file.Reader, fields []arrow.Field, r *roles) (kinds []directKind, ok bool) {
	md := pr.MetaData()
	if pr.WriterVersion().LessThan(metadata.Parquet816FixedVersion) {
		return nil, false
	}
	kinds = make([]directKind, len(fields))
	for j, fd := range fields {
		if r.role[j] == roleSkip {
			continue
		}
		c := md.Schema.Column(j)
		if c.MaxRepetitionLevel() != 0 || c.MaxDefinitionLevel() > 1 {
			return nil, false
		}
		pt := c.PhysicalType()
		k := kindNone
		switch fd.Type.ID() {
		case arrow.FLOAT64:
			k = pick(pt == parquet.Types.Double, kindFloat64)
		case arrow.FLOAT32:
			k = pick(pt == parquet.Types.Float, kindFloat32)
		case arrow.INT8, arrow.INT16, arrow.INT32:
			k = pick(pt == parquet.Types.Int32, kindInt32)
		case arrow.UINT8, arrow.UINT16, arrow.UINT32:
			k = pick(pt == parquet.Types.Int32, kindUint32)
		case arrow.INT64:
			k = pick(pt == parquet.Types.Int64, kindInt64)
		case arrow.UINT64:
			k = pick(pt == parquet.Types.Int64, kindUint64)
		case arrow.TIMESTAMP:
			k = pick(pt == parquet.Types.Int64 && r.role[j] == roleTime, kindTimestamp)
		case arrow.STRING:
			k = pick(pt == parquet.Types.ByteArray && r.role[j] == roleRun, kindString)
		}
		if r.role[j] == roleRun && (k == kindFloat64 || k == kindFloat32 || k == kindUint32 || k == kindUint64) {
			k = kindNone // keys are spelled as Arrow spells them: leave those to pqarrow
		}
		if k == kindNone {
			return nil, false
		}
		for i := 0; i < pr.NumRowGroups(); i++ {
			cc, err := md.RowGroup(i).ColumnChunk(j)
			if err != nil || cc.CryptoMetadata() != nil {
				return nil, false
			}
		}
		kinds[j] = k
	}
	return kinds, true
}

func pick(ok bool, k directKind) directKind {
	if ok {
		return k
	}
	return kindNone
}

// width is the bytes a value of kind k takes, plain encoded.
func (k directKind) width() int64 {
	switch k {
	case kindFloat32, kindInt32, kindUint32:
		return 4
	}
	return 8
}

// colJob is one column for readDirect to fill.
type colJob struct {
	j    int
	kind directKind
	dst  []float64 // states and numeric time
	tn   []int64   // timestamp time
	keys []keySpan // run column
	run  bool      // the --run-col
	mul  int64     // timestamp: nanoseconds per unit
	base int       // rows before dst[0] in the file, for errors
	err  error
}

// colScratch is one worker's reused buffers.
type colScratch struct {
	dict  []float64 // plainFloats' dictionary, when it cannot be read in place
	chunk []byte
	// pad is where in chunk a float64 chunk with a dictionary page is
	// read: the offset that put the last one's dictionary values on an
	// 8-byte boundary (a column's page headers keep their length from
	// row group to row group), so plainFloats reads them in place
	pad int
	hdr []byte // readPlainInto's page header
	// plainFloats' decompressed page bodies: the dictionary's, a data
	// page's
	unzDict, unz []byte
	defs         []int16
	i32          []int32
	i64          []int64
	ba           []parquet.ByteArray
	br           byteReader
	pages        file.PageReader
}

// readDirect reads the columns straight from their column chunks with
// Arrow's low-level column readers: each chunk is read once into a
// reused buffer, its pages are checked (see [checkChunk]) before any is
// decoded, and values are decoded into the table's final slices, sized
// from the row count. Columns are read in parallel.
func (tb *table) readDirect(ctx context.Context, f *os.File, pr *file.Reader, r *roles, fields []arrow.Field,
	kinds []directKind, size int64, store *colStore) error {
	n := tb.rows
	cols := make([]Column, len(fields))
	units := make([]arrow.TimeUnit, len(fields))
	for j, fd := range fields {
		cols[j] = splitUnit(fd.Name)
		if ts, ok := fd.Type.(*arrow.TimestampType); ok {
			units[j] = ts.Unit
		}
	}
	var jobs []*colJob
	for j := range cols {
		if r.role[j] == roleSkip {
			continue
		}
		jb := &colJob{j: j, kind: kinds[j]}
		switch {
		case r.role[j] == roleRun:
			jb.run, jb.keys = true, []keySpan{}
		case r.role[j] == roleTime && kinds[j] == kindTimestamp:
			jb.tn = make([]int64, n)
			jb.mul = int64(units[j].Multiplier())
		case r.role[j] == roleTime:
			jb.dst = store.floats(0, n)
		default:
			jb.dst = store.floats(1+r.stateOf[j], n)
		}
		jobs = append(jobs, jb)
	}
	var pool sync.Pool
	next := make(chan *colJob)
	var wg sync.WaitGroup
	w := min(runtime.GOMAXPROCS(0), len(jobs))
	scs := make([]colScratch, w) // fresh without a store
	if store != nil {
		for len(store.sc) < w {
			store.sc = append(store.sc, new(colScratch))
		}
	}
	for k := range w {
		sc := &scs[k]
		if store != nil {
			sc = store.sc[k]
		}
		wg.Add(1)
		go func() {
			defer wg.Done()
			for jb := range next {
				jb.err = tb.readColumn(ctx, f, pr, jb, cols[jb.j], sc, &pool, size)
			}
		}()
	}
	for _, jb := range jobs {
		next <- jb
	}
	close(next)
	wg.Wait()
	for _, jb := range jobs { // the first error in column order
		if jb.err != nil {
			return jb.err
		}
	}
	for _, jb := range jobs {
		switch {
		case r.role[jb.j] == roleRun:
			tb.keys = jb.keys
		case r.role[jb.j] == roleTime && jb.kind == kindTimestamp:
			tb.dateTime, tb.tn = true, jb.tn
		case r.role[jb.j] == roleTime:
			tb.t = jb.dst
		default:
			tb.x[r.stateOf[jb.j]] = jb.dst
		}
	}
	return nil
}

// readColumn reads column jb.j over every row group. A panic in the
// decoder (corrupt data that the checks let through) is an error.
func (tb *table) readColumn(ctx context.Context, f *os.File, pr *file.Reader, jb *colJob, c Column,
	sc *colScratch, pool *sync.Pool, size int64) (err error) {
	defer func() {
		if p := recover(); p != nil {
			sc.pages = nil // its state is unknown
			err = jb.bad(tb.file, c, "corrupt Parquet data (%v)", p)
		}
	}()
	off := 0
	for i := 0; i < pr.NumRowGroups(); i++ {
		if err := ctx.Err(); err != nil {
			return err
		}
		n, err := tb.readGroup(f, pr, jb, c, sc, pool, size, i, off)
		if err != nil {
			return err
		}
		off += n
	}
	if off != tb.rows {
		return jb.bad(tb.file, c, "%d values, %d rows", off, tb.rows)
	}
	return nil
}

// bad is a format error in column jb.j.
func (jb *colJob) bad(file string, c Column, format string, a ...any) error {
	return &ParseError{File: file, Column: jb.j + 1, Name: c.Name,
		Err: fmt.Errorf("%w: "+format, append([]any{ErrFormat}, a...)...)}
}

// readGroup decodes row group i of column jb.j into jb's slices from
// index off and returns its row count. Errors name the row as
// jb.base+off+k+1. It does not recover panics: its callers do.
func (tb *table) readGroup(f *os.File, pr *file.Reader, jb *colJob, c Column,
	sc *colScratch, pool *sync.Pool, size int64, i, off int) (int, error) {
	bad := func(format string, a ...any) error { return jb.bad(tb.file, c, format, a...) }
	md := pr.MetaData()
	descr := md.Schema.Column(jb.j)
	cc, err := md.RowGroup(i).ColumnChunk(jb.j)
	if err != nil {
		return 0, bad("row group %d: %v", i, err)
	}
	rows := int(md.RowGroup(i).NumRows())
	if cc.NumValues() != int64(rows) {
		return 0, bad("row group %d: %d values for %d rows", i, cc.NumValues(), rows)
	}
	if rows == 0 {
		return 0, nil
	}
	start := cc.DataPageOffset()
	if cc.HasDictionaryPage() && cc.DictionaryPageOffset() > 0 && cc.DictionaryPageOffset() < start {
		start = cc.DictionaryPageOffset()
	}
	clen := cc.TotalCompressedSize() // inside the file: checked from the footer
	if jb.kind == kindFloat64 && descr.MaxDefinitionLevel() == 0 && cc.Compression() == compress.Codecs.Uncompressed &&
		littleEndian && !cc.HasDictionaryPage() {
		if ok, err := tb.readPlainInto(f, start, clen, jb.dst[off:off+rows], jb.base+off, sc); err != nil {
			if pe, isPE := err.(*ParseError); isPE && pe.Line > 0 { // an infinite value: name its column
				pe.Column, pe.Name = jb.j+1, c.Name
			}
			return 0, err
		} else if ok {
			return rows, nil
		}
	}
	pad := 0
	if jb.kind == kindFloat64 && cc.HasDictionaryPage() {
		pad = sc.pad
	}
	if cap(sc.chunk) < pad+int(clen) {
		sc.chunk = make([]byte, int(clen)+8) // room for any pad
	}
	buf := sc.chunk[pad : pad+int(clen)]
	if n, err := f.ReadAt(buf, start); n < len(buf) {
		if err == nil || err == io.EOF { // the footer's chunk lies past the end now
			return 0, &ParseError{File: tb.file, Err: fmt.Errorf("%w: the file changed while it was read", ErrFormat)}
		}
		return 0, err
	}
	lim := chunkLimits{values: int64(rows), uncompressed: int64(rows)*(2*jb.kind.width()+5) + 1<<20}
	if jb.kind == kindString {
		lim.uncompressed = maxExpand*size + 1<<20
	}
	if err := checkChunk(buf, cc.Compression(), lim); err != nil {
		return 0, bad("row group %d: %v", i, err)
	}
	if jb.kind == kindFloat64 && descr.MaxDefinitionLevel() == 0 {
		if ok, err := tb.plainFloats(buf, jb.dst[off:off+rows], jb.base+off, sc, cc.Compression()); err != nil {
			pe := err.(*ParseError)
			pe.Column, pe.Name = jb.j+1, c.Name
			return 0, pe
		} else if ok {
			return rows, nil
		}
	}
	sc.br = byteReader{b: buf}
	if sc.pages == nil {
		sc.pages, err = file.NewPageReader(&sc.br, int64(rows), cc.Compression(), memory.DefaultAllocator, nil)
		if err != nil {
			return 0, bad("row group %d: %v", i, err)
		}
	} else {
		sc.pages.Reset(&sc.br, int64(rows), cc.Compression(), nil)
	}
	cr := file.NewColumnReader(descr, sc.pages, memory.DefaultAllocator, pool)
	if descr.MaxDefinitionLevel() > 0 {
		sc.defs = grow(sc.defs, rows)
	} else {
		sc.defs = sc.defs[:0]
	}
	if err := tb.readChunk(cr, jb, sc, off, rows); err != nil {
		if pe, ok := err.(*ParseError); ok {
			pe.Column, pe.Name = jb.j+1, c.Name
			return 0, pe
		}
		return 0, bad("row group %d: %v", i, err)
	}
	return rows, nil
}

func grow[T any](s []T, n int) []T {
	if cap(s) < n {
		return make([]T, n)
	}
	return s[:n]
}

// readBatch reads rows levels of one chunk through read, which decodes
// into its argument from the given offset; it returns the number of
// values (non-null) read.
func readAll(rows int, defs []int16, read func(start int, defs []int16) (int64, int, error)) (int, error) {
	var lv int64
	vals := 0
	for lv < int64(rows) {
		var d []int16
		if len(defs) > 0 {
			d = defs[lv:]
		}
		t, v, err := read(vals, d)
		if err != nil {
			return vals, err
		}
		if t == 0 {
			return vals, fmt.Errorf("column chunk ends after %d of %d rows", lv, rows)
		}
		lv += t
		vals += v
	}
	return vals, nil
}

// readChunk decodes one column chunk of rows rows into jb at row off.
func (tb *table) readChunk(cr file.ColumnChunkReader, jb *colJob, sc *colScratch, off, rows int) error {
	defs := sc.defs
	maxDef := cr.Descriptor().MaxDefinitionLevel()
	// valid reports whether level i holds a value.
	valid := func(i int) bool { return len(defs) == 0 || defs[i] == maxDef }
	var nv int
	var err error
	switch jb.kind {
	case kindFloat64:
		dst := jb.dst[off : off+rows]
		rd := cr.(*file.Float64ColumnChunkReader)
		nv, err = readAll(rows, defs, func(s int, d []int16) (int64, int, error) {
			return rd.ReadBatch(int64(rows-s), dst[s:], d, nil)
		})
		if err == nil {
			spread(dst, nv, defs, maxDef)
		}
	case kindFloat32, kindInt32, kindUint32:
		sc.i32 = grow(sc.i32, rows)
		nv, err = readTyped(cr, rows, defs, sc.i32)
		if err == nil && jb.run {
			return jb.intKeys(rows, valid, func(v int) int64 { return int64(sc.i32[v]) })
		}
		if err == nil {
			dst := jb.dst[off : off+rows]
			for i := range nv {
				switch jb.kind {
				case kindFloat32:
					dst[i] = float64(math.Float32frombits(uint32(sc.i32[i])))
				case kindInt32:
					dst[i] = float64(sc.i32[i])
				default:
					dst[i] = float64(uint32(sc.i32[i]))
				}
			}
			spread(dst, nv, defs, maxDef)
		}
	case kindInt64, kindUint64, kindTimestamp:
		sc.i64 = grow(sc.i64, rows)
		rd := cr.(*file.Int64ColumnChunkReader)
		nv, err = readAll(rows, defs, func(s int, d []int16) (int64, int, error) {
			return rd.ReadBatch(int64(rows-s), sc.i64[s:], d, nil)
		})
		if err != nil {
			break
		}
		if jb.run {
			return jb.intKeys(rows, valid, func(v int) int64 { return sc.i64[v] })
		}
		if jb.kind == kindTimestamp {
			return tb.timestamps(jb, sc, off, rows, nv, valid)
		}
		dst := jb.dst[off : off+rows]
		for i := range nv {
			if jb.kind == kindInt64 {
				dst[i] = float64(sc.i64[i])
			} else {
				dst[i] = float64(uint64(sc.i64[i]))
			}
		}
		spread(dst, nv, defs, maxDef)
	case kindString:
		sc.ba = grow(sc.ba, rows)
		rd := cr.(*file.ByteArrayColumnChunkReader)
		nv, err = readAll(rows, defs, func(s int, d []int16) (int64, int, error) {
			return rd.ReadBatch(int64(rows-s), sc.ba[s:], d, nil)
		})
		if err == nil {
			v := 0
			for i := range rows {
				key := ""
				if valid(i) {
					key = string(sc.ba[v])
					v++
				}
				jb.addKey(key)
			}
		}
		return err
	}
	if err != nil {
		return err
	}
	for i, x := range jb.dst[off : off+rows] {
		if math.IsInf(x, 0) {
			return &ParseError{File: tb.file, Line: jb.base + off + i + 1, Err: fmt.Errorf("%w: infinite value", ErrNotNumber)}
		}
	}
	return nil
}

// readTyped reads an int32 or float32 chunk into v (float32 as its bits).
func readTyped(cr file.ColumnChunkReader, rows int, defs []int16, v []int32) (int, error) {
	switch rd := cr.(type) {
	case *file.Int32ColumnChunkReader:
		return readAll(rows, defs, func(s int, d []int16) (int64, int, error) {
			return rd.ReadBatch(int64(rows-s), v[s:], d, nil)
		})
	case *file.Float32ColumnChunkReader:
		f := make([]float32, rows) // rare type: not worth a scratch buffer
		n, err := readAll(rows, defs, func(s int, d []int16) (int64, int, error) {
			return rd.ReadBatch(int64(rows-s), f[s:], d, nil)
		})
		for i := range n {
			v[i] = int32(math.Float32bits(f[i]))
		}
		return n, err
	}
	return 0, fmt.Errorf("unexpected column reader %T", cr)
}

// spread moves the nv dense values at the start of dst to the rows that
// hold a value by defs, from the end (a value never moves left), and puts
// NaN in the null rows. With no defs every row holds a value.
func spread(dst []float64, nv int, defs []int16, maxDef int16) {
	if len(defs) == 0 || nv == len(dst) {
		return
	}
	v := nv
	for i := len(dst) - 1; i >= 0; i-- {
		if defs[i] == maxDef {
			v--
			dst[i] = dst[v]
		} else {
			dst[i] = math.NaN()
		}
	}
}

func (tb *table) timestamps(jb *colJob, sc *colScratch, off, rows, nv int, valid func(int) bool) error {
	mul := jb.mul
	dst := jb.tn[off : off+rows]
	v := nv
	for i := rows - 1; i >= 0; i-- {
		if !valid(i) {
			dst[i] = noTime
			continue
		}
		v--
		ns := sc.i64[v]
		if ns > math.MaxInt64/mul || ns < math.MinInt64/mul+1 {
			return &ParseError{File: tb.file, Line: jb.base + off + i + 1, Err: fmt.Errorf("%w: timestamp out of range", ErrNotNumber)}
		}
		dst[i] = ns * mul
	}
	return nil
}

// intKeys turns an integer --run-col chunk into keys, spelled as Arrow's
// ValueStr spells them; nulls are the key "".
func (jb *colJob) intKeys(rows int, valid func(int) bool, at func(int) int64) error {
	v := 0
	for i := range rows {
		key := ""
		if valid(i) {
			key = strconv.FormatInt(at(v), 10)
			v++
		}
		jb.addKey(key)
	}
	return nil
}

func (jb *colJob) addKey(key string) {
	if k := len(jb.keys); k > 0 && jb.keys[k-1].key == key {
		jb.keys[k-1].n++
	} else {
		jb.keys = append(jb.keys, keySpan{key: key, n: 1})
	}
}

// byteReader is a parquet.BufferedReader over one column chunk in memory.
type byteReader struct {
	b   []byte
	pos int
}

func (r *byteReader) Peek(n int) ([]byte, error) {
	if n < 0 {
		return nil, fmt.Errorf("negative peek")
	}
	rest := r.b[r.pos:]
	if n > len(rest) {
		return rest, io.EOF
	}
	return rest[:n], nil
}

func (r *byteReader) Discard(n int) (int, error) {
	n = max(0, min(n, len(r.b)-r.pos))
	r.pos += n
	return n, nil
}

func (r *byteReader) Read(p []byte) (int, error) {
	if r.pos >= len(r.b) {
		return 0, io.EOF
	}
	n := copy(p, r.b[r.pos:])
	r.pos += n
	return n, nil
}

// checkAllChunks reads and checks (see [checkChunk]) every column chunk
// of the columns that are read, before pqarrow decodes any of them: the
// general path gets the same protection as readDirect.
func checkAllChunks(f *os.File, pr *file.Reader, r *roles, cols []Column, size int64) error {
	md := pr.MetaData()
	old := pr.WriterVersion().LessThan(metadata.Parquet816FixedVersion)
	var buf []byte
	for j := range cols {
		if r.role[j] == roleSkip {
			continue
		}
		w := int64(8)
		switch md.Schema.Column(j).PhysicalType() {
		case parquet.Types.Int96:
			w = 12
		case parquet.Types.ByteArray, parquet.Types.FixedLenByteArray:
			w = -1
		}
		for i := 0; i < pr.NumRowGroups(); i++ {
			bad := func(err error) error {
				return &ParseError{File: f.Name(), Column: j + 1, Name: cols[j].Name,
					Err: fmt.Errorf("%w: row group %d: %v", ErrFormat, i, err)}
			}
			rg := md.RowGroup(i)
			cc, err := rg.ColumnChunk(j)
			if err != nil {
				return bad(err)
			}
			if cc.CryptoMetadata() != nil {
				return bad(fmt.Errorf("encrypted columns are not supported"))
			}
			start := cc.DataPageOffset()
			if cc.HasDictionaryPage() && cc.DictionaryPageOffset() > 0 && cc.DictionaryPageOffset() < start {
				start = cc.DictionaryPageOffset()
			}
			n := cc.TotalCompressedSize() // inside the file: checked from the footer
			if old {                      // parquet-mr before 1.2.9 left the dictionary page header out
				n += min(100, size-start-n)
			}
			if cap(buf) < int(n) {
				buf = make([]byte, n)
			}
			if _, err := f.ReadAt(buf[:n], start); err != nil && err != io.EOF {
				return err
			}
			lim := chunkLimits{values: cc.NumValues(), uncompressed: maxExpand*size + 1<<20}
			if w > 0 {
				lim.uncompressed = min(lim.uncompressed, cc.NumValues()*(2*w+5)+1<<20)
			}
			if cc.NumValues() != rg.NumRows() {
				return bad(fmt.Errorf("%d values for %d rows", cc.NumValues(), rg.NumRows()))
			}
			if err := checkChunk(buf[:n], cc.Compression(), lim); err != nil {
				return bad(err)
			}
		}
	}
	return nil
}
