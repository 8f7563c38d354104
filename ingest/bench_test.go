package ingest

import (
	"bufio"
	"bytes"
	"context"
	"encoding/csv"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"runtime/metrics"
	"strconv"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"github.com/apache/arrow/go/v15/arrow"
	"github.com/apache/arrow/go/v15/arrow/array"
	"github.com/apache/arrow/go/v15/arrow/memory"

	"basin.example/internal/order"
)

const benchRows, benchCols = 1_000_000, 7

var (
	benchOnce sync.Once
	benchDir  string
	benchCSV  string
	benchPQ   string
)

// benchFiles writes a 1,000,000-row, 7-column CSV file (about 84 MB: a
// time column and six noisy states printed with 9 significant digits, as
// loggers print them) and the same data as Parquet.
func benchFiles(b *testing.B) (string, string) {
	benchOnce.Do(func() {
		dir, err := os.MkdirTemp("", "basin-bench")
		if err != nil {
			b.Fatal(err)
		}
		benchDir = dir
		benchCSV = filepath.Join(dir, "bench.csv")
		f, err := os.Create(benchCSV)
		if err != nil {
			b.Fatal(err)
		}
		w := bufio.NewWriterSize(f, 1<<20)
		rng := rand.New(rand.NewPCG(1, 0))
		mem := memory.NewGoAllocator()
		fields := []arrow.Field{{Name: "t", Type: arrow.PrimitiveTypes.Float64}}
		for j := 1; j < benchCols; j++ {
			fields = append(fields, arrow.Field{Name: fmt.Sprintf("x%d", j), Type: arrow.PrimitiveTypes.Float64})
		}
		rb := array.NewRecordBuilder(mem, arrow.NewSchema(fields, nil))
		w.WriteString("t")
		for j := 1; j < benchCols; j++ {
			fmt.Fprintf(w, ",x%d", j)
		}
		w.WriteString("\n")
		var buf []byte
		for i := range benchRows {
			tv := float64(i) * 0.005
			buf = strconv.AppendFloat(buf[:0], tv, 'f', 4, 64)
			rb.Field(0).(*array.Float64Builder).Append(atof(string(buf)))
			for j := 1; j < benchCols; j++ {
				buf = append(buf, ',')
				k := len(buf)
				buf = strconv.AppendFloat(buf, rng.NormFloat64(), 'g', 9, 64)
				rb.Field(j).(*array.Float64Builder).Append(atof(string(buf[k:])))
			}
			buf = append(buf, '\n')
			w.Write(buf)
		}
		if err := w.Flush(); err != nil {
			b.Fatal(err)
		}
		f.Close()
		rec := rb.NewRecord()
		benchPQ = filepath.Join(dir, "bench.parquet")
		writeArrowParquet(b, benchPQ, rec, 128*1024)
		rec.Release()
		rb.Release()
	})
	return benchCSV, benchPQ
}

// bench2CSV is the two-state benchmark file (written once, by
// benchFile): 10^6 rows of a time column and two states of the same kind
// as benchFiles' (other draws), about 32 MB.
var (
	bench2Once sync.Once
	bench2CSV  string
)

// benchFile returns the 10^6-row benchmark CSV file with ns states: 6
// (benchFiles') or 2.
func benchFile(b *testing.B, ns int) string {
	path, _ := benchFiles(b)
	if ns == benchCols-1 {
		return path
	}
	if ns != 2 {
		b.Fatalf("no benchmark file with %d states", ns)
	}
	bench2Once.Do(func() {
		bench2CSV = filepath.Join(benchDir, "bench2.csv")
		f, err := os.Create(bench2CSV)
		if err != nil {
			b.Fatal(err)
		}
		w := bufio.NewWriterSize(f, 1<<20)
		rng := rand.New(rand.NewPCG(2, 0))
		w.WriteString("t,x1,x2\n")
		var buf []byte
		for i := range benchRows {
			buf = strconv.AppendFloat(buf[:0], float64(i)*0.005, 'f', 4, 64)
			for range 2 {
				buf = append(buf, ',')
				buf = strconv.AppendFloat(buf, rng.NormFloat64(), 'g', 9, 64)
			}
			buf = append(buf, '\n')
			w.Write(buf)
		}
		if err := w.Flush(); err != nil {
			b.Fatal(err)
		}
		if err := f.Close(); err != nil {
			b.Fatal(err)
		}
	})
	return bench2CSV
}

