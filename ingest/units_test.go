package ingest

import (
	"context"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
)

// unitRows is n data rows of time, pitch, pitch_rate joined by sep, the
// time i*dt written as time(i): pitch and pitch_rate are a decaying
// swing, never at rest, so that no resting start is trimmed.
func unitRows(n int, sep string, time func(i int) string) string {
	var b strings.Builder
	for i := range n {
		p := 0.5 * math.Exp(-0.1*float64(i)) * math.Cos(0.3*float64(i))
		fmt.Fprintf(&b, "%s%s%.6f%s%.6f\n", time(i), sep, p, sep, -0.3*p)
	}
	return b.String()
}

func seconds(i int) string { return fmt.Sprintf("%.2f", float64(i)/100) }

// TestUnitsRow: a row of units under a header without them gives each
// column its unit, and the data start on the line after it. A units row
// is the common practice of data loggers ([UnitsRow]); its cells are
// split as [RFC4180] has them. The expected units, first lines and messages are written out by
// hand from the input text; a first data row that is not a units row
// gives the error it gave before (the first-cell rule is
// [MajorityType]).
func TestUnitsRow(t *testing.T) {
	const n = 40
	type tcase struct {
		name  string
		in    string
		opts  *Options
		time  Column   // the dataset's time column
		units []string // the states' units, in order
		line  int      // the first sample's line
		t1    float64  // the second sample's time, in seconds
		err   string   // the error, "" for none
	}
	rows := unitRows(n, ",", seconds)
	cases := []tcase{
		{name: "units row", in: "time,pitch,pitch_rate\ns,rad,rad/s\n" + rows,
			time: Column{"time", "s"}, units: []string{"rad", "rad/s"}, line: 3, t1: 0.01},
		{name: "blanks and quotes", in: "time,pitch,pitch_rate\n s , \"rad\" ,\"rad/s\"\n" + rows,
			time: Column{"time", "s"}, units: []string{"rad", "rad/s"}, line: 3, t1: 0.01},
		{name: "brackets, an empty cell, a dash", in: "time,pitch,pitch_rate\n[s],,(-)\n" + rows,
			time: Column{"time", "s"}, units: []string{"", "-"}, line: 3, t1: 0.01},
		{name: "non-ASCII units", in: "time,pitch,pitch_rate\ns,°,µrad/s²\n" + rows,
			time: Column{"time", "s"}, units: []string{"°", "µrad/s²"}, line: 3, t1: 0.01},
		{name: "header units win", in: "time,pitch [deg],pitch_rate\ns,rad,rad/s\n" + rows,
			time: Column{"time", "s"}, units: []string{"deg", "rad/s"}, line: 3, t1: 0.01},
		{name: "milliseconds converted", in: "time,pitch,pitch_rate\nms,rad,rad/s\n" + unitRows(n, ",", func(i int) string { return fmt.Sprint(10 * i) }),
			time: Column{"time", "s"}, units: []string{"rad", "rad/s"}, line: 3, t1: 0.01},
		{name: "comment lines", in: "# logger 2.1\ntime,pitch,pitch_rate\n# units:\n\ns,rad,rad/s\n# start\n" + rows,
			time: Column{"time", "s"}, units: []string{"rad", "rad/s"}, line: 7, t1: 0.01},
		{name: "CRLF", in: strings.ReplaceAll("time,pitch,pitch_rate\ns,rad,rad/s\n"+rows, "\n", "\r\n"),
			time: Column{"time", "s"}, units: []string{"rad", "rad/s"}, line: 3, t1: 0.01},
		{name: "semicolon, decimal comma", in: strings.ReplaceAll("time;pitch;pitch_rate\ns;rad;rad/s\n"+unitRows(n, ";", seconds), ".", ","),
			time: Column{"time", "s"}, units: []string{"rad", "rad/s"}, line: 3, t1: 0.01},
		{name: "ISO 8601 time", in: "time,pitch,pitch_rate\nISO8601,rad,rad/s\n" + unitRows(n, ",", func(i int) string {
			return fmt.Sprintf("2026-05-01T10:00:00.%02dZ", i)
		}), time: Column{"time", "ISO8601"}, units: []string{"rad", "rad/s"}, line: 3, t1: 0.01},
		{name: "date-time format as unit", in: "time;pitch;pitch_rate\nyyyy-mm-dd hh:mm:ss;rad;rad/s\n" + strings.ReplaceAll(unitRows(n, ";", func(i int) string {
			return fmt.Sprintf("2026-05-01 10:00:%02d.00", i)
		}), ".", ","), time: Column{"time", "yyyy-mm-dd hh:mm:ss"}, units: []string{"rad", "rad/s"}, line: 3, t1: 1},
		// later errors keep the file's own line numbers
		{name: "bad cell after a units row", in: "time,pitch,pitch_rate\ns,rad,rad/s\n" + strings.Replace(rows, "0.03,", "0.03,0.1O", 1),
			err: `x.csv:6:2: column "pitch": not a number "0.1O0.230250"`},
		// not units rows: the errors of before (the same messages as the
		// reader without units rows gave on these inputs)
		{name: "typo in one cell", in: "time,pitch,pitch_rate\n" + strings.Replace(rows, "0.500000", "0.5OOOOO", 1),
			err: `x.csv:2:2: column "pitch": not a number "0.5OOOOO"`},
		{name: "a number among the units", in: "time,pitch,pitch_rate\ns,rad,1\n" + rows,
			err: `x.csv:2:1: column "time": not a number "s"`},
		{name: "every header cell has a unit", in: "time [s],pitch [rad],pitch_rate [rad/s]\ns,rad,rad/s\n" + rows,
			err: `x.csv:2:1: column "time": not a number "s"`},
		{name: "no time after it", in: "time,pitch,pitch_rate\ns,rad,rad/s\nstart,0.1,0.2\n" + rows,
			err: `x.csv:2:1: column "time": not a number "s"`},
		{name: "a cell too long", in: "time,pitch,pitch_rate\ns,rad,radians per second!\n" + rows,
			err: `x.csv:2:1: column "time": not a number "s"`},
		{name: "a second row of names", in: "time,pitch,pitch_rate\nTime,Pitch,Pitch rate\n" + rows,
			err: `x.csv:2:1: column "time": not a number "Time"`},
		{name: "units row, no data", in: "time,pitch,pitch_rate\ns,rad,rad/s\n",
			err: `x.csv:2:2: column "pitch": not a number "rad"`},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			ds, err := ReadCSV(strings.NewReader(tc.in), "x.csv", tc.opts)
			if tc.err != "" {
				if err == nil || err.Error() != tc.err {
					t.Fatalf("err %v, want %s", err, tc.err)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if ds.Time != tc.time {
				t.Errorf("time column %+v, want %+v", ds.Time, tc.time)
			}
			if len(ds.States) != len(tc.units) {
				t.Fatalf("states %+v, want units %q", ds.States, tc.units)
			}
			for j, s := range ds.States {
				if s.Unit != tc.units[j] {
					t.Errorf("state %s: unit %q, want %q", s.Name, s.Unit, tc.units[j])
				}
			}
			if len(ds.Runs) != 1 || ds.Runs[0].Len() != n {
				t.Fatalf("%d runs, want 1 of %d samples", len(ds.Runs), n)
			}
			r := ds.Runs[0]
			if r.Source.Line != tc.line {
				t.Errorf("first sample on line %d, want %d", r.Source.Line, tc.line)
			}
			// the written cells, to the 1e-6 they are rounded to
			if p := 0.5 * math.Exp(-0.1) * math.Cos(0.3); !scalar.EqualWithinAbs(r.X[0][1], p, 1e-6) || !scalar.EqualWithinAbs(r.T[1]-r.T[0], tc.t1, 1e-9) {
				t.Errorf("second sample t=%g pitch=%g, want t=%g pitch=%g", r.T[1]-r.T[0], r.X[0][1], tc.t1, p)
			}
		})
	}
}

