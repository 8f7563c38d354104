package ingest

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"runtime"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
	"time"
	"unicode"
	"unicode/utf8"
)

// blockSize is how much of a CSV file one worker parses at a time. About a
// megabyte keeps the per-block bookkeeping negligible and, with a bounded
// queue, memory small.
const blockSize = 1 << 20

// MaxLineLength is the longest CSV line read, in bytes: far above any
// logged row (a thousand columns of 24-digit numbers is 25 KB), and it
// keeps a file without line ends from filling memory. The header line's
// own limit is smaller (one block, 1 MiB).
const MaxLineLength = 16 << 20

// MaxColumns is the most columns a CSV header or Parquet schema may have.
const MaxColumns = 4096

// csvLayout is what the header and first data row decided.
type csvLayout struct {
	file     string
	delim    byte
	ncol     int
	names    []string // raw names (without unit) of every header column
	role     []int8
	stateOf  []int // header column -> state index (roleState)
	dateTime bool
	nstate   int
	hasRun   bool
	timeAt   int   // header column of time, for the fast path
	stateAt  []int // header column of each state, for the fast path
}

// index fills the fast path's column lists from role and stateOf.
func (lay *csvLayout) index() {
	lay.stateAt = make([]int, lay.nstate)
	lay.hasRun = false
	for j, r := range lay.role {
		switch r {
		case roleTime:
			lay.timeAt = j
		case roleRun:
			lay.hasRun = true
		case roleState:
			lay.stateAt[lay.stateOf[j]] = j
		}
	}
}

// chunk is a block of whole lines and what was parsed from it.
type chunk struct {
	data  []byte
	line  int // line number of data's first line
	rows  int
	t     []float64
	tn    []int64
	x     [][]float64
	keys  []keySpan
	marks []lineMark
	err   error
	done  chan struct{}
}

// ReadCSV reads one CSV file of logged samples from r. name is used in
// errors and as the run's file ("-" for stdin). The dialect is detected:
// a ',' ';' or tab delimiter (the most frequent one in the header), '#'
// comment lines, a UTF-8 BOM, CRLF line ends, quoted cells (a quoted cell
// may not span lines). Empty and NaN cells are missing samples. The time
// column holds seconds or ISO 8601 date-times (RFC 3339, 'T' or a space
// between date and time; no zone means UTC); date-times become seconds
// from the recording's first sample and set [Run.Epoch].
//
// Errors are *ParseError values naming the line and column; read errors
// from r are returned as they are.
func ReadCSV(r io.Reader, name string, opts *Options) (*Dataset, error) {
	ds, err := readCSV(r, name, opts)
	if err != nil {
		return nil, err
	}
	return ds, finish(ds, opts)
}

// readCSV is ReadCSV without the data-set-wide checks of [finish].
func readCSV(r io.Reader, name string, opts *Options) (*Dataset, error) {
	if opts == nil {
		opts = &Options{}
	}
	if err := opts.checkWindow(); err != nil {
		return nil, err
	}
	tb, err := readCSVTable(r, name, opts)
	if err != nil {
		return nil, err
	}
	ds, err := tb.dataset(opts)
	if err != nil {
		return nil, err
	}
	ds.Ignored = tb.ignored
	return ds, nil
}

