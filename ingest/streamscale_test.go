package ingest

import (
	"context"
	"encoding/binary"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"sort"
	"strings"
	"testing"

	"github.com/apache/arrow/go/v15/parquet/compress"
)

// madBySort is the scale by its definition, with the standard library's
// sort (sort.Float64s) standing outside the code under test: madGauss
// times the median of |v_i - median(v)| over robustScale's strided
// subsample, each median the middle value or the mean of the two middle
// values (the MAD; common practice).
func madBySort(v []float64) float64 {
	step := max(1, len(v)/noiseSubsample)
	var w []float64
	for i := 0; i < len(v); i += step {
		w = append(w, v[i])
	}
	med := func(s []float64) float64 {
		sort.Float64s(s)
		n := len(s)
		if n%2 == 1 {
			return s[n/2]
		}
		return (s[n/2-1] + s[n/2]) / 2
	}
	m := med(w)
	for i := range w {
		w[i] = math.Abs(w[i] - m)
	}
	return madGauss * med(w)
}

// TestScaleOf checks that the selection (Hoare's FIND [Hoare1961], in
// a sample's bracket [FloydRivest1975] from scaleSampled values on)
// gives the sorted definition's scale to the bit (both are order
// statistics of the same values, so no tolerance applies), on odd and
// even counts, ties, signed zeros, a count above noiseSubsample
// (strided), sorted and reversed input (the pivot's worst cases),
// samples that miss the median's or the deviations' rank (the whole
// selection then decides), and values that are not finite, sampled or
// not (robustScale's order settles those).
func TestScaleOf(t *testing.T) {
	rng := rand.New(rand.NewPCG(12, 1))
	gauss := func(n int) []float64 {
		v := make([]float64, n)
		for i := range v {
			v[i] = rng.NormFloat64()
		}
		return v
	}
	rounded := func(n int) []float64 {
		v := gauss(n)
		for i := range v {
			v[i] = math.Round(v[i] * 3)
		}
		return v
	}
	ramp := func(n int, dir float64) []float64 {
		v := make([]float64, n)
		for i := range v {
			v[i] = dir * float64(i)
		}
		return v
	}
	// the values scaleOf's sample draws (every n/scaleSample-th) far
	// above the others: the median's bracket misses and the whole
	// selection decides
	missed := func(n int) []float64 {
		v := gauss(n)
		for i := range scaleSample {
			v[i*n/scaleSample] = 1e6 + float64(i)
		}
		return v
	}
	// the sample's values at the median: the deviations' bracket misses
	missedDev := func(n int) []float64 {
		v := gauss(n)
		slices.Sort(v)
		m := v[n/2]
		for i := range scaleSample {
			v[i*n/scaleSample] = m
		}
		return v
	}
	withAt := func(v []float64, i int, x float64) []float64 { v[i] = x; return v }
	cases := []struct {
		name string
		v    []float64
	}{
		{"one", []float64{3}},
		{"two", []float64{3, -1}},
		{"three", []float64{3, -1, 7}},
		{"odd 17", gauss(17)},
		{"even 1000", gauss(1000)},
		{"odd 16383", gauss(16383)},
		{"strided 40001", gauss(40001)},
		{"ties", rounded(5000)},
		{"all equal", make([]float64, 999)},
		{"signed zeros", []float64{0, math.Copysign(0, -1), 0, math.Copysign(0, -1), 1, -1}},
		{"sorted", ramp(10000, 1)},
		{"reversed", ramp(10001, -1)},
		{"even 16384", gauss(16384)},
		{"sampled ties", rounded(16384)},
		{"sample misses", missed(16384)},
		{"sample misses the deviations", missedDev(16385)},
		{"sampled with Inf", append(gauss(16384), math.Inf(-1))},
		{"sampled with NaN", append(gauss(16385), math.NaN())},
		{"strided with NaN", withAt(gauss(40001), 2*7, math.NaN())},
		{"strided, NaN between", withAt(gauss(40001), 1, math.NaN())},
		{"with Inf", append(gauss(100), math.Inf(1))},
		{"with NaN", append(gauss(100), math.NaN())},
	}
	var w []float64
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			keep := append([]float64(nil), tc.v...)
			var got float64
			w, got = scaleOf(w, tc.v)
			want := robustScale(tc.v)
			if math.Float64bits(got) != math.Float64bits(want) && !(math.IsNaN(got) && math.IsNaN(want)) {
				t.Errorf("scaleOf = %v, robustScale %v", got, want)
			}
			if def := madBySort(append([]float64(nil), tc.v...)); !math.IsNaN(def) && got != def {
				t.Errorf("scaleOf = %v, the sorted definition %v", got, def)
			}
			for i := range keep {
				if math.Float64bits(keep[i]) != math.Float64bits(tc.v[i]) {
					t.Fatalf("scaleOf modified its input at %d", i)
				}
			}
		})
	}
}

