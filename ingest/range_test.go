package ingest

import (
	"errors"
	"math"
	"math/big"
	"strings"
	"testing"
)

// TestOutOfRangeCell: a number too large in magnitude for a float64 is a
// bad value wherever it stands, not text. In the first data row it made
// its column "not numeric" and the read went on without that state; now it
// is the same error, naming the line and column, as in any later row (and
// as a cell first filled after empty ones). The boundary is the largest
// float64, (2 - 2^-52)·2^1023 = 1.7976931348623157e308 [IEEE754]: a
// decimal more than half an ulp beyond it is ±Inf with ErrRange [strconv]
// (1.797693134862315808e308 is; 1.7976931348623158e308 rounds down to the
// largest float64 and is read).
func TestOutOfRangeCell(t *testing.T) {
	const tail = "0.1,0.9,-0.4\n0.2,0.8,-0.3\n0.3,0.7,-0.2\n"
	tie := halfUlpAboveMax()
	for _, tc := range []struct {
		name, in string
		opts     *Options
		msg      string // the whole message
	}{
		{"first row", "t,x,v\n0,1,1e400\n" + tail, nil,
			`x.csv:2:3: column "v": not a number: "1e400" is infinite or out of range`},
		{"first row, negative", "t,x,v\n0,1,-1e400\n" + tail, nil,
			`x.csv:2:3: column "v": not a number: "-1e400" is infinite or out of range`},
		{"first row, half an ulp past the largest", "t,x,v\n0,1,1.797693134862315808e308\n" + tail, nil,
			`x.csv:2:3: column "v": not a number: "1.797693134862315808e308" is infinite or out of range`},
		{"first row, the tie half an ulp past the largest", "t,x,v\n0,1," + tie + "\n" + tail, nil,
			`x.csv:2:3: column "v": not a number: "` + tie[:40] + `..." is infinite or out of range`},
		{"first row, in blanks", "t,x,v\n0,1, 1E+400 \n" + tail, nil,
			`x.csv:2:3: column "v": not a number: "1E+400" is infinite or out of range`},
		{"first row, quoted", "t,x,v\n0,1,\"1e400\"\n" + tail, nil,
			`x.csv:2:3: column "v": not a number: "1e400" is infinite or out of range`},
		{"first row, beside a text column", "t,note,x,v\n0,ok,1,1e400\n0.1,ok,0.9,-0.4\n0.2,,0.8,-0.3\n", nil,
			`x.csv:2:4: column "v": not a number: "1e400" is infinite or out of range`},
		{"first row, every state", "t,x,v\n0,1e400,-1e999\n" + tail, nil,
			`x.csv:2:2: column "x": not a number: "1e400" is infinite or out of range`},
		{"first row, after a comment", "# rig 3\nt,x,v\n\n0,1,1e400\n" + tail, nil,
			`x.csv:4:3: column "v": not a number: "1e400" is infinite or out of range`},
		{"first row, decimal comma", "t;x;v\n0;1,5;1e400\n0,1;0,9;-0,4\n", nil,
			`x.csv:2:3: column "v": not a number: "1e400" is infinite or out of range (the file's decimal commas read as points)`},
		{"first row, named state", "t,x,v\n0,1,1e400\n" + tail, &Options{States: []string{"x", "v"}},
			`x.csv:2:3: column "v": not a number: "1e400" is infinite or out of range`},
		{"first row, input", "t,x,v\n0,1,1e400\n" + tail, &Options{Inputs: []string{"v"}},
			`x.csv:2:3: column "v": not a number: "1e400" is infinite or out of range`},
		{"first row, time", "t,x,v\n1e400,1,2\n" + tail, nil,
			`x.csv:2:1: column "t": not a number: "1e400" is infinite or out of range`},
		{"later row", "t,x,v\n0,1,2\n0.1,0.9,-0.4\n0.2,0.8,1e400\n", nil,
			`x.csv:4:3: column "v": not a number: "1e400" is infinite or out of range`},
		{"first filled cell after empty ones", "t,x,v\n0,1,\n0.1,0.9,\n0.2,0.8,-1e400\n0.3,0.7,-0.2\n", nil,
			`x.csv:4:3: column "v": not a number: "-1e400" is infinite or out of range`},
	} {
		t.Run(tc.name, func(t *testing.T) {
			ds, err := ReadCSV(strings.NewReader(tc.in), "x.csv", tc.opts)
			if err == nil {
				t.Fatalf("read, states %v, ignored %v; want %s", ds.States, ds.Ignored, tc.msg)
			}
			var pe *ParseError
			if !errors.Is(err, ErrNotNumber) || !errors.As(err, &pe) {
				t.Errorf("err %T %v is not a *ParseError wrapping ErrNotNumber", err, err)
			}
			if err.Error() != tc.msg {
				t.Errorf("message\n got %s\nwant %s", err, tc.msg)
			}
		})
	}
}

