package ingest

import (
	"bytes"
	"context"
	"errors"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
	"unicode/utf8"

	"github.com/apache/arrow/go/v15/arrow"
	"github.com/apache/arrow/go/v15/arrow/array"
	"github.com/apache/arrow/go/v15/arrow/memory"
)

// checkDataset asserts what every successful read promises.
func checkDataset(t *testing.T, ds *Dataset) {
	t.Helper()
	for _, r := range ds.Runs {
		if len(r.X) != len(ds.States) {
			t.Fatalf("run %s has %d states, dataset %d", r.Name, len(r.X), len(ds.States))
		}
		if len(r.U) != len(ds.Inputs) {
			t.Fatalf("run %s has %d inputs, dataset %d", r.Name, len(r.U), len(ds.Inputs))
		}
		for k, u := range r.U {
			if len(u) != len(r.T) {
				t.Fatalf("run %s: input %d has %d samples, time %d", r.Name, k, len(u), len(r.T))
			}
			for i, v := range u {
				if math.IsNaN(v) || math.IsInf(v, 0) {
					t.Fatalf("run %s: bad U[%d] at %d", r.Name, k, i)
				}
			}
		}
		for i := range r.T {
			if math.IsNaN(r.T[i]) || math.IsInf(r.T[i], 0) || (i > 0 && r.T[i] <= r.T[i-1]) {
				t.Fatalf("run %s: bad time %v at %d", r.Name, r.T[i], i)
			}
			for j := range r.X {
				if len(r.X[j]) != len(r.T) || math.IsNaN(r.X[j][i]) || math.IsInf(r.X[j][i], 0) {
					t.Fatalf("run %s: bad X[%d] at %d", r.Name, j, i)
				}
			}
		}
	}
}

func FuzzReadCSV(f *testing.F) {
	for _, s := range []string{
		"t,a\n0,1\n1,2\n",
		"\ufeff# c\r\n\"time [s]\";\"x (m)\"\r\n0;1e-3\r\n1;NaN\r\n2;3\r\n",
		"timestamp\ta\n2026-03-01T10:00:00+02:00\t1\n2026-03-01T10:00:01+02:00\t2\n",
		"run,t,a\nA,0,1\nB,0,2\nA,1,3\n",
		"t,a,note\n0,\"1.5\",\"a, b\"\n1,2,x\n",
		"t,a\n0,1\n0,2\n",
		"timestamp;a [mm, raw];b\n2026-11-30 08:00:00,5;1,5;\"2,25\"\n2026-11-30 08:00:01,5;1;NaN\n",
		"t\ta\n0\t1,5\n0,5\t2,5,1\n",
		"t,a,b\n0,1,-1e400\n1,2,3\n",
		"t,a,b,c\n0,1,,NaN\n1,2,1e309,inf\n",
		"t,a,b\n0,-nan,nan(ind)\n-nan,2,3\n2,nan(,4\n",
		"time,a,b [deg]\r\n# units\r\ns,rad,rad/s\r\n0,1,2\r\n1,2,3\r\n",
		"time;a;b\nISO8601;°;\n2026-11-30 08:00:00,5;1,5;2\n2026-11-30 08:00:01,5;1;3\n",
		// Windows-1252 text: a header, a units row, a run name; a byte it
		// leaves undefined; a cut UTF-8 sequence; UTF-16
		"Zeit [s];Temperatur [\xb0C];Weg [\xb5m]\n0;1,5;2\n0,1;1;3\n",
		"t,a,b\ns,\xb0C,\xb5m\n0,1,2\n1,2,3\n",
		"run,t,a,b\nPr\xfcf,0,1,2\nPr\xfcf,1,2,3\nB\x81,0,1,2\n",
		"t,a [\xe2\x82],b\n0,1,2\n1,2,3\n",
		"\xff\xfet\x00,\x00a\x00\n\x000\x00,\x001\x00\n\x00",
	} {
		f.Add([]byte(s), uint8(0))
	}
	// a resting head, a hit and a dropped sample, with an input column:
	// for the input, window, head and event modes
	var sb strings.Builder
	sb.WriteString("run,t,a,b\n")
	for i := range 60 {
		a := 0.0
		if i >= 30 {
			a = 5 * math.Cos(0.2*float64(i-30))
		}
		if i == 45 {
			a = 0
		}
		sb.WriteString("R," + ftoa(float64(i)*0.05) + "," + ftoa(a+1e-3*math.Sin(7.3*float64(i))) + "," + ftoa(float64(i%4)) + "\n")
	}
	for m := range uint8(8) {
		f.Add([]byte(sb.String()), m)
	}
	f.Add([]byte("t,a,b\n0,1,2\n1,2,2\n2,3,\n3,4,2\n"), uint8(4))
	f.Fuzz(func(t *testing.T, data []byte, mode uint8) {
		var opts *Options
		switch mode % 8 {
		case 1:
			opts = &Options{Rate: 100}
		case 2:
			opts = &Options{RunCol: "run"}
		case 3:
			opts = &Options{States: []string{"a"}}
		case 4:
			opts = &Options{Inputs: []string{"b"}}
		case 5: // a time window, and the resting-head trim and events
			opts = &Options{From: 0.5, To: 2}
		case 6:
			opts = &Options{States: []string{"a"}, Inputs: []string{"b"}, RunCol: "run", From: 1}
		case 7:
			opts = &Options{Inputs: []string{"b"}, KeepHead: true, KeepEvents: true, HoldConstantInputs: true}
		}
		ds, err := ReadCSV(bytes.NewReader(data), "f.csv", opts)
		if err != nil {
			var pe *ParseError
			if !errors.As(err, &pe) {
				t.Fatalf("error %T is not a *ParseError: %v", err, err)
			}
			if bytes.ContainsRune([]byte(err.Error()), '\n') {
				t.Fatalf("multi-line error %q", err)
			}
			return
		}
		checkDataset(t, ds)
		checkText(t, ds)
		if len(ds.Held) > 0 && (len(ds.Inputs) != 0 || len(ds.ConstantInputs()) != 0) {
			t.Fatalf("held %v, yet inputs %v (constant %v)", ds.Held, ds.Inputs, ds.ConstantInputs())
		}
	})
}

