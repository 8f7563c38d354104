package ingest

import (
	"context"
	"errors"
	"fmt"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
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
	fuzzStreamWith(NewStreamer, t, p, opts, &StreamOptions{Window: -1, LateRuns: late}, want, werr)
	// every pass reading the file again (the default holds a small one)
	fuzzStreamWith(NewStreamer, t, p, opts, &StreamOptions{Window: -1, LateRuns: late, Hold: -1}, want, werr)
}

// fuzzStreamWith is fuzzStreamOnce with the Streamer made by newS from
// opts and so (so.Tap is set here).
func fuzzStreamWith(newS func(*Options, *StreamOptions) *Streamer, t *testing.T, p string, opts *Options, so *StreamOptions,
	want *Dataset, werr error) {
	{
		tap := &recTap{}
		so := *so
		so.Tap = tap
		s := newS(opts, &so)
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
		var xs [][]float64 // each run's samples, state by state after one another
		scan := func() error {
			n, xs = make([]int, len(sf.Runs)), make([][]float64, len(sf.Runs))
			return sf.Scan(context.Background(), func(k int, tt []float64, x [][]float64) error {
				for k >= len(n) { // late runs: found as they come
					n, xs = append(n, 0), append(xs, nil)
				}
				n[k] += len(tt)
				for i := range tt {
					for j := range x {
						xs[k] = append(xs[k], x[j][i])
					}
				}
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
		// the columns, and the warning of a file read as Windows-1252
		if !slices.Equal(sf.States, want.States) {
			t.Fatalf("states %q, ReadFile %q", sf.States, want.States)
		}
		if a, b := encodingWarnings(sf.Warnings), encodingWarnings(want.Warnings); !slices.Equal(a, b) {
			t.Fatalf("encoding warnings %q, ReadFile %q", a, b)
		}
		for k, r := range want.Runs {
			if sf.Runs[k].Name != r.Name || n[k] != r.Len() || sf.Runs[k].Source != r.Source {
				t.Fatalf("run %d: %s %d samples %+v, ReadFile %s %d %+v", k, sf.Runs[k].Name, n[k], sf.Runs[k].Source, r.Name, r.Len(), r.Source)
			}
		}
		if sf.Dataset() != nil {
			return // read whole: not streamed, shown to no tap
		}
		// the tap saw the file's rows, and a run's samples are its rows
		if tap.starts != 1 || tap.bad != "" {
			t.Fatalf("tap started %d times: %s", tap.starts, tap.bad)
		}
		for k := range sf.Runs {
			a, b := sf.Runs[k].Rows()
			if a < 0 || b > len(tap.rows) || b-a != n[k] {
				t.Fatalf("run %d: rows %d..%d of %d shown, %d samples", k, a, b, len(tap.rows), n[k])
			}
			var w []float64
			for _, row := range tap.rows[a:b] {
				w = append(w, row...)
			}
			for i := range w {
				if math.Float64bits(w[i]) != math.Float64bits(xs[k][i]) {
					t.Fatalf("run %d: value %d is %v, %v in the rows shown", k, i, xs[k][i], w[i])
				}
			}
		}
	}
}

// recTap is a BlockTap that keeps the rows shown (each row's states).
type recTap struct {
	starts int
	rows   [][]float64
	bad    string
}

func (r *recTap) Start(file string, rows int, exact bool, states int) {
	r.starts++
	r.rows = r.rows[:0]
}

func (r *recTap) Block(row0 int, t []float64, x [][]float64) {
	if row0 != len(r.rows) {
		r.bad = fmt.Sprintf("block at row %d after %d rows", row0, len(r.rows))
	}
	for i := range t {
		row := make([]float64, len(x))
		for j := range x {
			row[j] = x[j][i]
		}
		r.rows = append(r.rows, row)
	}
}

// encodingWarnings are the warnings of a CSV file's text read as
// Windows-1252.
func encodingWarnings(ws []string) []string {
	var out []string
	for _, w := range ws {
		if strings.Contains(w, textCP1252) {
			out = append(out, w)
		}
	}
	return out
}
