package ingest

import (
	"context"
	"errors"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/apache/arrow/go/v15/arrow"
	"github.com/apache/arrow/go/v15/arrow/array"
	"github.com/apache/arrow/go/v15/arrow/memory"
)

// Expected values are written out by hand from the input text (common
// practice for parser tests, as in encoding/csv's reader_test.go); the
// short decimals must come back exactly.
func TestInputs(t *testing.T) {
	const shaker = "t [s],disp [mm],vel [mm/s],drive [N]\n0,1,2,0.5\n0.1,3,4,-0.5\n0.2,5,6,\n0.3,7,8,0.25\n0.4,9,10,0\n"
	type run struct {
		t    []float64
		x, u [][]float64
	}
	for _, tc := range []struct {
		name    string
		in      string
		opts    *Options
		states  []Column
		inputs  []Column
		runs    []run
		missing int
	}{
		{name: "default states leave the input out", in: shaker, opts: &Options{Inputs: []string{"drive"}},
			states: []Column{{"disp", "mm"}, {"vel", "mm/s"}}, inputs: []Column{{"drive", "N"}},
			// the empty drive cell at t = 0.2 is a missing sample: the run is split there, U with it
			runs: []run{
				{[]float64{0, 0.1}, [][]float64{{1, 3}, {2, 4}}, [][]float64{{0.5, -0.5}}},
				{[]float64{0.3, 0.4}, [][]float64{{7, 9}, {8, 10}}, [][]float64{{0.25, 0}}},
			}, missing: 1},
		{name: "named states and inputs, any order", in: shaker, opts: &Options{States: []string{"vel"}, Inputs: []string{"DISP"}},
			states: []Column{{"vel", "mm/s"}}, inputs: []Column{{"disp", "mm"}},
			runs: []run{{[]float64{0, 0.1, 0.2, 0.3, 0.4}, [][]float64{{2, 4, 6, 8, 10}}, [][]float64{{1, 3, 5, 7, 9}}}}},
		{name: "no inputs: no U", in: "t,a\n0,1\n1,2\n",
			states: []Column{{"a", ""}},
			runs:   []run{{[]float64{0, 1}, [][]float64{{1, 2}}, nil}}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			ds, err := ReadCSV(strings.NewReader(tc.in), "shaker.csv", tc.opts)
			if err != nil {
				t.Fatal(err)
			}
			checkDataset(t, ds)
			if !slices.Equal(ds.States, tc.states) || !slices.Equal(ds.Inputs, tc.inputs) {
				t.Fatalf("states %v inputs %v, want %v %v", ds.States, ds.Inputs, tc.states, tc.inputs)
			}
			if len(ds.Runs) != len(tc.runs) || ds.Missing != tc.missing {
				t.Fatalf("%d runs, %d missing; want %d, %d", len(ds.Runs), ds.Missing, len(tc.runs), tc.missing)
			}
			for i, want := range tc.runs {
				r := ds.Runs[i]
				if !slices.Equal(r.T, want.t) || !slices.EqualFunc(r.X, want.x, slices.Equal) ||
					!slices.EqualFunc(r.U, want.u, slices.Equal) || len(r.U) != len(want.u) {
					t.Errorf("run %d: T %v X %v U %v; want %v %v %v", i, r.T, r.X, r.U, want.t, want.x, want.u)
				}
			}
		})
	}
}

func TestInputErrors(t *testing.T) {
	const in = "t,disp,vel,drive,note\n0,1,2,3,a\n1,2,3,4,b\n"
	for _, tc := range []struct {
		name string
		opts *Options
		want error
		text string // in the one-line message
	}{
		{"input also a state", &Options{States: []string{"disp", "drive"}, Inputs: []string{"drive"}}, ErrStateAndInput, `"drive"`},
		{"no such column", &Options{Inputs: []string{"force"}}, ErrInputColumn, `"force"`},
		{"the time column", &Options{Inputs: []string{"t"}}, ErrInputColumn, "time column"},
		{"named twice", &Options{Inputs: []string{"drive", "drive"}}, ErrInputColumn, "twice"},
		{"a text column", &Options{Inputs: []string{"note"}}, ErrNotNumber, `"note"`},
		{"every column an input", &Options{Inputs: []string{"disp", "vel", "drive", "note"}}, ErrNoStates, "no state columns"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			in := in
			if tc.want == ErrNoStates {
				in = strings.ReplaceAll(strings.ReplaceAll(in, ",a\n", ",5\n"), ",b\n", ",6\n")
			}
			_, err := ReadCSV(strings.NewReader(in), "x.csv", tc.opts)
			var pe *ParseError
			if !errors.Is(err, tc.want) || !errors.As(err, &pe) {
				t.Fatalf("err = %v, want a *ParseError wrapping %v", err, tc.want)
			}
			if msg := err.Error(); !strings.Contains(msg, tc.text) || strings.Contains(msg, "\n") || strings.Contains(msg, "--inputs") {
				t.Errorf("message %q: want one line with %q and no flag name", msg, tc.text)
			}
		})
	}
}

