package ingest

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"
	"testing"
	"time"
)

// Expected values in these tests are written out by hand from the input
// text (common practice for parser tests, as in encoding/csv's own
// reader_test.go); no numeric tolerance applies: the numbers are short
// decimals that must come back exactly as strconv.ParseFloat reads them.
func TestReadCSVDialects(t *testing.T) {
	type run struct {
		name string
		t    []float64
		x    [][]float64
	}
	for _, tc := range []struct {
		name    string
		in      string
		opts    *Options
		states  []Column
		runs    []run
		gaps    int
		missing int
	}{
		{name: "comma",
			in:     "t,theta,omega\n0,1,2\n0.5,3,4\n",
			states: []Column{{"theta", ""}, {"omega", ""}},
			runs:   []run{{"x.csv", []float64{0, 0.5}, [][]float64{{1, 3}, {2, 4}}}}},
		{name: "semicolon BOM CRLF comments units quotes",
			in:     "\ufeff# rig 3\r\n# units in brackets\r\n\"Time [s]\";\"theta [rad]\";\"omega (rad/s)\"\r\n0;1e-3;-2\r\n# pause\r\n1;2E2;+3.5\r\n",
			states: []Column{{"theta", "rad"}, {"omega", "rad/s"}},
			runs:   []run{{"x.csv", []float64{0, 1}, [][]float64{{1e-3, 200}, {-2, 3.5}}}}},
		{name: "tab and blanks",
			in:     "time_s\ta\n 0 \t 1 \n1\t2\n\n2\t3\n",
			states: []Column{{"a", ""}},
			runs:   []run{{"x.csv", []float64{0, 1, 2}, [][]float64{{1, 2, 3}}}}},
		{name: "quoted data cells",
			in:     "t,a,note\n0,\"1.5\",\"a, b\"\n1,2,\"say \"\"hi\"\"\"\n",
			states: []Column{{"a", ""}},
			runs:   []run{{"x.csv", []float64{0, 1}, [][]float64{{1.5, 2}}}}},
		{name: "missing cells split the run",
			in:     "t,a\n0,1\n1,NaN\n2,3\n3,4\n4,\n5,6\n",
			states: []Column{{"a", ""}},
			runs: []run{{"x.csv", []float64{0}, [][]float64{{1}}}, {"x.csv~1", []float64{2, 3}, [][]float64{{3, 4}}},
				{"x.csv~2", []float64{5}, [][]float64{{6}}}},
			gaps: 2, missing: 2},
		{name: "time step jump splits the run",
			in:     "t,a\n0,1\n1,2\n2,3\n20,4\n21,5\n",
			states: []Column{{"a", ""}},
			runs:   []run{{"x.csv", []float64{0, 1, 2}, [][]float64{{1, 2, 3}}}, {"x.csv~1", []float64{20, 21}, [][]float64{{4, 5}}}},
			gaps:   1},
		{name: "rate, no time column",
			in:     "a,b\n1,2\n3,4\n5,6\n",
			opts:   &Options{Rate: 4},
			states: []Column{{"a", ""}, {"b", ""}},
			runs:   []run{{"x.csv", []float64{0, 0.25, 0.5}, [][]float64{{1, 3, 5}, {2, 4, 6}}}}},
		{name: "time-col and states",
			in:     "clock,a,b,c\n0,1,2,3\n1,4,5,6\n",
			opts:   &Options{TimeCol: "clock", States: []string{"c", "a"}},
			states: []Column{{"c", ""}, {"a", ""}},
			runs:   []run{{"x.csv", []float64{0, 1}, [][]float64{{3, 6}, {1, 4}}}}},
		{name: "run-col long format",
			in:     "run,t,a\nA,0,1\nA,1,2\nB,0,5\nB,1,6\nA,2,3\n",
			opts:   &Options{RunCol: "run"},
			states: []Column{{"a", ""}},
			runs:   []run{{"x.csv#A", []float64{0, 1, 2}, [][]float64{{1, 2, 3}}}, {"x.csv#B", []float64{0, 1}, [][]float64{{5, 6}}}}},
		{name: "text column ignored",
			in:     "t,mode,a\n0,idle,1\n1,run,2\n",
			states: []Column{{"a", ""}},
			runs:   []run{{"x.csv", []float64{0, 1}, [][]float64{{1, 2}}}}},
		{name: "ISO 8601 with zone offsets",
			// 10:00:00+02:00 is 08:00:00Z: the three rows are 0, 0.5 and 1.25 s apart
			in:     "timestamp,a\n2026-03-01T10:00:00+02:00,1\n2026-03-01T08:00:00.5Z,2\n2026-03-01 09:00:01.25+01:00,3\n",
			states: []Column{{"a", ""}},
			runs:   []run{{"x.csv", []float64{0, 0.5, 1.25}, [][]float64{{1, 2, 3}}}}},
		{name: "no final newline and trailing delimiter",
			in:     "t,a,\n0,1,\n1,2,",
			states: []Column{{"a", ""}},
			runs:   []run{{"x.csv", []float64{0, 1}, [][]float64{{1, 2}}}}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			ds, err := ReadCSV(strings.NewReader(tc.in), "x.csv", tc.opts)
			if err != nil {
				t.Fatal(err)
			}
			if !slices.Equal(ds.States, tc.states) {
				t.Errorf("states = %v, want %v", ds.States, tc.states)
			}
			if ds.Gaps != tc.gaps || ds.Missing != tc.missing {
				t.Errorf("gaps, missing = %d, %d, want %d, %d", ds.Gaps, ds.Missing, tc.gaps, tc.missing)
			}
			if len(ds.Runs) != len(tc.runs) {
				t.Fatalf("%d runs, want %d: %+v", len(ds.Runs), len(tc.runs), ds.Runs)
			}
			for i, w := range tc.runs {
				r := ds.Runs[i]
				if r.Name != w.name || !slices.Equal(r.T, w.t) {
					t.Errorf("run %d = %s %v, want %s %v", i, r.Name, r.T, w.name, w.t)
				}
				for j := range w.x {
					if !slices.Equal(r.X[j], w.x[j]) {
						t.Errorf("run %d X[%d] = %v, want %v", i, j, r.X[j], w.x[j])
					}
				}
			}
		})
	}
}

