package main

import (
	"errors"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestWriteAtomicFailure checks that a failing writer (as on a full disk)
// leaves no file behind, not even the ones written before it.
func TestWriteAtomicFailure(t *testing.T) {
	dir := t.TempDir()
	errFull := errors.New("no space left on device")
	err := writeAtomic(dir,
		atomicFile{"a.json", func(w io.Writer) error { _, err := io.WriteString(w, "{}"); return err }},
		atomicFile{"b.html", func(w io.Writer) error { io.WriteString(w, "<p>"); return errFull }},
	)
	if !errors.Is(err, errFull) {
		t.Fatalf("err = %v, want %v", err, errFull)
	}
	ents, _ := os.ReadDir(dir)
	if len(ents) != 0 {
		var names []string
		for _, e := range ents {
			names = append(names, e.Name())
		}
		t.Fatalf("left behind: %v", names)
	}
}

func TestWriteAtomicOK(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "out")
	if err := writeAtomic(dir, atomicFile{"m.json", jsonWriter(map[string]int{"a": 1})}); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(filepath.Join(dir, "m.json"))
	if err != nil || !strings.Contains(string(b), `"a": 1`) {
		t.Fatalf("read back %q, %v", b, err)
	}
	st, _ := os.Stat(filepath.Join(dir, "m.json"))
	if st.Mode().Perm() != 0o644 {
		t.Errorf("mode %v, want 0644", st.Mode().Perm())
	}
}

func TestWriteAtomicUnwritable(t *testing.T) {
	if os.Geteuid() == 0 {
		// root ignores directory permissions; use a path under a file instead.
		f := filepath.Join(t.TempDir(), "file")
		os.WriteFile(f, nil, 0o644)
		if err := writeAtomic(filepath.Join(f, "out"), atomicFile{"m.json", jsonWriter(1)}); err == nil {
			t.Fatal("no error writing under a regular file")
		}
		return
	}
	dir := t.TempDir()
	os.Chmod(dir, 0o500)
	defer os.Chmod(dir, 0o700)
	if err := writeAtomic(dir, atomicFile{"m.json", jsonWriter(1)}); err == nil {
		t.Fatal("no error writing into a read-only folder")
	}
}

func TestWriteJSONRefusesNaN(t *testing.T) {
	var b strings.Builder
	if err := writeJSON(&b, map[string]float64{"x": math.NaN()}); err == nil {
		t.Fatal("NaN encoded")
	}
}

func TestParseAnywhere(t *testing.T) {
	for _, tc := range []struct {
		args []string
		pos  string
		deg  int
	}{
		{[]string{"a", "--degree", "4", "b"}, "a b", 4},
		{[]string{"--degree=2", "-"}, "-", 2},
		{[]string{"x", "--", "--degree"}, "x --degree", 3},
	} {
		c := &fieldFlags{}
		fs := cmdFit.flagSet()
		c.register(fs)
		pos, err := parseAnywhere(fs, tc.args)
		if err != nil {
			t.Fatal(err)
		}
		if strings.Join(pos, " ") != tc.pos || c.Degree != tc.deg {
			t.Errorf("%v: pos %q degree %d, want %q %d", tc.args, pos, c.Degree, tc.pos, tc.deg)
		}
	}
}

func TestExitCodes(t *testing.T) {
	ctx := t.Context()
	for _, tc := range []struct {
		args []string
		code int
	}{
		{[]string{"nosuch"}, 2},
		{[]string{"version"}, 0},
		{[]string{"help"}, 0},
		{[]string{"help", "nosuch"}, 2},
		{[]string{"version", "--bogus"}, 2},
	} {
		var out, errb strings.Builder
		if got := basinMain(ctx, tc.args, &out, &errb); got != tc.code {
			t.Errorf("%v: exit %d, want %d (stderr %q)", tc.args, got, tc.code, errb.String())
		}
		if tc.code == 2 && strings.Count(strings.TrimSpace(errb.String()), "\n") != 0 {
			t.Errorf("%v: stderr not one line: %q", tc.args, errb.String())
		}
	}
}