func TestMain(m *testing.M) {
	code := m.Run()
	if benchDir != "" {
		os.RemoveAll(benchDir)
	}
	os.Exit(code)
}

// naiveRead is the baseline: encoding/csv with ReuseRecord and
// strconv.ParseFloat into column slices, one per header field.
func naiveRead(r io.Reader) ([][]float64, error) {
	cr := csv.NewReader(bufio.NewReaderSize(r, 1<<16))
	cr.ReuseRecord = true
	head, err := cr.Read()
	if err != nil {
		return nil, err
	}
	cols := make([][]float64, len(head))
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			return cols, nil
		}
		if err != nil {
			return nil, err
		}
		for j, s := range rec {
			v, err := strconv.ParseFloat(s, 64)
			if err != nil {
				return nil, err
			}
			cols[j] = append(cols[j], v)
		}
	}
}

// peakHeap samples the live heap every millisecond while f runs and
// returns the largest value seen above the heap before f.
func peakHeap(f func()) uint64 {
	runtime.GC()
	s := []metrics.Sample{{Name: "/memory/classes/heap/objects:bytes"}}
	metrics.Read(s)
	base := s[0].Value.Uint64()
	var peak atomic.Uint64
	done := make(chan struct{})
	go func() {
		ss := []metrics.Sample{{Name: "/memory/classes/heap/objects:bytes"}}
		t := time.NewTicker(time.Millisecond)
		defer t.Stop()
		for {
			select {
			case <-done:
				return
			case <-t.C:
				metrics.Read(ss)
				if v := ss[0].Value.Uint64(); v > peak.Load() {
					peak.Store(v)
				}
			}
		}
	}()
	f()
	close(done)
	metrics.Read(s)
	if v := s[0].Value.Uint64(); v > peak.Load() {
		peak.Store(v)
	}
	if p := peak.Load(); p > base {
		return p - base
	}
	return 0
}

// BenchmarkReadCSV compares ReadCSV with the naive reader on the same
// file in the same run; "basin" reports x-naive, its throughput ratio,
// and peak-x-data, the peak heap over the float64 size of the data.
func BenchmarkReadCSV(b *testing.B) {
	path, _ := benchFiles(b)
	st, err := os.Stat(path)
	if err != nil {
		b.Fatal(err)
	}
	dataBytes := float64(benchRows * benchCols * 8)
	var naiveNs float64
	b.Run("naive", func(b *testing.B) {
		b.SetBytes(st.Size())
		b.ReportAllocs()
		for b.Loop() {
			f, _ := os.Open(path)
			if _, err := naiveRead(f); err != nil {
				b.Fatal(err)
			}
			f.Close()
		}
		naiveNs = float64(b.Elapsed().Nanoseconds()) / float64(b.N)
	})
	b.Run("basin", func(b *testing.B) {
		b.SetBytes(st.Size())
		b.ReportAllocs()
		var peak uint64
		for b.Loop() {
			p := peakHeap(func() {
				f, _ := os.Open(path)
				ds, err := ReadCSV(f, path, nil)
				f.Close()
				if err != nil || ds.Samples() != benchRows {
					b.Fatal(err)
				}
			})
			peak = max(peak, p)
		}
		ns := float64(b.Elapsed().Nanoseconds()) / float64(b.N)
		if naiveNs > 0 {
			b.ReportMetric(naiveNs/ns, "x-naive")
		}
		b.ReportMetric(float64(peak)/dataBytes, "peak-x-data")
		b.ReportMetric(float64(peak)/1e6, "peak-MB")
	})
}

