package ingest

import (
	"bytes"
	"context"
	"errors"
	"os"
	"path/filepath"
	"slices"
	"testing"
	"time"

	"github.com/apache/arrow/go/v15/arrow"
	"github.com/apache/arrow/go/v15/arrow/array"
	"github.com/apache/arrow/go/v15/arrow/memory"
	"github.com/apache/arrow/go/v15/parquet"
	"github.com/apache/arrow/go/v15/parquet/pqarrow"
	"gonum.org/v1/gonum/floats/scalar"
)

// TestReadParquetIndependent: testdata/indep.parquet was written by
// github.com/parquet-go/parquet-go (an implementation independent of the
// Arrow reader used here; see testdata/pqgo, "go run . -out .."), in three
// row groups with nulls, float32, int32 and int64 columns. It must read
// back to exactly the numbers of testdata/indep.csv, written by the same
// program with strconv's shortest round-trip format.
func TestReadParquetIndependent(t *testing.T) {
	ctx := context.Background()
	// the count column is a sawtooth, whose resets are steps far beyond
	// its (zero) noise; kept whole here, as this test is about parsing
	keep := &Options{KeepEvents: true, KeepHead: true}
	pq, err := ReadFile(ctx, "testdata/indep.parquet", keep)
	if err != nil {
		t.Fatal(err)
	}
	cs, err := ReadFile(ctx, "testdata/indep.csv", keep)
	if err != nil {
		t.Fatal(err)
	}
	sameDataset(t, pq, cs)
	if pq.Missing != 5 || pq.Gaps != 5 || len(pq.Runs) != 6 {
		t.Errorf("missing %d, gaps %d, runs %d; want 5, 5, 6", pq.Missing, pq.Gaps, len(pq.Runs))
	}
}

func sameDataset(t *testing.T, a, b *Dataset) {
	t.Helper()
	if !slices.Equal(a.States, b.States) || a.Gaps != b.Gaps || a.Missing != b.Missing || len(a.Runs) != len(b.Runs) {
		t.Fatalf("datasets differ: %v %d %d %d vs %v %d %d %d", a.States, a.Gaps, a.Missing, len(a.Runs),
			b.States, b.Gaps, b.Missing, len(b.Runs))
	}
	for i := range a.Runs {
		ra, rb := a.Runs[i], b.Runs[i]
		if !slices.Equal(ra.T, rb.T) {
			t.Fatalf("run %d: times differ", i)
		}
		for j := range ra.X {
			if !slices.Equal(ra.X[j], rb.X[j]) {
				t.Fatalf("run %d, state %d differs", i, j)
			}
		}
	}
}

// writeArrowParquet writes columns with Arrow's own writer, in row groups
// of rg rows.
func writeArrowParquet(t testing.TB, path string, rec arrow.Record, rg int64) {
	t.Helper()
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	tbl := array.NewTableFromRecords(rec.Schema(), []arrow.Record{rec})
	defer tbl.Release()
	props := parquet.NewWriterProperties(parquet.WithMaxRowGroupLength(rg))
	if err := pqarrow.WriteTable(tbl, f, rg, props, pqarrow.DefaultWriterProps()); err != nil {
		t.Fatal(err)
	}
}

