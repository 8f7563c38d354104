package ingest

import (
	"context"
	"errors"
	"testing"
)

// TestColumnOrder: two logs with the same columns in another order read
// as one data set in the first file's order, each value under its own
// name; a log with another column is still refused (ErrColumns).
func TestColumnOrder(t *testing.T) {
	dir := t.TempDir()
	a := writeFile(t, dir, "a.csv", "t,x [mm],v [mm/s]\n0,1,10\n0.1,2,20\n0.2,3,30\n0.3,4,40\n")
	b := writeFile(t, dir, "b.csv", "t,v [mm/s],x [mm]\n0,50,5\n0.1,60,6\n0.2,70,7\n0.3,80,8\n")
	ds, err := Load(context.Background(), []string{a, b}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(ds.States) != 2 || ds.States[0].Name != "x" || ds.States[1].Name != "v" || len(ds.Runs) != 2 {
		t.Fatalf("states %+v, %d runs", ds.States, len(ds.Runs))
	}
	r := ds.Runs[1]
	if r.X[0][0] != 5 || r.X[1][0] != 50 || r.X[0][3] != 8 || r.X[1][3] != 80 {
		t.Errorf("b.csv read as x %v, v %v; want x 5..8, v 50..80", r.X[0], r.X[1])
	}
	c := writeFile(t, dir, "c.csv", "t,x [mm],w [mm/s]\n0,1,10\n0.1,2,20\n0.2,3,30\n0.3,4,40\n")
	if _, err := Load(context.Background(), []string{a, c}, nil); !errors.Is(err, ErrColumns) {
		t.Errorf("another column: err %v, want ErrColumns", err)
	}
	d := writeFile(t, dir, "d.csv", "t,v [m/s],x [mm]\n0,50,5\n0.1,60,6\n0.2,70,7\n0.3,80,8\n")
	if _, err := Load(context.Background(), []string{a, d}, nil); !errors.Is(err, ErrColumns) {
		t.Errorf("another unit: err %v, want ErrColumns", err)
	}
}