// BenchmarkReadParquet reads the same data from Parquet (Arrow's writer,
// 128 Ki-row groups, default compression), through the direct column
// chunk reader ("direct", what ReadParquet uses) and through pqarrow
// ("arrow", the general path) side by side; "direct" reports x-arrow,
// its throughput ratio.
func BenchmarkReadParquet(b *testing.B) {
	_, path := benchFiles(b)
	st, err := os.Stat(path)
	if err != nil {
		b.Fatal(err)
	}
	var arrowNs float64
	for _, via := range []string{"arrow", "direct"} {
		b.Run(via, func(b *testing.B) {
			opts := &Options{viaArrow: via == "arrow"}
			b.SetBytes(st.Size())
			b.ReportAllocs()
			var peak uint64
			for b.Loop() {
				p := peakHeap(func() {
					ds, err := ReadParquet(context.Background(), path, opts)
					if err != nil || ds.Samples() != benchRows {
						b.Fatal(err)
					}
				})
				peak = max(peak, p)
			}
			ns := float64(b.Elapsed().Nanoseconds()) / float64(b.N)
			if via == "arrow" {
				arrowNs = ns
			} else if arrowNs > 0 {
				b.ReportMetric(arrowNs/ns, "x-arrow")
			}
			b.ReportMetric(float64(peak)/float64(benchRows*benchCols*8), "peak-x-data")
			b.ReportMetric(float64(benchRows)*float64(b.N)/b.Elapsed().Seconds()/1e6, "Mrows/s")
		})
	}
}

// BenchmarkParseFloat compares the fast path with strconv on typical cells.
func BenchmarkParseFloat(b *testing.B) {
	cells := [][]byte{[]byte("-0.12345678"), []byte("1.2345678e-05"), []byte("4999.995"), []byte("3")}
	b.Run("basin", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			for _, c := range cells {
				parseFloat(c)
			}
		}
	})
	b.Run("strconv", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			for _, c := range cells {
				strconv.ParseFloat(string(c), 64)
			}
		}
	})
}

func BenchmarkScanFast(b *testing.B) {
	cells := [][]byte{[]byte("-0.12345678"), []byte("1.2345678e-05"), []byte("4999.995"), []byte("0.98765432")}
	b.ReportAllocs()
	var sink float64
	for b.Loop() {
		for _, c := range cells {
			v, _, _ := scanFast(c)
			sink += v
		}
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/4, "ns/cell")
	_ = sink
}

// BenchmarkReadCSVSideBySide times ReadCSV and the naive reader
// (encoding/csv and strconv.ParseFloat) on the same file alternately in
// one loop (A, B, then B, A: the order swapped every iteration), so that
// both see the same machine load, on 10^6 rows of six states (the 84 MB
// file of benchFiles, "states=6") and of two ("states=2", 32 MB). It
// reports medians over the iterations: x-naive is the median of the
// per-pair ratios naive/basin of wall-clock time, x-naive-cpu the same
// for the CPU time the process used during each (on a busy machine the
// wall-clock ratio depends on how many cores the other processes leave;
// the CPU ratio does not), and basin-s, naive-s, basin-cpu-s,
// naive-cpu-s the median times; Msamples/s and MB/s are ReadCSV's
// throughput at its median wall-clock time (samples are rows: a time
// and every state). Each read starts after a collection (outside the
// timing), so that neither pays for the other's garbage. Run it with
// -cpu 1,2 to see the ratio with one core and with two, and -benchtime
// Nx for N pairs.
func BenchmarkReadCSVSideBySide(b *testing.B) {
	for _, ns := range []int{2, 6} {
		b.Run(fmt.Sprintf("states=%d", ns), func(b *testing.B) { readCSVSideBySide(b, benchFile(b, ns)) })
	}
}

func readCSVSideBySide(b *testing.B, path string) {
	st, err := os.Stat(path)
	if err != nil {
		b.Fatal(err)
	}
	var naive, basin, naiveCPU, basinCPU, wall, cpu []float64
	var dNaive, cNaive, dBasin, cBasin time.Duration
	readNaive := func() {
		f, _ := os.Open(path)
		defer f.Close()
		runtime.GC()
		t0, c0 := time.Now(), cpuTime()
		if _, err := naiveRead(f); err != nil {
			b.Fatal(err)
		}
		dNaive, cNaive = time.Since(t0), cpuTime()-c0
	}
	readBasin := func() {
		f, _ := os.Open(path)
		defer f.Close()
		runtime.GC()
		t0, c0 := time.Now(), cpuTime()
		ds, err := ReadCSV(f, path, nil)
		if err != nil || ds.Samples() != benchRows {
			b.Fatal(err)
		}
		dBasin, cBasin = time.Since(t0), cpuTime()-c0
	}
	i := 0
	for b.Loop() {
		if i%2 == 0 {
			readNaive()
			readBasin()
		} else {
			readBasin()
			readNaive()
		}
		naive = append(naive, dNaive.Seconds())
		basin = append(basin, dBasin.Seconds())
		naiveCPU = append(naiveCPU, cNaive.Seconds())
		basinCPU = append(basinCPU, cBasin.Seconds())
		wall = append(wall, dNaive.Seconds()/dBasin.Seconds())
		cpu = append(cpu, cNaive.Seconds()/cBasin.Seconds())
		i++
	}
	med := func(v []float64) float64 { return order.Median(order.Sorted(nil, v)) }
	b.ReportMetric(med(wall), "x-naive")
	b.ReportMetric(med(cpu), "x-naive-cpu")
	b.ReportMetric(med(basin), "basin-s")
	b.ReportMetric(med(naive), "naive-s")
	b.ReportMetric(med(basinCPU), "basin-cpu-s")
	b.ReportMetric(med(naiveCPU), "naive-cpu-s")
	b.ReportMetric(benchRows/med(basin)/1e6, "Msamples/s")
	b.ReportMetric(float64(st.Size())/med(basin)/1e6, "MB/s")
}