func readCSVTable(r io.Reader, name string, opts *Options) (*table, error) {
	if opts == nil {
		opts = &Options{}
	}
	// Read the first block: 64 KiB first, so that small files stay cheap.
	first := make([]byte, 64<<10)
	n, err := io.ReadFull(r, first)
	if err == nil {
		first = append(first, make([]byte, blockSize-len(first))...)
		var m int
		m, err = io.ReadFull(r, first[n:])
		n += m
	}
	eof := false
	switch {
	case errors.Is(err, io.EOF), errors.Is(err, io.ErrUnexpectedEOF):
		eof = true
	case err != nil:
		return nil, err
	}
	first = first[:n]
	first = bytes.TrimPrefix(first, []byte("\xef\xbb\xbf"))
	if k := bytes.IndexByte(first, 0); k >= 0 {
		return nil, &ParseError{File: name, Err: binaryError(1 + bytes.Count(first[:k], []byte{'\n'}))}
	}
	// the header: the first line that is neither blank nor a comment
	line := 1
	rest := first
	var header []byte
	for len(rest) > 0 {
		nl := bytes.IndexByte(rest, '\n')
		if nl < 0 {
			if !eof {
				return nil, &ParseError{File: name, Line: line, Err: fmt.Errorf("%w: header line longer than %d bytes", ErrFormat, blockSize)}
			}
			nl = len(rest)
		}
		l := trimCR(rest[:nl])
		rest = rest[min(nl+1, len(rest)):]
		if isBlankOrComment(l) {
			line++
			continue
		}
		header = l
		break
	}
	if header == nil {
		return nil, &ParseError{File: name, Err: fmt.Errorf("%w: no header line", ErrEmpty)}
	}
	if !utf8.Valid(header) {
		return nil, &ParseError{File: name, Line: line, Err: fmt.Errorf("%w: header is not UTF-8 text", ErrFormat)}
	}
	if n := bytes.Count(header, []byte{detectDelim(header)}) + 1; n > MaxColumns {
		return nil, &ParseError{File: name, Line: line, Err: fmt.Errorf("%w: %d columns, more than the limit of %d", ErrFormat, n, MaxColumns)}
	}
	headerLine := line
	line++
	lay, tb, err := newLayout(name, header, headerLine, opts)
	if err != nil {
		return nil, err
	}
	// Decide text columns and the kind of time cell on the first data row.
	if err := lay.sniff(tb, rest, line, opts); err != nil {
		return nil, err
	}
	// Parse: the rest of the first block, then further blocks.
	lay.index()
	p := &csvParser{lay: lay, tb: tb, sink: opts.csvSink}
	if eof {
		c := &chunk{data: rest, line: line}
		p.parse(c)
		if c.err != nil {
			return nil, c.err
		}
		p.merge(c)
		return tb, nil
	}
	// Size the columns from the input's size, when known, so that they are
	// not regrown (each regrowth briefly holds two copies).
	var total int64
	switch v := r.(type) {
	case interface{ Stat() (fs.FileInfo, error) }:
		if st, err := v.Stat(); err == nil && st.Mode().IsRegular() {
			total = st.Size()
		}
	case interface{ Len() int }:
		total = int64(v.Len() + n)
	}
	if lines := bytes.Count(rest, []byte{'\n'}); total > 0 && lines > 0 && len(rest) > 0 && p.sink == nil {
		est := int(float64(lines)*float64(total)/float64(len(rest))*1.01) + 64
		if tb.timeIdx > 0 && !tb.dateTime {
			tb.t = make([]float64, 0, est)
		} else if tb.dateTime {
			tb.tn = make([]int64, 0, est)
		}
		for j := range tb.x {
			tb.x[j] = make([]float64, 0, est)
		}
	}
	if err := p.parallel(r, rest, line); err != nil {
		return nil, err
	}
	return tb, nil
}

// binaryError is the error for a NUL byte on a line of a CSV file.
func binaryError(line int) error {
	return fmt.Errorf("%w: binary data, not text (a NUL byte on line %d): not a text log", ErrFormat, line)
}

// printable reports a column name that would not print as itself in an
// error or a report: a control or other non-printable character.
func printable(s string) error {
	for i, r := range s {
		if !unicode.IsPrint(r) && r != ' ' {
			return fmt.Errorf("%q has a non-printable character %U at byte %d", s, r, i)
		}
	}
	return nil
}

func trimCR(l []byte) []byte {
	if n := len(l); n > 0 && l[n-1] == '\r' {
		return l[:n-1]
	}
	return l
}

func isBlankOrComment(l []byte) bool {
	l = bytes.TrimLeft(l, " \t")
	return len(l) == 0 || l[0] == '#'
}