func TestReadCSVEpoch(t *testing.T) {
	ds, err := ReadCSV(strings.NewReader("time,a\n2026-03-01T10:00:00+02:00,1\n2026-03-01T10:00:01+02:00,2\n"), "x.csv", nil)
	if err != nil {
		t.Fatal(err)
	}
	want := time.Date(2026, 3, 1, 8, 0, 0, 0, time.UTC)
	if !ds.Runs[0].Epoch.Equal(want) {
		t.Errorf("epoch = %v, want %v", ds.Runs[0].Epoch, want)
	}
}

func TestReadCSVErrors(t *testing.T) {
	for _, tc := range []struct {
		name, in string
		opts     *Options
		err      error
		msg      string // the whole message
	}{
		{"empty", "", nil, ErrEmpty, "x.csv: no samples: no header line"},
		{"comments only", "# nothing\n\n", nil, ErrEmpty, "x.csv: no samples: no header line"},
		{"header only", "t,a\n", nil, ErrEmpty, "x.csv: no samples: a header but no data rows"},
		{"not a number", "t,a,b\n0,1,2\n1,2,3\n2,1.2.3,4\n", nil, ErrNotNumber, `x.csv:4:2: column "a": not a number "1.2.3"`},
		{"infinite", "t,a\n0,1\n1,inf\n", nil, ErrNotNumber, `x.csv:3:2: column "a": not a number: "inf" is infinite or out of range`},
		{"ragged long", "t,a\n0,1\n1,2,3\n", nil, ErrRagged, "x.csv:3:3: wrong number of fields: 3, the header has 2"},
		{"ragged short", "t,a,b\n0,1,2\n1,2\n", nil, ErrRagged, "x.csv:3:2: wrong number of fields: 2, the header has 3"},
		{"time repeats", "t,a\n0,1\n1,2\n1,3\n", nil, ErrTimeOrder, `x.csv:4:1: column "t": time does not increase: repeats (1 after 1 on line 3)`},
		{"time goes back", "t,a\n0,1\n# c\n2,2\n1,3\n", nil, ErrTimeOrder, `x.csv:5:1: column "t": time does not increase: goes back (1 after 2 on line 4)`},
		{"all missing", "t,a,b\n0,1,\n1,2,NaN\n", nil, ErrAllMissing, `x.csv: column "b": every cell is missing`},
		{"no time", "a,b\n1,2\n", nil, ErrNoTime, "x.csv: no time column (name one with Options.TimeCol, or give Options.Rate)"},
		{"unknown time-col", "a,b\n1,2\n", &Options{TimeCol: "clock"}, ErrNoTime, `x.csv: no time column (name one with Options.TimeCol, or give Options.Rate): Options.TimeCol "clock" is not a column`},
		{"unknown state", "t,a\n1,2\n", &Options{States: []string{"b"}}, ErrNoStates, `x.csv: no state columns: Options.States names "b", which is not a column`},
		{"binary", "t,a\n\x00\x01\x02\xff", nil, ErrFormat, "x.csv: not a readable log file: binary data, not text (a NUL byte on line 2): not a text log"},
		// 0xFF 0xFE alone would be Windows-1252 text (ÿþ); 0x9D is undefined there [CP1252]
		{"header neither UTF-8 nor Windows-1252", "t,\xff\x9d\n1,2\n", nil, ErrFormat, `x.csv:1:2: not a readable log file: header cell "\xff\x9d" is neither UTF-8 nor Windows-1252 (Latin-1) text (byte 0x9D at byte 2 of the cell)`},
		{"decimal comma, then a bad cell", "t;a\n0;1,5\n1;2,5,1\n", nil, ErrNotNumber, `x.csv:3:2: column "a": not a number "2.5.1" (the file's decimal commas read as points)`},
		{"unbalanced quote", "t,a\n0,\"1\n", nil, ErrFormat, "x.csv:2: not a readable log file: unbalanced quote"},
		// a quoted delimiter in a text column: 3 fields, not the 4 the
		// commas count ([RFC4180] section 2, rule 6); the row loop must
		// not take the line by its commas
		{"ragged with a quoted delimiter", "t,note,tag,a\n0,x,y,1\n1,\"p,q\",2\n", nil, ErrRagged, "x.csv:3:3: wrong number of fields: 3, the header has 4"},
		{"bad date", "time,a\n2026-03-01T10:00:00Z,1\nyesterday,2\n", nil, ErrNotNumber, `x.csv:3:1: column "time": not a number: "yesterday" is not an ISO 8601 date-time`},
		{"duplicate column", "t,a,a\n0,1,2\n", nil, ErrFormat, `x.csv:1:3: column "a": not a readable log file: name repeats column 2`},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := ReadCSV(strings.NewReader(tc.in), "x.csv", tc.opts)
			if !errors.Is(err, tc.err) {
				t.Fatalf("err = %v, want %v", err, tc.err)
			}
			var pe *ParseError
			if !errors.As(err, &pe) {
				t.Errorf("err %T is not a *ParseError", err)
			}
			if err.Error() != tc.msg {
				t.Errorf("message\n got %s\nwant %s", err, tc.msg)
			}
		})
	}
}

