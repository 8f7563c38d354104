package main

import (
	"context"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"sync/atomic"
	"syscall"
	"testing"
	"time"

	"github.com/apache/arrow/go/v15/arrow"
	"github.com/apache/arrow/go/v15/arrow/array"
	"github.com/apache/arrow/go/v15/arrow/memory"
	"github.com/apache/arrow/go/v15/parquet"
	"github.com/apache/arrow/go/v15/parquet/compress"
	"github.com/apache/arrow/go/v15/parquet/pqarrow"

	"basin.example/fit"
	"basin.example/ingest"
	"basin.example/internal/parallel"
	"basin.example/validate"
)

const (
	benchFiles = 8
	benchRows  = 250_000 // samples per file
)

// benchData writes benchFiles runs of benchRows samples (rows when not
// 0) of a decaying oscillation with noise in states states (pitch and
// rate in screenCert's coordinates, then s2, s3, ... in benchCert's) as
// Parquet (Arrow's writer, "parquet" with its default dictionary
// encoding, "parquet-plain" without) or CSV, and returns the paths and
// their total size.
func benchData(b *testing.B, dir, format string, states, files, rows int) ([]string, int64) {
	b.Helper()
	var paths []string
	var size int64
	names := []string{"time [s]", "pitch [deg]", "rate [deg/s]"}
	for j := 2; j < states; j++ {
		names = append(names, fmt.Sprintf("s%d", j))
	}
	for f := range files {
		r := rand.New(rand.NewPCG(uint64(f), 0))
		cols := make([][]float64, states+1)
		for j := range cols {
			cols[j] = make([]float64, rows)
		}
		for i := range rows {
			tt := float64(i) * 0.001
			e := math.Exp(-0.05 * tt)
			cols[0][i] = tt
			cols[1][i] = 1.5 + 2*0.5*e*math.Cos(tt) + 1e-4*r.NormFloat64()
			cols[2][i] = 10 * 0.5 * e * -math.Sin(tt)
			for j := 3; j <= states; j++ {
				cols[j][i] = 0.3*e*math.Cos(float64(j)*tt) + 1e-4*r.NormFloat64()
			}
		}
		ext := format
		if strings.HasPrefix(format, "parquet") {
			ext = "parquet"
		}
		path := filepath.Join(dir, fmt.Sprintf("run%02d.%s", f, ext))
		if ext == "parquet" {
			if format == "parquet-snappy" {
				writeParquetColsWith(b, path, names, []parquet.WriterProperty{parquet.WithCompression(compress.Codecs.Snappy)}, cols...)
			} else {
				writeParquetCols(b, path, format == "parquet", names, cols...)
			}
		} else {
			var sb strings.Builder
			sb.WriteString(strings.Join(names, ",") + "\n")
			buf := make([]byte, 0, 64*(states+1))
			for i := range rows {
				buf = buf[:0]
				for j := range cols {
					if j > 0 {
						buf = append(buf, ',')
					}
					buf = strconv.AppendFloat(buf, cols[j][i], 'g', -1, 64)
				}
				buf = append(buf, '\n')
				sb.Write(buf)
			}
			if err := os.WriteFile(path, []byte(sb.String()), 0o644); err != nil {
				b.Fatal(err)
			}
		}
		st, err := os.Stat(path)
		if err != nil {
			b.Fatal(err)
		}
		size += st.Size()
		paths = append(paths, path)
	}
	return paths, size
}

