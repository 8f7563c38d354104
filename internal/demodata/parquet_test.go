package demodata_test

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"slices"
	"testing"

	"basin.example/ingest"
	"basin.example/internal/demodata"
)

// TestParquetSameAsCSV reads one run written in both formats with basin's
// readers: the numbers must agree bit for bit (the Parquet values are the
// CSV decimals parsed with strconv, the IEEE 754 nearest double).
func TestParquetSameAsCSV(t *testing.T) {
	runs := generate(t, 1, &demodata.Options{Runs: 2, Leaving: 1, Bursts: -1, Duration: 2})
	dir := t.TempDir()
	for i := range runs {
		r := &runs[i]
		var c, p bytes.Buffer
		if err := r.WriteCSV(&c); err != nil {
			t.Fatal(err)
		}
		if err := r.WriteParquet(&p); err != nil {
			t.Fatal(err)
		}
		pq := filepath.Join(dir, r.ParquetName())
		os.WriteFile(pq, p.Bytes(), 0o644)
		a, err := ingest.ReadCSV(&c, r.File, nil)
		if err != nil {
			t.Fatal(err)
		}
		b, err := ingest.ReadParquet(context.Background(), pq, nil)
		if err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(a.States, b.States) || len(a.Runs) != 1 || len(b.Runs) != 1 {
			t.Fatalf("%s: states %v vs %v, runs %d vs %d", r.File, a.States, b.States, len(a.Runs), len(b.Runs))
		}
		ra, rb := a.Runs[0], b.Runs[0]
		if !slices.Equal(ra.T, rb.T) || !slices.Equal(ra.X[0], rb.X[0]) || !slices.Equal(ra.X[1], rb.X[1]) {
			t.Errorf("%s: CSV and Parquet values differ", r.File)
		}
		if len(ra.T) != len(r.T) {
			t.Errorf("%s: %d samples read, %d written", r.File, len(ra.T), len(r.T))
		}
	}
}

// TestWriteDirFormats writes the data set both ways and loads each
// directory with ingest.Load: same runs, same numbers; truth.json is not
// read as a log.
func TestWriteDirFormats(t *testing.T) {
	ctx := context.Background()
	opts := &demodata.Options{Runs: 4, Leaving: 1, Bursts: 1, Duration: 2}
	a, b := t.TempDir(), t.TempDir()
	ta, err := demodata.WriteDir(ctx, a, 3, opts)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := demodata.WriteParquetDir(ctx, b, 3, opts); err != nil {
		t.Fatal(err)
	}
	da, err := ingest.Load(ctx, []string{a}, nil)
	if err != nil {
		t.Fatal(err)
	}
	db, err := ingest.Load(ctx, []string{b}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(da.Runs) != 4 || len(db.Runs) != 4 || len(ta.Leaving) != 1 {
		t.Fatalf("runs %d and %d, leaving %v", len(da.Runs), len(db.Runs), ta.Leaving)
	}
	for i := range da.Runs {
		ra, rb := da.Runs[i], db.Runs[i]
		if !slices.Equal(ra.T, rb.T) || !slices.Equal(ra.X[0], rb.X[0]) || !slices.Equal(ra.X[1], rb.X[1]) {
			t.Errorf("run %d: CSV and Parquet directories differ", i)
		}
		if filepath.Base(ra.Source.File) != ta.Runs[i].File || filepath.Base(rb.Source.File) != ta.Runs[i].Parquet {
			t.Errorf("run %d: files %s, %s; truth %s, %s", i, ra.Source.File, rb.Source.File, ta.Runs[i].File, ta.Runs[i].Parquet)
		}
	}
}
