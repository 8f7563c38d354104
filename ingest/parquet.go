package ingest

import (
	"context"
	"errors"
	"fmt"
	"math"
	"os"
	"strings"
	"time"
	"unicode/utf8"

	"github.com/apache/arrow/go/v15/arrow"
	"github.com/apache/arrow/go/v15/arrow/array"
	"github.com/apache/arrow/go/v15/arrow/memory"
	"github.com/apache/arrow/go/v15/parquet/file"
	"github.com/apache/arrow/go/v15/parquet/pqarrow"
)

// maxRowsPerByte bounds the row count a Parquet footer may claim, per
// byte of the file, before anything is allocated. A logged numeric column
// takes at least a few bits a row even when encoded well; 64 rows a byte
// leaves ample room for real files and refuses a hostile footer that
// claims billions of rows in a few kilobytes.
const maxRowsPerByte = 64

// maxExpand bounds the uncompressed size a column chunk may claim, as a
// multiple of the file's size (plus 1 MiB): far above what compression
// achieves on logged numbers, far below a decompression bomb.
const maxExpand = 1024

// parquetBudget is the base time allowed to decode one Parquet file, to
// which a second per MiB of file is added (Options.decodeBudget replaces
// it in tests).
const parquetBudget = 10 * time.Second

// ReadParquet reads one Parquet file of logged samples. Columns of type
// float32, float64, int8..int64 and uint8..uint64 are numbers; a timestamp
// column (any unit, any zone) is time, converted to seconds from the
// recording's first sample with [Run.Epoch] set; string or integer
// columns can be the --run-col. The time column is chosen as for CSV,
// and when no column is named like time, the first timestamp column is
// taken. Nulls are missing samples. Columns are read whole, one at a time
// across all row groups, and copied out of Arrow's buffers.
//
// Errors: *fs.PathError for I/O; a *ParseError wrapping [ErrFormat] for a
// file that is not Parquet, is truncated or claims more rows than it can
// hold; for a bad column, Column is its 1-based index.
func ReadParquet(ctx context.Context, path string, opts *Options) (*Dataset, error) {
	ds, err := readParquet(ctx, path, opts)
	if err != nil {
		return nil, err
	}
	return ds, finish(ds, opts)
}

// readParquet is ReadParquet without the data-set-wide checks of [finish].
func readParquet(ctx context.Context, path string, opts *Options) (ds *Dataset, err error) {
	return readParquetStore(ctx, path, opts, nil)
}

// errBudget is wrapped by the error of a Parquet read that ran out of its
// time budget.
var errBudget = errors.New("Parquet decoding did not finish")

// readParquetStore is readParquet decoding into store's columns (nil:
// fresh ones); the runs alias them. After an error wrapping errBudget
// the decoder may still be writing into store.
func readParquetStore(ctx context.Context, path string, opts *Options, store *colStore) (ds *Dataset, err error) {
	if opts == nil {
		opts = &Options{}
	}
	if err := opts.checkWindow(); err != nil {
		return nil, err
	}
	// A corrupt page header can send the Arrow decoder into a loop that
	// allocates without end (found by FuzzReadParquet; see its corpus). It
	// cannot be stopped from outside, so the read runs under a time
	// budget far above real decoding speed; past it the file is reported
	// as corrupt, and the decoder's context is cancelled so that it stops
	// at its next check (between record batches and pages); a decoder
	// stuck inside one Arrow call cannot be stopped, which is why the page
	// checks of pqcheck.go refuse the known trigger before decoding.
	type result struct {
		tb  *table
		err error
	}
	budget := parquetBudget
	if opts.decodeBudget > 0 {
		budget = opts.decodeBudget
	}
	if st, err := os.Stat(path); err == nil {
		budget += time.Duration(st.Size()>>20) * time.Second // >= 1 MB/s
	}
	dctx, stop := context.WithCancel(ctx)
	defer stop() // on every return, the time-out included: the decoder stops too
	done := make(chan result, 1)
	go func() {
		tb, err := readParquetTable(dctx, path, opts, store)
		done <- result{tb, err}
	}()
	var tb *table
	timer := time.NewTimer(budget)
	defer timer.Stop()
	select {
	case r := <-done:
		tb, err = r.tb, r.err
	case <-timer.C:
		return nil, &ParseError{File: path, Err: fmt.Errorf("%w: %w in %v; the file is probably corrupt", ErrFormat, errBudget, budget)}
	case <-ctx.Done():
		return nil, ctx.Err()
	}
	if err != nil {
		return nil, err
	}
	ds, err = tb.dataset(opts)
	if err != nil {
		return nil, err
	}
	ds.Ignored = tb.ignored
	return ds, nil
}

