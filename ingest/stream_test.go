package ingest

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/apache/arrow/go/v15/arrow"
	"github.com/apache/arrow/go/v15/arrow/array"
	"github.com/apache/arrow/go/v15/arrow/memory"
	"github.com/apache/arrow/go/v15/parquet"
	"github.com/apache/arrow/go/v15/parquet/compress"
	"github.com/apache/arrow/go/v15/parquet/pqarrow"
)

// rigLog is a logged damped oscillator (two states, displacement and
// velocity, plus a slow third) with what rigs put in logs: a resting
// head, hammer hits (a velocity step, a kink in displacement), a spike,
// a time gap, missing cells, Gaussian noise. The values are invented
// test data; what is checked is that streaming gives ReadFile's runs.
type rigLog struct {
	n       int
	head    int     // resting samples at the start
	hits    []int   // samples where the velocity jumps
	spike   int     // a one-sample spike in displacement (0: none)
	gapAt   int     // the time jumps before this sample (0: none)
	missing []int   // rows with a missing displacement
	sd      float64 // noise
	dt      float64
	jitter  float64 // relative jitter of the time step
}

func (g rigLog) columns(seed uint64) (t, x, v, s []float64) {
	rng := rand.New(rand.NewPCG(seed, 0))
	const w, zeta = 2 * math.Pi, 0.05
	xs, vs := 1.0, 0.0
	tt := 0.0
	for i := range g.n {
		if i > 0 {
			tt += g.dt * (1 + g.jitter*(rng.Float64()-0.5))
		}
		if i == g.gapAt && g.gapAt > 0 {
			tt += 40 * g.dt
		}
		for _, h := range g.hits {
			if i == h {
				vs += 8
			}
		}
		xi, vi := xs, vs
		if i < g.head {
			xi, vi = 0, 0
		} else {
			// semi-implicit Euler step of x'' = -w^2 x - 2 zeta w x'
			vs += g.dt * (-w*w*xs - 2*zeta*w*vs)
			xs += g.dt * vs
		}
		if i == g.spike && g.spike > 0 {
			xi += 3
		}
		t = append(t, tt)
		x = append(x, xi+g.sd*rng.NormFloat64())
		v = append(v, vi+g.sd*rng.NormFloat64())
		si := 0.1 * math.Sin(0.3*(tt-float64(g.head)*g.dt))
		if i < g.head {
			si = 0
		}
		s = append(s, si+g.sd*rng.NormFloat64())
	}
	for _, m := range g.missing {
		x[m] = math.NaN()
	}
	return t, x, v, s
}

// writeRigParquet writes the log with Arrow's writer in row groups of rg
// rows; missing displacements are nulls when nulls is set, NaN values
// otherwise.
func writeRigParquet(t testing.TB, path string, g rigLog, seed uint64, rg int64, dict, nulls bool, codec compress.Compression) {
	t.Helper()
	tc, x, v, s := g.columns(seed)
	sc := arrow.NewSchema([]arrow.Field{
		{Name: "time [s]", Type: arrow.PrimitiveTypes.Float64},
		{Name: "disp [mm]", Type: arrow.PrimitiveTypes.Float64, Nullable: nulls},
		{Name: "vel [mm/s]", Type: arrow.PrimitiveTypes.Float64},
		{Name: "slow", Type: arrow.PrimitiveTypes.Float64},
	}, nil)
	b := array.NewRecordBuilder(memory.NewGoAllocator(), sc)
	defer b.Release()
	for i := range tc {
		b.Field(0).(*array.Float64Builder).Append(tc[i])
		if nulls && math.IsNaN(x[i]) {
			b.Field(1).(*array.Float64Builder).AppendNull()
		} else {
			b.Field(1).(*array.Float64Builder).Append(x[i])
		}
		b.Field(2).(*array.Float64Builder).Append(v[i])
		b.Field(3).(*array.Float64Builder).Append(s[i])
	}
	rec := b.NewRecord()
	defer rec.Release()
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	tbl := array.NewTableFromRecords(sc, []arrow.Record{rec})
	defer tbl.Release()
	props := parquet.NewWriterProperties(parquet.WithMaxRowGroupLength(rg), parquet.WithDictionaryDefault(dict),
		parquet.WithCompression(codec))
	if err := pqarrow.WriteTable(tbl, f, rg, props, pqarrow.DefaultWriterProps()); err != nil {
		t.Fatal(err)
	}
}

