package main

import (
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"
)

// set returns the outputs of one imagined run, each file saying which.
func set(gen string) []atomicFile {
	var fs []atomicFile
	for _, n := range []string{"model.json", "certificate.json", "report.html", "summary.txt"} {
		fs = append(fs, atomicFile{n, func(w io.Writer) error { _, err := io.WriteString(w, gen+" "+n); return err }})
	}
	return fs
}

// readSet returns the generation each output comes from, and fails on
// basin's working files left in dir.
func readSet(t *testing.T, dir string) []string {
	t.Helper()
	var gens []string
	for _, f := range set("") {
		b, err := os.ReadFile(filepath.Join(dir, f.Name))
		if err != nil {
			gens = append(gens, "missing")
			continue
		}
		gen, _, _ := strings.Cut(string(b), " ")
		gens = append(gens, gen)
	}
	return gens
}

func hiddenFiles(t *testing.T, dir string) []string {
	t.Helper()
	ents, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	var out []string
	for _, e := range ents {
		if strings.HasPrefix(e.Name(), ".") {
			out = append(out, e.Name())
		}
	}
	return out
}

func same(gens []string, want string) bool {
	for _, g := range gens {
		if g != want {
			return false
		}
	}
	return len(gens) > 0
}

// TestSetKeptOnFailedRename: when the third rename fails, the two files
// already renamed are put back, so the folder holds the previous set,
// whole, and nothing of basin's is left in it.
func TestSetKeptOnFailedRename(t *testing.T) {
	dir := t.TempDir()
	if err := writeAtomic(dir, set("A")...); err != nil {
		t.Fatal(err)
	}
	n := 0
	sw := &setWriter{rename: func(a, b string) error {
		n++
		if n == 3 {
			return errors.New("operation not permitted")
		}
		return os.Rename(a, b)
	}}
	err := sw.write(dir, set("B")...)
	if err == nil || !strings.Contains(err.Error(), "previous outputs are restored") {
		t.Fatalf("err = %v", err)
	}
	if got := readSet(t, dir); !same(got, "A") {
		t.Errorf("after the failure: %v, want the previous set A whole", got)
	}
	if l := hiddenFiles(t, dir); len(l) > 0 {
		t.Errorf("left behind: %v", l)
	}
}

// TestSetRefusesUnreplaceable: an output that cannot be replaced (here a
// folder where summary.txt should be) stops the write before any file is
// touched.
func TestSetRefusesUnreplaceable(t *testing.T) {
	dir := t.TempDir()
	if err := writeAtomic(dir, set("A")[:3]...); err != nil {
		t.Fatal(err)
	}
	if err := os.MkdirAll(filepath.Join(dir, "summary.txt", "x"), 0o755); err != nil {
		t.Fatal(err)
	}
	err := writeAtomic(dir, set("B")...)
	var ie *inputError
	if !errors.As(err, &ie) {
		t.Fatalf("err = %v, want an input error", err)
	}
	if got := readSet(t, dir)[:3]; !same(got, "A") {
		t.Errorf("%v, want A unchanged", got)
	}
	if l := hiddenFiles(t, dir); len(l) > 0 {
		t.Errorf("left behind: %v", l)
	}
}

// TestSetKilledMidway: a writer killed between renames leaves a mixed
// set and its journal; readers refuse the folder, and the next writer
// restores the previous set before writing its own, removing every
// working file.
func TestSetKilledMidway(t *testing.T) {
	for _, fresh := range []bool{false, true} {
		t.Run(fmt.Sprintf("previous=%v", !fresh), func(t *testing.T) {
			dir := t.TempDir()
			if !fresh {
				if err := writeAtomic(dir, set("A")...); err != nil {
					t.Fatal(err)
				}
			}
			sw := &setWriter{killed: func(i int) bool { return i == 1 }}
			if err := sw.write(dir, set("B")...); err == nil {
				t.Fatal("the killed writer reported success")
			}
			if err := mixedSet(filepath.Join(dir, "certificate.json")); err == nil {
				t.Error("a reader accepts the half-swapped folder")
			}
			var out, errb strings.Builder
			if code := basinMain(t.Context(), []string{"check", "--cert", filepath.Join(dir, "certificate.json"), dir}, &out, &errb); code != 2 ||
				!strings.Contains(errb.String(), "stopped while replacing") {
				t.Errorf("check on the mixed set: exit %d, %q", code, errb.String())
			}
			// Recovery alone (an empty set) restores the previous one.
			if err := recoverDir(dir, nil); err != nil {
				t.Fatal(err)
			}
			want := "A"
			if fresh {
				want = "missing"
			}
			if got := readSet(t, dir); !same(got, want) {
				t.Errorf("after recovery: %v, want %s", got, want)
			}
			if err := writeAtomic(dir, set("C")...); err != nil {
				t.Fatal(err)
			}
			if got := readSet(t, dir); !same(got, "C") {
				t.Errorf("%v, want C", got)
			}
			if l := hiddenFiles(t, dir); len(l) > 0 {
				t.Errorf("left behind: %v", l)
			}
		})
	}
}

// TestSetRemovesStaleTemporaries: basin's own leftovers (and those of
// older versions, ".model.json.tmp123") go; a user's hidden file stays.
func TestSetRemovesStaleTemporaries(t *testing.T) {
	dir := t.TempDir()
	for _, n := range []string{".basin-new-model.json-123", ".basin-old-summary.txt-9", ".model.json.tmp4567", ".basin-journal.tmp1", ".mine"} {
		if err := os.WriteFile(filepath.Join(dir, n), []byte("x"), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	if err := writeAtomic(dir, set("A")...); err != nil {
		t.Fatal(err)
	}
	if l := hiddenFiles(t, dir); strings.Join(l, " ") != ".mine" {
		t.Errorf("hidden files after the write: %v, want only .mine", l)
	}
}

// TestSetWritersDoNotInterleave: eight writers on one folder, each rename
// slowed so that without the lock their renames would interleave; every
// file of the final set comes from one writer.
func TestSetWritersDoNotInterleave(t *testing.T) {
	dir := t.TempDir()
	slow := &setWriter{rename: func(a, b string) error { time.Sleep(2 * time.Millisecond); return os.Rename(a, b) }}
	var wg sync.WaitGroup
	errs := make([]error, 8)
	for w := range 8 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			errs[w] = slow.write(dir, set(fmt.Sprint("W", w))...)
		}()
	}
	wg.Wait()
	for w, err := range errs {
		if err != nil {
			t.Errorf("writer %d: %v", w, err)
		}
	}
	got := readSet(t, dir)
	if !same(got, got[0]) {
		t.Errorf("mixed set: %v", got)
	}
	if l := hiddenFiles(t, dir); len(l) > 0 {
		t.Errorf("left behind: %v", l)
	}
}
