package ingest

import (
	"context"
	"math"
	"path/filepath"
	"strconv"
	"testing"

	"github.com/apache/arrow/go/v15/parquet/compress"
)

// TestStreamEvenClock: pass 1 finds the clock even exactly when every
// three consecutive steps pass evenSteps (each sample's jump statistic
// then takes the even formula, so the detector skips clockCoef), for
// times i·dt, times read back from decimal text, one late step 1e-6
// longer, and one step of a whole missing row.
func TestStreamEvenClock(t *testing.T) {
	const n = 20000
	dir := t.TempDir()
	cases := []struct {
		name string
		time func(i int) float64
	}{
		{"i*dt", func(i int) float64 { return float64(i) * 0.001 }},
		{"decimal", func(i int) float64 {
			v, _ := strconv.ParseFloat(strconv.FormatFloat(float64(i)*0.001, 'f', 3, 64), 64)
			return v
		}},
		{"one late step", func(i int) float64 {
			if i >= 15000 {
				return float64(i)*0.001 + 1e-9
			}
			return float64(i) * 0.001
		}},
		{"a row left out", func(i int) float64 {
			if i >= 7000 {
				i++
			}
			return float64(i) * 0.001
		}},
	}
	for ci, c := range cases {
		tc := make([]float64, n)
		x := make([]float64, n)
		v := make([]float64, n)
		for i := range tc {
			tc[i] = c.time(i)
			x[i] = math.Sin(float64(i) * 1e-3)
			v[i] = math.Cos(float64(i) * 1e-3)
		}
		want := true
		for i := 3; i < n; i++ {
			if !evenSteps(tc[i-2]-tc[i-3], tc[i-1]-tc[i-2], tc[i]-tc[i-1]) {
				want = false
			}
		}
		p := filepath.Join(dir, "c"+strconv.Itoa(ci)+".parquet")
		writePlainCols(t, p, tc, x, v)
		sf, err := NewStreamer(nil, &StreamOptions{Window: -1, LateRuns: true}).Open(context.Background(), p)
		if err != nil {
			t.Fatal(err)
		}
		if sf.late == nil {
			t.Fatalf("%s: no plan left to the scan (read whole: %q)", c.name, sf.Whole)
		}
		if got := sf.late.even; got != want {
			t.Errorf("%s: even %v, want %v", c.name, got, want)
		}
		if c.name == "i*dt" && !want || c.name == "one late step" && want {
			t.Errorf("%s: evenSteps says %v: the case does not check what it names", c.name, want)
		}
		sf.Close()
	}
}

// TestStreamScanRuns: ScanRuns gives exactly the samples Scan gives of
// the runs selected, and none of the others, for Parquet (whose row
// groups outside the runs are not read) and CSV, for each single run,
// the first and last, and none.
func TestStreamScanRuns(t *testing.T) {
	dir := t.TempDir()
	g := rigLog{n: 30000, dt: 0.001, sd: 1e-3, hits: []int{9000, 21000}}
	pq := filepath.Join(dir, "r.parquet")
	writeRigParquet(t, pq, g, 5, 4096, false, false, compress.Codecs.Uncompressed)
	cs := filepath.Join(dir, "r.csv")
	writeRigCSV(t, cs, g, 5, 0)
	for _, p := range []string{pq, cs} {
		sf, err := NewStreamer(nil, &StreamOptions{Window: -1, CSVWindow: -1}).Open(context.Background(), p)
		if err != nil {
			t.Fatal(err)
		}
		if sf.Whole != "" || len(sf.Runs) < 3 {
			t.Fatalf("%s: read whole (%q) or %d runs: not the case checked", p, sf.Whole, len(sf.Runs))
		}
		all := make([][]float64, len(sf.Runs))
		collect := func(dst [][]float64) func(k int, tt []float64, x [][]float64) error {
			return func(k int, tt []float64, x [][]float64) error {
				dst[k] = append(dst[k], tt...)
				for j := range x {
					dst[k] = append(dst[k], x[j]...)
				}
				return nil
			}
		}
		if err := sf.Scan(context.Background(), collect(all)); err != nil {
			t.Fatal(err)
		}
		n := len(sf.Runs)
		sels := [][]int{{}, {0, n - 1}}
		for k := range n {
			sels = append(sels, []int{k})
		}
		for _, sel := range sels {
			want := map[int]bool{}
			for _, k := range sel {
				want[k] = true
			}
			got := make([][]float64, n)
			before := sf.Passes
			if err := sf.ScanRuns(context.Background(), func(k int) bool { return want[k] }, collect(got)); err != nil {
				t.Fatalf("%s %v: %v", p, sel, err)
			}
			if len(sel) > 0 && sf.Passes != before+1 {
				t.Errorf("%s %v: %d reads", p, sel, sf.Passes-before)
			}
			for k := range n {
				w := all[k]
				if !want[k] {
					w = nil
				}
				if len(got[k]) != len(w) {
					t.Fatalf("%s %v run %d: %d values, want %d", p, sel, k, len(got[k]), len(w))
				}
				for i := range w {
					if math.Float64bits(got[k][i]) != math.Float64bits(w[i]) {
						t.Fatalf("%s %v run %d value %d: %v, want %v", p, sel, k, i, got[k][i], w[i])
					}
				}
			}
		}
		sf.Close()
	}
}