// benchCert returns screenCert for 2 states, and for more a certificate
// on pitch, rate, s2, ... with V = Σ z_j² (a quadratic V of that many
// states).
func benchCert(b *testing.B, states int) *fit.Certificate {
	b.Helper()
	if states == 2 {
		c, err := fit.ReadCertificate(strings.NewReader(screenCert))
		if err != nil {
			b.Fatal(err)
		}
		return c
	}
	names := []string{`"pitch"`, `"rate"`}
	units := []string{`"deg"`, `"deg/s"`}
	eq := []string{"1.5", "0"}
	sc := []string{"2", "10"}
	var exps, coef []string
	for j := 2; j < states; j++ {
		names = append(names, fmt.Sprintf(`"s%d"`, j))
		units, eq, sc = append(units, `""`), append(eq, "0"), append(sc, "1")
	}
	for j := range states {
		e := make([]string, states)
		for k := range e {
			e[k] = "0"
		}
		e[j] = "2"
		exps = append(exps, "["+strings.Join(e, ",")+"]")
		coef = append(coef, "1")
	}
	js := fmt.Sprintf(`{"format": "basin.certificate/1", "verdict": "certified", "strength": "asymptotic",
  "reason": "benchmark", "empirical": true, "caveat": "benchmark", "states": [%s], "units": [%s],
  "equilibrium": [%s], "scale": [%s], "V": {"exponents": [%s], "coefficients": [%s]},
  "level": 2, "noise_radius": 0.05, "tolerance": 1e-9, "validation": {"heldout_runs": 4}}`,
		strings.Join(names, ","), strings.Join(units, ","), strings.Join(eq, ","), strings.Join(sc, ","),
		strings.Join(exps, ","), strings.Join(coef, ","))
	c, err := fit.ReadCertificate(strings.NewReader(js))
	if err != nil {
		b.Fatal(err)
	}
	return c
}

// cpuSeconds returns the process's user plus system CPU time.
func cpuSeconds() float64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return math.NaN()
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano()).Seconds()
}

// writeParquetCols writes float64 columns with Arrow's writer, with its
// default dictionary encoding or plain encoding.
func writeParquetCols(b testing.TB, path string, dict bool, names []string, cols ...[]float64) {
	writeParquetColsWith(b, path, names, []parquet.WriterProperty{parquet.WithDictionaryDefault(dict)}, cols...)
}

// writeParquetColsWith is writeParquetCols with the writer's properties
// (row groups of 64 Ki rows, then props).
func writeParquetColsWith(b testing.TB, path string, names []string, props []parquet.WriterProperty, cols ...[]float64) {
	mem := memory.NewGoAllocator()
	var fields []arrow.Field
	for _, n := range names {
		fields = append(fields, arrow.Field{Name: n, Type: arrow.PrimitiveTypes.Float64})
	}
	sc := arrow.NewSchema(fields, nil)
	rb := array.NewRecordBuilder(mem, sc)
	defer rb.Release()
	for j, c := range cols {
		rb.Field(j).(*array.Float64Builder).AppendValues(c, nil)
	}
	rec := rb.NewRecord()
	defer rec.Release()
	f, err := os.Create(path)
	if err != nil {
		b.Fatal(err)
	}
	defer f.Close()
	tbl := array.NewTableFromRecords(sc, []arrow.Record{rec})
	defer tbl.Release()
	wp := parquet.NewWriterProperties(append([]parquet.WriterProperty{parquet.WithMaxRowGroupLength(64 * 1024)}, props...)...)
	if err := pqarrow.WriteTable(tbl, f, 64*1024, wp, pqarrow.DefaultWriterProps()); err != nil {
		b.Fatal(err)
	}
}

// screenWhole is the screen before streaming, kept for comparison: each
// file read whole by ingest.ReadFile (a data set per file), then its
// runs screened, files on workers goroutines.
func screenWhole(ctx context.Context, cert *fit.Certificate, files []string, iopts *ingest.Options, workers int) (int, error) {
	var n atomic.Int64
	err := parallel.For(ctx, len(files), workers, func() *validate.Screener { return validate.NewScreener(cert, nil) },
		func(ctx context.Context, i int, s *validate.Screener) error {
			ds, err := ingest.ReadFile(ctx, files[i], iopts)
			if err != nil {
				return err
			}
			var r validate.RunScreen
			for k := range ds.Runs {
				s.Screen(&r, files[i], &ds.Runs[k])
				n.Add(int64(r.Samples))
			}
			return nil
		})
	return int(n.Load()), err
}

