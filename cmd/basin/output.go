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
	"time"
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

// progress prints a stage line with elapsed time to stderr, only when
// stderr is a terminal and not quiet, and only for stages over a second.
type progress struct {
	mu    sync.Mutex
	w     io.Writer
	on    bool
	stage string
	start time.Time
	stop  chan struct{}
}

func newProgress(w io.Writer, quiet bool) *progress {
	return &progress{w: w, on: !quiet && isTerminal(w)}
}

// Stage ends the previous stage and starts a new one.
func (p *progress) Stage(name string) {
	if !p.on {
		return
	}
	p.Done()
	p.mu.Lock()
	p.stage, p.start, p.stop = name, time.Now(), make(chan struct{})
	stop, start := p.stop, p.start
	p.mu.Unlock()
	go func() {
		t := time.NewTicker(200 * time.Millisecond)
		defer t.Stop()
		frames := []string{"[=   ]", "[ =  ]", "[  = ]", "[   =]", "[  = ]", "[ =  ]"}
		i := 0
		for {
			select {
			case <-stop:
				return
			case now := <-t.C:
				if now.Sub(start) < time.Second {
					continue
				}
				p.mu.Lock()
				fmt.Fprintf(p.w, "\r%s %s %.1fs ", frames[i%len(frames)], name, now.Sub(start).Seconds())
				p.mu.Unlock()
				i++
			}
		}
	}()
}

// Done ends the current stage.
func (p *progress) Done() {
	if !p.on {
		return
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	if p.stop != nil {
		close(p.stop)
		p.stop = nil
		if time.Since(p.start) >= time.Second {
			fmt.Fprintf(p.w, "\r%-60s\r", "")
		}
	}
}

// warnf prints a warning unless quiet.
func warnf(e *env, quiet bool, format string, a ...any) {
	if !quiet {
		fmt.Fprintf(e.stderr, "basin: warning: "+format+"\n", a...)
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