// BenchmarkEventsSideBySide reads the benchmark file with the event and
// resting-start passes (the default) and without them (KeepEvents,
// KeepHead), interleaved in one run, and reports the cost of the passes
// as a ratio.
func BenchmarkEventsSideBySide(b *testing.B) {
	path, _ := benchFiles(b)
	var with, without time.Duration
	read := func(opts *Options, d *time.Duration) {
		f, _ := os.Open(path)
		defer f.Close()
		t0 := time.Now()
		ds, err := ReadCSV(f, path, opts)
		if err != nil || ds.Samples() < benchRows*99/100 {
			b.Fatal(err)
		}
		*d += time.Since(t0)
	}
	keep := &Options{KeepEvents: true, KeepHead: true}
	i := 0
	for b.Loop() {
		if i%2 == 0 {
			read(nil, &with)
			read(keep, &without)
		} else {
			read(keep, &without)
			read(nil, &with)
		}
		i++
	}
	b.ReportMetric(with.Seconds()/without.Seconds(), "x-without")
	b.ReportMetric(with.Seconds()/float64(b.N), "with-s")
	b.ReportMetric(without.Seconds()/float64(b.N), "without-s")
}

// BenchmarkFindEvents times the event pass over 10^6 samples of three
// states, the sliding window against the copy-and-sort reference
// (findEventsSorted, in a test file) in one run: on noise (few
// candidates: the cost is the scan) and on noise with bursts of fast
// smooth motion over 30 % of the samples (nearly every sample there is a
// candidate, and each needs the window's median and MAD; the reference
// takes about 14 s an iteration there: run it with -benchtime 1x).
func BenchmarkFindEvents(b *testing.B) {
	const n = 1_000_000
	for _, tc := range []struct {
		name string
		gen  func(rng *rand.Rand) func(i, j int) float64
	}{
		{"noise", func(rng *rand.Rand) func(i, j int) float64 {
			return func(i, j int) float64 { return rng.NormFloat64() }
		}},
		{"bursts", func(rng *rand.Rand) func(i, j int) float64 {
			return func(i, j int) float64 {
				v := 1e-3 * rng.NormFloat64()
				if i%10000 < 3000 {
					v += 100 * math.Sin(0.4*float64(i)*float64(j+1))
				}
				return v
			}
		}},
	} {
		tb, ds := eventCase(n, 3, tc.gen(rand.New(rand.NewPCG(1, 0))))
		pieces := [][][2]int{{{0, n}}}
		noise, err := tb.noiseOf(pieces, 3)
		if err != nil {
			b.Fatal(err)
		}
		for _, via := range []string{"sorted", "sliding"} {
			b.Run(tc.name+"/"+via, func(b *testing.B) {
				sc := new(eventScratch)
				b.SetBytes(n * 3 * 8)
				for b.Loop() {
					ds.Events = ds.Events[:0]
					if via == "sorted" {
						tb.findEventsSorted(ds, "r", pieces[0], noise)
					} else {
						if _, err := tb.findEvents(ds, "r", pieces[0], noise, sc); err != nil {
							b.Fatal(err)
						}
					}
				}
			})
		}
	}
}

