package ingest

import (
	"bytes"
	"context"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"slices"
	"strconv"
	"strings"
	"time"
	"unicode"
	"unicode/utf8"

	"basin.example/internal/parallel"
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
	// decimalComma: the first data row wrote numbers with a decimal
	// comma (a ';' or tab file: the dialect of spreadsheets and loggers
	// set to a European locale); every ',' of the data is read as '.'
	decimalComma bool
	nstate       int
	hasRun       bool
	// slot is, by header column, where the fast path stores a cell: 0 for
	// time, 1+k for state k, -1 for a column it skips
	slot []int
	// headerUnits counts the header cells that carry a unit
	headerUnits int
	// mixed lists the columns of numbers and words (see sniffLater):
	// the error at the first filled cell of one says how many cells
	// after it are numbers
	mixed []mixedNote
	// latin: where the header or units row was first read as
	// Windows-1252 (nil when they are UTF-8)
	latin *latinNote
}

// index fills the fast path's slots from role and stateOf.
func (lay *csvLayout) index() {
	lay.slot = make([]int, len(lay.role))
	lay.hasRun = false
	for j, r := range lay.role {
		lay.slot[j] = -1
		switch r {
		case roleTime:
			lay.slot[j] = 0
		case roleRun:
			lay.hasRun = true
		case roleState:
			lay.slot[j] = 1 + lay.stateOf[j]
		}
	}
}

// chunk is a block of whole lines and what was parsed from it. Its rows
// go straight into the table's columns: t, tn and x are windows of them
// holding room for lines rows from row off.
type chunk struct {
	data    []byte
	line    int // line number of data's first line
	lines   int // its line ends, plus one for a last line without one: the most rows it can hold
	nl      int // its line ends, when counted already (nlKnown)
	nlKnown bool
	general bool // some row came from the general path (which gives NaN for a missing cell)
	off     int  // the table row where its room starts
	rows    int
	t       []float64
	tn      []int64
	x       [][]float64
	keys    []keySpan
	marks   []lineMark
	err     error
}

// ReadCSV reads one CSV file of logged samples from r. name is used in
// errors and as the run's file ("-" for stdin). The dialect is detected:
// a ',' ';' or tab delimiter (the most frequent one in the header), '#'
// comment lines, a UTF-8 BOM, CRLF line ends, quoted cells (a quoted cell
// may not span lines). Empty and NaN cells are missing samples ("-nan"
// and "nan(ind)", as C writes them, too). With no Options.States, a
// column is a state when its first filled cell is a number; when that
// cell is not one, the filled cells after it decide: mostly words, a text
// column, left out (in [Dataset.Ignored]); half numbers or more, the
// first cell is a bad value (a *ParseError). A units row under the
// header ("s,rad,rad/s", as data loggers write) gives the columns whose
// header cell has no unit their units, and the data start on the line
// after it (see [csvLayout.unitsRow] for when a row is one; line numbers
// stay the file's). The time
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
	return readCSVWith(r, name, opts, nil)
}

// readCSVWith is readCSV with bufs' buffers (nil: new ones; see
// readCSVBlocks), and the columns and the table's scratch from
// bufs.cols when it is set.
func readCSVWith(r io.Reader, name string, opts *Options, bufs *csvBufs) (*Dataset, error) {
	if opts == nil {
		opts = &Options{}
	}
	if err := opts.checkWindow(); err != nil {
		return nil, err
	}
	p, err := readCSVBlocks(r, name, opts, bufs)
	if err != nil {
		return nil, err
	}
	tb := p.tb
	ds, err := tb.dataset(opts)
	if err != nil {
		return nil, err
	}
	ds.Ignored = tb.ignored
	if tb.latin != nil {
		ds.latin = []string{tb.latin.warning(name)} // a warning of finish's
	}
	for _, u := range tb.unnamed {
		ds.Warnings = append(ds.Warnings, fmt.Sprintf("%s:%d:%d: a column with no name in the header holds values; it is ignored (name it in the header to read it as a state; a row index may stay unnamed)", name, u[0], u[1]))
	}
	return ds, nil
}

func readCSVTable(r io.Reader, name string, opts *Options) (*table, error) {
	p, err := readCSVBlocks(r, name, opts, nil)
	if err != nil {
		return nil, err
	}
	return p.tb, nil
}

// csvBufs holds the buffers of one CSV read for the next to reuse (a
// streamed file's passes, and the files after it: see csvSource), and
// how many workers parse its blocks.
type csvBufs struct {
	workers int         // 0: GOMAXPROCS
	first   []byte      // the first block
	rings   [2][][]byte // the read buffers of csvParser.parallel's waves
	// the table's columns: with a csvSink, scratch for one wave's rows
	t  []float64
	x  [][]float64
	rt []float64 // times from a rate (csvSource)
	// cols, when not nil, gives a whole read's columns and the table's
	// scratch (a Streamer's, reused from file to file)
	cols *colStore
}