// newLayout reads the header and assigns column roles.
func newLayout(name string, header []byte, line int, opts *Options) (*csvLayout, *table, error) {
	lay := &csvLayout{file: name, delim: detectDelim(header)}
	cells, ok := splitQuoted(header, lay.delim, nil)
	if !ok {
		return nil, nil, &ParseError{File: name, Line: line, Err: fmt.Errorf("%w: unbalanced quote in header", ErrFormat)}
	}
	lay.ncol = len(cells)
	cols := make([]Column, len(cells))
	seen := map[string]int{}
	for j, c := range cells {
		cols[j] = splitUnit(strings.TrimSpace(string(c)))
		if err := printable(cols[j].Name + cols[j].Unit); err != nil {
			return nil, nil, &ParseError{File: name, Line: line, Column: j + 1, Err: fmt.Errorf("%w: header cell %v", ErrFormat, err)}
		}
		if cols[j].Name == "" {
			continue
		}
		if k, dup := seen[cols[j].Name]; dup {
			return nil, nil, &ParseError{File: name, Line: line, Column: j + 1, Name: cols[j].Name,
				Err: fmt.Errorf("%w: name repeats column %d", ErrFormat, k+1)}
		}
		seen[cols[j].Name] = j
	}
	lay.names = make([]string, len(cols))
	for j := range cols {
		lay.names[j] = cols[j].Name
	}
	tb := &table{file: name}
	tr, err := assignRoles(name, cols, opts)
	if err != nil {
		return nil, nil, err
	}
	lay.role, lay.stateOf = tr.role, tr.stateOf
	lay.nstate = len(tr.states)
	tb.states, tb.stateCol, tb.timeCol, tb.timeIdx, tb.rate = tr.states, tr.stateCol, tr.timeCol, tr.timeIdx, tr.rate
	tb.nInput = tr.nInput
	tb.ignored = tr.ignored
	tb.x = make([][]float64, lay.nstate)
	if opts.RunCol != "" {
		tb.keys = []keySpan{}
	}
	return lay, tb, nil
}

// splitUnit splits "name [unit]" or "name (unit)".
func splitUnit(s string) Column {
	for _, p := range [][2]byte{{'[', ']'}, {'(', ')'}} {
		if strings.HasSuffix(s, string(p[1])) {
			if i := strings.LastIndexByte(s, p[0]); i > 0 {
				return Column{Name: strings.TrimSpace(s[:i]), Unit: strings.TrimSpace(s[i+1 : len(s)-1])}
			}
		}
	}
	return Column{Name: s}
}

// detectDelim returns the most frequent of ',' ';' '\t' outside quotes in
// the header, ',' when there is none.
func detectDelim(h []byte) byte {
	var n [3]int
	q := false
	for _, c := range h {
		switch {
		case c == '"':
			q = !q
		case q:
		case c == ',':
			n[0]++
		case c == ';':
			n[1]++
		case c == '\t':
			n[2]++
		}
	}
	d, best := byte(','), n[0]
	if n[1] > best {
		d, best = ';', n[1]
	}
	if n[2] > best {
		d = '\t'
	}
	return d
}

// splitQuoted splits a line with quoted fields, appending to dst. Quotes
// are removed and "" becomes ". ok is false for an unbalanced quote.
func splitQuoted(l []byte, delim byte, dst [][]byte) ([][]byte, bool) {
	for {
		// skip leading blanks before a quote
		k := 0
		for k < len(l) && (l[k] == ' ' || (l[k] == '\t' && delim != '\t')) {
			k++
		}
		if k < len(l) && l[k] == '"' {
			var f []byte
			i := k + 1
			for {
				j := bytes.IndexByte(l[i:], '"')
				if j < 0 {
					return dst, false
				}
				f = append(f, l[i:i+j]...)
				i += j + 1
				if i < len(l) && l[i] == '"' {
					f = append(f, '"')
					i++
					continue
				}
				break
			}
			// after the closing quote: blanks, then delimiter or end
			for i < len(l) && (l[i] == ' ' || (l[i] == '\t' && delim != '\t')) {
				i++
			}
			if f == nil {
				f = []byte{}
			}
			dst = append(dst, f)
			if i >= len(l) {
				return dst, true
			}
			if l[i] != delim {
				return dst, false
			}
			l = l[i+1:]
			continue
		}
		j := bytes.IndexByte(l, delim)
		if j < 0 {
			return append(dst, l), true
		}
		dst = append(dst, l[:j])
		l = l[j+1:]
	}
}