// BenchmarkNoise times the recording's noise estimate (noiseOf) over
// 10^6 samples of three states.
func BenchmarkNoise(b *testing.B) {
	const n = 1_000_000
	rng := rand.New(rand.NewPCG(1, 0))
	tb, _ := eventCase(n, 3, func(i, j int) float64 { return rng.NormFloat64() })
	pieces := [][][2]int{{{0, n}}}
	b.SetBytes(n * 3 * 8)
	for b.Loop() {
		if _, err := tb.noiseOf(pieces, 3); err != nil {
			b.Fatal(err)
		}
	}
}

// benchText is rows of the benchmark file's format (a time column and
// six noisy states printed with 9 significant digits), made in memory.
func benchText(rows int) []byte {
	rng := rand.New(rand.NewPCG(1, 0))
	buf := []byte("t,x1,x2,x3,x4,x5,x6\n")
	for i := range rows {
		buf = strconv.AppendFloat(buf, float64(i)*0.005, 'f', 4, 64)
		for j := 1; j < benchCols; j++ {
			buf = append(buf, ',')
			buf = strconv.AppendFloat(buf, rng.NormFloat64(), 'g', 9, 64)
		}
		buf = append(buf, '\n')
	}
	return buf
}

// BenchmarkParseBlocks parses 10^5 rows of the benchmark file's format
// block by block on one goroutine: the scanner alone, with no reading,
// merging or run forming. cpu-ns/row is the process's CPU time a row.
func BenchmarkParseBlocks(b *testing.B) {
	const rows = 100_000
	data := benchText(rows)
	nl := bytes.IndexByte(data, '\n')
	lay, tb, err := newLayout("bench.csv", data[:nl], 1, nil, &Options{})
	if err != nil {
		b.Fatal(err)
	}
	rest := data[nl+1:]
	if err := lay.sniff(tb, rest, 2, &Options{}); err != nil {
		b.Fatal(err)
	}
	lay.index()
	var blocks [][]byte
	for len(rest) > 0 {
		k := min(len(rest), blockSize)
		if j := bytes.LastIndexByte(rest[:k], '\n'); j >= 0 && k < len(rest) {
			k = j + 1
		}
		blocks = append(blocks, rest[:k])
		rest = rest[k:]
	}
	p := &csvParser{lay: lay, tb: tb}
	b.SetBytes(int64(len(data) - nl - 1))
	b.ReportAllocs()
	c0 := cpuTime()
	for b.Loop() {
		tb.rows, tb.t, tb.marks = 0, tb.t[:0], tb.marks[:0]
		for j := range tb.x {
			tb.x[j] = tb.x[j][:0]
		}
		for _, blk := range blocks {
			if err := p.parseBlocks([]*chunk{{data: blk, line: 2}}); err != nil {
				b.Fatal(err)
			}
		}
		if tb.rows != rows {
			b.Fatalf("%d rows", tb.rows)
		}
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/rows, "ns/row")
	b.ReportMetric(float64((cpuTime()-c0).Nanoseconds())/float64(b.N)/rows, "cpu-ns/row")
}

// BenchmarkReadCSVMem reads 10^5 rows of the benchmark file's format from
// memory with the naive reader and with ReadCSV (the whole pass: events,
// resting head, runs), as sub-benchmarks of one run: small enough to run
// under an instruction counter (valgrind --tool=cachegrind), whose counts
// do not depend on the machine's load.
func BenchmarkReadCSVMem(b *testing.B) {
	const rows = 100_000
	data := benchText(rows)
	for _, via := range []string{"naive", "basin"} {
		b.Run(via, func(b *testing.B) {
			b.SetBytes(int64(len(data)))
			c0 := cpuTime()
			for b.Loop() {
				if via == "naive" {
					if _, err := naiveRead(bytes.NewReader(data)); err != nil {
						b.Fatal(err)
					}
					continue
				}
				ds, err := ReadCSV(bytes.NewReader(data), "bench.csv", nil)
				if err != nil || ds.Samples() != rows {
					b.Fatal(err)
				}
			}
			b.ReportMetric(float64((cpuTime()-c0).Nanoseconds())/float64(b.N)/rows, "cpu-ns/row")
		})
	}
}

