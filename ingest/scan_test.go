package ingest

import (
	"bytes"
	"encoding/csv"
	"errors"
	"io"
	"math"
	"math/rand/v2"
	"runtime"
	"slices"
	"strconv"
	"strings"
	"testing"
)

// stdlibTable parses body (the rows after a header of ncol columns) with
// encoding/csv and strconv.ParseFloat, column by column, with basin's
// rules for what a cell may be: empty and NaN are missing (NaN); a cell
// strconv refuses, an infinity, a digit separator or a hexadecimal float
// make the input invalid for the comparison (ok false), as does anything
// encoding/csv refuses.
func stdlibTable(body []byte, ncol int) (cols [][]float64, ok bool) {
	cr := csv.NewReader(bytes.NewReader(body))
	cr.Comment = '#'
	cr.FieldsPerRecord = ncol
	cr.ReuseRecord = true
	cols = make([][]float64, ncol)
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			return cols, true
		}
		if err != nil {
			return nil, false
		}
		for j, s := range rec {
			v := math.NaN()
			if s != "" && !strings.EqualFold(s, "nan") {
				var err error
				v, err = strconv.ParseFloat(s, 64)
				if err != nil || math.IsInf(v, 0) || math.IsNaN(v) || notDecimal([]byte(s)) {
					return nil, false
				}
			}
			cols[j] = append(cols[j], v)
		}
	}
}

// checkAgainstStdlib reads header+body with basin's table reader and, when
// the standard library's reading of body is valid, compares the two bit
// for bit (NaN as NaN). Whatever the input, an error must be a one-line
// *ParseError naming the file, and nothing may panic.
func checkAgainstStdlib(t *testing.T, header string, ncol int, body []byte) (compared bool) {
	t.Helper()
	in := append([]byte(header+"\n"), body...)
	tb, err := readCSVTable(bytes.NewReader(in), "f.csv", &Options{})
	want, valid := stdlibTable(body, ncol)
	if err != nil {
		var pe *ParseError
		if !errors.As(err, &pe) || pe.File != "f.csv" || strings.ContainsAny(err.Error(), "\n\r") || !strings.HasPrefix(err.Error(), "f.csv:") {
			t.Fatalf("error %q is not a one-line *ParseError naming the file", err)
		}
		// A NUL byte refuses the whole file (binary data), its line
		// named in the text rather than in Line.
		binary := strings.Contains(err.Error(), "a NUL byte on line ")
		if valid && len(want[0]) > 0 && pe.Line < 2 && !binary {
			t.Fatalf("error %q without the line of a row", err)
		}
		if valid && len(want[0]) > 0 && !bytes.ContainsAny(body, " \t\r\"\x00") && !bytes.HasPrefix(body, []byte("\ufeff")) {
			t.Fatalf("basin refused what encoding/csv and strconv read: %v\n%q", err, body)
		}
		return false
	}
	if !valid || bytes.ContainsAny(body, " \t\"") {
		return false // dialects differ on blanks and quotes; basin's own tests cover them
	}
	got := append([][]float64{tb.t}, tb.x...)
	if len(got) != ncol {
		return false // a column was taken for text or skipped
	}
	for j := range ncol {
		if len(got[j]) != len(want[j]) {
			t.Fatalf("column %d: %d values, encoding/csv %d\n%q", j, len(got[j]), len(want[j]), body)
		}
		for i := range want[j] {
			if !sameFloat(got[j][i], want[j][i]) {
				t.Fatalf("column %d row %d: %v (%#x), strconv %v (%#x)\n%q", j, i,
					got[j][i], math.Float64bits(got[j][i]), want[j][i], math.Float64bits(want[j][i]), body)
			}
		}
	}
	return true
}

