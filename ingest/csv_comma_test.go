package ingest

import (
	"slices"
	"strings"
	"testing"
	"time"
)

// TestDecimalComma: a ';' or tab file whose first data row writes its
// numbers with a decimal comma (the dialect a spreadsheet or logger set
// to a European locale writes) is read with every comma of the data as a
// point, in the time column (seconds, or ISO 8601 with a comma before the
// fraction of a second, which ISO 8601 allows) and the states; the header
// keeps its commas. A ',' file, or one whose first row has no decimal
// comma, is read as before.
func TestDecimalComma(t *testing.T) {
	for _, tc := range []struct {
		name, in string
		t        []float64
		x        [][]float64
		names    []string
	}{
		{"semicolon", "t [s];pos [mm, filtered];vel\n0;1,5;-2,25\n0,1;1,25;-2\n0,2;1;-1,5\n",
			[]float64{0, 0.1, 0.2}, [][]float64{{1.5, 1.25, 1}, {-2.25, -2, -1.5}}, []string{"pos", "vel"}},
		{"tab", "t\ta\n0\t1,5\n1\t2\n2\t3,75\n",
			[]float64{0, 1, 2}, [][]float64{{1.5, 2, 3.75}}, []string{"a"}},
		{"ISO time with a comma fraction", "timestamp;a\n2026-11-30 08:00:00,000;1,5\n2026-11-30 08:00:00,250;1,25\n",
			[]float64{0, 0.25}, [][]float64{{1.5, 1.25}}, []string{"a"}},
		{"ISO time with a point, values with commas", "timestamp;a\n2026-11-30 08:00:00.000;1,5\n2026-11-30 08:00:00.500;1\n",
			[]float64{0, 0.5}, [][]float64{{1.5, 1}}, []string{"a"}},
		{"quoted cells", "t;a\n\"0\";\"1,5\"\n\"1\";\"2,5\"\n",
			[]float64{0, 1}, [][]float64{{1.5, 2.5}}, []string{"a"}},
		{"points in a semicolon file", "t;a\n0;1.5\n1;2.5\n",
			[]float64{0, 1}, [][]float64{{1.5, 2.5}}, []string{"a"}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			ds, err := ReadCSV(strings.NewReader(tc.in), "x.csv", &Options{KeepHead: true, KeepEvents: true})
			if err != nil {
				t.Fatal(err)
			}
			if len(ds.Runs) != 1 {
				t.Fatalf("%d runs, want 1", len(ds.Runs))
			}
			r := ds.Runs[0]
			if !slices.Equal(r.T, tc.t) {
				t.Errorf("t = %v, want %v", r.T, tc.t)
			}
			for j := range tc.x {
				if !slices.Equal(r.X[j], tc.x[j]) {
					t.Errorf("%s = %v, want %v", tc.names[j], r.X[j], tc.x[j])
				}
			}
			var names []string
			for _, c := range ds.States {
				names = append(names, c.Name)
			}
			if !slices.Equal(names, tc.names) {
				t.Errorf("states %v, want %v", names, tc.names)
			}
		})
	}
	// the unit keeps its comma
	ds, err := ReadCSV(strings.NewReader("t;pos [mm, filtered];vel\n0;1,5;2\n1;2;3\n"), "x.csv", nil)
	if err != nil {
		t.Fatal(err)
	}
	if ds.States[0].Unit != "mm, filtered" {
		t.Errorf("unit %q, want \"mm, filtered\"", ds.States[0].Unit)
	}
	// the epoch of an ISO time with a comma fraction
	want := time.Date(2026, 11, 30, 8, 0, 0, 500e6, time.UTC)
	ds, err = ReadCSV(strings.NewReader("timestamp;a\n2026-11-30 08:00:00,5;1,5\n2026-11-30 08:00:01,5;1\n"), "x.csv", &Options{KeepHead: true})
	if err != nil {
		t.Fatal(err)
	}
	if !ds.Runs[0].Epoch.Equal(want) {
		t.Errorf("epoch %v, want %v", ds.Runs[0].Epoch, want)
	}
}