// TestStreamUnitsRow: a streamed read of a log with a units row gives the
// runs, states and time column of the whole read.
func TestStreamUnitsRow(t *testing.T) {
	g := rigLog{n: 60000, dt: 0.001, sd: 1e-3, head: 3000, hits: []int{9000, 41000}, spike: 15000, gapAt: 25000,
		missing: []int{5000, 5001, 12345, 59999}}
	dir := t.TempDir()
	path := filepath.Join(dir, "units.csv")
	writeRigCSV(t, path, g, 5, 0)
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	const head = "time [s],disp [mm],vel [mm/s],slow\n"
	if !strings.Contains(string(b), head) {
		t.Fatalf("the rig log's header is not %q", head)
	}
	b = []byte(strings.Replace(string(b), head, "time,disp,vel,slow\n# units\ns,mm,mm/s,\n", 1))
	if err := os.WriteFile(path, b, 0o644); err != nil {
		t.Fatal(err)
	}
	want, err := ReadFile(context.Background(), path, &Options{})
	if err != nil {
		t.Fatal(err)
	}
	if want.Time != (Column{"time", "s"}) || len(want.States) != 3 || want.States[0].Unit != "mm" || want.States[1].Unit != "mm/s" || want.States[2].Unit != "" {
		t.Fatalf("whole read: time %+v, states %+v", want.Time, want.States)
	}
	if len(want.Runs) < 3 {
		t.Fatalf("%d runs: the log lost its features", len(want.Runs))
	}
	sf, got := streamRuns(t, path, &Options{}, &StreamOptions{CSVWindow: -1})
	if sf.Whole != "" {
		t.Fatalf("read whole (%s), not streamed", sf.Whole)
	}
	sameRuns(t, got, want.Runs)
	if sf.Time != want.Time || fmt.Sprint(sf.States) != fmt.Sprint(want.States) {
		t.Errorf("streamed time %+v, states %+v; whole %+v, %+v", sf.Time, sf.States, want.Time, want.States)
	}
}