func readParquetTable(ctx context.Context, path string, opts *Options, store *colStore) (tb *table, err error) {
	po, err := openParquet(path, opts)
	if err != nil {
		return nil, err
	}
	po.store = store
	if store != nil {
		po.tb.scratch = &store.scr
	}
	defer po.f.Close()
	return po.tb, po.readAll(ctx, opts)
}

// pqFile is a Parquet file opened and checked by openParquet: its footer,
// the roles of its columns and a table with no data yet.
type pqFile struct {
	f      *os.File
	pr     *file.Reader
	r      *roles
	fields []arrow.Field
	cols   []Column
	size   int64
	kinds  []directKind
	direct bool // every column read goes through readDirect
	tb     *table
	store  *colStore // reused column storage for readDirect; nil: fresh slices
}

// readAll reads every column whole into po.tb.
func (po *pqFile) readAll(ctx context.Context, opts *Options) (err error) {
	defer func() {
		if r := recover(); r != nil {
			err = &ParseError{File: po.tb.file, Err: fmt.Errorf("%w: corrupt Parquet data (%v)", ErrFormat, r)}
		}
	}()
	tb := po.tb
	if po.direct {
		return tb.readDirect(ctx, po.f, po.pr, po.r, po.fields, po.kinds, po.size, po.store)
	}
	if err := checkAllChunks(po.f, po.pr, po.r, po.cols, po.size); err != nil {
		return err
	}
	return tb.readArrow(ctx, po.pr, po.r, po.cols)
}

