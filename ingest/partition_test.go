package ingest

import (
	"errors"
	"os"
	"path/filepath"
	"reflect"
	"testing"
)

func TestExpandTree(t *testing.T) {
	root := t.TempDir()
	mk := func(rel string) {
		p := filepath.Join(root, rel)
		if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(p, []byte("t,x\n0,1\n"), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	mk("top.csv")
	mk("vehicle=17/day=2026-11-30/a.csv")
	mk("vehicle=17/day=2026-12-01/b.parquet")
	mk("vehicle=9/notes.md") // not a log
	mk("vehicle=9/c.csv")
	mk("site=north%2Fbay 'B'/d.csv") // percent-escaped and odd characters
	mk("plain/e.csv")                // no "=": skipped unless recursive
	mk("=x/f.csv")                   // empty key: a plain folder
	mk(".hidden=1/g.csv")
	p := func(kv ...string) []Partition {
		var out []Partition
		for i := 0; i < len(kv); i += 2 {
			out = append(out, Partition{kv[i], kv[i+1]})
		}
		return out
	}
	want := []Input{
		{filepath.Join(root, "site=north%2Fbay 'B'/d.csv"), p("site", "north/bay 'B'")},
		{filepath.Join(root, "top.csv"), nil},
		{filepath.Join(root, "vehicle=17/day=2026-11-30/a.csv"), p("vehicle", "17", "day", "2026-11-30")},
		{filepath.Join(root, "vehicle=17/day=2026-12-01/b.parquet"), p("vehicle", "17", "day", "2026-12-01")},
		{filepath.Join(root, "vehicle=9/c.csv"), p("vehicle", "9")},
	}
	got, skipped, err := ExpandTree([]string{root}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("got %+v\nwant %+v", got, want)
	}
	if !reflect.DeepEqual(skipped, []string{filepath.Join(root, "=x"), filepath.Join(root, "plain")}) {
		t.Errorf("skipped %v", skipped)
	}
	got, skipped, err = ExpandTree([]string{root}, &ExpandOptions{Recursive: true})
	if err != nil || len(got) != len(want)+2 || len(skipped) != 0 {
		t.Errorf("recursive: %d files, skipped %v, %v", len(got), skipped, err)
	}
	// Expand (every reader) descends into partition folders too.
	paths, err := Expand([]string{root})
	if err != nil || len(paths) != len(want) {
		t.Errorf("Expand: %v, %v", paths, err)
	}
	// A key named twice in one path is refused, naming the folder.
	mk("vehicle=1/vehicle=2/h.csv")
	if _, _, err := ExpandTree([]string{root}, nil); !errors.Is(err, ErrPartition) {
		t.Errorf("repeated key: %v, want ErrPartition", err)
	}
	// Only plain folders below: nothing to read.
	only := t.TempDir()
	if err := os.MkdirAll(filepath.Join(only, "plain"), 0o755); err != nil {
		t.Fatal(err)
	}
	if _, _, err := ExpandTree([]string{only}, nil); !errors.Is(err, ErrNoFiles) {
		t.Errorf("no files: %v", err)
	}
}