// TestReadCSVBlocks reads a file of many blocks, with a quoted row, a
// comment and CRLF ends in the middle, and compares with the values it
// was written from.
func TestReadCSVBlocks(t *testing.T) {
	var sb strings.Builder
	sb.WriteString("t,a,b\r\n")
	n := 150000
	if testing.Short() {
		n = 90000 // still more than one 1 MiB block
	}
	for i := range n {
		switch {
		case i == 70000:
			sb.WriteString("# operator note\r\n")
		case i == 80001:
			sb.WriteString("\"" + ftoa(float64(i)/100) + "\",\"1\",2\r\n")
			continue
		}
		sb.WriteString(ftoa(float64(i)/100) + "," + ftoa(math.Sin(float64(i))) + "," + ftoa(float64(i%7)) + "\r\n")
	}
	// row 80001 is a one-sample spike in a; kept here (this test is about parsing)
	ds, err := ReadCSV(strings.NewReader(sb.String()), "big.csv", &Options{KeepEvents: true})
	if err != nil {
		t.Fatal(err)
	}
	if len(ds.Runs) != 1 || ds.Runs[0].Len() != n {
		t.Fatalf("runs %d, samples %d, want 1, %d", len(ds.Runs), ds.Samples(), n)
	}
	r := ds.Runs[0]
	for i := range n {
		wa, wb := math.Sin(float64(i)), float64(i%7)
		if i == 80001 {
			wa, wb = 1, 2
		}
		if r.T[i] != atof(ftoa(float64(i)/100)) || r.X[0][i] != atof(ftoa(wa)) || r.X[1][i] != wb {
			t.Fatalf("row %d = %v %v %v", i, r.T[i], r.X[0][i], r.X[1][i])
		}
	}
	// an error far into the file names its line: row i is on line i+2, plus
	// one for the comment before row 70000; row n-49950 is 100050 (t =
	// 1000.5) in the full test and 40050 under -short
	k := n - 49950
	line := k + 2
	if k > 70000 {
		line++
	}
	tk := ftoa(float64(k) / 100)
	bad := strings.Replace(sb.String(), "\r\n"+tk+",", "\r\n"+tk+",x", 1)
	if bad == sb.String() {
		t.Fatalf("row %d (t = %s) not found to spoil", k, tk)
	}
	_, err = ReadCSV(strings.NewReader(bad), "big.csv", nil)
	if want := fmt.Sprintf(`big.csv:%d:2: column "a": not a number "x`, line); err == nil || !strings.HasPrefix(err.Error(), want) {
		t.Errorf("err = %v, want prefix %s", err, want)
	}
}