// catFiles reads the files' bytes as cat does (io.Copy to io.Discard).
func catFiles(b *testing.B, paths []string) {
	for _, p := range paths {
		f, err := os.Open(p)
		if err != nil {
			b.Fatal(err)
		}
		if _, err := io.Copy(io.Discard, f); err != nil {
			b.Fatal(err)
		}
		f.Close()
	}
}

// BenchmarkScreen measures basin screen end to end (read the files, screen
// every run) on a quadratic V of 2 and 6 states, Parquet (Arrow's default
// dictionary encoding, plain, and dictionary with Snappy compression, as
// many writers default to) and CSV (read whole below the CSV
// window, and streamed), with a certificate without and with the noise
// per state ("-noise": each run's own noise widens the tolerance), on
// GOMAXPROCS workers (run with -cpu 1,2),
// streamed ("stream"; "stream-unheld": every pass reading the file
// again, nothing held from the first read) beside the whole-file screen
// it replaces ("whole")
// and a cat of the same files (io.Copy to io.Discard). Each reports
// samples/s, samples per CPU-second (on a shared machine CPU time does
// not depend on the other load), and x-cat: its CPU time over cat's on
// the same files, measured in the same benchmark (the target is at
// most 10).
func BenchmarkScreen(b *testing.B) {
	for _, states := range []int{2, 6} {
		c := benchCert(b, states)
		for _, format := range []string{"parquet", "parquet-plain", "parquet-snappy", "csv"} {
			dir := b.TempDir()
			// the files, written when a benchmark that reads them first runs
			var paths []string
			var size int64
			data := func(b *testing.B) {
				if paths == nil {
					paths, size = benchData(b, dir, format, states, benchFiles, benchRows)
				}
				b.SetBytes(size)
			}
			n := float64(benchFiles * benchRows)
			// catCPU returns cat's CPU seconds per read of all the files.
			catCPU := func(b *testing.B) float64 {
				const reps = 20
				cpu0 := cpuSeconds()
				for range reps {
					catFiles(b, paths)
				}
				return (cpuSeconds() - cpu0) / reps
			}
			report := func(b *testing.B, cpu0 float64) {
				cpu := (cpuSeconds() - cpu0) / float64(b.N)
				b.ReportMetric(n*float64(b.N)/b.Elapsed().Seconds(), "samples/s")
				b.ReportMetric(n/cpu, "samples/cpu-s")
				b.ReportMetric(cpu/catCPU(b), "x-cat")
			}
			opts, _ := (&inputFlags{}).options()
			opts.States = c.States
			name := fmt.Sprintf("states=%d/%s", states, format)
			b.Run(name+"/cat", func(b *testing.B) {
				data(b)
				cpu0 := cpuSeconds()
				for b.Loop() {
					catFiles(b, paths)
				}
				report(b, cpu0)
			})
			// the certificate with the noise per state it was fitted at:
			// each run's own noise then widens the tolerance
			cn := *c
			cn.Noise = make([]float64, states)
			for j := range cn.Noise {
				cn.Noise[j] = 1e-4
			}
			type mode struct {
				name string
				sto  *ingest.StreamOptions
				cert *fit.Certificate
			}
			modes := []mode{{"stream", nil, c}, {"stream-noise", nil, &cn}, {"window", &ingest.StreamOptions{Window: 1 << 20}, c},
				{"stream-unheld", &ingest.StreamOptions{Hold: -1}, c}}
			if format == "csv" {
				modes = append(modes, mode{"stream-csv", &ingest.StreamOptions{CSVWindow: -1}, c},
					mode{"stream-csv-noise", &ingest.StreamOptions{CSVWindow: -1}, &cn})
			}
			for _, m := range modes {
				b.Run(name+"/"+m.name, func(b *testing.B) {
					data(b)
					b.ReportAllocs()
					cpu0 := cpuSeconds()
					for b.Loop() {
						res, err := screenFilesWith(context.Background(), m.cert, paths, opts, nil, 0, m.sto)
						if err != nil {
							b.Fatal(err)
						}
						if len(res) != benchFiles || res[0].runs[0].Samples != benchRows {
							b.Fatalf("screened %d files, %d samples", len(res), res[0].runs[0].Samples)
						}
					}
					report(b, cpu0)
				})
			}
			b.Run(name+"/whole", func(b *testing.B) {
				data(b)
				b.ReportAllocs()
				cpu0 := cpuSeconds()
				for b.Loop() {
					got, err := screenWhole(context.Background(), c, paths, opts, 0)
					if err != nil {
						b.Fatal(err)
					}
					if got != benchFiles*benchRows {
						b.Fatalf("screened %d samples", got)
					}
				}
				report(b, cpu0)
			})
		}
	}
}