// streamRuns opens path with a Streamer and collects its runs' samples
// through Scan.
func streamRuns(t *testing.T, path string, opts *Options, so *StreamOptions) (*StreamFile, []Run) {
	t.Helper()
	s := NewStreamer(opts, so)
	sf, err := s.Open(context.Background(), path)
	if err != nil {
		t.Fatalf("Open: %v", err)
	}
	defer sf.Close()
	runs, err := scanRuns(sf)
	if err != nil {
		t.Fatalf("Scan: %v", err)
	}
	for k, r := range sf.Runs {
		if r.Samples != len(runs[k].T) {
			t.Errorf("run %s: %d samples planned, %d scanned", r.Name, r.Samples, len(runs[k].T))
		}
	}
	return sf, runs
}

// scanRuns collects the samples of sf's planned runs through Scan; for
// a file whose runs come late (StreamOptions.LateRuns) as Scan gives
// them, checking that each run is in sf.Runs by its first sample and
// that the runs come in order, and scanning again after ErrRescan.
func scanRuns(sf *StreamFile) ([]Run, error) {
	late := sf.Late()
	runs := make([]Run, len(sf.Runs))
	for k, r := range sf.Runs {
		runs[k] = Run{Name: r.Name, Source: r.Source, Gaps: r.Gaps, Events: r.Events, X: make([][]float64, len(sf.States))}
	}
	err := sf.Scan(context.Background(), func(k int, tt []float64, x [][]float64) error {
		if late {
			if k != len(runs) && k != len(runs)-1 {
				return fmt.Errorf("run %d given after %d runs", k, len(runs))
			}
			if k >= len(sf.Runs) {
				return fmt.Errorf("run %d given before it is in the file's runs", k)
			}
			if k == len(runs) {
				runs = append(runs, Run{X: make([][]float64, len(x))})
			}
		}
		runs[k].T = append(runs[k].T, tt...)
		for j := range x {
			runs[k].X[j] = append(runs[k].X[j], x[j]...)
		}
		return nil
	})
	if errors.Is(err, ErrRescan) {
		return scanRuns(sf)
	}
	if late && err == nil {
		if len(runs) != len(sf.Runs) {
			return nil, fmt.Errorf("%d runs given, %d in the file's runs", len(runs), len(sf.Runs))
		}
		for k, r := range sf.Runs {
			runs[k].Name, runs[k].Source, runs[k].Gaps, runs[k].Events = r.Name, r.Source, r.Gaps, r.Events
		}
	}
	return runs, err
}

// sameRuns compares runs field by field and sample by sample (bit for
// bit: the same samples of the same file).
func sameRuns(t *testing.T, got, want []Run) {
	t.Helper()
	if len(got) != len(want) {
		var gn, wn []string
		for _, r := range got {
			gn = append(gn, fmt.Sprintf("%s(%d)", r.Name, r.Len()))
		}
		for _, r := range want {
			wn = append(wn, fmt.Sprintf("%s(%d)", r.Name, r.Len()))
		}
		t.Fatalf("%d runs %v, ReadFile %d %v", len(got), gn, len(want), wn)
	}
	for k := range want {
		g, w := &got[k], &want[k]
		if g.Name != w.Name || g.Source != w.Source || g.Gaps != w.Gaps || g.Events != w.Events || g.Len() != w.Len() {
			t.Errorf("run %d: %s %+v gaps %d events %d, %d samples; ReadFile %s %+v gaps %d events %d, %d samples",
				k, g.Name, g.Source, g.Gaps, g.Events, g.Len(), w.Name, w.Source, w.Gaps, w.Events, w.Len())
			continue
		}
		for i := range w.T {
			if math.Float64bits(g.T[i]) != math.Float64bits(w.T[i]) {
				t.Errorf("run %s: t[%d] = %v, ReadFile %v", w.Name, i, g.T[i], w.T[i])
				break
			}
		}
		for j := range w.X {
			for i := range w.X[j] {
				if math.Float64bits(g.X[j][i]) != math.Float64bits(w.X[j][i]) {
					t.Errorf("run %s: x%d[%d] = %v, ReadFile %v", w.Name, j, i, g.X[j][i], w.X[j][i])
					break
				}
			}
		}
	}
}