// TestReadCSVQuotedNote: a text column (ignored) whose cells are now and
// then quoted and hold the delimiter or a doubled quote. The rows around
// them are plain and taken by the fast row path; the quoted ones go to
// the general path, which reads the quotes ([RFC4180] section 2, rules
// 6 and 7).
func TestReadCSVQuotedNote(t *testing.T) {
	var sb strings.Builder
	sb.WriteString("t,a,note,b\n")
	const n = 3000
	for i := range n {
		note := "ok"
		switch i % 500 {
		case 7:
			note = `"rig, bumped"`
		case 8:
			note = `"said ""stop"", then, went on"`
		case 9:
			note = `""`
		}
		fmt.Fprintf(&sb, "%s,%s,%s,%d\n", ftoa(float64(i)/100), ftoa(math.Sin(float64(i))), note, i%5)
	}
	ds, err := ReadCSV(strings.NewReader(sb.String()), "notes.csv", &Options{KeepEvents: true, KeepHead: true})
	if err != nil {
		t.Fatal(err)
	}
	if len(ds.Runs) != 1 || ds.Runs[0].Len() != n || len(ds.States) != 2 {
		t.Fatalf("runs %d, samples %d, states %v; want 1, %d, [a b]", len(ds.Runs), ds.Samples(), ds.States, n)
	}
	r := ds.Runs[0]
	for i := range n {
		if r.T[i] != atof(ftoa(float64(i)/100)) || r.X[0][i] != atof(ftoa(math.Sin(float64(i)))) || r.X[1][i] != float64(i%5) {
			t.Fatalf("row %d = %v %v %v", i, r.T[i], r.X[0][i], r.X[1][i])
		}
	}
}

// TestReadCSVSparseNote: a notes column the logger leaves empty until an
// operator types something (here at row 2000, with a delimiter inside
// quotes) is a text column, as it would be had the first row held the
// note: it is ignored, the states are read whole. Before, the empty first
// cell made it a state and the note stopped the read ("not a number").
// A column that stays empty through the look-ahead and a column of
// numbers that starts empty are still states.
func TestReadCSVSparseNote(t *testing.T) {
	var sb strings.Builder
	sb.WriteString("t,a,note,b,c\n")
	const n = 3000
	for i := range n {
		note, c := "", ""
		if i == 2000 {
			note = `"kick, hammer"`
		}
		if i >= 10 {
			c = ftoa(float64(i % 7))
		}
		fmt.Fprintf(&sb, "%s,%s,%s,%d,%s\n", ftoa(float64(i)/100), ftoa(math.Sin(float64(i))), note, i%5, c)
	}
	ds, err := ReadCSV(strings.NewReader(sb.String()), "sparse.csv", &Options{KeepEvents: true, KeepHead: true})
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, s := range ds.States {
		names = append(names, s.Name)
	}
	if strings.Join(names, ",") != "a,b,c" || len(ds.Ignored) != 1 || ds.Ignored[0].Name != "note" {
		t.Fatalf("states %v, ignored %v; want a,b,c and note", names, ds.Ignored)
	}
	if ds.Samples() != n-10 {
		t.Errorf("%d samples, want %d (the rows where c is empty split off as missing)", ds.Samples(), n-10)
	}
}
