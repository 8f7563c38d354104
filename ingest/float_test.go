package ingest

import (
	"bytes"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"
)

// floatCorpus holds decimal strings whose float64 value is fixed by the
// IEEE 754-2019 rule for conversion from decimal (§5.12.2: correctly
// rounded, round to nearest, ties to even). strconv.ParseFloat implements
// that rule, so parseFloat must return exactly its bits.
var floatCorpus = []string{
	"0", "-0", "+0", "0.0", "-0.0", "0e0", "-0e-5", "00000", ".0",
	"1", "-1", "+1", "1.", ".5", "-.5", "0.1", "0.2", "0.3", "1.5e3", "1.5E3", "1.5e+3", "1.5e-3",
	"123456789", "9007199254740992", "9007199254740993", "9007199254740991", // 2^53, 2^53+1, 2^53-1
	"18446744073709551615", "18446744073709551616", "1234567890123456789", "12345678901234567890",
	"0.1234567890123456789", "3.141592653589793238462643383279", "2.718281828459045",
	"1e22", "1e23", "1e-22", "1e-23", "9999999999999999e22", "123e-22", "123e-23",
	"1e308", "1.7976931348623157e308", "1.7976931348623158e308", "-1.7976931348623157e308",
	"2.2250738585072014e-308", "2.2250738585072011e-308", // smallest normal and just below
	"4.9e-324", "5e-324", "2.4703282292062328e-324", "2.4703282292062327e-324", // smallest subnormal, halfway
	"1e-320", "-1e-310", "4.4501477170144023e-308",
	"0.000001", "0.0000000000000000000001", "100000000000000000000000",
	"7.038531e-26", "1.00000005960464477550", "8.589973e9", "1.2345678e-5", "-9.87654321e+10",
	"0.30000000000000004", "1.0000000000000002", "0.9999999999999999",
	"00012.5000", "1.50000000000000000000000000", "1_000", "1e400", "-1e400", "1e-400",
	"NaN", "nan", "Inf", "-Inf", "infinity",
	// mantissas above 2^53 and exponents beyond 22 (eiselLemire): ties
	// between two float64 values (2^53+1, +3 and 2^54+2 round to even),
	// one past a tie, 19 digits, the ends of the table and of the range
	"9007199254740995", "18014398509481986", "18014398509481987", "9007199254740993e-5",
	"1234567890123456789e-19", "9999999999999999999", "9999999999999999999e-340", "1e-348", "1e-349", "1e347",
	"1e300", "1e-300", "123456789012345678e-300", "4.9406564584124654e-324", "2.2250738585072012e-308",
	"1.7976931348623158e308", "1.7976931348623159e308", "0.12345678901234567", "-0.30000000000000004e-5",
	// zeros after the point before shortest printing's 17 digits
	"0.0025325903623972584", "-0.0002980853905575681", "00.000123", "-.00012345678901234567", "0.000",
	"0.00000000000000000000000001234567890123456789", "0.000000000000000000001234567890123456789e-330",
	"0.00012345678901234567890", "0.0000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000001",
}

// floatBad is refused by strconv.ParseFloat, and so must be by parseFloat.
var floatBad = []string{"", "-", "+", ".", "e5", "1e", "1e+", "1.2.3", "1,5", "abc", "1x", "0x", "--1", " 1", "1 ", "1e5e5", "\x00"}

// checkScanFast: when scanFast takes the whole of s it must agree with
// strconv.ParseFloat bit for bit, and it must never take a string that
// strconv refuses.
func checkScanFast(t *testing.T, s string) {
	t.Helper()
	v, n, ok := scanFast([]byte(s))
	// the same number followed by a cell (the word-at-a-time reads see
	// past its end): the same bytes taken, the same bits
	for _, tail := range []string{",12345678", "\n", ",-0.5,x"} {
		v2, n2, ok2 := scanFast([]byte(s + tail))
		if ok && n == len(s) && (!ok2 || n2 != n || math.Float64bits(v2) != math.Float64bits(v)) {
			t.Errorf("scanFast(%q) = %v, %d, %v; alone %v, %d", s+tail, v2, n2, ok2, v, n)
		}
	}
	// what the code before took, scanFast takes, to the same bits (it
	// takes more: mantissas above 2^53 and larger exponents, by
	// eiselLemire, checked against strconv below)
	for _, tail := range []string{"", ",12345678", "\n"} {
		v2, n2, ok2 := scanFast([]byte(s + tail))
		v3, n3, ok3 := scanFastBefore([]byte(s + tail))
		if ok3 && (!ok2 || n2 != n3 || math.Float64bits(v2) != math.Float64bits(v3)) {
			t.Errorf("scanFast(%q) = %v, %d, %v; before %v, %d, %v", s+tail, v2, n2, ok2, v3, n3, ok3)
		}
	}
	checkFastRows(t, s)
	if !ok || n != len(s) {
		return
	}
	want, err := strconv.ParseFloat(s, 64)
	if err != nil || !sameFloat(v, want) {
		t.Errorf("scanFast(%q) = %v, strconv %v, %v", s, v, want, err)
	}
}