// TestStreamSameRuns: a streamed Parquet file gives ReadFile's runs
// (names, first lines, gap and event counts, samples) for logs with
// resting heads, hammer hits, spikes, gaps and missing cells, in row
// groups smaller than, across and larger than those features, plain or
// dictionary encoded, compressed or not.
func TestStreamSameRuns(t *testing.T) {
	base := rigLog{n: 30000, dt: 0.001, sd: 1e-3}
	logs := []struct {
		name string
		g    rigLog
		opts Options
	}{
		{"plain decay", base, Options{}},
		{"head, hits, spike, gap, missing", rigLog{n: 30000, dt: 0.001, sd: 1e-3, head: 3000, hits: []int{9000, 21000},
			spike: 15000, gapAt: 25000, missing: []int{5000, 5001, 12345, 29999}}, Options{}},
		{"jittered steps", rigLog{n: 20000, dt: 0.002, sd: 1e-3, jitter: 0.2, head: 500, hits: []int{7000}}, Options{}},
		{"keep head", rigLog{n: 20000, dt: 0.001, sd: 1e-3, head: 2000, hits: []int{9000}}, Options{KeepHead: true}},
		{"keep events", rigLog{n: 20000, dt: 0.001, sd: 1e-3, head: 2000, hits: []int{9000}}, Options{KeepEvents: true}},
		{"keep both", rigLog{n: 20000, dt: 0.001, sd: 1e-3, head: 2000, hits: []int{9000}, gapAt: 15000},
			Options{KeepHead: true, KeepEvents: true}},
		{"no noise", rigLog{n: 12000, dt: 0.001, head: 1000, hits: []int{6000}}, Options{}},
		{"missing at row-group edges", rigLog{n: 20000, dt: 0.001, sd: 1e-3, missing: []int{0, 4095, 4096, 8191, 19999}, gapAt: 8192},
			Options{}},
		{"long head", rigLog{n: 100000, dt: 0.001, sd: 1e-3, head: 70000}, Options{}},
		{"min piece", rigLog{n: 20000, dt: 0.001, sd: 1e-3, gapAt: 300}, Options{MinPiece: 500}},
	}
	layouts := []struct {
		rg          int64
		dict, nulls bool
		codec       compress.Compression
	}{
		{517, false, false, compress.Codecs.Uncompressed},
		{4096, false, true, compress.Codecs.Uncompressed},
		{4096, true, false, compress.Codecs.Snappy},
		{1 << 16, false, true, compress.Codecs.Snappy},
	}
	dir := t.TempDir()
	for li, lg := range logs {
		for _, ly := range layouts {
			name := fmt.Sprintf("%s/rg=%d,dict=%v,nulls=%v,%v", lg.name, ly.rg, ly.dict, ly.nulls, ly.codec)
			t.Run(name, func(t *testing.T) {
				path := filepath.Join(dir, fmt.Sprintf("log%d-%d-%v-%v-%v.parquet", li, ly.rg, ly.dict, ly.nulls, ly.codec))
				writeRigParquet(t, path, lg.g, uint64(li), ly.rg, ly.dict, ly.nulls, ly.codec)
				opts := lg.opts
				want, err := ReadFile(context.Background(), path, &opts)
				if err != nil {
					t.Fatal(err)
				}
				sf, got := streamRuns(t, path, &opts, &StreamOptions{Window: -1})
				// allowed to read whole: a head longer than maxStreamHead, a
				// minimum piece length (the runs must still be ReadFile's)
				if sf.Whole != "" && lg.name != "long head" && lg.opts.MinPiece == 0 {
					t.Fatalf("read whole (%s), not streamed", sf.Whole)
				}
				sameRuns(t, got, want.Runs)
				if lg.opts.MinPiece > 0 && (want.ShortPieces != 1 || len(sf.Warnings) != len(want.Warnings)) {
					t.Errorf("%d short pieces, warnings %q, want 1 and %q", want.ShortPieces, sf.Warnings, want.Warnings)
				}
				if len(want.Runs) == 0 {
					t.Fatal("no runs")
				}
				// decoding one row group ahead on another goroutine
				_, got = streamRuns(t, path, &opts, &StreamOptions{Window: -1, Prefetch: true})
				sameRuns(t, got, want.Runs)
				// every pass decoding the file again, nothing held
				hsf, got := streamRuns(t, path, &opts, &StreamOptions{Window: -1, Hold: -1})
				sameRuns(t, got, want.Runs)
				if sf.Whole == "" && (!sf.Held() || hsf.Held()) {
					t.Errorf("held by default %v, with Hold -1 %v", sf.Held(), hsf.Held())
				}
				// the runs found as the first Scan gives them, then a
				// second Scan of the runs found
				for _, pre := range []bool{false, true} {
					hold := int64(0)
					if pre {
						hold = -1
					}
					lsf, err := NewStreamer(&opts, &StreamOptions{Window: -1, LateRuns: true, Prefetch: pre, Hold: hold}).Open(context.Background(), path)
					if err != nil {
						t.Fatal(err)
					}
					if lsf.Whole == "" && len(want.Runs) > 0 && !lsf.Late() && !(opts.KeepHead && opts.KeepEvents) {
						t.Errorf("streamed with late runs, but the runs are found at Open (%d passes)", lsf.Passes)
					}
					for range 2 {
						got, err := scanRuns(lsf)
						if err != nil {
							t.Fatal(err)
						}
						sameRuns(t, got, want.Runs)
					}
					if lsf.Whole == "" && !(opts.KeepHead && opts.KeepEvents) && lsf.Passes != sf.Passes {
						t.Errorf("late runs: %d passes for 2 scans, runs found at Open: %d for 1 (one pass saved)", lsf.Passes, sf.Passes)
					}
					lsf.Close()
				}
				t.Logf("%d runs, %d gaps, %d events, %d heads, %d passes", len(want.Runs), want.Gaps, len(want.Events), len(want.Heads), sf.Passes)
			})
		}
	}
}