// FuzzScanRows compares the row scanner (the fast path and the general
// one behind it) with encoding/csv and strconv.ParseFloat on any body
// under a three-column header: the same values bit for bit where the
// standard library reads the body, a one-line positioned error otherwise.
func FuzzScanRows(f *testing.F) {
	for _, s := range []string{
		"0,1,2\n1,2.5,-3e-5\n",
		"0,1,2\r\n1,,NaN\r\n",
		"0,1,2\n# c\n\n1,2,3",
		"0,1,2\n1,2,3,4\n",
		"0,1,2\n1,2\n",
		"0,1.7976931348623157e308,5e-324\n1,12345678901234567890,0.1234567890123456789\n",
		"0,1e22,1e23\n1,-0,+0.0\n",
		"0,1_0,2\n",
		"0,0x1p-2,2\n",
		"0,Inf,2\n",
		"0,\"1\",2\n",
		"0,1,2\r\r\n",
		"0,1,2\n1,2,3\x00\n",
		"0,.5,5.\n1,-.5,+5.e1\n",
	} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, body []byte) {
		checkAgainstStdlib(t, "t,a,b", 3, body)
	})
}

// TestScanRowsRandom runs the fuzz comparison on seeded random bodies of
// numbers in many printed forms, with empty cells, comments and blank
// lines, CRLF ends and the odd bad cell.
func TestScanRowsRandom(t *testing.T) {
	rng := rand.New(rand.NewPCG(21, 0))
	cell := func() string {
		v := rng.NormFloat64() * math.Pow(10, float64(rng.IntN(40)-20))
		if rng.IntN(300) == 0 {
			return "1.2.3" // a bad cell: a positioned error
		}
		switch rng.IntN(11) {
		case 0:
			return ""
		case 1:
			return "NaN"
		case 2:
			return strconv.FormatFloat(v, 'e', rng.IntN(20), 64)
		case 3:
			return strconv.FormatFloat(v, 'f', rng.IntN(25), 64)
		case 4:
			return strconv.Itoa(rng.IntN(1 << 30))
		default:
			return strconv.FormatFloat(v, 'g', -1, 64)
		}
	}
	compared, rows := 0, 0
	for trial := range 300 {
		var sb strings.Builder
		for range rng.IntN(40) {
			switch rng.IntN(20) {
			case 0:
				sb.WriteString("#note\n")
			case 1:
				sb.WriteString("\n")
			}
			sb.WriteString(cell() + "," + cell() + "," + cell())
			if rng.IntN(8) == 0 {
				sb.WriteString("\r")
			}
			sb.WriteString("\n")
		}
		body := sb.String()
		if trial%3 == 0 {
			body = strings.TrimSuffix(body, "\n")
		}
		if checkAgainstStdlib(t, "t,a,b", 3, []byte(body)) {
			compared++
			rows += strings.Count(body, ",") / 2
		}
	}
	if compared < 150 || rows < 3000 {
		t.Errorf("only %d bodies (%d rows) compared", compared, rows)
	}
	t.Logf("%d bodies, %d rows compared", compared, rows)
}