// sniff looks at the first data row: with no --states, a state column
// whose cell there is text (not a number, not empty) is ignored; the time
// column's cell says whether time is in seconds or ISO 8601.
func (lay *csvLayout) sniff(tb *table, rest []byte, line int, opts *Options) error {
	var cells [][]byte
	for len(rest) > 0 {
		nl := bytes.IndexByte(rest, '\n')
		if nl < 0 {
			nl = len(rest)
		}
		l := trimCR(rest[:nl])
		rest = rest[min(nl+1, len(rest)):]
		if isBlankOrComment(l) {
			line++
			continue
		}
		var ok bool
		cells, ok = splitQuoted(l, lay.delim, cells[:0])
		if !ok || len(cells) != lay.ncol {
			return nil // the parser reports it with its line
		}
		break
	}
	if cells == nil {
		return nil
	}
	r := &roles{role: lay.role, stateOf: lay.stateOf, states: tb.states, stateCol: tb.stateCol, ignored: tb.ignored, nInput: tb.nInput}
	firstText, textCell := -1, []byte(nil)
	for j, c := range cells {
		c = trimBlank(c, lay.delim)
		switch lay.role[j] {
		case roleTime:
			if len(c) == 0 {
				continue
			}
			if _, ok := parseFloat(c); ok {
				continue
			}
			if _, ok := parseISO(c); ok {
				lay.dateTime = true
				tb.dateTime = true
			}
		case roleState:
			if (opts.States != nil && !r.isInput(j)) || len(c) == 0 {
				continue
			}
			if _, ok := parseFloat(c); !ok {
				if comma := bytes.ReplaceAll(c, []byte(","), []byte(".")); bytes.Count(c, []byte(",")) == 1 {
					if _, ok := parseFloat(comma); ok {
						return &ParseError{File: lay.file, Line: line, Column: j + 1, Name: lay.names[j],
							Err: fmt.Errorf("%w: %q has a decimal comma; write decimals with a point", ErrNotNumber, c)}
					}
				}
				if r.isInput(j) { // named, so it must be numeric
					p := &csvParser{lay: lay, tb: tb}
					return p.cellError(line, j, c)
				}
				if firstText < 0 {
					firstText, textCell = j, c
				}
				r.dropState(j)
			}
		}
	}
	tb.states, tb.stateCol, tb.ignored = r.states, r.stateCol, r.ignored
	if len(tb.states) == tb.nInput {
		if firstText >= 0 { // every state column is text: most likely a bad cell
			p := &csvParser{lay: lay, tb: tb}
			return p.cellError(line, firstText, textCell)
		}
		return &ParseError{File: lay.file, Line: line, Err: fmt.Errorf("%w: no numeric column besides time", ErrNoStates)}
	}
	lay.nstate = len(tb.states)
	tb.x = make([][]float64, lay.nstate)
	return nil
}

func trimBlank(c []byte, delim byte) []byte {
	for len(c) > 0 && (c[0] == ' ' || (c[0] == '\t' && delim != '\t')) {
		c = c[1:]
	}
	for len(c) > 0 && (c[len(c)-1] == ' ' || (c[len(c)-1] == '\t' && delim != '\t')) {
		c = c[:len(c)-1]
	}
	return c
}

// parseISO parses an ISO 8601 date-time and returns Unix nanoseconds.
func parseISO(c []byte) (int64, bool) {
	if len(c) < 19 || c[4] != '-' || c[7] != '-' {
		return 0, false
	}
	s := string(c)
	if s[10] == ' ' {
		s = s[:10] + "T" + s[11:]
	}
	for _, layout := range isoLayouts {
		if t, err := time.Parse(layout, s); err == nil {
			return t.UnixNano(), true
		}
	}
	return 0, false
}