// writeRigCSV writes the log as CSV, with a comment line every lines
// rows (0: none) and missing displacements as empty cells.
func writeRigCSV(t testing.TB, path string, g rigLog, seed uint64, comments int) {
	t.Helper()
	tc, x, v, s := g.columns(seed)
	var b strings.Builder
	b.WriteString("# rig log\ntime [s],disp [mm],vel [mm/s],slow\n")
	for i := range tc {
		if comments > 0 && i%comments == comments-1 {
			b.WriteString("# marker\n")
		}
		xs := ftoa(x[i])
		if math.IsNaN(x[i]) {
			xs = ""
		}
		b.WriteString(ftoa(tc[i]) + "," + xs + "," + ftoa(v[i]) + "," + ftoa(s[i]) + "\n")
	}
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
}

// TestStreamSameRunsCSV: a streamed CSV file (parsed once per pass, in
// blocks) gives ReadFile's runs, line numbers included, with comment
// lines, a time unit to convert and a rate instead of a time column.
func TestStreamSameRunsCSV(t *testing.T) {
	g := rigLog{n: 60000, dt: 0.001, sd: 1e-3, head: 3000, hits: []int{9000, 41000}, spike: 15000, gapAt: 25000,
		missing: []int{5000, 5001, 12345, 59999}}
	dir := t.TempDir()
	for _, tc := range []struct {
		name     string
		comments int
		edit     func(string) string
		opts     Options
	}{
		{"plain", 0, nil, Options{}},
		{"comments", 7777, nil, Options{}},
		{"milliseconds", 0, func(s string) string { return strings.Replace(s, "time [s]", "time [ms]", 1) }, Options{}},
		{"rate", 0, func(s string) string { return strings.Replace(s, "time [s]", "clock", 1) },
			Options{Rate: 1000, States: []string{"disp", "vel", "slow"}}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			path := filepath.Join(dir, tc.name+".csv")
			writeRigCSV(t, path, g, 5, tc.comments)
			if tc.edit != nil {
				b, err := os.ReadFile(path)
				if err != nil {
					t.Fatal(err)
				}
				if err := os.WriteFile(path, []byte(tc.edit(string(b))), 0o644); err != nil {
					t.Fatal(err)
				}
			}
			opts := tc.opts
			want, err := ReadFile(context.Background(), path, &opts)
			if err != nil {
				t.Fatal(err)
			}
			sf, got := streamRuns(t, path, &opts, &StreamOptions{CSVWindow: -1})
			if sf.Whole != "" {
				t.Fatalf("read whole (%s), not streamed", sf.Whole)
			}
			sameRuns(t, got, want.Runs)
			if len(want.Runs) < 3 {
				t.Fatalf("%d runs: the log lost its features", len(want.Runs))
			}
			if sf.Time != want.Time {
				t.Errorf("time column %+v, ReadFile %+v", sf.Time, want.Time)
			}
			lsf, got := streamRuns(t, path, &opts, &StreamOptions{CSVWindow: -1, LateRuns: true})
			sameRuns(t, got, want.Runs)
			if lsf.Whole != "" || lsf.Passes != sf.Passes-1 {
				t.Errorf("late runs: read whole %q, %d passes; runs found at Open: %d", lsf.Whole, lsf.Passes, sf.Passes)
			}
			t.Logf("%d runs, %d passes", len(want.Runs), sf.Passes)
		})
	}
}