// openParquet opens path, checks its marks and footer (row counts, chunk
// extents) and assigns the column roles. The caller closes po.f.
func openParquet(path string, opts *Options) (po *pqFile, err error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer func() {
		if err != nil {
			f.Close()
		}
	}()
	st, err := f.Stat()
	if err != nil {
		return nil, err
	}
	bad := func(format string, a ...any) error {
		return &ParseError{File: path, Err: fmt.Errorf("%w: "+format, append([]any{ErrFormat}, a...)...)}
	}
	// The Arrow library can panic on corrupt pages; that is bad input.
	defer func() {
		if r := recover(); r != nil {
			po, err = nil, bad("corrupt Parquet data (%v)", r)
		}
	}()
	var head, tail [4]byte
	if st.Size() < 12 {
		return nil, bad("not a Parquet file (%d bytes)", st.Size())
	}
	if _, err := f.ReadAt(head[:], 0); err != nil {
		return nil, err
	}
	if _, err := f.ReadAt(tail[:], st.Size()-4); err != nil {
		return nil, err
	}
	if string(head[:]) != "PAR1" {
		return nil, bad("not a Parquet file (no PAR1 mark at the start)")
	}
	if string(tail[:]) != "PAR1" {
		return nil, bad("truncated Parquet file (no PAR1 mark at the end)")
	}
	pr, err := file.NewParquetReader(f)
	if err != nil {
		return nil, bad("not a Parquet file (%v)", err)
	}
	md := pr.MetaData()
	nrows := pr.NumRows()
	var sum int64
	for i := 0; i < pr.NumRowGroups(); i++ {
		n := md.RowGroup(i).NumRows()
		if n < 0 {
			return nil, bad("row group %d claims %d rows", i, n)
		}
		sum += n
	}
	// Column chunks must lie inside the file, and not claim to expand
	// beyond maxExpand times the file's size, before Arrow allocates
	// buffers of the sizes they claim.
	for i := 0; i < pr.NumRowGroups(); i++ {
		rg := md.RowGroup(i)
		for c := 0; c < rg.NumColumns(); c++ {
			cc, err := rg.ColumnChunk(c)
			if err != nil {
				return nil, bad("row group %d column %d: %v", i, c+1, err)
			}
			start := cc.DataPageOffset()
			if cc.HasDictionaryPage() && cc.DictionaryPageOffset() > 0 && cc.DictionaryPageOffset() < start {
				start = cc.DictionaryPageOffset()
			}
			n, un := cc.TotalCompressedSize(), cc.TotalUncompressedSize()
			if start < 0 || n < 0 || start > st.Size() || n > st.Size()-start {
				return nil, bad("row group %d column %d: chunk at %d, %d bytes, outside the file (%d bytes)", i, c+1, start, n, st.Size())
			}
			if un < 0 || un > maxExpand*st.Size()+1<<20 {
				return nil, bad("row group %d column %d: claims %d bytes uncompressed from a %d-byte file", i, c+1, un, st.Size())
			}
		}
	}
	if nrows < 0 || sum != nrows {
		return nil, bad("footer claims %d rows, its row groups %d", nrows, sum)
	}
	if nrows > maxRowsPerByte*max(st.Size(), 1) || nrows > math.MaxInt32 {
		return nil, bad("footer claims %d rows in %d bytes", nrows, st.Size())
	}
	sc, err := pqarrow.FromParquet(md.Schema, &pqarrow.ArrowReadProperties{}, md.KeyValueMetadata())
	if err != nil {
		return nil, bad("schema: %v", err)
	}
	fields := sc.Fields()
	if md.Schema.NumColumns() != len(fields) {
		return nil, bad("nested columns are not supported")
	}
	if len(fields) > MaxColumns {
		return nil, bad("%d columns, more than the limit of %d", len(fields), MaxColumns)
	}
	cols := make([]Column, len(fields))
	for j, fd := range fields {
		cols[j] = splitUnit(fd.Name)
		if !utf8.ValidString(fd.Name) {
			return nil, &ParseError{File: path, Column: j + 1, Err: fmt.Errorf("%w: column name %q is not UTF-8 text", ErrFormat, fd.Name)}
		}
		if err := printable(fd.Name); err != nil {
			return nil, &ParseError{File: path, Column: j + 1, Err: fmt.Errorf("%w: column name %v", ErrFormat, err)}
		}
	}
	o := *opts
	if o.TimeCol == "" && o.Rate <= 0 && !hasTimeName(cols) {
		for j, fd := range fields {
			if fd.Type.ID() == arrow.TIMESTAMP {
				o.TimeCol = cols[j].Name
				break
			}
		}
	}
	r, err := assignRoles(path, cols, &o)
	if err != nil {
		return nil, err
	}
	// text columns are not states unless named by --states
	for j, fd := range fields {
		if r.role[j] == roleState && !numericType(fd.Type.ID()) {
			if r.explicit || r.isInput(j) {
				return nil, &ParseError{File: path, Column: j + 1, Name: cols[j].Name,
					Err: fmt.Errorf("%w: column type %s", ErrNotNumber, fd.Type)}
			}
			r.dropState(j)
		}
	}
	if len(r.states) == r.nInput {
		return nil, &ParseError{File: path, Err: ErrNoStates}
	}
	tb := &table{file: path, states: r.states, stateCol: r.stateCol, nInput: r.nInput, timeCol: r.timeCol, timeIdx: r.timeIdx,
		rate: r.rate, ignored: r.ignored, rows: int(nrows), marks: []lineMark{{0, 1}}, byRow: true}
	tb.x = make([][]float64, len(r.states))
	po = &pqFile{f: f, pr: pr, r: r, fields: fields, cols: cols, size: st.Size(), tb: tb}
	if kinds, ok := directKinds(pr, fields, r); ok && !opts.viaArrow {
		po.kinds, po.direct = kinds, true
	}
	return po, nil
}

// readArrow reads the columns through pqarrow: the general path, for
// column types and layouts that readDirect does not take.
func (tb *table) readArrow(ctx context.Context, pr *file.Reader, r *roles, cols []Column) error {
	fr, err := pqarrow.NewFileReader(pr, pqarrow.ArrowReadProperties{BatchSize: int64(tb.rows) + 1}, memory.DefaultAllocator)
	if err != nil {
		return &ParseError{File: tb.file, Err: fmt.Errorf("%w: %v", ErrFormat, err)}
	}
	nrows := int64(tb.rows)
	for j := range cols {
		if err := ctx.Err(); err != nil {
			return err
		}
		if r.role[j] == roleSkip {
			continue
		}
		bad := func(err error) error {
			return &ParseError{File: tb.file, Err: fmt.Errorf("%w: column %q: %v", ErrFormat, cols[j].Name, err)}
		}
		cr, err := fr.GetColumn(ctx, j)
		if err != nil {
			return bad(err)
		}
		ch, err := cr.NextBatch(nrows)
		cr.Release()
		if err != nil {
			return bad(err)
		}
		err = tb.column(r, j, cols[j], ch, int(nrows))
		ch.Release()
		if err != nil {
			return err
		}
	}
	return nil
}

func hasTimeName(cols []Column) bool {
	for _, c := range cols {
		switch strings.ToLower(c.Name) {
		case "t", "time", "timestamp", "time_s":
			return true
		}
	}
	return false
}

