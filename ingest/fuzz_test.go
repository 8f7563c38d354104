package ingest

import (
	"bytes"
	"context"
	"errors"
	"math"
	"os"
	"path/filepath"
	"testing"
)

// checkDataset asserts what every successful read promises.
func checkDataset(t *testing.T, ds *Dataset) {
	t.Helper()
	for _, r := range ds.Runs {
		if len(r.X) != len(ds.States) {
			t.Fatalf("run %s has %d states, dataset %d", r.Name, len(r.X), len(ds.States))
		}
		for i := range r.T {
			if math.IsNaN(r.T[i]) || math.IsInf(r.T[i], 0) || (i > 0 && r.T[i] <= r.T[i-1]) {
				t.Fatalf("run %s: bad time %v at %d", r.Name, r.T[i], i)
			}
			for j := range r.X {
				if len(r.X[j]) != len(r.T) || math.IsNaN(r.X[j][i]) || math.IsInf(r.X[j][i], 0) {
					t.Fatalf("run %s: bad X[%d] at %d", r.Name, j, i)
				}
			}
		}
	}
}

func FuzzReadCSV(f *testing.F) {
	for _, s := range []string{
		"t,a\n0,1\n1,2\n",
		"\ufeff# c\r\n\"time [s]\";\"x (m)\"\r\n0;1e-3\r\n1;NaN\r\n2;3\r\n",
		"timestamp\ta\n2026-03-01T10:00:00+02:00\t1\n2026-03-01T10:00:01+02:00\t2\n",
		"run,t,a\nA,0,1\nB,0,2\nA,1,3\n",
		"t,a,note\n0,\"1.5\",\"a, b\"\n1,2,x\n",
		"t,a\n0,1\n0,2\n",
	} {
		f.Add([]byte(s), uint8(0))
	}
	f.Fuzz(func(t *testing.T, data []byte, mode uint8) {
		var opts *Options
		switch mode % 4 {
		case 1:
			opts = &Options{Rate: 100}
		case 2:
			opts = &Options{RunCol: "run"}
		case 3:
			opts = &Options{States: []string{"a"}}
		}
		ds, err := ReadCSV(bytes.NewReader(data), "f.csv", opts)
		if err != nil {
			var pe *ParseError
			if !errors.As(err, &pe) {
				t.Fatalf("error %T is not a *ParseError: %v", err, err)
			}
			if bytes.ContainsRune([]byte(err.Error()), '\n') {
				t.Fatalf("multi-line error %q", err)
			}
			return
		}
		checkDataset(t, ds)
	})
}

func FuzzReadParquet(f *testing.F) {
	good, err := os.ReadFile("testdata/indep.parquet")
	if err != nil {
		f.Fatal(err)
	}
	f.Add(good)
	f.Add(good[:len(good)-100])
	f.Add([]byte("PAR1\x00\x00\x00\x00PAR1"))
	dir := f.TempDir()
	f.Fuzz(func(t *testing.T, data []byte) {
		p := filepath.Join(dir, "f.parquet")
		if err := os.WriteFile(p, data, 0o644); err != nil {
			t.Fatal(err)
		}
		ds, err := ReadParquet(context.Background(), p, nil)
		if err != nil {
			var pe *ParseError
			if !errors.As(err, &pe) {
				t.Fatalf("error %T is not a *ParseError: %v", err, err)
			}
			return
		}
		checkDataset(t, ds)
	})
}
