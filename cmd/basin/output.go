package main

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"sync"
	"sync/atomic"
	"syscall"
)

var (
	// outputs is held for reading by each writeAtomic, and for writing by
	// an interrupted basin about to exit (holdOutputs).
	outputs sync.RWMutex
	// outputsWritten is set once a writeAtomic has renamed its files.
	outputsWritten atomic.Bool
)

// holdOutputs waits until no writeAtomic is running (each one finishes or
// removes its temporary files) and keeps any other from starting. It
// reports whether some outputs were already written.
func holdOutputs() (written bool) {
	outputs.Lock()
	return outputsWritten.Load()
}

// outDirError marks an output folder that cannot be made or written into
// as an input error naming the folder.
func outDirError(dir string, err error) error {
	if errors.Is(err, fs.ErrPermission) || errors.Is(err, syscall.ENOTDIR) || errors.Is(err, syscall.EROFS) ||
		errors.Is(err, fs.ErrExist) {
		return &inputError{fmt.Errorf("cannot write to --out %s: %w", dir, err)}
	}
	return fmt.Errorf("writing to %s: %w", dir, err)
}

// jsonWriter returns a Write func encoding v as indented JSON.
func jsonWriter(v any) func(io.Writer) error {
	return func(w io.Writer) error { return writeJSON(w, v) }
}

// writeJSON encodes v as indented JSON. NaN and Inf are refused by
// encoding/json, so nothing non-finite reaches a file.
func writeJSON(w io.Writer, v any) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(v)
}

// isTerminal reports whether f is a character device.
func isTerminal(w io.Writer) bool {
	f, ok := w.(*os.File)
	if !ok {
		return false
	}
	st, err := f.Stat()
	return err == nil && st.Mode()&os.ModeCharDevice != 0
}

// warnf prints a warning unless quiet.
func warnf(e *env, quiet bool, format string, a ...any) {
	if !quiet {
		fmt.Fprintf(e.stderr, "basin: warning: %s\n", printable(fmt.Sprintf(format, a...)))
	}
}

// writeOutput writes v as JSON to out/name atomically, then prints it as
// JSON (--json), nothing (--quiet), or readably with print and the path.
func writeOutput(e *env, out string, c *outputFlags, name string, v any, print func(io.Writer)) error {
	if err := writeAtomic(out, atomicFile{Name: name, Write: jsonWriter(v)}); err != nil {
		return err
	}
	if c.JSON {
		return writeJSON(e.stdout, v)
	}
	if c.Quiet {
		return nil
	}
	print(e.stdout)
	fmt.Fprintf(e.stdout, "wrote %s\n", filepath.Join(out, name))
	return nil
}