// TestReadCSVWaves reads a file of many waves of blocks (with one worker
// and with the default), with comments and blank lines scattered so that
// blocks leave room unused, and compares with encoding/csv and strconv.
func TestReadCSVWaves(t *testing.T) {
	rng := rand.New(rand.NewPCG(22, 0))
	var sb strings.Builder
	n := 400_000
	if testing.Short() {
		n = 150_000
	}
	for i := range n {
		if rng.IntN(5000) == 0 {
			sb.WriteString("# note\n\n\n")
		}
		sb.WriteString(strconv.Itoa(i) + "," + strconv.FormatFloat(rng.NormFloat64(), 'g', 9, 64) + "," +
			strconv.FormatFloat(rng.NormFloat64()*1e-3, 'g', -1, 64) + "\n")
	}
	body := []byte(sb.String())
	want, ok := stdlibTable(body, 3)
	if !ok || len(want[0]) != n {
		t.Fatalf("reference read %d rows, ok %v", len(want[0]), ok)
	}
	for _, procs := range []int{1, 0} {
		prev := runtime.GOMAXPROCS(procs)
		tb, err := readCSVTable(bytes.NewReader(append([]byte("t,a,b\n"), body...)), "w.csv", &Options{})
		runtime.GOMAXPROCS(prev)
		if err != nil {
			t.Fatal(err)
		}
		got := append([][]float64{tb.t}, tb.x...)
		for j := range got {
			if len(got[j]) != n {
				t.Fatalf("GOMAXPROCS %d: column %d has %d rows, want %d", procs, j, len(got[j]), n)
			}
			for i := range got[j] {
				if !sameFloat(got[j][i], want[j][i]) {
					t.Fatalf("GOMAXPROCS %d: column %d row %d = %v, want %v", procs, j, i, got[j][i], want[j][i])
				}
			}
		}
		// the line of every row: a bad cell far in names it
		if k := len(tb.marks); k < 10 {
			t.Errorf("GOMAXPROCS %d: %d line marks for a file with comments throughout", procs, k)
		}
		// The same through the streaming hook: the blocks come in order,
		// their rows and line marks the table's.
		prev = runtime.GOMAXPROCS(procs)
		sunk := make([][]float64, 3)
		var marks []lineMark
		blocks := 0
		opts := &Options{csvSink: func(_ *table, c *chunk) {
			for _, m := range c.marks {
				marks = append(marks, lineMark{row: len(sunk[0]) + m.row, line: m.line})
			}
			sunk[0] = append(sunk[0], c.t[:c.rows]...)
			for j := range 2 {
				sunk[j+1] = append(sunk[j+1], c.x[j][:c.rows]...)
			}
			blocks++
		}}
		stb, err := readCSVTable(bytes.NewReader(append([]byte("t,a,b\n"), body...)), "w.csv", opts)
		runtime.GOMAXPROCS(prev)
		if err != nil {
			t.Fatal(err)
		}
		if stb.rows != 0 || len(stb.x[0]) != 0 {
			t.Errorf("GOMAXPROCS %d: streamed table kept %d rows, %d values", procs, stb.rows, len(stb.x[0]))
		}
		if blocks < 2 {
			t.Errorf("GOMAXPROCS %d: %d blocks handed over", procs, blocks)
		}
		for j := range sunk {
			if len(sunk[j]) != n {
				t.Fatalf("GOMAXPROCS %d, streamed: column %d has %d rows, want %d", procs, j, len(sunk[j]), n)
			}
			for i := range sunk[j] {
				if !sameFloat(sunk[j][i], want[j][i]) {
					t.Fatalf("GOMAXPROCS %d, streamed: column %d row %d = %v, want %v", procs, j, i, sunk[j][i], want[j][i])
				}
			}
		}
		if !slices.Equal(marks, tb.marks) {
			t.Errorf("GOMAXPROCS %d, streamed: %d line marks, the table's %d differ", procs, len(marks), len(tb.marks))
		}
	}
}

// failingReader gives n bytes of rows, then err.
type failingReader struct {
	n   int
	err error
	row []byte
	off int
}

func (f *failingReader) Read(b []byte) (int, error) {
	if f.n <= 0 {
		return 0, f.err
	}
	k := 0
	for k < len(b) && f.n > 0 {
		b[k] = f.row[f.off]
		f.off = (f.off + 1) % len(f.row)
		k++
		f.n--
	}
	return k, nil
}

// TestReadCSVReadError: a read error in the first block, in the first
// wave and many waves in is returned as it is (the blocks read ahead of
// it notwithstanding), with nothing else.
func TestReadCSVReadError(t *testing.T) {
	gone := errors.New("device gone")
	row := []byte("1.5,-0.25,3e-3\n")
	for _, n := range []int{1000, 3 << 20, 40 << 20} {
		r := &failingReader{n: n, err: gone, row: row}
		_, err := readCSVTable(io.MultiReader(strings.NewReader("t,a,b\n"), r), "r.csv", &Options{})
		if !errors.Is(err, gone) {
			t.Errorf("error after %d bytes: %v, want %v", n, err, gone)
		}
	}
}