// TestClockCoef checks that the event ring's split of the jump statistic
// (the clock's coefficients once per sample, then the values per state)
// gives jumpAt's value to the bit, on even, jittered and rounded clocks:
// the streamed events must be those of the whole file.
func TestClockCoef(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 5))
	for _, clock := range []string{"even", "jittered", "rounded"} {
		tt := make([]float64, 4)
		for rep := range 2000 {
			for k := range tt {
				switch clock {
				case "even":
					tt[k] = float64(k) * 0.25
				case "jittered":
					tt[k] = float64(k)*0.002 + 0.0006*rng.Float64()
				default:
					tt[k] = float64(rep+k) * 0.001 // steps differ in their last bits
				}
			}
			x0, x1, x2, x3 := rng.NormFloat64(), rng.NormFloat64(), rng.NormFloat64(), rng.NormFloat64()
			c := clockCoef(tt[0], tt[1], tt[2], tt[3])
			got, want := c.jump(x0, x1, x2, x3), jumpAt(x0, x1, x2, x3, tt[0], tt[1], tt[2], tt[3])
			if math.Float64bits(got) != math.Float64bits(want) {
				t.Fatalf("%s clock %v: %v, jumpAt %v", clock, tt, got, want)
			}
		}
	}
}

// TestUnpackDict checks the dictionary index decoder against a bit-by-bit
// reading of the RLE/bit-packed hybrid as the Parquet format's encoding
// document describes it (Apache Parquet, Encodings.md, "Run Length
// Encoding / Bit-Packing Hybrid"; a bit-packed run is a ULEB128 header
// (groups << 1 | 1), then groups·bw bytes, values packed from the least
// significant bit; an RLE run is (count << 1) then the value in
// ceil(bw/8) bytes; from memory), on every bit width 1..32, with runs of
// both kinds, a last group padded past the values, and a bad index.
func TestUnpackDict(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 9))
	for bw := 1; bw <= 32; bw++ {
		nd := 1 << min(bw, 12)
		if bw > 12 {
			nd = 5000
		}
		dict := make([]float64, nd)
		for i := range dict {
			dict[i] = rng.NormFloat64()
		}
		body := []byte{byte(bw)}
		var want []float64
		for run := range 6 {
			if run%3 == 1 { // an RLE run (the last run is bit-packed)
				cnt := 1 + rng.IntN(20)
				v := rng.IntN(nd)
				body = binary.AppendUvarint(body, uint64(cnt)<<1)
				for i := range (bw + 7) / 8 {
					body = append(body, byte(v>>(8*i)))
				}
				for range cnt {
					want = append(want, dict[v])
				}
				continue
			}
			groups := 1 + rng.IntN(9)
			body = binary.AppendUvarint(body, uint64(groups)<<1|1)
			bits := make([]byte, groups*bw)
			for i := range groups * 8 {
				v := rng.IntN(nd)
				for b := range bw {
					if v>>b&1 == 1 {
						pos := i*bw + b
						bits[pos/8] |= 1 << (pos % 8)
					}
				}
				want = append(want, dict[v])
			}
			body = append(body, bits...)
		}
		n := len(want) - rng.IntN(8) // the last group pads past the values
		got := make([]float64, n)
		if !unpackDict(got, body, dict) {
			t.Fatalf("bw=%d: refused a good page", bw)
		}
		for i := range got {
			if got[i] != want[i] {
				t.Fatalf("bw=%d: value %d = %v, want %v", bw, i, got[i], want[i])
			}
		}
		if bw >= 1 && unpackDict(got, body, dict[:nd/2]) && nd > 2 {
			// indices past a halved dictionary must be refused (some are
			// drawn above nd/2 with near certainty: 50+ values)
			t.Errorf("bw=%d: accepted indices past the dictionary", bw)
		}
	}
}

// TestStreamParquetCut: a streamed Parquet file cut short between the
// plan and the scan, or between two scans, is an error naming the file
// and saying it changed, not a decode of what the short read left in
// the buffer, when its samples are read again (Hold -1). When they are
// held from the first read (the default, see StreamOptions.Hold), the
// scans give them, all of them, as planned.
func TestStreamParquetCut(t *testing.T) {
	for _, hold := range []int64{-1, 0} {
		for _, cutAt := range []string{"before the scan", "between scans"} {
			t.Run(fmt.Sprintf("hold=%d/%s", hold, cutAt), func(t *testing.T) {
				path := filepath.Join(t.TempDir(), "log.parquet")
				writeRigParquet(t, path, rigLog{n: 40000, dt: 0.001, sd: 1e-3}, 4, 4096, false, false, compress.Codecs.Uncompressed)
				sf, err := NewStreamer(nil, &StreamOptions{Window: -1, Hold: hold}).Open(context.Background(), path)
				if err != nil {
					t.Fatal(err)
				}
				defer sf.Close()
				if sf.Whole != "" {
					t.Fatalf("read whole: %s", sf.Whole)
				}
				if sf.Held() != (hold == 0) {
					t.Fatalf("hold %d: held %v", hold, sf.Held())
				}
				n := 0
				scan := func() error {
					n = 0
					return sf.Scan(context.Background(), func(_ int, tt []float64, _ [][]float64) error { n += len(tt); return nil })
				}
				if cutAt == "between scans" {
					if err := scan(); err != nil {
						t.Fatal(err)
					}
				}
				if err := os.Truncate(path, 4096); err != nil {
					t.Fatal(err)
				}
				err = scan()
				if hold == 0 {
					want := 0
					for _, r := range sf.Runs {
						want += r.Samples
					}
					if err != nil || n != want || n == 0 {
						t.Fatalf("held: the scan gave %d samples (%v), the runs hold %d", n, err, want)
					}
					return
				}
				if err == nil || !strings.Contains(err.Error(), "log.parquet") || !strings.Contains(err.Error(), "changed while it was read") {
					t.Fatalf("Scan of a file cut short: %v", err)
				}
				t.Log(err)
			})
		}
	}
}