// checkFastRows: the row loop, whose number parse is scanFast's common
// case inlined, takes s as a cell exactly when scanFast takes it whole,
// to the same bits: s in both cells of a row, with and without a line
// end, and with a row after it (so that the word loads see past s).
func checkFastRows(t *testing.T, s string) {
	t.Helper()
	if strings.ContainsAny(s, ",\r\n") {
		return // not one cell
	}
	v, n, ok := scanFast([]byte(s + ","))
	whole := ok && n == len(s)
	lay := &csvLayout{delim: ',', slot: []int{0, 1}}
	p := &csvParser{lay: lay}
	for _, tc := range []struct {
		data string
		rows int
	}{{s + "," + s, 1}, {s + "," + s + "\n", 1}, {s + "," + s + "\r\n" + "12345678.25,-1e-5\n", 2}} {
		data := tc.data
		cols := [][]float64{make([]float64, 2), make([]float64, 2)}
		rows, used := p.fastRows(&chunk{}, cols, []byte(data))
		if (rows > 0) != whole {
			t.Errorf("fastRows(%q) takes %d rows; scanFast(%q) = %v, %d, %v", data, rows, s, v, n, ok)
			continue
		}
		if rows == 0 {
			continue
		}
		if rows != tc.rows || used != len(data) {
			t.Errorf("fastRows(%q) = %d rows, %d bytes; want %d, %d", data, rows, used, tc.rows, len(data))
		}
		for k := range cols {
			if math.Float64bits(cols[k][0]) != math.Float64bits(v) {
				t.Errorf("fastRows(%q) column %d = %v (%#x); scanFast %v (%#x)", data, k, cols[k][0], math.Float64bits(cols[k][0]), v, math.Float64bits(v))
			}
		}
	}
}

func sameFloat(a, b float64) bool {
	return math.Float64bits(a) == math.Float64bits(b) || (a != a && b != b)
}

func TestParseFloatCorpus(t *testing.T) {
	for _, s := range append(floatCorpus, floatBad...) {
		checkScanFast(t, s)
	}
	for _, s := range floatCorpus {
		want, werr := strconv.ParseFloat(s, 64)
		got, ok := parseFloat([]byte(s))
		if (werr == nil) != ok {
			t.Errorf("parseFloat(%q) ok = %v, strconv err = %v", s, ok, werr)
			continue
		}
		if ok && !sameFloat(got, want) {
			t.Errorf("parseFloat(%q) = %v (%#x), strconv %v (%#x)", s, got, math.Float64bits(got), want, math.Float64bits(want))
		}
	}
	for _, s := range floatBad {
		if _, werr := strconv.ParseFloat(s, 64); werr == nil {
			t.Fatalf("corpus error: strconv accepts %q", s)
		}
		if v, ok := parseFloat([]byte(s)); ok {
			t.Errorf("parseFloat(%q) = %v, want refusal", s, v)
		}
	}
}

// TestParseFloatRandom compares bit for bit on random values printed the
// ways loggers print them (shortest, fixed digits, exponent form).
func TestParseFloatRandom(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 0))
	n := 200000
	if testing.Short() {
		n = 20000
	}
	for i := range n {
		var v float64
		switch i % 4 {
		case 0:
			v = rng.NormFloat64()
		case 1:
			v = math.Float64frombits(rng.Uint64()) // any bits, incl. subnormals
		case 2:
			v = rng.NormFloat64() * math.Pow(10, float64(rng.IntN(60)-30))
		case 3:
			v = float64(rng.IntN(2000000)-1000000) / 1000
		}
		if math.IsNaN(v) || math.IsInf(v, 0) {
			continue
		}
		prec := rng.IntN(20) - 1
		for _, f := range []byte{'g', 'e', 'f'} {
			if f == 'f' && math.Abs(v) > 1e30 {
				continue
			}
			s := strconv.FormatFloat(v, f, prec, 64)
			checkScanFast(t, s)
			want, werr := strconv.ParseFloat(s, 64) // out of range after rounding: an error for both
			got, ok := parseFloat([]byte(s))
			if ok != (werr == nil) || (ok && !sameFloat(got, want)) {
				t.Fatalf("parseFloat(%q) = %v, %v; strconv %v", s, got, ok, want)
			}
		}
	}
}

