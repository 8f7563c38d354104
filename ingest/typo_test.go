package ingest

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// typoRows is a log of n rows, t,a,b,c: a and b numbers, c the cell
// cell(i) of row i (line i+2).
func typoRows(n int, cell func(i int) string) string {
	var b strings.Builder
	b.WriteString("t,a,b,c\n")
	for i := range n {
		fmt.Fprintf(&b, "%g,%g,%g,%s\n", float64(i)/10, 1/float64(i+1), float64(i%7)/4, cell(i))
	}
	return b.String()
}

// numberAt is the cell of a clean numeric column c, except at row k,
// where it is typo.
func numberAt(k int, typo string) func(int) string {
	return func(i int) string {
		if i == k {
			return typo
		}
		return fmt.Sprintf("%g", 0.5-float64(i)/100)
	}
}

// TestFirstCellTypo: a state column's first filled cell that is not a
// number is judged by the filled cells after it (sniffLater's rule):
// followed mostly by numbers it is a bad cell of a numeric column, the
// same error naming file, line and column that the cell gives on any
// later row; followed mostly by words it makes a text column, ignored as
// before. The cells are split as [RFC4180] has them; the expected lines,
// columns and messages are written out by hand from the input text
// (common practice for parser tests); the majority rule over the cells is
// [MajorityType]. The typos are those a hand edit or a locale leaves in a
// number: a letter O for a zero, a second point, U+2212 MINUS SIGN for
// the hyphen-minus a number takes, a space as a thousands separator, an
// accountant's parentheses for a negative, a percent sign, a hexadecimal
// integer [strconv] does not read as a float (Unicode's minus sign and
// the accounting form from memory).
func TestFirstCellTypo(t *testing.T) {
	typos := []string{"0.1O", "1.2.3", "\u22120.5", "1 000", "(0.5)", "0.5%", "0x10"}
	type tcase struct {
		name    string
		in      string
		opts    *Options
		err     string // the error, "" for none
		ignored string // the ignored columns, comma-separated, when no error
	}
	var cases []tcase
	for _, ty := range typos {
		want := func(line int) string { return fmt.Sprintf(`x.csv:%d:4: column "c": not a number %q`, line, ty) }
		cases = append(cases,
			tcase{name: "first row " + ty, in: typoRows(200, numberAt(0, ty)), err: want(2)},
			// the same cell on a later row: the error the first row must give too
			tcase{name: "later row " + ty, in: typoRows(200, numberAt(9, ty)), err: want(11)},
			tcase{name: "first filled cell " + ty, in: typoRows(200, func(i int) string {
				if i < 5 {
					return ""
				}
				return numberAt(5, ty)(i)
			}), err: want(7)})
	}
	words := []string{"idle", "run", "stop"}
	cases = append(cases,
		tcase{name: "status words", in: typoRows(200, func(i int) string { return words[i%3] }), ignored: "c"},
		tcase{name: "sparse notes with a number among them", in: typoRows(200, func(i int) string {
			switch i {
			case 0:
				return "start"
			case 40:
				return "bump"
			case 80:
				return "3"
			case 120:
				return `"retuned, gain 2"`
			}
			return ""
		}), ignored: "c"},
		// fewer than half numbers: a word column with numbers in it (12 of 35 after the first)
		tcase{name: "a third numbers", in: typoRows(36, func(i int) string {
			if i%3 == 1 {
				return "7"
			}
			return "off"
		}), ignored: "c"},
		// half numbers: 32 of the 64 cells after the first, then the window's limit
		tcase{name: "half numbers", in: typoRows(300, func(i int) string {
			if i%2 == 0 {
				return "go"
			}
			return "1"
		}), err: `x.csv:2:4: column "c": not a number "go" (32 of the 64 filled cells after it are numbers, the others not: a column of numbers and words; --states names the state columns)`},
		// 3 of 4 numbers: mixed; the parser stops at the first word, which has the note
		tcase{name: "three quarters numbers", in: typoRows(5, func(i int) string {
			if i == 2 {
				return "n/a"
			}
			return numberAt(0, "zero")(i)
		}), err: `x.csv:2:4: column "c": not a number "zero" (3 of the 4 filled cells after it are numbers, the others not: a column of numbers and words; --states names the state columns)`},
		// exactly 90%: 9 of 10 cells after the first are numbers, a numeric column
		tcase{name: "nine in ten numbers", in: typoRows(11, func(i int) string {
			if i == 5 {
				return "-"
			}
			return numberAt(0, "O.5")(i)
		}), err: `x.csv:2:4: column "c": not a number "O.5"`},
		// two cells after the first: too few to tell, the first cell decides (text)
		tcase{name: "too few cells after", in: typoRows(3, numberAt(0, "0.1O")), ignored: "c"},
		tcase{name: "three cells after", in: typoRows(4, numberAt(0, "0.1O")), err: `x.csv:2:4: column "c": not a number "0.1O"`},
		// a typo column beside a text column: the typo is reported
		tcase{name: "typo in b, notes in c", in: func() string {
			s := typoRows(50, func(i int) string { return words[i%3] })
			return strings.Replace(s, "\n0,1,0,", "\n0,1,0.0.0,", 1)
		}(), err: `x.csv:2:3: column "b": not a number "0.0.0"`},
		// a ragged line before the bad cell: the parser reports the first bad line
		tcase{name: "ragged line first", in: func() string {
			s := typoRows(50, func(i int) string {
				if i < 3 {
					return ""
				}
				return numberAt(3, "0.1O")(i)
			})
			return strings.Replace(s, "\n0.1,0.5,0.25,\n", "\n0.1,0.5,\n", 1)
		}(), err: `x.csv:3:3: wrong number of fields: 3, the header has 4`},
		// a decimal-comma file: the cells are judged with their commas read as points
		tcase{name: "decimal comma", in: "t;a;b\n0;0,1O;1,5\n0,1;0,2;1,4\n0,2;0,3;1,3\n0,3;0,4;1,2\n",
			err: `x.csv:2:2: column "a": not a number "0.1O" (the file's decimal commas read as points)`},
		// words on the line under the header with a number among them: no
		// units row (those are read, see TestUnitsRow), an error there, as before
		tcase{name: "units row with a number", in: "t,a,b\ns,rad,2\n0,0.1,0.2\n0.1,0.2,0.3\n0.2,0.3,0.4\n0.3,0.3,0.4\n",
			err: `x.csv:2:1: column "t": not a number "s"`},
		// --states chooses: c is not chosen, whatever its cells
		tcase{name: "states chosen", in: typoRows(50, numberAt(0, "0.1O")), opts: &Options{States: []string{"a", "b"}}, ignored: "c"},
		// --states names c: its first cell is an error, as before
		tcase{name: "states name it", in: typoRows(50, numberAt(0, "0.1O")), opts: &Options{States: []string{"a", "c"}},
			err: `x.csv:2:4: column "c": not a number "0.1O"`},
	)
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			opts := tc.opts
			if opts == nil {
				opts = &Options{}
			}
			o := *opts
			o.KeepHead, o.KeepEvents = true, true
			ds, err := ReadCSV(strings.NewReader(tc.in), "x.csv", &o)
			if tc.err != "" {
				var pe *ParseError
				if err == nil || err.Error() != tc.err || !errors.As(err, &pe) {
					t.Fatalf("err %v, want %s", err, tc.err)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			var ign []string
			for _, c := range ds.Ignored {
				ign = append(ign, c.Name)
			}
			if got := strings.Join(ign, ","); got != tc.ignored {
				t.Errorf("ignored %q, want %q", got, tc.ignored)
			}
			if len(ds.Runs) == 0 {
				t.Error("no runs")
			}
		})
	}
}