// readCSVBlocks reads r as readCSVTable does, with bufs' buffers (nil:
// new ones), and returns its parser, whose table holds the rows (none
// with a csvSink). With bufs, the buffers are left in bufs for the next
// read once this one is done.
func readCSVBlocks(r io.Reader, name string, opts *Options, bufs *csvBufs) (*csvParser, error) {
	if opts == nil {
		opts = &Options{}
	}
	// Read the first block: 64 KiB first, so that small files stay cheap
	// (unless a buffer of a read before is there).
	var first []byte
	if bufs != nil && cap(bufs.first) >= blockSize {
		first = bufs.first[:64<<10]
	} else {
		first = make([]byte, 64<<10)
	}
	n, err := io.ReadFull(r, first)
	if err == nil {
		if cap(first) >= blockSize {
			first = first[:blockSize]
		} else {
			first = append(first, make([]byte, blockSize-len(first))...)
		}
		var m int
		m, err = io.ReadFull(r, first[n:])
		n += m
	}
	if bufs != nil && cap(first) >= blockSize {
		bufs.first = first[:0]
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
	if enc := utf16BOM(first); enc != "" {
		return nil, &ParseError{File: name, Line: 1, Column: 1, Err: fmt.Errorf("%w: %s text (it starts with the byte-order mark % X), not UTF-8 or %s: save the file as UTF-8", ErrFormat, enc, first[:2], textCP1252)}
	}
	if k := bytes.IndexByte(first, 0); k >= 0 {
		return nil, &ParseError{File: name, Err: binaryError(1+bytes.Count(first[:k], []byte{'\n'}), looksUTF16(first))}
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
	if n := bytes.Count(header, []byte{detectDelim(header)}) + 1; n > MaxColumns {
		return nil, &ParseError{File: name, Line: line, Err: fmt.Errorf("%w: %d columns, more than the limit of %d", ErrFormat, n, MaxColumns)}
	}
	headerLine := line
	line++
	lay, tb, err := newLayout(name, header, headerLine, nil, opts)
	if err != nil {
		return nil, err
	}
	// A row of units under the header gives the columns their units; the
	// data start on the line after it.
	if units, after, n := lay.unitsRow(rest, line); units != nil {
		note := lay.latin // a units row read as Windows-1252
		if lay, tb, err = newLayout(name, header, headerLine, units, opts); err != nil {
			return nil, err
		}
		if lay.latin == nil {
			lay.latin = note
		}
		rest, line = after, n
	}
	// Decide text columns and the kind of time cell on the first data row.
	if err := lay.sniff(tb, rest, line, opts); err != nil {
		return nil, err
	}
	// Parse: the rest of the first block, then further blocks.
	lay.index()
	p := &csvParser{lay: lay, tb: tb, sink: opts.csvSink, bufs: bufs}
	if bufs != nil {
		p.workers = bufs.workers
		if p.sink != nil { // the columns are a wave's scratch: take those of the read before
			p.takeCols()
			defer p.keepCols()
		}
	}
	tb.finite = true // until a row from the general path (see parseBlocks)
	tb.latin = lay.latin
	if eof {
		if err := p.parseBlocks([]*chunk{{data: rest, line: line}}); err != nil {
			return nil, err
		}
		return p, p.decodeKeys()
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
		var cs *colStore // nil: fresh columns
		if bufs != nil && bufs.cols != nil {
			cs = bufs.cols
			tb.scratch = &cs.scr
		}
		if tb.timeIdx > 0 && !tb.dateTime {
			tb.t = cs.floats(0, est)[:0]
		} else if tb.dateTime {
			tb.tn = make([]int64, 0, est)
		}
		for j := range tb.x {
			tb.x[j] = cs.floats(j+1, est)[:0]
		}
	}
	if err := p.parallel(r, rest, line); err != nil {
		return nil, err
	}
	return p, p.decodeKeys()
}

// decodeKeys makes the table's --run-col values UTF-8 text: one that is
// not is read as Windows-1252 ([decodeText]), and one that is neither is
// an error at its first row.
func (p *csvParser) decodeKeys() error {
	tb := p.tb
	row := 0
	for i := range tb.keys {
		k := &tb.keys[i]
		if utf8.ValidString(k.key) {
			row += k.n
			continue
		}
		s, _, bad := decodeText([]byte(k.key))
		col := slices.Index(p.lay.role, roleRun) + 1
		if bad >= 0 {
			return &ParseError{File: p.lay.file, Line: tb.line(row), Column: col, Name: p.lay.names[col-1],
				Err: encodingError("run name", []byte(k.key), bad)}
		}
		if tb.latin == nil {
			tb.latin = &latinNote{line: tb.line(row), col: col, what: "run name", text: s}
		}
		k.key = s
		row += k.n
	}
	return nil
}

// takeCols starts the table's columns on the buffers' (emptied).
func (p *csvParser) takeCols() {
	tb, b := p.tb, p.bufs
	if tb.timeIdx > 0 && !tb.dateTime {
		tb.t = b.t[:0]
	}
	for len(b.x) < len(tb.x) {
		b.x = append(b.x, nil)
	}
	for j := range tb.x {
		tb.x[j] = b.x[j][:0]
	}
}

// keepCols leaves the table's columns (their room) in the buffers for
// the next read.
func (p *csvParser) keepCols() {
	tb, b := p.tb, p.bufs
	if cap(tb.t) > cap(b.t) {
		b.t = tb.t[:0]
	}
	for j := range tb.x {
		if cap(tb.x[j]) > cap(b.x[j]) {
			b.x[j] = tb.x[j][:0]
		}
	}
}

// binaryError is the error for a NUL byte on a line of a CSV file;
// utf16 adds that the file looks like UTF-16 text without a byte-order
// mark.
func binaryError(line int, utf16 bool) error {
	if utf16 {
		return fmt.Errorf("%w: binary data, not text (a NUL byte on line %d): every other byte is NUL, as in UTF-16 text; save the file as UTF-8", ErrFormat, line)
	}
	return fmt.Errorf("%w: binary data, not text (a NUL byte on line %d): not a text log", ErrFormat, line)
}

// looksUTF16 says the start of data looks like ASCII text written as
// UTF-16 (either byte order) without a byte-order mark: of its first
// bytes (up to 64 pairs, at least 2), every byte at one parity is NUL and
// none at the other.
func looksUTF16(data []byte) bool {
	n := min(len(data), 128) &^ 1
	if n < 4 {
		return false
	}
	var nul [2]int
	for i, c := range data[:n] {
		if c == 0 {
			nul[i&1]++
		}
	}
	return nul[0] == n/2 && nul[1] == 0 || nul[1] == n/2 && nul[0] == 0
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

// newLayout reads the header and assigns column roles. units, when not
// nil, are the cells of a units row ([csvLayout.unitsRow]), one per
// header column: a column whose header cell has no unit takes its cell's.
func newLayout(name string, header []byte, line int, units []string, opts *Options) (*csvLayout, *table, error) {
	lay := &csvLayout{file: name, delim: detectDelim(header)}
	cells, ok := splitQuoted(header, lay.delim, nil)
	if !ok {
		return nil, nil, &ParseError{File: name, Line: line, Err: fmt.Errorf("%w: unbalanced quote in header", ErrFormat)}
	}
	lay.ncol = len(cells)
	cols := make([]Column, len(cells))
	seen := map[string]int{}
	for j, c := range cells {
		s, latin, bad := decodeText(c)
		if bad >= 0 {
			return nil, nil, &ParseError{File: name, Line: line, Column: j + 1, Err: encodingError("header cell", c, bad)}
		}
		s = strings.TrimSpace(s)
		if latin && lay.latin == nil {
			lay.latin = &latinNote{line: line, col: j + 1, what: "header cell", text: s}
		}
		cols[j] = splitUnit(s)
		if cols[j].Unit == "" && j < len(units) {
			cols[j].Unit = units[j]
		} else if cols[j].Unit != "" {
			lay.headerUnits++
		}
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

// maxUnitLen is the longest cell of a units row, in characters: room for
// "yyyy-mm-dd hh:mm:ss" (19) over a date-time column and for any unit
// written with a prefix and powers ("kg*m^2/s^2" is 10), short enough
// that a row of notes or descriptions is not taken for units.
const maxUnitLen = 20

// unitsRow looks for a row of units under the header: the first line of
// rest (on line) that is neither blank nor a comment. It is one when
//
//   - the header has a time column, and some header cell has no unit;
//   - the line splits into the header's columns, and its time cell and
//     every other cell that is not empty are unit cells ([unitCell]),
//     none of them its column's name again (a second row of names);
//   - the next line that is neither blank nor a comment has a time cell
//     that parses as a time: seconds, or an ISO 8601 date-time (with a
//     decimal comma too, in a ';' or tab file).
//
// It returns the units, one per header column, and the rest of the input
// after the row with the line it starts on; nil when there is no units
// row. A text first data row that is not one is left to the sniff and
// the parser, which report it as before.
func (lay *csvLayout) unitsRow(rest []byte, line int) ([]string, []byte, int) {
	ti := slices.Index(lay.role, roleTime)
	if ti < 0 || lay.headerUnits == lay.ncol {
		return nil, nil, 0
	}
	var cells [][]byte
	var units []string
	var after []byte
	afterLine := 0
	var note *latinNote // where the row's text was read as Windows-1252
	for len(rest) > 0 {
		nl := bytes.IndexByte(rest, '\n')
		cut := nl < 0 // the last line, or one cut at the first block's end
		if cut {
			nl = len(rest)
		}
		l := trimCR(rest[:nl])
		rest = rest[min(nl+1, len(rest)):]
		line++
		if isBlankOrComment(l) {
			continue
		}
		var ok bool
		cells, ok = splitQuoted(l, lay.delim, cells[:0])
		if units != nil { // the line after the units row
			if !ok || len(cells) <= ti || !lay.timeCell(trimBlank(cells[ti], lay.delim)) {
				return nil, nil, 0
			}
			if lay.latin == nil {
				lay.latin = note
			}
			return units, after, afterLine
		}
		if cut || !ok || len(cells) != lay.ncol {
			return nil, nil, 0
		}
		units = make([]string, lay.ncol)
		note = nil
		for j, c := range cells {
			s, latin, bad := decodeText(trimBlank(c, lay.delim))
			if bad >= 0 {
				return nil, nil, 0 // no text: the parser reports it as data
			}
			u, ok := unitCell([]byte(s))
			if !ok || (j == ti && u == "") || (u != "" && strings.EqualFold(u, lay.names[j])) {
				return nil, nil, 0 // a second row of names is no units row
			}
			if latin && note == nil {
				note = &latinNote{line: line - 1, col: j + 1, what: "unit", text: u} // line is past the row
			}
			units[j] = u
		}
		after, afterLine = rest, line
	}
	return nil, nil, 0
}

// timeCell says c is a time cell: seconds or an ISO 8601 date-time, as
// written or, in a ';' or tab file, with its one decimal comma read as a
// point.
func (lay *csvLayout) timeCell(c []byte) bool {
	if _, ok := parseFloat(c); ok {
		return true
	}
	if _, ok := parseISO(c); ok {
		return true
	}
	if lay.delim == ',' || bytes.Count(c, []byte{','}) != 1 {
		return false
	}
	pt := bytes.ReplaceAll(c, []byte(","), []byte("."))
	if _, ok := parseFloat(pt); ok {
		return true
	}
	_, ok := parseISO(pt)
	return ok
}

// unitCell reads a cell of a units row: empty (no unit), or a unit of at
// most maxUnitLen characters, optionally in one pair of brackets ("[s]",
// "(rad)": the brackets are dropped), made of letters, digits (with
// superscripts) and / * ^ . % ° · : _ - and spaces, with at least one
// letter, % or °, or "-" alone (a dimensionless column, kept as written).
// A number, a NaN or a number too large for a float64 is no unit: such a
// row is data.
func unitCell(c []byte) (string, bool) {
	if len(c) >= 2 && (c[0] == '[' && c[len(c)-1] == ']' || c[0] == '(' && c[len(c)-1] == ')') {
		c = bytes.TrimSpace(c[1 : len(c)-1])
	}
	if len(c) == 0 {
		return "", true
	}
	if !utf8.Valid(c) || utf8.RuneCount(c) > maxUnitLen || isNumberCell(c) || outOfRange(c) {
		return "", false
	}
	if string(c) == "-" {
		return "-", true
	}
	named := false
	for _, r := range string(c) {
		switch {
		case unicode.IsLetter(r) || r == '%' || r == '°':
			named = true
		case unicode.IsNumber(r) || strings.ContainsRune("/*^.·:_- ", r):
		default:
			return "", false
		}
	}
	return string(c), named
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

// sniffLines is how many lines after the first data row sniffLater
// looks through for a column's first cell that is not empty, and for the
// cells that follow it.
const sniffLines = 4096

// A column whose first filled cell is not a number is judged by the
// filled cells after it in the same sniffLines lines, at most sniffAhead
// of them:
//
//   - fewer than sniffFew: too little to tell; a text column, ignored, as
//     the first cell says;
//   - fewer than half of them numbers: a text column (notes, labels, a
//     status word), ignored;
//   - at least sniffTypo of them numbers: a numeric column whose first
//     cell is a bad value (0.1O, 1.2.3, a Unicode minus, 1 000, (0.5)):
//     kept, so that the parser reports that cell as it reports one on any
//     later row;
//   - half of them numbers or more, but fewer than sniffTypo: a column of
//     numbers and words; kept too, so that the same cell is an error, with
//     a note of how many of the cells after it are numbers.
//
// This is a vote over a sample of the column's cells, the common practice
// for telling a column's type ([MajorityType] in docs/references.md): one
// cell, the first, does not outvote the rest. Dropping a column is silent
// (only inspect lists ignored columns) and an error is not, so every
// doubtful case (half numbers or more) is an error; a column of words
// with the odd number in it stays a text column. 64 cells
// are enough to tell the two apart: for a column with a bad cell in ten
// (90% numbers), fewer than 32 numbers among 64 cells has a binomial
// probability of about 1e-16, and it keeps the look-ahead to a few
// kilobytes of a first block. Below three cells after it, a lone number
// would outvote the first cell (one of one, one of two is half), so a
// notes column with one number noted would be an error; from three on it
// takes two numbers at least. Below three, the first cell decides (text),
// as it always did.
const (
	sniffAhead = 64
	sniffFew   = 3
	sniffTypo  = 90 // percent
)

// mixedNote is what sniffLater found after the first filled cell of a
// column of numbers and words: the cell's line and header column, and how
// many of the n filled cells after it are numbers (k).
type mixedNote struct {
	line, col, k, n int
}

// sniffLater judges each unnamed state column whose cell in the first
// data row (first, on line) is empty or not a number: its first filled
// cell (there or in the following lines of rest, at most sniffLines),
// then, when that is not a number, the filled cells after it by the rule
// above. A text column is dropped; a column of numbers and words is noted
// in lay.mixed for the parser's error. A number out of float64's range is
// no text, and the parser reports it. Lines that do not split into the
// header's columns are left to the parser.
func (lay *csvLayout) sniffLater(first [][]byte, rest []byte, line int, r *roles) {
	type judged struct {
		j      int
		found  bool // the first filled cell is found, and is not a number
		line   int  // its line
		n, num int  // filled cells after it, and numbers among them
	}
	var pending, done []judged
	for j, c := range first {
		if lay.role[j] != roleState || r.isInput(j) {
			continue
		}
		switch c = trimBlank(c, lay.delim); {
		case len(c) == 0:
			pending = append(pending, judged{j: j})
		case !isNumberCell(c) && !outOfRange(c):
			pending = append(pending, judged{j: j, found: true, line: line})
		}
	}
	var cells [][]byte
	for n := 0; len(pending) > 0 && len(rest) > 0 && n < sniffLines; n++ {
		nl := bytes.IndexByte(rest, '\n')
		if nl < 0 {
			nl = len(rest)
		}
		l := trimCR(rest[:nl])
		rest = rest[min(nl+1, len(rest)):]
		line++
		if isBlankOrComment(l) {
			continue
		}
		if lay.decimalComma {
			l = bytes.ReplaceAll(l, []byte(","), []byte("."))
		}
		var ok bool
		if cells, ok = splitQuoted(l, lay.delim, cells[:0]); !ok || len(cells) != lay.ncol {
			continue
		}
		keep := pending[:0]
		for _, p := range pending {
			c := trimBlank(cells[p.j], lay.delim)
			number := isNumberCell(c) || outOfRange(c) // a number too large is a bad value, which the parser reports at its line
			switch {
			case len(c) == 0:
				keep = append(keep, p)
			case !p.found && number:
				// a numeric column: nothing to do
			case !p.found:
				p.found, p.line = true, line
				keep = append(keep, p)
			default:
				p.n++
				if number {
					p.num++
				}
				if p.n < sniffAhead {
					keep = append(keep, p)
				} else {
					done = append(done, p)
				}
			}
		}
		pending = keep
	}
	// in header order, so that the ignored columns are listed so
	done = append(done, pending...)
	slices.SortFunc(done, func(a, b judged) int { return a.j - b.j })
	for _, p := range done {
		switch {
		case !p.found:
			// every cell empty in the window: the parser decides
		case p.n < sniffFew || 2*p.num < p.n:
			r.dropState(p.j)
		case 100*p.num < sniffTypo*p.n:
			lay.mixed = append(lay.mixed, mixedNote{line: p.line, col: p.j, k: p.num, n: p.n})
		}
	}
}

// isNumberCell says c parses as a number, or is a NaN in a form C's
// printf writes ([isNaNText]).
func isNumberCell(c []byte) bool {
	_, ok := parseFloat(c)
	return ok || isNaNText(c)
}

// outOfRange says c is written as a number but is too large in magnitude
// for a float64 ("1e400", "-1.8e308": strconv.ParseFloat's ErrRange, which
// it gives for overflow only; an underflow rounds to zero without error).
// Such a cell is a bad value in a numeric column, not text.
func outOfRange(c []byte) bool {
	_, err := strconv.ParseFloat(string(c), 64)
	return errors.Is(err, strconv.ErrRange)
}

// sniff looks at the first data row: a state column whose cell there is a
// number out of float64's range is an error there, as is an input
// column's cell that is not a number; with no --states, a state column
// whose first filled cell is text is judged by the cells after it
// ([csvLayout.sniffLater]): ignored when they are mostly text too, kept
// (and its first cell an error) otherwise. The time column's cell says
// whether time is in seconds or ISO 8601.
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
		if lay.delim != ',' && bytes.IndexByte(l, ',') >= 0 && lay.commaDecimals(cells) {
			lay.decimalComma = true
			l = bytes.ReplaceAll(l, []byte(","), []byte("."))
			cells, _ = splitQuoted(l, lay.delim, cells[:0])
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
			if !isNumberCell(c) {
				if r.isInput(j) || outOfRange(c) { // named, so it must be numeric; or a number, too large
					p := &csvParser{lay: lay, tb: tb}
					return p.cellError(line, j, c)
				}
				if firstText < 0 {
					firstText, textCell = j, c
				}
			}
		}
	}
	// A column whose first filled cell is text, in this row or (a notes
	// column a logger fills now and then) in the next sniffLines lines of
	// the first block, is judged by the filled cells after that one.
	if opts.States == nil {
		lay.sniffLater(cells, rest, line, r)
		// A column without a name in the header that holds values in
		// the first data row is read by no one: list it as ignored and
		// say so (a row index, as a data-frame export writes it, is
		// often left unnamed; a state left unnamed would vanish).
		for j, c := range cells {
			if lay.names[j] == "" && lay.role[j] == roleSkip && len(trimBlank(c, lay.delim)) > 0 {
				r.ignored = append(r.ignored, Column{Name: fmt.Sprintf("(column %d, unnamed)", j+1)})
				tb.unnamed = append(tb.unnamed, [2]int{line, j + 1})
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

// commaDecimals reports whether the first data row's cells (time,
// states and inputs) write their numbers with a decimal comma: no such
// cell is a number as it stands, and at least one is a number, or an ISO
// 8601 time with a comma before its fraction of a second, once its one
// comma is read as a point; a cell with two commas is no decimal.
func (lay *csvLayout) commaDecimals(cells [][]byte) bool {
	found := false
	for j, c := range cells {
		if lay.role[j] != roleTime && lay.role[j] != roleState {
			continue
		}
		c = trimBlank(c, lay.delim)
		k := bytes.IndexByte(c, ',')
		if k < 0 || bytes.IndexByte(c[k+1:], ',') >= 0 {
			continue
		}
		pt := bytes.ReplaceAll(c, []byte(","), []byte("."))
		if _, ok := parseFloat(pt); ok {
			found = true
			continue
		}
		if _, ok := parseISO(c); !ok && lay.role[j] == roleTime {
			if _, ok := parseISO(pt); ok {
				found = true
			}
		}
	}
	return found
}

// commaToPoint replaces every ',' of data by '.' in place (the data of a
// decimal-comma file, whose delimiter is not ',').
func commaToPoint(data []byte) {
	for {
		k := bytes.IndexByte(data, ',')
		if k < 0 {
			return
		}
		data[k] = '.'
		data = data[k+1:]
	}
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
	lay *csvLayout
	tb  *table
	// sink is Options.csvSink: when set, each wave's blocks are parsed
	// into the table's columns as scratch and handed over in order, and
	// the columns start empty again for the next wave.
	sink func(*table, *chunk)
	// workers parse a wave's blocks (0: GOMAXPROCS); bufs, when not
	// nil, holds read buffers to reuse
	workers int
	bufs    *csvBufs
}

// wavePerWorker is how many blocks a wave of [csvParser.parallel] reads
// per worker: enough that the workers rarely wait on an unlucky block,
// few enough that the read buffers stay a few megabytes.
const wavePerWorker = 4

// parallel reads r in blocks after the first one (rest, starting on line)
// and parses them in waves: a wave's blocks are read, then parsed on the
// workers of [parallel.For] straight into the table (see
// [csvParser.parseBlocks]), while the next wave is read (into the other
// of two sets of read buffers, each reused every other wave).
func (p *csvParser) parallel(r io.Reader, rest []byte, line int) error {
	wave := wavePerWorker * parallel.Workers(p.workers)
	if p.workers == 1 {
		wave = 1 // no worker to wait: the next block is read while this one is parsed
	}
	var rings [2][][]byte
	if p.bufs != nil {
		rings = p.bufs.rings
	}
	for k := range rings {
		if len(rings[k]) != wave {
			rings[k] = make([][]byte, wave)
		}
	}
	if p.bufs != nil {
		p.bufs.rings = rings
	}
	// the first wave: the whole lines of rest, parsed where they are (a
	// copy into a ring buffer would grow it past reuse: rest is nearly
	// a block)
	var cur csvWave
	if cut := bytes.LastIndexByte(rest, '\n') + 1; cut > 0 {
		c := &chunk{data: rest[:cut], line: line}
		c.nl, c.nlKnown = bytes.Count(c.data, []byte{'\n'}), true
		cur = csvWave{cs: []*chunk{c}, carry: rest[cut:], line: line + c.nl}
	} else {
		cur = p.readWave(r, rings[0], rest, line)
	}
	for k := 1; ; k++ {
		var next csvWave
		var done chan struct{}
		if cur.pending == nil && !cur.eof {
			done = make(chan struct{})
			go func() {
				defer close(done)
				next = p.readWave(r, rings[k%2], cur.carry, cur.line)
			}()
		}
		err := p.parseBlocks(cur.cs)
		if done != nil {
			<-done
		}
		switch {
		case err != nil:
			return err
		case cur.pending != nil:
			return cur.pending
		case cur.eof:
			return nil
		}
		cur = next
	}
}

// csvWave is one wave of blocks read by [csvParser.readWave].
type csvWave struct {
	cs      []*chunk
	pending error  // a read or line-length error, after the blocks before it
	eof     bool   // r is read to its end
	carry   []byte // the partial line after the last block (in ring)
	line    int    // the line number of carry's line
}

// readWave reads up to len(ring) blocks of whole lines from r, the first
// one starting with carry (the partial line left by the wave before, on
// line), block k in ring[k] (kept there unless it had to grow for a long
// line). carry must not lie in ring. A panic of r is returned as an error.
func (p *csvParser) readWave(r io.Reader, ring [][]byte, carry []byte, line int) (w csvWave) {
	defer func() {
		if v := recover(); v != nil {
			w.pending = fmt.Errorf("reading %s: internal error: %v", p.lay.file, v)
		}
	}()
	for len(w.cs) < len(ring) && !w.eof && w.pending == nil {
		buf := ring[len(w.cs)]
		if buf == nil {
			buf = make([]byte, 0, blockSize+blockSize/4)
		}
		buf = append(buf[:0], carry...) // carry is in another buffer (or rest)
		for {
			if cap(buf)-len(buf) < blockSize/2 {
				nb := make([]byte, len(buf), 2*cap(buf))
				copy(nb, buf)
				buf = nb
			}
			n, err := io.ReadFull(r, buf[len(buf):cap(buf)])
			buf = buf[:len(buf)+n]
			w.eof = errors.Is(err, io.EOF) || errors.Is(err, io.ErrUnexpectedEOF)
			if err != nil && !w.eof {
				w.pending = err
				break
			}
			if w.eof || bytes.LastIndexByte(buf, '\n') >= 0 {
				break
			}
			if len(buf) > MaxLineLength {
				w.pending = &ParseError{File: p.lay.file, Line: line,
					Err: fmt.Errorf("%w: line %d longer than the limit of %d bytes", ErrFormat, line, MaxLineLength)}
				break
			}
			// a line longer than the buffer: grow and read on
		}
		if w.pending != nil {
			break
		}
		cut := len(buf)
		if !w.eof {
			cut = bytes.LastIndexByte(buf, '\n') + 1
		}
		if cap(buf) <= blockSize+blockSize/4 {
			ring[len(w.cs)] = buf // kept for the wave after next; a grown one is let go
		}
		c := &chunk{data: buf[:cut], line: line}
		c.nl, c.nlKnown = bytes.Count(c.data, []byte{'\n'}), true
		line += c.nl
		w.cs = append(w.cs, c)
		carry = buf[cut:]
	}
	w.carry, w.line = carry, line
	return w
}

// parseBlocks parses consecutive blocks into the table. Each block's rows
// go straight into the table's columns, at room reserved for as many rows
// as it has lines; the blocks are parsed on the workers of
// [parallel.For]; then the rows are closed up in order (blank and comment
// lines leave room unused) and the line marks and run keys appended. The
// error is that of the first bad block.
func (p *csvParser) parseBlocks(cs []*chunk) error {
	if len(cs) == 0 {
		return nil
	}
	tb, lay := p.tb, p.lay
	timed := tb.timeIdx > 0
	end := tb.rows
	if lay.decimalComma {
		for _, c := range cs {
			commaToPoint(c.data)
		}
	}
	width := 8 * (len(tb.x) + 1) // bytes of a row in the columns, at most
	for _, c := range cs {
		if !c.nlKnown {
			c.nl, c.nlKnown = bytes.Count(c.data, []byte{'\n'}), true
		}
		c.lines = c.nl
		if n := len(c.data); n > 0 && c.data[n-1] != '\n' {
			c.lines++
		}
		if c.lines*width > 4*len(c.data)+64 {
			// Shorter lines than rows of one-digit cells: blank lines,
			// most likely. Count the rows so that the room stays small.
			c.lines = countRows(c.data)
		}
		c.off = end
		end += c.lines
	}
	switch {
	case timed && lay.dateTime:
		tb.tn = slices.Grow(tb.tn, end-len(tb.tn))[:end]
	case timed:
		tb.t = slices.Grow(tb.t, end-len(tb.t))[:end]
	}
	for j := range tb.x {
		tb.x[j] = slices.Grow(tb.x[j], end-len(tb.x[j]))[:end]
	}
	for _, c := range cs {
		a, b := c.off, c.off+c.lines
		switch {
		case timed && lay.dateTime:
			c.tn = tb.tn[a:a:b]
		case timed:
			c.t = tb.t[a:a:b]
		}
		c.x = make([][]float64, len(tb.x))
		for j := range tb.x {
			c.x[j] = tb.x[j][a:a:b]
		}
	}
	var err error
	if len(cs) == 1 {
		p.parse(cs[0])
		err = cs[0].err
	} else {
		err = parallel.For(context.Background(), len(cs), p.workers, nil, func(_ context.Context, i int, _ struct{}) error {
			p.parse(cs[i])
			return cs[i].err
		})
	}
	for _, c := range cs {
		tb.finite = tb.finite && !c.general
	}
	if p.sink != nil {
		return p.handOver(cs, err)
	}
	if err != nil {
		return err
	}
	row := tb.rows
	for _, c := range cs {
		if c.off != row { // close up the room the blocks before left
			switch {
			case timed && lay.dateTime:
				copy(tb.tn[row:], tb.tn[c.off:c.off+c.rows])
			case timed:
				copy(tb.t[row:], tb.t[c.off:c.off+c.rows])
			}
			for j := range tb.x {
				copy(tb.x[j][row:], tb.x[j][c.off:c.off+c.rows])
			}
		}
		for _, m := range c.marks {
			tb.marks = append(tb.marks, lineMark{row: row + m.row, line: m.line})
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
		row += c.rows
	}
	tb.rows = row
	switch {
	case timed && lay.dateTime:
		tb.tn = tb.tn[:row]
	case timed:
		tb.t = tb.t[:row]
	}
	for j := range tb.x {
		tb.x[j] = tb.x[j][:row]
	}
	return nil
}

// handOver gives the parsed blocks to p.sink in order, up to the first bad
// one (whose error it returns, err), then empties the table's columns for
// the next wave; their room is kept. The table's rows stay 0.
func (p *csvParser) handOver(cs []*chunk, err error) error {
	n := len(cs)
	var pe *parallel.PanicError
	if errors.As(err, &pe) {
		n = min(n, max(pe.Index, 0))
	}
	for _, c := range cs[:n] {
		if c.err != nil {
			break
		}
		p.sink(p.tb, c)
	}
	tb := p.tb
	tb.t, tb.tn = tb.t[:0], tb.tn[:0]
	for j := range tb.x {
		tb.x[j] = tb.x[j][:0]
	}
	return err
}

// skipLine reports a line (without its line end) that is not a row: blank
// or a comment.
func skipLine(l []byte) bool {
	return len(l) == 0 || l[0] == '#' || ((l[0] == ' ' || l[0] == '\t') && isBlankOrComment(l))
}

// countRows returns the number of lines of data that [csvParser.parse]
// takes for rows: those neither blank nor a comment.
func countRows(data []byte) int {
	n := 0
	for len(data) > 0 {
		l := data
		if nl := bytes.IndexByte(data, '\n'); nl >= 0 {
			l, data = data[:nl], data[nl+1:]
		} else {
			data = nil
		}
		if !skipLine(trimCR(l)) {
			n++
		}
	}
	return n
}

// parse parses the lines of c.data. It stops at the first bad cell.
func (p *csvParser) parse(c *chunk) {
	lay := p.lay
	timed := p.tb.timeIdx > 0
	var cells [][]byte
	data := c.data
	line := c.line
	if k := bytes.IndexByte(data, 0); k >= 0 {
		c.err = &ParseError{File: lay.file, Err: binaryError(line+bytes.Count(data[:k], []byte{'\n'}), false)}
		return
	}
	// The fast row path: numbers only (it leaves a line with a quote to
	// the general path).
	fast := !lay.dateTime && !lay.hasRun
	var cols [][]float64 // the fast path's view of the room, by header column
	if fast {
		cols = make([][]float64, len(lay.slot))
		for j, s := range lay.slot {
			switch {
			case s == 0:
				cols[j] = c.t[:cap(c.t)]
			case s > 0:
				cols[j] = c.x[s-1][:cap(c.x[s-1])]
			}
		}
	}
	contiguous := false
	for len(data) > 0 {
		if fast {
			if rows, used := p.fastRows(c, cols, data); rows > 0 {
				if !contiguous {
					c.marks = append(c.marks, lineMark{row: c.rows, line: line})
					contiguous = true
				}
				c.rows += rows
				if timed {
					c.t = c.t[:c.rows]
				}
				for k := range c.x {
					c.x[k] = c.x[k][:c.rows]
				}
				line += rows
				data = data[used:]
				if len(data) == 0 {
					break
				}
			}
		}
		// one line the fast path refused (or any line when it is off)
		nl := bytes.IndexByte(data, '\n')
		var l []byte
		if nl < 0 {
			l, data = data, nil
		} else {
			l, data = data[:nl], data[nl+1:]
		}
		l = trimCR(l)
		if skipLine(l) {
			line++
			contiguous = false
			continue
		}
		if !contiguous {
			c.marks = append(c.marks, lineMark{row: c.rows, line: line})
			contiguous = true
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
		c.general = true
		line++
	}
}

// fastRows parses the rows at the start of data whose cells are all plain
// numbers (or skipped columns), each row ended by "\n", "\r\n" or the end
// of data, and stores them by index after c's rows in cols (by header
// column: c.t or c.x to their capacity, the block's room, or nil for a
// column it skips). It stops before the first line it cannot take whole,
// having changed nothing that matters, and returns the rows taken and the
// bytes they used; the general path then parses that line and reports
// what is wrong with it.
func (p *csvParser) fastRows(c *chunk, cols [][]float64, data []byte) (rows, used int) {
	d := p.lay.delim
	r := c.rows
	for used < len(data) {
		i := used
		for j, col := range cols {
			if j > 0 {
				if i >= len(data) || data[i] != d {
					return r - c.rows, used
				}
				i++
			}
			if col == nil {
				for i < len(data) && data[i] != d && data[i] != '\n' {
					if data[i] == '"' { // a quoted cell may hold the delimiter
						return r - c.rows, used
					}
					i++
				}
				continue
			}
			// The number at i: the common case (digits, a point, at most
			// 19 digits, mantissa <= 2^53, no exponent) inlined here, as
			// scanFast does it and to the same bits; anything else is
			// scanFast's. Inlined, the loop's values are not saved around
			// a call for each cell; and few are live at once, so that the
			// digit loops keep theirs in registers (the sign is read
			// again at the end).
			cs := i
			if i >= len(data) {
				return r - c.rows, used
			}
			i += int((uint64(uint8(data[i]-'+')&^2) - 1) >> 63) // a sign: see scanFast
			var mant uint64
			if i < len(data) && data[i]-'0' <= 9 { // the first digit, out of the loop
				mant = uint64(data[i] - '0')
				i++
				for i < len(data) {
					c := data[i] - '0'
					if c > 9 {
						break
					}
					mant = mant*10 + uint64(c)
					i++
				}
			}
			fs := 0 // where the fraction starts, if there is a point
			if i < len(data) && data[i] == '.' {
				i++
				fs = i
				if i-cs <= 13 && i+8 <= len(data) { // 8 more digits keep 19 or fewer
					if x := binary.LittleEndian.Uint64(data[i:]); eightDigits(x) {
						mant = mant*100000000 + eightValue(x)
						i += 8
						// one more digit, or none, without a branch: after
						// 8 digits, a 9th is there about as often as not
						if i < len(data) {
							c := uint64(data[i] - '0')
							more := (c - 10) >> 63 // 1 for a digit
							mant = mant*(1+9*more) + c&-more
							i += int(more)
						}
					} else if x := uint64(uint32(x)); fourDigits(x) {
						mant = mant*10000 + fourValue(x)
						i += 4
					}
				}
				for i < len(data) {
					c := data[i] - '0'
					if c > 9 {
						break
					}
					mant = mant*10 + uint64(c)
					i++
				}
			}
			sign := int((uint64(uint8(data[cs]-'+')&^2) - 1) >> 63)
			exp, digits := 0, i-cs-sign
			if fs > 0 {
				exp, digits = fs-i, digits-1
			}
			var v float64
			if uint(digits-1) < 19 && mant <= 1<<53 && exp >= -22 && (i >= len(data) || data[i]|0x20 != 'e') {
				// exp <= 0, and a division by 10^0 = 1 is exact
				neg := (uint64(data[cs]^'-') - 1) >> 63
				v = math.Float64frombits(math.Float64bits(float64(int64(mant))/exactPow10[-exp]) | neg<<63)
			} else {
				var n int
				var ok bool
				if v, n, ok = scanFast(data[cs:]); !ok {
					return r - c.rows, used
				}
				i = cs + n
			}
			col[r] = v
		}
		if i < len(data) {
			switch {
			case data[i] == '\n':
				i++
			case data[i] == '\r' && i+1 == len(data):
				i++
			case data[i] == '\r' && data[i+1] == '\n':
				i += 2
			default:
				return r - c.rows, used
			}
		}
		r++
		used = i
	}
	return r - c.rows, used
}

// cellSlow handles what the fast path refused: blanks around a number,
// empty and NaN cells (missing: NaN; "-nan" and "nan(ind)" too, see
// [isNaNText]). Infinities are refused, and so are
// Go's digit separators and hexadecimal floats ("1_000", "0x1p-2"), which
// strconv accepts but no logger writes: such a cell is a typo or not a
// number at all.
func (p *csvParser) cellSlow(cell []byte) (float64, bool) {
	cell = trimBlank(cell, p.lay.delim)
	if len(cell) == 0 || isNaNText(cell) {
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

// isNaNText says c is a NaN as C's printf writes one: "nan" in any case,
// with an optional sign and an optional parenthesised tail of letters,
// digits and '_' ("-nan" from glibc for a NaN whose sign bit is set,
// "-nan(ind)" from Microsoft's C library), the forms C's strtod reads as
// NaN. strconv.ParseFloat reads only the bare "nan"; IEEE 754 gives a
// NaN's sign no meaning, so every form is a missing sample.
func isNaNText(c []byte) bool {
	if len(c) > 0 && (c[0] == '-' || c[0] == '+') {
		c = c[1:]
	}
	if len(c) < 3 || !strings.EqualFold(string(c[:3]), "nan") {
		return false
	}
	c = c[3:]
	if len(c) == 0 {
		return true
	}
	if len(c) < 2 || c[0] != '(' || c[len(c)-1] != ')' {
		return false
	}
	for _, b := range c[1 : len(c)-1] {
		if !(b >= '0' && b <= '9' || b >= 'a' && b <= 'z' || b >= 'A' && b <= 'Z' || b == '_') {
			return false
		}
	}
	return true
}

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
	} else if t, _, bad := decodeText(cell); bad >= 0 {
		msg = fmt.Errorf("%w: not text (binary data?)", ErrNotNumber)
	} else if t != string(cell) {
		if len(t) > 40 {
			t = string([]rune(t)[:min(40, utf8.RuneCountInString(t))]) + "..."
		}
		msg = fmt.Errorf("%w %q (text read as Windows-1252)", ErrNotNumber, t)
	}
	for _, m := range p.lay.mixed {
		if m.line == line && m.col == j {
			msg = fmt.Errorf("%w (%d of the %d filled cells after it are numbers, the others not: a column of numbers and words; --states names the state columns)", msg, m.k, m.n)
		}
	}
	if p.lay.decimalComma {
		msg = fmt.Errorf("%w (the file's decimal commas read as points)", msg)
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