func TestParseFloatAllocs(t *testing.T) {
	b := []byte("-1.2345e-3")
	if n := testing.AllocsPerRun(100, func() { parseFloat(b) }); n != 0 {
		t.Errorf("parseFloat allocates %v times", n)
	}
}

// FuzzParseFloat compares parseFloat and scanFast with strconv.ParseFloat
// bit for bit ([IEEE754]: conversion from decimal is correctly rounded,
// and strconv implements it): the same acceptance, the same bits, NaN for
// NaN.
func FuzzParseFloat(f *testing.F) {
	for _, s := range append(floatCorpus, floatBad...) {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		checkScanFast(t, s)
		want, werr := strconv.ParseFloat(s, 64)
		got, ok := parseFloat([]byte(s))
		if ok != (werr == nil) || (ok && !sameFloat(got, want)) {
			t.Fatalf("parseFloat(%q) = %v (%#x), %v; strconv %v (%#x), %v", s, got, math.Float64bits(got), ok, want, math.Float64bits(want), werr)
		}
	})
}

// benchCells is a block of rows like the benchmark file's (a time column
// printed with 4 decimals, six states with 9 significant digits), about
// 1 MB: what fastRows sees.
func benchCells() []byte {
	rng := rand.New(rand.NewPCG(1, 0))
	var buf []byte
	for i := 0; len(buf) < 1<<20; i++ {
		buf = strconv.AppendFloat(buf, float64(i)*0.005, 'f', 4, 64)
		for range benchCols - 1 {
			buf = append(buf, ',')
			buf = strconv.AppendFloat(buf, rng.NormFloat64(), 'g', 9, 64)
		}
		buf = append(buf, '\n')
	}
	return buf
}

// BenchmarkScanCells scans a block of rows cell by cell with scanFast
// and with scanFastBefore (the code before), alternately in one loop (so that both see the same
// machine load), and reports the fastest ns/cell of each and the median
// of the per-pair ratios narrow/fast.
func BenchmarkScanCells(b *testing.B) {
	data := benchCells()
	cells := float64(bytes.Count(data, []byte{','}) + bytes.Count(data, []byte{'\n'}))
	run := func(scan func([]byte) (float64, int, bool)) float64 {
		t0 := time.Now()
		var sink float64
		for i := 0; i < len(data); {
			v, n, ok := scan(data[i:])
			if !ok {
				b.Fatalf("refused %q", data[i:min(i+20, len(data))])
			}
			sink += v
			i += n + 1
		}
		if sink == 1 {
			b.Log(sink)
		}
		return float64(time.Since(t0).Nanoseconds()) / cells
	}
	var fast, narrow, ratio []float64
	for b.Loop() {
		f, n := run(scanFast), run(scanFastBefore)
		fast, narrow, ratio = append(fast, f), append(narrow, n), append(ratio, n/f)
	}
	b.ReportMetric(slices.Min(fast), "fast-ns/cell")
	b.ReportMetric(slices.Min(narrow), "narrow-ns/cell")
	slices.Sort(ratio)
	b.ReportMetric(ratio[len(ratio)/2], "x-narrow")
}

// benchParser is a parser for benchCells' rows: every column kept.
func benchParser() (*csvParser, *chunk, [][]float64, int) {
	lay := &csvLayout{delim: ',', slot: make([]int, benchCols)}
	for j := range lay.slot {
		lay.slot[j] = j
	}
	rows := bytes.Count(benchCells(), []byte{'\n'})
	cols := make([][]float64, benchCols)
	for j := range cols {
		cols[j] = make([]float64, rows)
	}
	return &csvParser{lay: lay}, &chunk{}, cols, rows
}

// BenchmarkFastRows times the row loop on benchCells' block, as it is and
// as it was before its number parse was inlined (fastRowsBefore),
// alternately in one loop; it reports the fastest ns/cell of each and
// the median of the per-pair ratios before/now.
func BenchmarkFastRows(b *testing.B) {
	data := benchCells()
	p, c, cols, rows := benchParser()
	cells := float64(rows * benchCols)
	run := func(f func(*chunk, [][]float64, []byte) (int, int)) float64 {
		t0 := time.Now()
		if n, used := f(c, cols, data); n != rows || used != len(data) {
			b.Fatalf("%d rows of %d, %d bytes of %d", n, rows, used, len(data))
		}
		return float64(time.Since(t0).Nanoseconds()) / cells
	}
	var now, before, ratio []float64
	for b.Loop() {
		x, y := run(p.fastRows), run(p.fastRowsBefore)
		now, before, ratio = append(now, x), append(before, y), append(ratio, y/x)
	}
	b.ReportMetric(slices.Min(now), "ns/cell")
	b.ReportMetric(slices.Min(before), "before-ns/cell")
	slices.Sort(ratio)
	b.ReportMetric(ratio[len(ratio)/2], "x-before")
}