// checkText asserts that the names a read gives (columns, units, runs)
// are UTF-8 text, whatever the file's encoding.
func checkText(t *testing.T, ds *Dataset) {
	t.Helper()
	for _, cs := range [][]Column{ds.States, ds.Inputs, ds.Ignored, {ds.Time}} {
		for _, c := range cs {
			if !utf8.ValidString(c.Name) || !utf8.ValidString(c.Unit) {
				t.Fatalf("column %q [%q] is not UTF-8", c.Name, c.Unit)
			}
		}
	}
	for _, r := range ds.Runs {
		if !utf8.ValidString(r.Name) {
			t.Fatalf("run name %q is not UTF-8", r.Name)
		}
	}
}

func FuzzReadParquet(f *testing.F) {
	// Seeds stay small (a large seed makes the fuzzer spend its time
	// minimising): a 12-row file from Arrow's writer, in 3 row groups,
	// with a timestamp, a nullable float32 and an int64 column.
	opts := &Options{decodeBudget: time.Second} // a looping decoder is an error, quickly
	dir := f.TempDir()
	seed := filepath.Join(dir, "seed.parquet")
	writeArrowParquet(f, seed, smallRecord(12), 4)
	good, err := os.ReadFile(seed)
	if err != nil {
		f.Fatal(err)
	}
	f.Add(good)
	f.Add(good[:len(good)-20])
	f.Add([]byte("PAR1\x00\x00\x00\x00PAR1"))
	f.Fuzz(func(t *testing.T, data []byte) {
		p := filepath.Join(dir, "f.parquet")
		if err := os.WriteFile(p, data, 0o644); err != nil {
			t.Fatal(err)
		}
		ds, err := ReadParquet(context.Background(), p, opts)
		if err != nil {
			var pe *ParseError
			if !errors.As(err, &pe) {
				t.Fatalf("error %T is not a *ParseError: %v", err, err)
			}
			return
		}
		checkDataset(t, ds)
	})
}

// smallRecord builds n rows: stamp (timestamp, ms), x (float32, a null at
// row 2) and k (int64).
func smallRecord(n int) arrow.Record {
	sc := arrow.NewSchema([]arrow.Field{
		{Name: "stamp", Type: &arrow.TimestampType{Unit: arrow.Millisecond}},
		{Name: "x", Type: arrow.PrimitiveTypes.Float32, Nullable: true},
		{Name: "k", Type: arrow.PrimitiveTypes.Int64},
	}, nil)
	b := array.NewRecordBuilder(memory.NewGoAllocator(), sc)
	defer b.Release()
	for i := range n {
		b.Field(0).(*array.TimestampBuilder).Append(arrow.Timestamp(1_700_000_000_000 + int64(i)*5))
		if i == 2 {
			b.Field(1).(*array.Float32Builder).AppendNull()
		} else {
			b.Field(1).(*array.Float32Builder).Append(float32(i) / 8)
		}
		b.Field(2).(*array.Int64Builder).Append(int64(i * i))
	}
	return b.NewRecord()
}

func FuzzReadManifest(f *testing.F) {
	dir := f.TempDir()
	if err := os.WriteFile(filepath.Join(dir, "a.csv"), []byte("t,x\n0,1\n"), 0o644); err != nil {
		f.Fatal(err)
	}
	f.Add([]byte("path,run,split\na.csv,,fit\n"))
	f.Add([]byte("\ufeffpath,split\r\na.csv,holdout\r\n"))
	f.Add([]byte("path\n\"a.csv\"\nb.csv\n"))
	f.Add([]byte("path\n\"a\nb.csv\"\n")) // a quoted path with a newline: once a two-line error
	f.Fuzz(func(t *testing.T, data []byte) {
		p := filepath.Join(dir, "m.csv")
		if err := os.WriteFile(p, data, 0o644); err != nil {
			t.Fatal(err)
		}
		es, err := ReadManifest(p)
		if err != nil {
			var pe *ParseError
			var fe *fs.PathError
			if !errors.As(err, &pe) && !errors.As(err, &fe) {
				t.Fatalf("error %T is neither a *ParseError nor a *fs.PathError: %v", err, err)
			}
			if strings.ContainsRune(err.Error(), '\n') {
				t.Fatalf("multi-line error %q", err)
			}
			return
		}
		for _, e := range es {
			if e.Path == "" || (e.Split != "" && e.Split != "fit" && e.Split != "holdout") {
				t.Fatalf("bad entry %+v", e)
			}
		}
	})
}
