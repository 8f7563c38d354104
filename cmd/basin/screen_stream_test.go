package main

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"github.com/apache/arrow/go/v15/arrow"
	"github.com/apache/arrow/go/v15/arrow/array"
	"github.com/apache/arrow/go/v15/arrow/memory"
	"github.com/apache/arrow/go/v15/parquet"
	"github.com/apache/arrow/go/v15/parquet/pqarrow"

	"basin.example/fit"
	"basin.example/ingest"
	"basin.example/validate"
)

// streamCert is screenCert with the certificate's noise per state (so
// that each run's own noise widens the tolerance) and held-out decay
// rates (so that slow is flagged).
var streamCert = strings.Replace(strings.Replace(screenCert, `"level": 0.8,`,
	`"level": 0.8, "noise": [0.0005, 0.004],`, 1), `"confidence": 0.999999}`, `"confidence": 0.999999, "decay": {"lower_bound": 0.3}}`, 1)

// rigRun writes the samples of a pitch/rate log in screenCert's
// coordinates: z' = rate*z from z0 (exact exponentials, 1 kHz), with
// Gaussian noise sd (in z), a resting head of head samples, hammer hits
// (z1 jumps by 0.6), a time gap before gapAt, and missing rate cells.
type rigRun struct {
	n, head, gapAt int
	z0             [2]float64
	rate, sd       float64
	hits, missing  []int
}

func (g rigRun) cols(seed uint64) (t, p, r []float64) {
	rng := rand.New(rand.NewPCG(seed, 1))
	z := g.z0
	tt := 0.0
	for i := range g.n {
		if i > 0 {
			tt += 0.001
		}
		if i == g.gapAt && g.gapAt > 0 {
			tt += 0.05
		}
		for _, h := range g.hits {
			if i == h {
				z[1] += 0.6
			}
		}
		zi := z
		if i < g.head {
			zi = [2]float64{0.1, 0}
		} else {
			e := math.Exp(g.rate * 0.001)
			z[0], z[1] = z[0]*e, z[1]*e
		}
		t = append(t, tt)
		p = append(p, 1.5+2*(zi[0]+g.sd*rng.NormFloat64()))
		r = append(r, 10*(zi[1]+g.sd*rng.NormFloat64()))
	}
	for _, m := range g.missing {
		r[m] = math.NaN()
	}
	return t, p, r
}

