package ingest

import (
	"context"
	"errors"
	"fmt"
	"path/filepath"
	"strings"
	"testing"

	"github.com/apache/arrow/go/v15/parquet/compress"
)

// TestAverage: Options.Average replaces each run by the means of its
// blocks of k samples (the arithmetic mean: common practice), times,
// states and inputs alike, drops a last short block, records the block
// and warns once; a run too short for two blocks is an error naming it;
// a Streamer reads such a file whole, with the same runs as ReadFile.
func TestAverage(t *testing.T) {
	var b strings.Builder
	b.WriteString("t,x,u\n")
	for i := range 11 { // 11 samples: blocks of 3 leave 3 blocks, 2 left out
		fmt.Fprintf(&b, "%d,%d,%d\n", i, i*i, 2*i)
	}
	ds, err := ReadCSV(strings.NewReader(b.String()), "a.csv", &Options{Inputs: []string{"u"}, Average: 3, KeepHead: true, KeepEvents: true})
	if err != nil {
		t.Fatal(err)
	}
	r := ds.Runs[0]
	wantT := []float64{1, 4, 7}
	wantX := []float64{(0 + 1 + 4) / 3.0, (9 + 16 + 25) / 3.0, (36 + 49 + 64) / 3.0}
	wantU := []float64{2, 8, 14}
	if r.Len() != 3 || ds.Average != 3 {
		t.Fatalf("%d samples, Average %d; want 3 and 3", r.Len(), ds.Average)
	}
	for i := range wantT {
		if r.T[i] != wantT[i] || r.X[0][i] != wantX[i] || r.U[0][i] != wantU[i] {
			t.Errorf("block %d: t %v x %v u %v, want %v %v %v", i, r.T[i], r.X[0][i], r.U[0][i], wantT[i], wantX[i], wantU[i])
		}
	}
	found := 0
	for _, w := range ds.Warnings {
		if strings.Contains(w, "averaged in blocks of 3 samples (11 samples become 3)") {
			found++
		}
	}
	if found != 1 {
		t.Errorf("warnings %q: want one saying 11 samples become 3", ds.Warnings)
	}
	if _, err := ReadCSV(strings.NewReader(b.String()), "a.csv", &Options{Average: 6, KeepHead: true, KeepEvents: true}); !errors.Is(err, ErrEmpty) || !strings.Contains(err.Error(), "fewer than two blocks of 6") {
		t.Errorf("blocks of 6 of 11 samples: %v", err)
	}

	path := filepath.Join(t.TempDir(), "r.parquet")
	writeRigParquet(t, path, rigLog{n: 80000, dt: 0.001, sd: 1e-3, head: 500, hits: []int{30000}}, 2, 4096, false, false, compress.Codecs.Uncompressed)
	opts := &Options{Average: 8}
	want, err := ReadFile(context.Background(), path, opts)
	if err != nil {
		t.Fatal(err)
	}
	sf, err := NewStreamer(opts, &StreamOptions{Window: -1}).Open(context.Background(), path)
	if err != nil {
		t.Fatal(err)
	}
	defer sf.Close()
	if sf.Whole != "averaging" || sf.Dataset() == nil || sf.Dataset().Average != 8 {
		t.Fatalf("streamed with averaging: Whole %q", sf.Whole)
	}
	sameRuns(t, sf.Dataset().Runs, want.Runs)
	if len(want.Runs) < 2 {
		t.Fatalf("%d runs: the hit did not split the recording before averaging", len(want.Runs))
	}
}