// TestFirstRowSpecials: the first data row's cell decides a column's
// kind, and the spellings strconv accepts for the special values
// [strconv] behave there as in later rows: NaN (any case) is a missing
// sample of a numeric column, an infinity is a bad value, the largest
// float64 [IEEE754] and an underflow (rounded to zero) are numbers, and a
// word followed by numbers is a bad cell of a numeric column, an error
// there (TestFirstCellTypo has the rule).
func TestFirstRowSpecials(t *testing.T) {
	const tail = "0.1,0.9,-0.4\n0.2,0.8,-0.3\n0.3,0.7,-0.2\n"
	for _, c := range []string{"inf", "-Inf", "+INF", "Infinity", "-infinity"} {
		for _, in := range []string{"t,x,v\n0,1," + c + "\n" + tail, "t,x,v\n0,1,2\n0.1,0.9,-0.4\n0.2,0.8," + c + "\n"} {
			_, err := ReadCSV(strings.NewReader(in), "x.csv", nil)
			line := "2"
			if !strings.HasPrefix(in, "t,x,v\n0,1,"+c) {
				line = "4"
			}
			want := `x.csv:` + line + `:3: column "v": not a number: "` + c + `" is infinite or out of range`
			if err == nil || err.Error() != want {
				t.Errorf("%q: err = %v, want %s", in, err, want)
			}
		}
	}
	for _, tc := range []struct {
		name, cell string
		v          float64 // the cell's value, NaN for a missing sample; checked when err is ""
		err        string  // the error, for a cell that is not a number
	}{
		{"NaN", "NaN", math.NaN(), ""},
		{"nan", "nan", math.NaN(), ""},
		{"NAN", "NAN", math.NaN(), ""},
		{"largest float64", "1.7976931348623157e308", math.MaxFloat64, ""},
		{"rounds to the largest", "1.7976931348623158e308", math.MaxFloat64, ""},
		{"just below the tie", halfUlpAboveMax()[:308] + "1", math.MaxFloat64, ""},
		{"negative largest", "-1.7976931348623157e308", -math.MaxFloat64, ""},
		{"underflow", "1e-400", 0, ""},
		{"leading plus", "+2.5", 2.5, ""},
		{"word", "ok", 0, `x.csv:2:3: column "v": not a number "ok"`},
	} {
		t.Run(tc.name, func(t *testing.T) {
			ds, err := ReadCSV(strings.NewReader("t,x,v\n0,1,"+tc.cell+"\n"+tail), "x.csv", &Options{KeepEvents: true, KeepHead: true})
			if tc.err != "" {
				if err == nil || err.Error() != tc.err {
					t.Errorf("err %v, want %s", err, tc.err)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if len(ds.States) != 2 || len(ds.Ignored) != 0 {
				t.Fatalf("states %v, ignored %v; want x and v", ds.States, ds.Ignored)
			}
			if math.IsNaN(tc.v) { // a missing first sample: the run starts at the second row
				if len(ds.Runs) != 1 {
					t.Fatalf("%d runs, want 1", len(ds.Runs))
				}
				if r := ds.Runs[0]; r.T[0] != 0.1 || r.Len() != 3 {
					t.Errorf("run starts at %v with %d samples, want 0.1 and 3", r.T[0], r.Len())
				}
				return
			}
			if len(ds.Runs) == 0 {
				t.Fatal("no runs")
			}
			if r := ds.Runs[0]; r.T[0] != 0 || r.X[1][0] != tc.v {
				t.Errorf("first sample t %v, v %v; want 0, %v", r.T[0], r.X[1][0], tc.v)
			}
		})
	}
}

// halfUlpAboveMax is 2^1024 - 2^970, halfway between the largest float64
// and 2^1024, written out in its 309 decimal digits (exact: an integer).
// Ties round to even, which is 2^1024: an overflow [IEEE754].
func halfUlpAboveMax() string {
	v := new(big.Int).Lsh(big.NewInt(1), 1024)
	v.Sub(v, new(big.Int).Lsh(big.NewInt(1), 970))
	return v.String()
}

// TestNaNForms: a NaN as C's printf writes it ("-nan" from glibc for a
// NaN with its sign bit set, "-nan(ind)" from Microsoft's C library) is
// a missing sample, as "NaN" is, in the first data row (where it made the
// column text, silently), in a later row (where it stopped the read: "not
// a number") and in a column that starts empty. The forms are those of
// the C standard's strtod and fprintf [C99]; whether strtod reads a cell
// whole as NaN was checked, cell by cell, with glibc 2.36's strtod (the
// "whole" column, pasted here; Microsoft's "-nan(ind)" is from memory).
// Near misses are not numbers: followed by numbers, as here, they are
// bad cells of a numeric column, an error on their line wherever they are
// (the first row, the first filled cell, a later row).
func TestNaNForms(t *testing.T) {
	const tail = "0.1,0.9,-0.4\n0.2,0.8,-0.3\n0.3,0.7,-0.2\n"
	for _, tc := range []struct {
		cell  string
		whole bool // glibc's strtod reads the whole cell as a NaN
	}{
		{"nan", true}, {"NaN", true}, {"-nan", true}, {"+nan", true}, {"-NAN", true},
		{"-nan(ind)", true}, {"nan(0x8000)", true}, {"NaN()", true}, {"nan(_A9)", true},
		{"nan(", false}, {"nan(a b)", false}, {"nanx", false}, {"--nan", false}, {"-nan)", false},
	} {
		first := "t,x,v\n0,1," + tc.cell + "\n" + tail
		later := "t,x,v\n0,1,-0.5\n" + tail[:13] + "0.2,0.8," + tc.cell + "\n0.3,0.7,-0.2\n"
		// three numbers after the first filled cell: enough to judge it by (sniffFew)
		empty := "t,x,v\n0,1,\n0.1,0.9," + tc.cell + "\n0.2,0.8,-0.3\n0.3,0.7,-0.2\n0.4,0.6,-0.1\n"
		for _, in := range []string{first, later, empty} {
			ds, err := ReadCSV(strings.NewReader(in), "x.csv", &Options{KeepEvents: true, KeepHead: true})
			switch {
			case tc.whole:
				n := 3 // one row missing (two of five in empty)
				if err != nil {
					t.Errorf("%q: %v", in, err)
				} else if len(ds.States) != 2 || ds.Samples() != n {
					t.Errorf("%q: states %v, %d samples; want x and v, %d", in, ds.States, ds.Samples(), n)
				}
			default:
				line := map[string]string{first: "2", empty: "3", later: "4"}[in]
				want := `x.csv:` + line + `:3: column "v": not a number "` + tc.cell + `"`
				if err == nil || err.Error() != want {
					t.Errorf("%q: err = %v, want %s", in, err, want)
				}
			}
		}
	}
}
