package ingest

import (
	"context"
	"errors"
	"io/fs"
	"os"
	"path/filepath"
	"testing"
	"time"

	"github.com/apache/arrow/go/v15/parquet/compress"
)

// FuzzStreamParquet: a streamed read of any bytes either fails with
// ReadFile's error, word for word, or gives ReadFile's runs; it never
// panics. The seeds are small plain and dictionary-encoded rig logs
// (streamed, not read whole: Window is negative); every input is read
// with the runs found at Open and as the first Scan gives them
// (StreamOptions.LateRuns).
func FuzzStreamParquet(f *testing.F) {
	opts := &Options{decodeBudget: time.Second}
	dir := f.TempDir()
	for i, dict := range []bool{false, true} {
		p := filepath.Join(dir, "seed.parquet")
		writeRigParquet(f, p, rigLog{n: 60, dt: 0.01, sd: 1e-3, hits: []int{30}, missing: []int{7}}, uint64(i), 16, dict, dict,
			compress.Codecs.Uncompressed)
		b, err := os.ReadFile(p)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		p := filepath.Join(t.TempDir(), "f.parquet")
		if err := os.WriteFile(p, data, 0o644); err != nil {
			t.Fatal(err)
		}
		want, werr := ReadFile(context.Background(), p, opts)
		for _, late := range []bool{false, true} {
			fuzzStreamOnce(t, p, opts, late, want, werr)
		}
	})
}

func fuzzStreamOnce(t *testing.T, p string, opts *Options, late bool, want *Dataset, werr error) {
	{
		s := NewStreamer(opts, &StreamOptions{Window: -1, LateRuns: late})
		sf, err := s.Open(context.Background(), p)
		if err != nil {
			var pe *ParseError
			var pathErr *fs.PathError
			if !errors.As(err, &pe) && !errors.As(err, &pathErr) {
				t.Fatalf("error %T is not a *ParseError: %v", err, err)
			}
			if werr == nil || werr.Error() != err.Error() {
				t.Fatalf("Open: %v\nReadFile: %v", err, werr)
			}
			return
		}
		defer sf.Close()
		if werr != nil {
			t.Fatalf("Open took what ReadFile refuses: %v", werr)
		}
		var n []int
		scan := func() error {
			n = make([]int, len(sf.Runs))
			return sf.Scan(context.Background(), func(k int, tt []float64, x [][]float64) error {
				for k >= len(n) { // late runs: found as they come
					n = append(n, 0)
				}
				n[k] += len(tt)
				return nil
			})
		}
		err = scan()
		if errors.Is(err, ErrRescan) {
			err = scan()
		}
		if err != nil {
			t.Fatalf("Scan: %v", err)
		}
		if len(sf.Runs) != len(want.Runs) {
			t.Fatalf("%d runs, ReadFile %d", len(sf.Runs), len(want.Runs))
		}
		for k, r := range want.Runs {
			if sf.Runs[k].Name != r.Name || n[k] != r.Len() || sf.Runs[k].Source != r.Source {
				t.Fatalf("run %d: %s %d samples %+v, ReadFile %s %d %+v", k, sf.Runs[k].Name, n[k], sf.Runs[k].Source, r.Name, r.Len(), r.Source)
			}
		}
	}
}