// TestFirstCellTypoStreamed: the streamed CSV reader gives the same error
// as ReadFile for a first cell that is a typo, with no states named and
// with them named (as screen and check name a certificate's), for a file
// streamed (CSVWindow -1) and one read whole (the default window).
func TestFirstCellTypoStreamed(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "x.csv")
	if err := os.WriteFile(p, []byte(typoRows(3000, numberAt(0, "0.1O"))), 0o644); err != nil {
		t.Fatal(err)
	}
	want := p + `:2:4: column "c": not a number "0.1O"`
	for _, opts := range []*Options{{}, {States: []string{"a", "b", "c"}}} {
		for _, so := range []*StreamOptions{{CSVWindow: -1}, {CSVWindow: -1, LateRuns: true}, {}} {
			t.Run(fmt.Sprintf("states=%v/window=%d/late=%v", opts.States, so.CSVWindow, so.LateRuns), func(t *testing.T) {
				if _, err := ReadFile(context.Background(), p, opts); err == nil || err.Error() != want {
					t.Errorf("ReadFile: err %v, want %s", err, want)
				}
				sf, err := NewStreamer(opts, so).Open(context.Background(), p)
				if err == nil {
					err = sf.Scan(context.Background(), func(int, []float64, [][]float64) error { return nil })
					sf.Close()
				}
				if err == nil || err.Error() != want {
					t.Errorf("Streamer: err %v, want %s", err, want)
				}
			})
		}
	}
}