// BenchmarkScreenMemory screens one file of growing size with one
// worker and reports the peak heap in use above the start (sampled every
// millisecond) and its ratio to the file's size: a plain Parquet file
// (row groups of 64 Ki rows) streamed (with a certificate without and
// with the noise per state) and whole; a CSV file with the default
// options ("stream"), streamed whatever its size ("stream-csv", with
// and without the noise per state) and whole.
func BenchmarkScreenMemory(b *testing.B) {
	c := benchCert(b, 2)
	cn := *c // with the noise per state: each run's own noise widens the tolerance
	cn.Noise = []float64{1e-4, 1e-4}
	streamCSV := &ingest.StreamOptions{CSVWindow: -1}
	for _, format := range []string{"parquet-plain", "csv"} {
		modes := []string{"stream", "stream-noise", "whole"}
		if format == "csv" {
			modes = []string{"stream", "stream-csv", "stream-csv-noise", "whole"}
		}
		for _, rows := range []int{100_000, 400_000, 1_600_000} {
			dir := b.TempDir()
			paths, size := benchData(b, dir, format, 2, 1, rows)
			opts, _ := (&inputFlags{}).options()
			opts.States = c.States
			for _, mode := range modes {
				name := fmt.Sprintf("rows=%d/%s", rows, mode)
				if format == "csv" {
					name = "csv/" + name
				}
				b.Run(name, func(b *testing.B) {
					runtime.GC()
					var base runtime.MemStats
					runtime.ReadMemStats(&base)
					var peak atomic.Uint64
					stop := make(chan struct{})
					done := make(chan struct{})
					go func() {
						defer close(done)
						var ms runtime.MemStats
						for {
							select {
							case <-stop:
								return
							case <-time.After(time.Millisecond):
							}
							runtime.ReadMemStats(&ms)
							if h := ms.HeapInuse; h > peak.Load() {
								peak.Store(h)
							}
						}
					}()
					for b.Loop() {
						var err error
						switch mode {
						case "stream":
							_, err = screenFiles(context.Background(), c, paths, opts, nil, 1)
						case "stream-noise":
							_, err = screenFiles(context.Background(), &cn, paths, opts, nil, 1)
						case "stream-csv":
							_, err = screenFilesWith(context.Background(), c, paths, opts, nil, 1, streamCSV)
						case "stream-csv-noise":
							_, err = screenFilesWith(context.Background(), &cn, paths, opts, nil, 1, streamCSV)
						default:
							_, err = screenWhole(context.Background(), c, paths, opts, 1)
						}
						if err != nil {
							b.Fatal(err)
						}
					}
					close(stop)
					<-done
					grow := float64(peak.Load()) - float64(base.HeapInuse)
					b.ReportMetric(grow/1e6, "peak-heap-MB")
					b.ReportMetric(grow/float64(size), "peak-heap/file-size")
				})
			}
		}
	}
}