func numericType(id arrow.Type) bool {
	switch id {
	case arrow.FLOAT32, arrow.FLOAT64, arrow.INT8, arrow.INT16, arrow.INT32, arrow.INT64,
		arrow.UINT8, arrow.UINT16, arrow.UINT32, arrow.UINT64:
		return true
	}
	return false
}

// column copies one Arrow column into the table.
func (tb *table) column(r *roles, j int, c Column, ch *arrow.Chunked, n int) error {
	perr := func(row int, err error) error {
		return &ParseError{File: tb.file, Line: row, Column: j + 1, Name: c.Name, Err: err}
	}
	if ch.Len() != n {
		return perr(0, fmt.Errorf("%w: %d values, %d rows", ErrFormat, ch.Len(), n))
	}
	switch r.role[j] {
	case roleRun:
		tb.keys = []keySpan{}
		for _, a := range ch.Chunks() {
			for i := 0; i < a.Len(); i++ {
				key := ""
				if !a.IsNull(i) {
					key = a.ValueStr(i)
				}
				if k := len(tb.keys); k > 0 && tb.keys[k-1].key == key {
					tb.keys[k-1].n++
				} else {
					tb.keys = append(tb.keys, keySpan{key: key, n: 1})
				}
			}
		}
		return nil
	case roleTime:
		if ts, ok := ch.DataType().(*arrow.TimestampType); ok {
			mul := int64(ts.Unit.Multiplier())
			tb.dateTime = true
			tb.tn = make([]int64, 0, n)
			for _, a := range ch.Chunks() {
				ta := a.(*array.Timestamp)
				for i, v := range ta.TimestampValues() {
					if ta.IsNull(i) {
						tb.tn = append(tb.tn, noTime)
						continue
					}
					ns := int64(v)
					if ns > math.MaxInt64/mul || ns < math.MinInt64/mul+1 {
						return perr(len(tb.tn)+1, fmt.Errorf("%w: timestamp out of range", ErrNotNumber))
					}
					tb.tn = append(tb.tn, ns*mul)
				}
			}
			return nil
		}
		if !numericType(ch.DataType().ID()) {
			return perr(0, fmt.Errorf("%w: time column type %s", ErrNotNumber, ch.DataType()))
		}
		tb.t = make([]float64, 0, n)
		var err error
		tb.t, err = appendFloats(tb.t, ch)
		if err != nil {
			return perr(len(tb.t)+1, err)
		}
		return nil
	}
	k := r.stateOf[j]
	dst := make([]float64, 0, n)
	dst, err := appendFloats(dst, ch)
	if err != nil {
		return perr(len(dst)+1, err)
	}
	tb.x[k] = dst
	return nil
}

// appendFloats appends a numeric column as float64, nulls as NaN. An
// infinite value is an error (the returned dst's length says where).
func appendFloats(dst []float64, ch *arrow.Chunked) ([]float64, error) {
	for _, a := range ch.Chunks() {
		start := len(dst)
		switch v := a.(type) {
		case *array.Float64:
			dst = append(dst, v.Float64Values()...)
		case *array.Float32:
			for _, x := range v.Float32Values() {
				dst = append(dst, float64(x))
			}
		case *array.Int64:
			for _, x := range v.Int64Values() {
				dst = append(dst, float64(x))
			}
		case *array.Int32:
			for _, x := range v.Int32Values() {
				dst = append(dst, float64(x))
			}
		case *array.Int16:
			for _, x := range v.Int16Values() {
				dst = append(dst, float64(x))
			}
		case *array.Int8:
			for _, x := range v.Int8Values() {
				dst = append(dst, float64(x))
			}
		case *array.Uint64:
			for _, x := range v.Uint64Values() {
				dst = append(dst, float64(x))
			}
		case *array.Uint32:
			for _, x := range v.Uint32Values() {
				dst = append(dst, float64(x))
			}
		case *array.Uint16:
			for _, x := range v.Uint16Values() {
				dst = append(dst, float64(x))
			}
		case *array.Uint8:
			for _, x := range v.Uint8Values() {
				dst = append(dst, float64(x))
			}
		default:
			return dst, fmt.Errorf("%w: column type %s", ErrNotNumber, a.DataType())
		}
		if a.NullN() > 0 {
			for i := 0; i < a.Len(); i++ {
				if a.IsNull(i) {
					dst[start+i] = math.NaN()
				}
			}
		}
		for i := start; i < len(dst); i++ {
			if math.IsInf(dst[i], 0) {
				return dst[:i], fmt.Errorf("%w: infinite value", ErrNotNumber)
			}
		}
	}
	return dst, nil
}