func writeRigRun(t *testing.T, path string, g rigRun, seed uint64, rg int64, dict bool) {
	t.Helper()
	tc, p, r := g.cols(seed)
	if strings.HasSuffix(path, ".csv") {
		var b strings.Builder
		b.WriteString("time [s],pitch [deg],rate [deg/s]\n")
		for i := range tc {
			rs := fmt.Sprintf("%.17g", r[i])
			if math.IsNaN(r[i]) {
				rs = ""
			}
			fmt.Fprintf(&b, "%.17g,%.17g,%s\n", tc[i], p[i], rs)
		}
		if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	sc := arrow.NewSchema([]arrow.Field{
		{Name: "time [s]", Type: arrow.PrimitiveTypes.Float64},
		{Name: "pitch [deg]", Type: arrow.PrimitiveTypes.Float64},
		{Name: "rate [deg/s]", Type: arrow.PrimitiveTypes.Float64, Nullable: true},
	}, nil)
	b := array.NewRecordBuilder(memory.NewGoAllocator(), sc)
	defer b.Release()
	for i := range tc {
		b.Field(0).(*array.Float64Builder).Append(tc[i])
		b.Field(1).(*array.Float64Builder).Append(p[i])
		if math.IsNaN(r[i]) {
			b.Field(2).(*array.Float64Builder).AppendNull()
		} else {
			b.Field(2).(*array.Float64Builder).Append(r[i])
		}
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
	props := parquet.NewWriterProperties(parquet.WithMaxRowGroupLength(rg), parquet.WithDictionaryDefault(dict))
	if err := pqarrow.WriteTable(tbl, f, rg, props, pqarrow.DefaultWriterProps()); err != nil {
		t.Fatal(err)
	}
}

func btoi(b bool) int {
	if b {
		return 1
	}
	return 0
}

// TestScreenStreamed: screening a streamed file gives, run by run, what
// screening ReadFile's data set gives (same runs, flags, times, excesses,
// distances, counts), for settling, rising, slow and noisy runs with
// resting heads, hammer hits, gaps and missing cells, in several row-group
// sizes, with and without the run-noise tolerance, the runs found at
// Open or as they are screened (StreamOptions.LateRuns, with the results'
// storage reused from file to file).
func TestScreenStreamed(t *testing.T) {
	runs := []rigRun{
		{n: 40000, z0: [2]float64{0.5, 0.3}, rate: -1, sd: 1e-3},
		{n: 40000, head: 3000, z0: [2]float64{0.4, -0.2}, rate: -0.5, sd: 2e-3, hits: []int{15000, 30000}, gapAt: 22000,
			missing: []int{100, 101, 25000}},
		{n: 30000, z0: [2]float64{0.1, 0.1}, rate: 0.08, sd: 5e-4, hits: []int{10000}},
		{n: 30000, z0: [2]float64{0.6, 0}, rate: -0.02, sd: 1e-2},
		// one run, after a resting head: not the file's rows from the first
		{n: 30000, head: 2000, z0: [2]float64{0.3, -0.3}, rate: -0.8, sd: 1e-3},
	}
	// quietCert: noise per state above every run's, so no run is widened
	quietCert := strings.Replace(screenCert, `"level": 0.8,`, `"level": 0.8, "noise": [1, 10],`, 1)
	for _, certBody := range []string{screenCert, streamCert, quietCert} {
		c, err := fit.ReadCertificate(strings.NewReader(certBody))
		if err != nil {
			t.Fatal(err)
		}
		for _, rg := range []int64{1000, 8192, 1 << 16, 0} { // 0: CSV
			for _, late := range []bool{false, true} {
				ext := "parquet"
				if rg == 0 {
					ext = "csv"
				}
				t.Run(fmt.Sprintf("noise=%v/rg=%d/late=%v", c.Noise, rg, late), func(t *testing.T) {
					dir := t.TempDir()
					var files []string
					for i, g := range runs {
						p := filepath.Join(dir, fmt.Sprintf("r%d.%s", i, ext))
						writeRigRun(t, p, g, uint64(i), rg, i%2 == 1)
						files = append(files, p)
					}
					opts := &ingest.Options{States: c.States}
					s := validate.NewScreener(c, nil)
					st := ingest.NewStreamer(opts, &ingest.StreamOptions{Window: -1, CSVWindow: -1, LateRuns: late, Tap: s.Tap()})
					if (s.Tap() != nil) != (len(c.Noise) > 0) {
						t.Fatalf("tap %v with noise %v", s.Tap(), c.Noise)
					}
					flagged, nruns, widened, slow, oneRead := 0, 0, 0, 0, 0
					var dst []validate.RunScreen
					for fi, f := range files {
						ds, err := ingest.ReadFile(context.Background(), f, opts)
						if err != nil {
							t.Fatal(err)
						}
						wideBefore := widened
						want := make([]validate.RunScreen, len(ds.Runs))
						for k := range ds.Runs {
							if len(c.Noise) > 0 {
								for j, v := range fit.RunNoise(&ds.Runs[k]) {
									if v > c.Noise[j] {
										widened++
										break
									}
								}
							}
							s.Screen(&want[k], f, &ds.Runs[k])
							want[k].Flags = append([]validate.Flag(nil), want[k].Flags...)
						}
						validate.JudgeLastPieces(want) // as ScreenFile does
						sf, err := st.Open(context.Background(), f)
						if err != nil {
							t.Fatal(err)
						}
						if sf.Whole != "" {
							t.Fatalf("%s read whole: %s", f, sf.Whole)
						}
						if sf.Late() != late {
							t.Fatalf("%s: runs left to the scan %v, asked %v", f, sf.Late(), late)
						}
						plan := sf.Passes // the planning reads: 1, or 2 with gap splits
						var got []validate.RunScreen
						if late {
							dst, err = s.ScreenFile(context.Background(), dst, sf)
							got = dst
						} else {
							got, err = s.ScreenFile(context.Background(), nil, sf)
						}
						sf.Close()
						if err != nil {
							t.Fatal(err)
						}
						// pass 1, then the screen that finds the runs: a file of
						// one run from the first row needs no read for its
						// noise; one that ends at the last row needs one more to
						// screen it, unless its tolerance is the one the file
						// gave as one run (a quiet certificate: neither widens)
						if late && len(want) == 1 {
							first := ds.Runs[0].Source.Line - 1 - btoi(ext == "csv")
							maxPasses := 0
							switch {
							case first == 0 && want[0].Samples == runs[fi].n:
								maxPasses = 2
								oneRead++
							case first+want[0].Samples == runs[fi].n && len(c.Noise) > 0 && widened == wideBefore:
								maxPasses = 2
								oneRead++
							case first+want[0].Samples == runs[fi].n:
								maxPasses = 3
							}
							if maxPasses > 0 && sf.Passes-plan > maxPasses-1 {
								t.Errorf("%s: one run from row %d read %d times after planning, want at most %d", f, first, sf.Passes-plan, maxPasses-1)
							}
						}
						if late && sf.Passes-plan > 3 {
							t.Errorf("%s: read %d times after planning", f, sf.Passes-plan)
						}
						if len(got) != len(want) {
							t.Fatalf("%s: %d runs, want %d", f, len(got), len(want))
						}
						for k := range want {
							if !reflect.DeepEqual(got[k], want[k]) {
								t.Errorf("%s run %d:\n got %+v\nwant %+v", f, k, got[k], want[k])
							}
							if want[k].Flagged {
								flagged++
							}
							for _, fl := range want[k].Flags {
								if fl.Kind == validate.FlagSlow {
									slow++
								}
							}
							nruns++
						}
					}
					if late && oneRead == 0 {
						t.Errorf("no file of one run from its first row: the one-read screen is not checked")
					}
					if flagged == 0 || nruns <= len(files) || (certBody == streamCert && (widened == 0 || slow == 0)) {
						t.Errorf("%d flagged of %d runs from %d files, %d widened, %d slow: the comparison does not see what it checks",
							flagged, nruns, len(files), widened, slow)
					}
					t.Logf("%d flagged of %d runs from %d files, %d widened, %d slow", flagged, nruns, len(files), widened, slow)
				})
			}
		}
	}
}