var isoLayouts = []string{
	"2006-01-02T15:04:05.999999999Z07:00",
	"2006-01-02T15:04:05.999999999Z0700",
	"2006-01-02T15:04:05.999999999Z07",
	"2006-01-02T15:04:05.999999999", // no zone: UTC
}

// csvParser parses blocks of lines into a table.
type csvParser struct {
	lay  *csvLayout
	tb   *table
	bufs chan *chunk // parsed-value buffers for reuse (a free list: sync.Pool empties at each GC)
	// sink is Options.csvSink
	sink func(*table, *chunk)
}

// parallel reads r in blocks after the first one (rest, starting on line)
// and parses them on GOMAXPROCS workers; results are merged in order.
func (p *csvParser) parallel(r io.Reader, rest []byte, line int) error {
	workers := runtime.GOMAXPROCS(0)
	jobs := make(chan *chunk, workers)
	order := make(chan *chunk, 2*workers)
	var stop atomic.Bool
	var wg sync.WaitGroup
	for range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for c := range jobs {
				if !stop.Load() {
					p.parse(c)
				}
				close(c.done)
			}
		}()
	}
	p.bufs = make(chan *chunk, 4*workers)
	free := make(chan []byte, 4*workers) // read buffers
	getBuf := func() []byte {
		select {
		case b := <-free:
			return b[:0]
		default:
			return make([]byte, 0, blockSize+blockSize/4)
		}
	}
	var readErr, lineErr error
	go func() {
		defer close(order)
		defer close(jobs)
		carry := append(getBuf(), rest...)
		for !stop.Load() {
			buf := carry
			if cap(buf)-len(buf) < blockSize/2 {
				nb := make([]byte, len(buf), 2*cap(buf))
				copy(nb, buf)
				buf = nb
			}
			n, err := io.ReadFull(r, buf[len(buf):cap(buf)])
			buf = buf[:len(buf)+n]
			eof := errors.Is(err, io.EOF) || errors.Is(err, io.ErrUnexpectedEOF)
			if err != nil && !eof {
				readErr = err
				stop.Store(true)
				return
			}
			cut := len(buf)
			if !eof {
				nl := bytes.LastIndexByte(buf, '\n')
				if nl < 0 && len(buf) > MaxLineLength {
					lineErr = &ParseError{File: p.lay.file, Line: line,
						Err: fmt.Errorf("%w: line %d longer than the limit of %d bytes", ErrFormat, line, MaxLineLength)}
					stop.Store(true)
					return
				}
				if nl < 0 { // a line longer than the buffer: grow and read on
					carry = buf
					continue
				}
				cut = nl + 1
			}
			carry = append(getBuf(), buf[cut:]...)
			c := &chunk{data: buf[:cut], line: line, done: make(chan struct{})}
			line += bytes.Count(c.data, []byte{'\n'})
			jobs <- c
			order <- c
			if eof {
				return
			}
		}
	}()
	var firstErr error
	for c := range order {
		<-c.done
		if firstErr == nil && c.err != nil {
			firstErr = c.err
			stop.Store(true)
		}
		if firstErr == nil {
			p.merge(c)
			select {
			case p.bufs <- &chunk{x: c.x, t: c.t, tn: c.tn}:
			default:
			}
		}
		if cap(c.data) <= blockSize+blockSize/4 {
			select {
			case free <- c.data[:0]:
			default:
			}
		}
	}
	wg.Wait()
	if firstErr != nil {
		return firstErr
	}
	if lineErr != nil {
		return lineErr
	}
	return readErr
}

// merge appends a parsed chunk to the table.
func (p *csvParser) merge(c *chunk) {
	if p.sink != nil { // streaming: the chunk goes there instead
		p.sink(p.tb, c)
		return
	}
	tb := p.tb
	base := tb.rows
	for _, m := range c.marks {
		tb.marks = append(tb.marks, lineMark{row: base + m.row, line: m.line})
	}
	if p.lay.dateTime {
		tb.tn = append(tb.tn, c.tn...)
	} else if tb.timeIdx > 0 {
		tb.t = append(tb.t, c.t...)
	}
	for j := range tb.x {
		tb.x[j] = append(tb.x[j], c.x[j]...)
	}
	if tb.keys != nil {
		for _, k := range c.keys {
			if n := len(tb.keys); n > 0 && tb.keys[n-1].key == k.key {
				tb.keys[n-1].n += k.n
			} else {
				tb.keys = append(tb.keys, k)
			}
		}
	}
	tb.rows += c.rows
}