// BenchmarkReadCSVFormats reads 200,000 rows (a time column and six
// states) printed three ways, 9 significant digits ("g9"), 17 ("g17")
// and shortest ("shortest", 16 or 17 digits for most values: mantissas
// above 2^53), with ReadCSV and the naive reader alternately, from
// memory, and reports the median per-pair ratio of CPU time naive/basin.
func BenchmarkReadCSVFormats(b *testing.B) {
	for _, tc := range []struct {
		name string
		prec int
	}{{"g9", 9}, {"g17", 17}, {"shortest", -1}} {
		rng := rand.New(rand.NewPCG(1, 0))
		buf := []byte("t,x1,x2,x3,x4,x5,x6\n")
		for i := range 200_000 {
			buf = strconv.AppendFloat(buf, float64(i)*0.005, 'f', 4, 64)
			for range 6 {
				buf = append(buf, ',')
				buf = strconv.AppendFloat(buf, rng.NormFloat64(), 'g', tc.prec, 64)
			}
			buf = append(buf, '\n')
		}
		b.Run(tc.name, func(b *testing.B) {
			b.SetBytes(int64(len(buf)))
			var ratio []float64
			for b.Loop() {
				runtime.GC()
				c0 := cpuTime()
				if _, err := ReadCSV(bytes.NewReader(buf), "x.csv", nil); err != nil {
					b.Fatal(err)
				}
				basin := cpuTime() - c0
				runtime.GC()
				c1 := cpuTime()
				if _, err := naiveRead(bytes.NewReader(buf)); err != nil {
					b.Fatal(err)
				}
				ratio = append(ratio, (cpuTime()-c1).Seconds()/basin.Seconds())
			}
			b.ReportMetric(order.Median(order.Sorted(nil, ratio)), "x-naive-cpu")
		})
	}
}

// BenchmarkKernelsSideBySide times each rewritten kernel of the whole
// read against the loop it replaced (kept in kernels_test.go), on the
// same 10^6 samples (Gaussian noise; a clock of 0.005 s steps),
// alternately in one loop (the order swapped every iteration): x-plain is
// the median of the per-pair ratios plain/new of wall-clock time, and
// ns/sample the new kernel's median time a sample.
func BenchmarkKernelsSideBySide(b *testing.B) {
	const n = 1_000_000
	rng := rand.New(rand.NewPCG(4, 4))
	x, tm := make([]float64, n), make([]float64, n)
	for i := range x {
		x[i] = rng.NormFloat64()
		tm[i] = float64(i) * 0.005
	}
	sub := make([]float64, 0, n/(n/noiseSubsample)+1) // noiseOf's subsample
	for i := 0; i < n; i += n / noiseSubsample {
		sub = append(sub, x[i])
	}
	var co clockCoefs
	co.set(tm)
	var dst []float64
	var sink float64
	for _, k := range []struct {
		name       string
		plain, new func()
	}{
		{"span", func() { lo, hi, q := spanStepPlain(x, math.Inf(1)); sink += hi - lo + q },
			func() { lo, hi, q := spanStep(x, math.Inf(1)); sink += hi - lo + q }},
		{"scale", func() { sink += robustScalePlain(sub) }, func() { sink += robustScale(sub) }},
		{"jump-even", func() { dst, _ = clockJumpStatPlain(&co, dst, x) }, func() { dst, _ = co.jumpStat(dst, x) }},
		{"clock-set", func() { clockSetPlain(&co, tm) }, func() { co.set(tm) }},
		{"head", func() { sink += float64(firstBeyondPlain(x, 0, 6)) }, func() { sink += float64(firstBeyond(x, 0, 6)) }},
	} {
		b.Run(k.name, func(b *testing.B) {
			var ratio, per []float64
			i := 0
			for b.Loop() {
				var dp, dn time.Duration
				run := func(f func(), d *time.Duration) {
					t0 := time.Now()
					f()
					*d = time.Since(t0)
				}
				if i%2 == 0 {
					run(k.plain, &dp)
					run(k.new, &dn)
				} else {
					run(k.new, &dn)
					run(k.plain, &dp)
				}
				ratio = append(ratio, dp.Seconds()/dn.Seconds())
				per = append(per, float64(dn.Nanoseconds())/n)
				i++
			}
			med := func(v []float64) float64 { return order.Median(order.Sorted(nil, v)) }
			b.ReportMetric(med(ratio), "x-plain")
			b.ReportMetric(med(per), "ns/sample")
		})
	}
	_ = sink
}