func TestReadParquetTypes(t *testing.T) {
	mem := memory.NewGoAllocator()
	sc := arrow.NewSchema([]arrow.Field{
		{Name: "stamp", Type: &arrow.TimestampType{Unit: arrow.Millisecond, TimeZone: "UTC"}},
		{Name: "theta [rad]", Type: arrow.PrimitiveTypes.Float32, Nullable: true},
		{Name: "n", Type: arrow.PrimitiveTypes.Int32},
		{Name: "big", Type: arrow.PrimitiveTypes.Int64},
		{Name: "label", Type: arrow.BinaryTypes.String},
	}, nil)
	b := array.NewRecordBuilder(mem, sc)
	defer b.Release()
	t0 := time.Date(2026, 5, 1, 12, 0, 0, 0, time.UTC)
	const n = 10
	for i := range n {
		b.Field(0).(*array.TimestampBuilder).Append(arrow.Timestamp(t0.Add(time.Duration(i) * 10 * time.Millisecond).UnixMilli()))
		if i == 4 {
			b.Field(1).(*array.Float32Builder).AppendNull()
		} else {
			b.Field(1).(*array.Float32Builder).Append(float32(i) / 4)
		}
		b.Field(2).(*array.Int32Builder).Append(int32(-i))
		b.Field(3).(*array.Int64Builder).Append(int64(i) << 40)
		b.Field(4).(*array.StringBuilder).Append("x")
	}
	rec := b.NewRecord()
	defer rec.Release()
	path := filepath.Join(t.TempDir(), "a.parquet")
	writeArrowParquet(t, path, rec, 3) // 4 row groups
	ds, err := ReadParquet(context.Background(), path, nil)
	if err != nil {
		t.Fatal(err)
	}
	if want := []Column{{"theta", "rad"}, {"n", ""}, {"big", ""}}; !slices.Equal(ds.States, want) {
		t.Fatalf("states %v, want %v", ds.States, want)
	}
	if len(ds.Runs) != 2 || ds.Missing != 1 || ds.Gaps != 1 {
		t.Fatalf("runs %d missing %d gaps %d", len(ds.Runs), ds.Missing, ds.Gaps)
	}
	r := ds.Runs[1]
	// rows 5..9: 0.05 s steps of 10 ms from the first sample (ms -> s is exact to 1 ulp)
	for k, i := range []int{5, 6, 7, 8, 9} {
		if !scalar.EqualWithinAbs(r.T[k], float64(i)*0.01, 1e-15) || r.X[0][k] != float64(i)/4 || r.X[1][k] != float64(-i) || r.X[2][k] != float64(int64(i)<<40) {
			t.Errorf("row %d: %v %v %v %v", i, r.T[k], r.X[0][k], r.X[1][k], r.X[2][k])
		}
	}
	if !r.Epoch.Equal(t0) || r.Source.Line != 6 {
		t.Errorf("epoch %v line %d", r.Epoch, r.Source.Line)
	}
	// the string column serves as --run-col
	ds, err = ReadParquet(context.Background(), path, &Options{RunCol: "label"})
	if err != nil || ds.Runs[0].Name != "a.parquet#x" {
		t.Fatalf("run-col: %v %v", err, ds)
	}
}

func TestReadParquetBad(t *testing.T) {
	good, err := os.ReadFile("testdata/indep.parquet")
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	for _, tc := range []struct {
		name string
		data []byte
	}{
		{"empty", nil},
		{"text", []byte("t,a\n0,1\n")},
		{"truncated", good[:len(good)/2]},
		{"no footer", good[:len(good)-8]},
		{"flipped body", flip(good, 4, len(good)/2)},
		{"magic only", []byte("PAR1PAR1")},
	} {
		t.Run(tc.name, func(t *testing.T) {
			p := filepath.Join(dir, tc.name+".parquet")
			if err := os.WriteFile(p, tc.data, 0o644); err != nil {
				t.Fatal(err)
			}
			_, err := ReadParquet(context.Background(), p, nil)
			var pe *ParseError
			if err == nil || !errors.As(err, &pe) {
				t.Fatalf("err = %v, want a *ParseError", err)
			}
		})
	}
}

func flip(b []byte, from, to int) []byte {
	c := bytes.Clone(b)
	for i := from; i < to; i += 7 {
		c[i] ^= 0x5a
	}
	return c
}

// TestReadParquetPaths: the direct column chunk reader and the general
// pqarrow path give identical data sets on the independent parquet-go
// file and on Arrow-written files (nulls, float32, int32, int64,
// timestamps in ms, a text --run-col, several row groups).
func TestReadParquetPaths(t *testing.T) {
	path := filepath.Join(t.TempDir(), "types.parquet")
	rec := smallRecord(40)
	defer rec.Release()
	writeArrowParquet(t, path, rec, 7)
	for _, tc := range []struct {
		file string
		opts *Options
	}{
		{"testdata/indep.parquet", nil},
		{path, nil},
		{path, &Options{RunCol: "k", States: []string{"x"}}},
	} {
		read := func(viaArrow bool) *Dataset {
			var o Options
			if tc.opts != nil {
				o = *tc.opts
			}
			o.viaArrow = viaArrow
			ds, err := ReadParquet(context.Background(), tc.file, &o)
			if err != nil {
				t.Fatalf("%s (via arrow %v): %v", tc.file, viaArrow, err)
			}
			return ds
		}
		a, d := read(true), read(false)
		sameDataset(t, d, a)
		for i := range a.Runs {
			if a.Runs[i].Name != d.Runs[i].Name || a.Runs[i].Source != d.Runs[i].Source || !a.Runs[i].Epoch.Equal(d.Runs[i].Epoch) {
				t.Errorf("%s run %d: %q %v %v vs %q %v %v", tc.file, i, d.Runs[i].Name, d.Runs[i].Source, d.Runs[i].Epoch,
					a.Runs[i].Name, a.Runs[i].Source, a.Runs[i].Epoch)
			}
		}
	}
}