// parse parses the lines of c.data. It stops at the first bad cell.
func (p *csvParser) parse(c *chunk) {
	lay := p.lay
	est := len(c.data)/(8*lay.ncol+1) + 1
	var bufs *chunk
	select {
	case bufs = <-p.bufs:
	default:
	}
	if bufs != nil {
		c.x, c.t, c.tn = bufs.x, bufs.t[:0], bufs.tn[:0]
		for j := range c.x {
			c.x[j] = c.x[j][:0]
		}
	} else {
		c.x = make([][]float64, lay.nstate)
		for j := range c.x {
			c.x[j] = make([]float64, 0, est)
		}
	}
	timed := p.tb.timeIdx > 0
	if timed && lay.dateTime && c.tn == nil {
		c.tn = make([]int64, 0, est)
	} else if timed && c.t == nil {
		c.t = make([]float64, 0, est)
	}
	var cells [][]byte
	data := c.data
	line := c.line
	if k := bytes.IndexByte(data, 0); k >= 0 {
		c.err = &ParseError{File: lay.file, Err: binaryError(line + bytes.Count(data[:k], []byte{'\n'}))}
		return
	}
	// The fast row path: numbers only, no quotes anywhere in the block.
	fast := !lay.dateTime && !lay.hasRun && bytes.IndexByte(data, '"') < 0
	vals := make([]float64, lay.ncol)
	contiguous := false
	for len(data) > 0 {
		nl := bytes.IndexByte(data, '\n')
		var l []byte
		if nl < 0 {
			l, data = data, nil
		} else {
			l, data = data[:nl], data[nl+1:]
		}
		l = trimCR(l)
		if len(l) == 0 || l[0] == '#' || ((l[0] == ' ' || l[0] == '\t') && isBlankOrComment(l)) {
			line++
			contiguous = false
			continue
		}
		if !contiguous {
			c.marks = append(c.marks, lineMark{row: c.rows, line: line})
			contiguous = true
		}
		if fast && p.fastRow(l, vals) {
			if timed {
				c.t = append(c.t, vals[lay.timeAt])
			}
			for k, j := range lay.stateAt {
				c.x[k] = append(c.x[k], vals[j])
			}
			c.rows++
			line++
			continue
		}
		if bytes.IndexByte(l, '"') >= 0 {
			var ok bool
			cells, ok = splitQuoted(l, lay.delim, cells[:0])
			if !ok {
				c.err = &ParseError{File: lay.file, Line: line, Err: fmt.Errorf("%w: unbalanced quote", ErrFormat)}
				return
			}
		} else {
			cells = cells[:0]
			for {
				k := bytes.IndexByte(l, lay.delim)
				if k < 0 {
					cells = append(cells, l)
					break
				}
				cells = append(cells, l[:k])
				l = l[k+1:]
			}
		}
		if len(cells) != lay.ncol {
			col := lay.ncol + 1
			if len(cells) < lay.ncol {
				col = len(cells)
			}
			c.err = &ParseError{File: lay.file, Line: line, Column: col,
				Err: fmt.Errorf("%w: %d, the header has %d", ErrRagged, len(cells), lay.ncol)}
			return
		}
		for j, cell := range cells {
			switch lay.role[j] {
			case roleState:
				v, ok := parseFloat(cell)
				if !ok || v-v != 0 || notDecimal(cell) { // only lines the fast path refused get here
					v, ok = p.cellSlow(cell)
					if !ok {
						c.err = p.cellError(line, j, cell)
						return
					}
				}
				k := lay.stateOf[j]
				c.x[k] = append(c.x[k], v)
			case roleTime:
				if lay.dateTime {
					cell = trimBlank(cell, lay.delim)
					n, ok := parseISO(cell)
					if !ok {
						if len(cell) != 0 && !isNaNText(cell) {
							c.err = &ParseError{File: lay.file, Line: line, Column: j + 1, Name: lay.names[j],
								Err: fmt.Errorf("%w: %q is not an ISO 8601 date-time", ErrNotNumber, cell)}
							return
						}
						n = noTime
					}
					c.tn = append(c.tn, n)
					continue
				}
				v, ok := parseFloat(cell)
				if !ok || v-v != 0 || notDecimal(cell) { // only lines the fast path refused get here
					v, ok = p.cellSlow(cell)
					if !ok {
						c.err = p.cellError(line, j, cell)
						return
					}
				}
				c.t = append(c.t, v)
			case roleRun:
				key := string(trimBlank(cell, lay.delim))
				if n := len(c.keys); n > 0 && c.keys[n-1].key == key {
					c.keys[n-1].n++
				} else {
					c.keys = append(c.keys, keySpan{key: key, n: 1})
				}
			}
		}
		c.rows++
		line++
	}
}

