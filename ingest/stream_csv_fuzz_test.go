package ingest

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// FuzzStreamCSV: a streamed read of any CSV bytes either fails with
// ReadFile's error, word for word, or gives ReadFile's runs, with the
// values the tap is shown; it never panics. Each input is read with the
// runs found at Open and as the first Scan gives them, by a new Streamer
// and by one that read another file before (its buffers reused). The
// seeds are small rig logs and the dialects of FuzzReadCSV's.
func FuzzStreamCSV(f *testing.F) {
	dir := f.TempDir()
	for i, g := range []rigLog{
		{n: 60, dt: 0.01, sd: 1e-3, hits: []int{30}, missing: []int{7}},
		{n: 300, dt: 0.001, sd: 1e-3, head: 40, hits: []int{150}, gapAt: 200, missing: []int{5, 6}},
	} {
		p := filepath.Join(dir, "seed.csv")
		writeRigCSV(f, p, g, uint64(i), 50)
		b, err := os.ReadFile(p)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b, uint8(i))
	}
	for _, s := range []string{
		"t,a\n0,1\n1,2\n",
		"\ufeff# c\r\n\"time [s]\";\"x (m)\"\r\n0;1e-3\r\n1;NaN\r\n2;3\r\n",
		"t,a,note\n0,\"1.5\",\"a, b\"\n1,2,x\n",
		"t\ta\n0\t1,5\n0,5\t2,5\n1\t3\n",
		"t,a,b\n0,1,2\n1,2,2\n2,3,\n3,4,2\n",
		"clock,a\n1,2\n3,4\n",
		"t,a,b\n0,1,1e400\n1,2,3\n",
		"t,a,b\n0,-nan,1\n1,2,nan(ind)\n2,3,4\n3,4,5\n",
		"Zeit [s];Temperatur [\xb0C];Weg [\xb5m]\n0;1,5;2\n0,1;1;3\n0,2;0,5;2,5\n",
		"time,a,b\ns,\xb0C,\xb5m\n0,1,2\n1,2,3\n2,1,1\n",
		"t,a [\x81],b\n0,1,2\n1,2,3\n",
	} {
		f.Add([]byte(s), uint8(2))
	}
	// the file another Streamer reads first, to leave its buffers
	other := filepath.Join(dir, "other.csv")
	writeRigCSV(f, other, rigLog{n: 2000, dt: 0.001, sd: 1e-3, hits: []int{1000}}, 9, 0)
	f.Fuzz(func(t *testing.T, data []byte, mode uint8) { fuzzStreamCSVOnce(t, data, mode, other) })
}

func fuzzStreamCSVOnce(t *testing.T, data []byte, mode uint8, other string) {
	p := filepath.Join(t.TempDir(), "f.csv")
	if err := os.WriteFile(p, data, 0o644); err != nil {
		t.Fatal(err)
	}
	var opts *Options
	switch mode % 4 {
	case 1:
		opts = &Options{KeepHead: true}
	case 3:
		opts = &Options{Rate: 100}
	}
	if opts != nil && opts.Rate > 0 && !strings.Contains(string(data[:min(len(data), 64)]), "clock") {
		opts = nil // a rate with a time column is an error of its own
	}
	want, werr := ReadFile(context.Background(), p, opts)
	used := func(o *Options, so *StreamOptions) *Streamer {
		quiet := *so
		quiet.Tap = nil // not shown the other file
		s := NewStreamer(o, &quiet)
		if sf, err := s.Open(context.Background(), other); err == nil {
			_ = sf.Scan(context.Background(), func(int, []float64, [][]float64) error { return nil })
			sf.Close()
		}
		s.tap = so.Tap
		return s
	}
	for _, late := range []bool{false, true} {
		so := &StreamOptions{Window: -1, CSVWindow: -1, LateRuns: late}
		fuzzStreamWith(NewStreamer, t, p, opts, so, want, werr)
		fuzzStreamWith(used, t, p, opts, so, want, werr)
	}
}