// TestStreamReuse: one Streamer over files of every kind in turn (its
// buffers reused from plan to plan) gives each file ReadFile's runs.
func TestStreamReuse(t *testing.T) {
	dir := t.TempDir()
	logs := []rigLog{
		{n: 20000, dt: 0.001, sd: 1e-3},
		{n: 30000, dt: 0.001, sd: 1e-3, head: 3000, hits: []int{9000, 21000}, spike: 15000, gapAt: 25000, missing: []int{5000, 12345}},
		{n: 25000, dt: 0.001, sd: 1e-3, gapAt: 8000, missing: []int{3}},
		{n: 20000, dt: 0.002, sd: 1e-3, jitter: 0.2, head: 500, hits: []int{7000}},
		{n: 30000, dt: 0.001, sd: 1e-3, head: 3000, hits: []int{9000, 21000}, gapAt: 11000},
	}
	s := NewStreamer(nil, &StreamOptions{Window: -1})
	for round := range 2 {
		for i, g := range logs {
			path := filepath.Join(dir, fmt.Sprintf("r%d.parquet", i))
			if round == 0 {
				writeRigParquet(t, path, g, uint64(i), 4096, false, false, compress.Codecs.Uncompressed)
			}
			want, err := ReadFile(context.Background(), path, nil)
			if err != nil {
				t.Fatal(err)
			}
			sf, err := s.Open(context.Background(), path)
			if err != nil {
				t.Fatal(err)
			}
			if sf.Whole != "" {
				t.Fatalf("%s read whole: %s", path, sf.Whole)
			}
			got, err := scanRuns(sf)
			sf.Close()
			if err != nil {
				t.Fatal(err)
			}
			sameRuns(t, got, want.Runs)
		}
	}
}

// TestStreamWindow: a file within the window is read whole into the
// reused buffers (columns, chunk buffers, the noise and event passes'
// scratch), and gives ReadFile's runs, file after file: Parquet plain
// and dictionary-encoded, and CSV files large enough to be read in
// several blocks, interleaved, larger and smaller than the one before.
func TestStreamWindow(t *testing.T) {
	dir := t.TempDir()
	s := NewStreamer(nil, nil)
	for i, n := range []int{5000, 3000, 8000, 60000, 20000, 60000, 9000} {
		g := rigLog{n: n, dt: 0.001, sd: 1e-3, head: 500, hits: []int{n / 2}}
		if i%2 == 1 {
			g.hits = append(g.hits, n/4)
			g.missing = []int{n / 3}
		}
		var path string
		switch i % 3 {
		case 2:
			path = filepath.Join(dir, fmt.Sprintf("w%d.csv", i))
			writeRigCSV(t, path, g, uint64(i), 0)
		default:
			path = filepath.Join(dir, fmt.Sprintf("w%d.parquet", i))
			writeRigParquet(t, path, g, uint64(i), 1000, i%3 == 1, false, compress.Codecs.Uncompressed)
		}
		want, err := ReadFile(context.Background(), path, nil)
		if err != nil {
			t.Fatal(err)
		}
		sf, err := s.Open(context.Background(), path)
		if err != nil {
			t.Fatal(err)
		}
		if sf.Whole != "window" || sf.Dataset() == nil {
			t.Fatalf("Whole = %q, want window", sf.Whole)
		}
		sameRuns(t, sf.Dataset().Runs, want.Runs)
	}
}