// fastRow parses a row whose cells are all plain numbers (or skipped
// columns) into vals, by header column. It returns false, having changed
// nothing that matters, on anything else: the general path then parses
// the row and reports what is wrong with it.
func (p *csvParser) fastRow(l []byte, vals []float64) bool {
	lay := p.lay
	d := lay.delim
	pos := 0
	for j, r := range lay.role {
		if j > 0 {
			if pos >= len(l) || l[pos] != d {
				return false
			}
			pos++
		}
		if r == roleSkip {
			k := bytes.IndexByte(l[pos:], d)
			if k < 0 {
				pos = len(l)
			} else {
				pos += k
			}
			continue
		}
		v, n, ok := scanFast(l[pos:])
		if !ok {
			return false
		}
		vals[j] = v
		pos += n
	}
	return pos == len(l)
}

// cellSlow handles what the fast path refused: blanks around a number,
// empty and NaN cells (missing: NaN). Infinities are refused, and so are
// Go's digit separators and hexadecimal floats ("1_000", "0x1p-2"), which
// strconv accepts but no logger writes: such a cell is a typo or not a
// number at all.
func (p *csvParser) cellSlow(cell []byte) (float64, bool) {
	cell = trimBlank(cell, p.lay.delim)
	if len(cell) == 0 {
		return math.NaN(), true
	}
	if notDecimal(cell) {
		return 0, false
	}
	v, ok := parseFloat(cell)
	if !ok || math.IsInf(v, 0) {
		return 0, false
	}
	return v, true
}

func isNaNText(c []byte) bool { return len(c) == 3 && strings.EqualFold(string(c), "nan") }

func (p *csvParser) cellError(line, j int, cell []byte) error {
	cell = trimBlank(cell, p.lay.delim)
	s := string(cell)
	if len(s) > 40 {
		s = s[:40] + "..."
	}
	msg := fmt.Errorf("%w %q", ErrNotNumber, s)
	v, ok := parseFloat(cell)
	var ne *strconv.NumError
	_, perr := strconv.ParseFloat(string(cell), 64)
	if ok && notDecimal(cell) {
		msg = fmt.Errorf("%w %q (write plain decimals: no digit separators, no hexadecimal)", ErrNotNumber, s)
	} else if ok && math.IsInf(v, 0) || errors.As(perr, &ne) && errors.Is(ne.Err, strconv.ErrRange) {
		msg = fmt.Errorf("%w: %q is infinite or out of range", ErrNotNumber, s)
	} else if !utf8.Valid(cell) {
		msg = fmt.Errorf("%w: not text (binary data?)", ErrNotNumber)
	}
	return &ParseError{File: p.lay.file, Line: line, Column: j + 1, Name: p.lay.names[j], Err: msg}
}

// notDecimal reports whether cell uses Go's digit separators or is a
// hexadecimal float: forms strconv.ParseFloat accepts but basin does not.
func notDecimal(cell []byte) bool {
	for _, c := range cell {
		switch c {
		case '_', 'x', 'X', 'p', 'P':
			return true
		}
	}
	return false
}