// TestReadCSVAgainstStrconv reads files of numbers printed the ways
// loggers print them (shortest, 9 and 17 significant digits, fixed
// decimals, exponent form, a '+' sign, leading zeros, subnormal and huge
// magnitudes), with a ',' delimiter and points and with a ';' delimiter
// and decimal commas, and checks every cell bit for bit against
// strconv.ParseFloat of its point form ([IEEE754] correct rounding, which
// [strconv] implements). The rows go through the fast row path, the
// cells it leaves through the general one.
func TestReadCSVAgainstStrconv(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 0))
	const rows, ns = 4000, 5
	cell := func(i int) string {
		v := rng.NormFloat64() * math.Pow(10, float64(rng.IntN(9)-4))
		switch i % 11 {
		case 0:
			return strconv.FormatFloat(v, 'g', -1, 64)
		case 1:
			return strconv.FormatFloat(v, 'g', 17, 64)
		case 2:
			return strconv.FormatFloat(v, 'f', rng.IntN(12), 64)
		case 3:
			return strconv.FormatFloat(v, 'e', rng.IntN(10), 64)
		case 4:
			return "+" + strconv.FormatFloat(math.Abs(v), 'f', 6, 64)
		case 5:
			return "000" + strconv.FormatFloat(math.Abs(v), 'f', 3, 64)
		case 6:
			return strconv.FormatFloat(math.Float64frombits(rng.Uint64()&0x000FFFFFFFFFFFFF), 'g', -1, 64) // subnormal
		case 7:
			return strconv.FormatFloat(v*1e290, 'g', 9, 64)
		default:
			return strconv.FormatFloat(v, 'g', 9, 64)
		}
	}
	want := make([][]string, ns)
	var pt, cm strings.Builder
	pt.WriteString("t")
	cm.WriteString("t")
	for j := range ns {
		fmt.Fprintf(&pt, ",x%d", j)
		fmt.Fprintf(&cm, ";x%d", j)
	}
	pt.WriteString("\n")
	cm.WriteString("\n")
	for i := range rows {
		ts := strconv.FormatFloat(float64(i)*0.0025, 'f', 4, 64)
		pt.WriteString(ts)
		cm.WriteString(strings.ReplaceAll(ts, ".", ","))
		for j := range ns {
			s := cell(i + j)
			want[j] = append(want[j], s)
			pt.WriteString("," + s)
			cm.WriteString(";" + strings.ReplaceAll(s, ".", ","))
		}
		pt.WriteString("\n")
		cm.WriteString("\n")
	}
	for _, in := range []string{pt.String(), cm.String()} {
		ds, err := ReadCSV(strings.NewReader(in), "x.csv", &Options{KeepEvents: true, KeepHead: true})
		if err != nil {
			t.Fatal(err)
		}
		if len(ds.Runs) != 1 || ds.Runs[0].Len() != rows {
			t.Fatalf("%d runs, %d samples; want 1, %d", len(ds.Runs), ds.Samples(), rows)
		}
		r := ds.Runs[0]
		for j := range ns {
			for i, s := range want[j] {
				w, err := strconv.ParseFloat(s, 64)
				if err != nil {
					t.Fatal(err)
				}
				if got := r.X[j][i]; math.Float64bits(got) != math.Float64bits(w) {
					t.Fatalf("row %d, x%d: %q read as %v (%#x), strconv %v (%#x)", i, j, s, got, math.Float64bits(got), w, math.Float64bits(w))
				}
			}
		}
	}
}

// TestScanFastLeadingZeros: the shortest decimal that reads back as the
// same float64 (strconv.FormatFloat's 'g', -1, as Go and Python's repr
// print logged values) of a small value has zeros after the point before
// its up to 17 digits; they are no digits of the mantissa, so scanFast
// takes it (instead of leaving it to strconv.ParseFloat, several times
// slower), to strconv's bits.
func TestScanFastLeadingZeros(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 0))
	for range 10000 {
		v := (rng.Float64() - 0.5) * math.Pow(10, -float64(rng.IntN(4)+1)) // |v| in [0, 0.05)
		s := strconv.FormatFloat(v, 'g', -1, 64)
		got, n, ok := scanFast([]byte(s))
		if !ok || n != len(s) || !sameFloat(got, v) {
			t.Fatalf("scanFast(%q) = %v, %d, %v; want %v, %d, true", s, got, n, ok, v, len(s))
		}
	}
}
