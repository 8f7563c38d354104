package main

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/apache/arrow/go/v15/arrow"
	"github.com/apache/arrow/go/v15/arrow/array"
	"github.com/apache/arrow/go/v15/arrow/memory"
	"github.com/apache/arrow/go/v15/parquet"
	"github.com/apache/arrow/go/v15/parquet/pqarrow"

	"basin.example/fit"
	"basin.example/ingest"
)

const (
	benchFiles = 8
	benchRows  = 250_000 // samples per file
)

// benchData writes benchFiles runs of a decaying oscillation with noise
// (in screenCert's coordinates) as Parquet (Arrow's writer, "parquet" with
// its default dictionary encoding, "parquet-plain" without) or CSV, and
// returns the paths and their total size.
func benchData(b *testing.B, dir, format string) ([]string, int64) {
	b.Helper()
	var paths []string
	var size int64
	for f := range benchFiles {
		r := rand.New(rand.NewPCG(uint64(f), 0))
		t := make([]float64, benchRows)
		p := make([]float64, benchRows)
		q := make([]float64, benchRows)
		for i := range t {
			tt := float64(i) * 0.001
			e := math.Exp(-0.05 * tt)
			t[i] = tt
			p[i] = 1.5 + 2*0.5*e*math.Cos(tt) + 1e-4*r.NormFloat64()
			q[i] = 10 * 0.5 * e * -math.Sin(tt)
		}
		ext := format
		if strings.HasPrefix(format, "parquet") {
			ext = "parquet"
		}
		path := filepath.Join(dir, fmt.Sprintf("run%02d.%s", f, ext))
		if ext == "parquet" {
			writeParquetCols(b, path, format == "parquet", []string{"time [s]", "pitch [deg]", "rate [deg/s]"}, t, p, q)
		} else {
			var sb strings.Builder
			sb.WriteString("time [s],pitch [deg],rate [deg/s]\n")
			buf := make([]byte, 0, 64)
			for i := range t {
				buf = strconv.AppendFloat(buf[:0], t[i], 'g', -1, 64)
				buf = append(buf, ',')
				buf = strconv.AppendFloat(buf, p[i], 'g', -1, 64)
				buf = append(buf, ',')
				buf = strconv.AppendFloat(buf, q[i], 'g', -1, 64)
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
func writeParquetCols(b *testing.B, path string, dict bool, names []string, cols ...[]float64) {
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
	props := parquet.NewWriterProperties(parquet.WithMaxRowGroupLength(64*1024), parquet.WithDictionaryDefault(dict))
	if err := pqarrow.WriteTable(tbl, f, 64*1024, props, pqarrow.DefaultWriterProps()); err != nil {
		b.Fatal(err)
	}
}

// BenchmarkScreen measures basin screen end to end (read the files, screen
// every run) on a quadratic V, Parquet and CSV input, with one and two
// workers, side by side. The target is at least 20 million samples per
// second over 2 cores on Parquet.
func BenchmarkScreen(b *testing.B) {
	c, err := fit.ReadCertificate(strings.NewReader(screenCert))
	if err != nil {
		b.Fatal(err)
	}
	for _, format := range []string{"parquet", "parquet-plain", "csv"} {
		dir := b.TempDir()
		paths, size := benchData(b, dir, format)
		for _, workers := range []int{1, 2} {
			b.Run(fmt.Sprintf("%s/workers=%d", format, workers), func(b *testing.B) {
				opts, _ := (&inputFlags{}).options()
				opts.States = c.States
				b.SetBytes(size)
				b.ReportAllocs()
				cpu0 := cpuSeconds()
				for b.Loop() {
					res, err := screenFiles(context.Background(), c, paths, opts, nil, workers)
					if err != nil {
						b.Fatal(err)
					}
					if len(res) != benchFiles || res[0].runs[0].Samples != benchRows {
						b.Fatalf("screened %d files, %d samples", len(res), res[0].runs[0].Samples)
					}
				}
				n := float64(benchFiles*benchRows) * float64(b.N)
				b.ReportMetric(n/b.Elapsed().Seconds(), "samples/s")
				// On a shared machine wall time depends on the other load;
				// samples per CPU-second (user+system, whole process) do
				// not, and times the cores used give the idle-machine rate.
				b.ReportMetric(n/(cpuSeconds()-cpu0), "samples/cpu-s")
			})
		}
		// The same files only read (no screening), one worker: the share
		// of the time that is ingest's.
		b.Run(format+"/read-only", func(b *testing.B) {
			opts, _ := (&inputFlags{}).options()
			opts.States = c.States
			b.SetBytes(size)
			b.ReportAllocs()
			cpu0 := cpuSeconds()
			for b.Loop() {
				for _, p := range paths {
					if _, err := ingest.ReadFile(context.Background(), p, opts); err != nil {
						b.Fatal(err)
					}
				}
			}
			n := float64(benchFiles*benchRows) * float64(b.N)
			b.ReportMetric(n/b.Elapsed().Seconds(), "samples/s")
			b.ReportMetric(n/(cpuSeconds()-cpu0), "samples/cpu-s")
		})
	}
}