func TestConstantInputWarns(t *testing.T) {
	dir := t.TempDir()
	// constant within each file but not over both: informative, no warning
	a := writeFile(t, dir, "a.csv", "t,x,u\n0,1,2\n1,2,2\n")
	b := writeFile(t, dir, "b.csv", "t,x,u\n0,1,3\n1,2,3\n")
	ds, err := Load(context.Background(), []string{a, b}, &Options{Inputs: []string{"u"}})
	if err != nil {
		t.Fatal(err)
	}
	if len(ds.Warnings) != 0 || len(ds.ConstantInputs()) != 0 {
		t.Errorf("warnings %q for an input that differs between runs", ds.Warnings)
	}
	ds, err = Load(context.Background(), []string{a}, &Options{Inputs: []string{"u"}})
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(ds.ConstantInputs(), []int{0}) || len(ds.Warnings) != 1 || len(ds.Inputs) != 1 || len(ds.Held) != 0 ||
		ds.Warnings[0] != "input u is constant (2 in every sample): its effect cannot be told from a constant term" {
		t.Errorf("constant input: warnings %q, ConstantInputs %v", ds.Warnings, ds.ConstantInputs())
	}
	// held: out of the inputs, into Held, with one warning that gives the
	// value with its unit both times; the other input stays, in order
	h := writeFile(t, dir, "h.csv", "t,x,u [V],w\n0,1,2.5,0\n1,2,2.5,1\n")
	ds, err = Load(context.Background(), []string{h}, &Options{Inputs: []string{"u", "w"}, HoldConstantInputs: true})
	if err != nil {
		t.Fatal(err)
	}
	want := "input u is constant (2.5 V in every sample): its effect cannot be told from a constant term, so it is taken as known, held at 2.5 V and folded into the states' equations (the model has no input u)"
	if len(ds.Warnings) != 1 || ds.Warnings[0] != want || len(ds.Inputs) != 1 || ds.Inputs[0].Name != "w" ||
		len(ds.Held) != 1 || ds.Held[0] != (HeldInput{Column: Column{Name: "u", Unit: "V"}, Value: 2.5}) ||
		len(ds.Runs[0].U) != 1 || !slices.Equal(ds.Runs[0].U[0], []float64{0, 1}) {
		t.Errorf("held: warnings %q, inputs %v, held %v, U %v", ds.Warnings, ds.Inputs, ds.Held, ds.Runs[0].U)
	}
	checkDataset(t, ds)
	// an input missing from one file names that file
	c := writeFile(t, dir, "c.csv", "t,x,v\n0,1,3\n1,2,3\n")
	_, err = Load(context.Background(), []string{a, c}, &Options{Inputs: []string{"u"}})
	var pe *ParseError
	if !errors.As(err, &pe) || pe.File != c || !errors.Is(err, ErrInputColumn) {
		t.Errorf("input missing from %s: err = %v", c, err)
	}
	// the same name with another unit does not join
	d := writeFile(t, dir, "d.csv", "t,x,u [V]\n0,1,3\n1,2,4\n")
	if _, err := Load(context.Background(), []string{a, d}, &Options{Inputs: []string{"u"}}); !errors.Is(err, ErrColumns) {
		t.Errorf("inputs u and u [V]: err = %v, want ErrColumns", err)
	}
}