// TestStreamErrors: bad input gives ReadFile's error, word for word, and
// never a panic: a truncated file, a corrupt page, an infinite value, time
// going back.
func TestStreamErrors(t *testing.T) {
	dir := t.TempDir()
	good := filepath.Join(dir, "good.parquet")
	writeRigParquet(t, good, rigLog{n: 20000, dt: 0.001, sd: 1e-3}, 1, 4096, false, false, compress.Codecs.Uncompressed)
	data, err := os.ReadFile(good)
	if err != nil {
		t.Fatal(err)
	}
	corrupt := func(name string, f func([]byte) []byte) string {
		b := f(append([]byte(nil), data...))
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, b, 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	cases := map[string]string{
		"truncated": corrupt("truncated.parquet", func(b []byte) []byte { return b[:len(b)/2] }),
		"page bytes": corrupt("page.parquet", func(b []byte) []byte {
			for i := 4000; i < 4100; i++ {
				b[i] ^= 0xff
			}
			return b
		}),
		"page header": corrupt("header.parquet", func(b []byte) []byte {
			for i := 4; i < 40; i++ {
				b[i] = 0xff
			}
			return b
		}),
	}
	// an infinite value and time going back, mid-file
	tc, x, v, s := rigLog{n: 20000, dt: 0.001, sd: 1e-3}.columns(2)
	x[13000] = math.Inf(1)
	cases["infinite"] = writeCols(t, filepath.Join(dir, "inf.parquet"), tc, x, v, s) // dictionary pages
	plainInf := filepath.Join(dir, "inf-plain.parquet")
	writePlainCols(t, plainInf, tc, x, v, s)
	cases["infinite, plain pages"] = plainInf
	tc2, x2, v2, s2 := rigLog{n: 20000, dt: 0.001, sd: 1e-3}.columns(3)
	tc2[15000] = tc2[14000]
	cases["time back"] = writeCols(t, filepath.Join(dir, "back.parquet"), tc2, x2, v2, s2)
	bad := filepath.Join(dir, "bad.csv")
	writeRigCSV(t, bad, rigLog{n: 40000, dt: 0.001, sd: 1e-3}, 4, 0)
	b, err := os.ReadFile(bad)
	if err != nil {
		t.Fatal(err)
	}
	b = []byte(strings.Replace(string(b), "\n30.", "\n30.0.1", 1)) // a bad number mid-file
	if err := os.WriteFile(bad, b, 0o644); err != nil {
		t.Fatal(err)
	}
	cases["csv bad number"] = bad
	for name, path := range cases {
		t.Run(name, func(t *testing.T) {
			_, want := ReadFile(context.Background(), path, nil)
			if want == nil {
				t.Fatal("ReadFile took the bad file")
			}
			_, got := NewStreamer(nil, &StreamOptions{Window: -1, CSVWindow: -1, Prefetch: name == "infinite"}).Open(context.Background(), path)
			if got == nil || got.Error() != want.Error() {
				t.Fatalf("Open: %v\nReadFile: %v", got, want)
			}
			if strings.HasPrefix(name, "infinite") && !strings.Contains(got.Error(), ":13001:") {
				t.Errorf("%v: not the infinite value's row", got)
			}
			if strings.Contains(got.Error(), "\n") {
				t.Errorf("error on more than one line: %q", got)
			}
		})
	}
}

func writeCols(t *testing.T, path string, cols ...[]float64) string {
	t.Helper()
	names := []string{"time [s]", "disp [mm]", "vel [mm/s]", "slow"}
	var fields []arrow.Field
	for _, n := range names[:len(cols)] {
		fields = append(fields, arrow.Field{Name: n, Type: arrow.PrimitiveTypes.Float64})
	}
	sc := arrow.NewSchema(fields, nil)
	b := array.NewRecordBuilder(memory.NewGoAllocator(), sc)
	defer b.Release()
	for j, c := range cols {
		b.Field(j).(*array.Float64Builder).AppendValues(c, nil)
	}
	rec := b.NewRecord()
	defer rec.Release()
	writeArrowParquet(t, path, rec, 4096)
	return path
}

// writePlainCols writes float64 columns named as writeCols does, with
// plain encoding (no dictionary) in row groups of 4096 rows.
func writePlainCols(t *testing.T, path string, cols ...[]float64) {
	t.Helper()
	names := []string{"time [s]", "disp [mm]", "vel [mm/s]", "slow"}
	var fields []arrow.Field
	for _, n := range names[:len(cols)] {
		fields = append(fields, arrow.Field{Name: n, Type: arrow.PrimitiveTypes.Float64})
	}
	sc := arrow.NewSchema(fields, nil)
	b := array.NewRecordBuilder(memory.NewGoAllocator(), sc)
	defer b.Release()
	for j, c := range cols {
		b.Field(j).(*array.Float64Builder).AppendValues(c, nil)
	}
	rec := b.NewRecord()
	defer rec.Release()
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	tbl := array.NewTableFromRecords(sc, []arrow.Record{rec})
	defer tbl.Release()
	props := parquet.NewWriterProperties(parquet.WithMaxRowGroupLength(4096), parquet.WithDictionaryDefault(false))
	if err := pqarrow.WriteTable(tbl, f, 4096, props, pqarrow.DefaultWriterProps()); err != nil {
		t.Fatal(err)
	}
}

// TestStreamFileChanged: a streamed file cut short between the plan and
// the scan is an error, not a screen of fewer samples (a CSV file is
// parsed again by every pass; for a held Parquet file see
// TestStreamParquetCut).
func TestStreamFileChanged(t *testing.T) {
	for _, late := range []bool{false, true} {
		t.Run(fmt.Sprintf("late=%v", late), func(t *testing.T) { testStreamFileChanged(t, late) })
	}
}

func testStreamFileChanged(t *testing.T, late bool) {
	path := filepath.Join(t.TempDir(), "log.csv")
	writeRigCSV(t, path, rigLog{n: 20000, dt: 0.001, sd: 1e-3}, 3, 0)
	sf, err := NewStreamer(nil, &StreamOptions{CSVWindow: -1, LateRuns: late}).Open(context.Background(), path)
	if err != nil {
		t.Fatal(err)
	}
	defer sf.Close()
	if sf.Held() {
		t.Fatal("a CSV file held")
	}
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	cut := strings.LastIndexByte(string(b[:len(b)/2]), '\n') + 1 // whole lines
	if err := os.WriteFile(path, b[:cut], 0o644); err != nil {
		t.Fatal(err)
	}
	err = sf.Scan(context.Background(), func(int, []float64, [][]float64) error { return nil })
	if err == nil || !strings.Contains(err.Error(), "changed while it was read") {
		t.Fatalf("Scan of a file cut short: %v", err)
	}
}

// TestDirectFastPath: the direct decoder's fast path for uncompressed
// float64 chunks (PLAIN pages, and dictionary pages with RLE/bit-packed
// indices) gives exactly what Arrow's own decoder (the general path,
// pqarrow) gives, for plain and dictionary-encoded files, a dictionary
// that fills up and falls back to PLAIN pages mid-chunk, NaN values and
// nulls (those take Arrow's reader), several row-group sizes.
func TestDirectFastPath(t *testing.T) {
	dir := t.TempDir()
	for _, tc := range []struct {
		name        string
		n           int
		rg          int64
		dict, nulls bool
		sd          float64
	}{
		{"plain", 20000, 4096, false, false, 1e-3},
		{"dictionary", 20000, 4096, true, false, 1e-3},
		{"dictionary, few values", 20000, 7000, true, false, 0},
		{"dictionary full", 250000, 200000, true, false, 1e-3},
		{"nulls", 20000, 4096, true, true, 1e-3},
	} {
		t.Run(tc.name, func(t *testing.T) {
			path := filepath.Join(dir, strings.ReplaceAll(tc.name, " ", "_")+".parquet")
			g := rigLog{n: tc.n, dt: 0.001, sd: tc.sd, head: 100, hits: []int{tc.n / 2}, missing: []int{10, 5000}}
			writeRigParquet(t, path, g, 4, tc.rg, tc.dict, tc.nulls, compress.Codecs.Uncompressed)
			fast, err := ReadFile(context.Background(), path, &Options{KeepHead: true, KeepEvents: true})
			if err != nil {
				t.Fatal(err)
			}
			arrow, err := ReadFile(context.Background(), path, &Options{KeepHead: true, KeepEvents: true, viaArrow: true})
			if err != nil {
				t.Fatal(err)
			}
			sameRuns(t, fast.Runs, arrow.Runs)
			if fast.Missing != arrow.Missing || fast.Missing == 0 {
				t.Errorf("missing %d, Arrow %d", fast.Missing, arrow.Missing)
			}
		})
	}
}