func TestInputsParquet(t *testing.T) {
	mem := memory.NewGoAllocator()
	sc := arrow.NewSchema([]arrow.Field{
		{Name: "t [s]", Type: arrow.PrimitiveTypes.Float64},
		{Name: "drive [N]", Type: arrow.PrimitiveTypes.Float32, Nullable: true},
		{Name: "disp [mm]", Type: arrow.PrimitiveTypes.Float64},
	}, nil)
	b := array.NewRecordBuilder(mem, sc)
	defer b.Release()
	b.Field(0).(*array.Float64Builder).AppendValues([]float64{0, 1, 2, 3}, nil)
	b.Field(1).(*array.Float32Builder).AppendValues([]float32{0.5, 0, 0.25, -1}, []bool{true, false, true, true})
	b.Field(2).(*array.Float64Builder).AppendValues([]float64{4, 5, 6, 7}, nil)
	rec := b.NewRecord()
	defer rec.Release()
	path := filepath.Join(t.TempDir(), "shaker.parquet")
	writeArrowParquet(t, path, rec, 2)
	ds, err := ReadParquet(context.Background(), path, &Options{Inputs: []string{"drive"}})
	if err != nil {
		t.Fatal(err)
	}
	checkDataset(t, ds)
	if !slices.Equal(ds.States, []Column{{"disp", "mm"}}) || !slices.Equal(ds.Inputs, []Column{{"drive", "N"}}) {
		t.Fatalf("states %v inputs %v", ds.States, ds.Inputs)
	}
	// the null drive at t = 1 splits the run
	if len(ds.Runs) != 2 || !slices.Equal(ds.Runs[0].U[0], []float64{0.5}) || !slices.Equal(ds.Runs[1].U[0], []float64{0.25, -1}) ||
		!slices.Equal(ds.Runs[1].X[0], []float64{6, 7}) {
		t.Fatalf("runs %+v", ds.Runs)
	}
}

// TestRateWithTimeColumn: a rate and a time column both say when the
// samples were taken; given both, the read is refused naming the time
// column (the rate was ignored without a word before), in CSV and in
// Parquet alike. A rate without a time column still reads.
func TestRateWithTimeColumn(t *testing.T) {
	for _, tc := range []struct {
		name string
		in   string
		opts *Options
		want string // the whole message; "" means no error
	}{
		{"time column found by name", "time [s],a\n0,1\n0.01,2\n", &Options{Rate: 100}, `r.csv:1:1: column "time": not a readable log file: Options.Rate 100 is given, but this is a time column; leave out one of the two`},
		{"time column named", "a,clock [s]\n1,0\n2,0.01\n", &Options{Rate: 100, TimeCol: "clock"}, `r.csv:1:2: column "clock": not a readable log file: Options.Rate 100 is given, but this is a time column; leave out one of the two`},
		{"no time column", "a,b\n1,2\n2,3\n", &Options{Rate: 100}, ""},
	} {
		t.Run(tc.name, func(t *testing.T) {
			ds, err := ReadCSV(strings.NewReader(tc.in), "r.csv", tc.opts)
			switch {
			case tc.want == "" && err != nil:
				t.Fatal(err)
			case tc.want == "":
				if got := ds.Runs[0].T; !slices.Equal(got, []float64{0, 0.01}) {
					t.Errorf("times %v, want [0 0.01]", got)
				}
			case err == nil || !errors.Is(err, ErrFormat) || err.Error() != tc.want:
				t.Errorf("err = %v, want %s", err, tc.want)
			}
		})
	}
}

// TestRateWithTimeColumnParquet: the same refusal for a Parquet file.
func TestRateWithTimeColumnParquet(t *testing.T) {
	mem := memory.NewGoAllocator()
	sc := arrow.NewSchema([]arrow.Field{
		{Name: "t [s]", Type: arrow.PrimitiveTypes.Float64},
		{Name: "disp [mm]", Type: arrow.PrimitiveTypes.Float64},
	}, nil)
	b := array.NewRecordBuilder(mem, sc)
	defer b.Release()
	b.Field(0).(*array.Float64Builder).AppendValues([]float64{0, 1, 2}, nil)
	b.Field(1).(*array.Float64Builder).AppendValues([]float64{4, 5, 6}, nil)
	rec := b.NewRecord()
	defer rec.Release()
	path := filepath.Join(t.TempDir(), "rig.parquet")
	writeArrowParquet(t, path, rec, 1)
	_, err := ReadParquet(context.Background(), path, &Options{Rate: 100})
	if want := path + `:1:1: column "t": not a readable log file: Options.Rate 100 is given, but this is a time column; leave out one of the two`; err == nil || !errors.Is(err, ErrFormat) || err.Error() != want {
		t.Errorf("err = %v, want %s", err, want)
	}
}

// TestTimesText: the noise multiple of an event's warning stays short
// whatever the spike (written out by hand; common practice).
func TestTimesText(t *testing.T) {
	for _, tc := range []struct {
		x    float64
		want string
	}{
		{8, "8"}, {12.6, "13"}, {999999, "999999"}, {1e6, "1e+06"}, {5.78e301, "5.78e+301"},
	} {
		if got := timesText(tc.x); got != tc.want {
			t.Errorf("timesText(%g) = %q, want %q", tc.x, got, tc.want)
		}
	}
}
