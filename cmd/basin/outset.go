package main

import (
	"bufio"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
)

// atomicFile is one output to be written under a temporary name and
// renamed into place only when every output of the command succeeded.
type atomicFile struct {
	Name  string                  // base name inside the output folder
	Write func(w io.Writer) error // writes the content
}

// Names of basin's own working files in an output folder. Every one
// starts with ".basin-", so that cleaning up never touches a user's file.
const (
	tmpPrefix   = ".basin-new-" // a new output, before its rename
	oldPrefix   = ".basin-old-" // a hard link to the output it replaces
	journalName = ".basin-journal"
)

// journal records a set being swapped in: a writer killed between two
// renames leaves it behind, and the next writer restores the previous set
// from it; readers refuse a folder that has one.
type journal struct {
	Files []journalEntry `json:"files"`
}

type journalEntry struct {
	Name string `json:"name"`
	New  string `json:"new"`           // the temporary file renamed onto Name
	Old  string `json:"old,omitempty"` // a link to the previous Name; empty when there was none
}

// setWriter writes a set of outputs into one folder as a unit. Its hooks
// exist for the tests (a failing rename, a writer killed mid-way); the
// zero value uses the operating system.
type setWriter struct {
	rename func(oldpath, newpath string) error
	// killed, when it returns true after the i-th rename, makes the
	// writer stop at once without cleaning up, as SIGKILL would.
	killed func(i int) bool
}

// writeAtomic writes files into dir as one set; see [setWriter.write].
func writeAtomic(dir string, files ...atomicFile) error {
	return (&setWriter{}).write(dir, files...)
}

// write writes every file into dir as one set. Each goes to a temporary
// name first; only when all are written and synced are they renamed into
// place, under an exclusive lock on dir (a second basin writing the same
// folder waits, so two sets never interleave), with a journal and a hard
// link to each file replaced. When a rename fails, the files already
// renamed are put back: the previous set is kept intact. A journal left by
// a writer that was killed is rolled back first, and stale temporary files
// of basin's are removed.
//
// A folder that cannot be made or written into (a path under a regular
// file, a read-only file system, no permission) is the user's --out and
// is reported as an input error (exit 2); a failure while writing (a full
// disk) is not.
func (sw *setWriter) write(dir string, files ...atomicFile) (err error) {
	outputs.RLock()
	defer outputs.RUnlock()
	rename := sw.rename
	if rename == nil {
		rename = os.Rename
	}
	_, statErr := os.Stat(dir)
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return outDirError(dir, err)
	}
	unlock, err := lockDir(dir)
	if err != nil {
		return err
	}
	defer unlock()
	if err := recoverDir(dir, files); err != nil {
		return err
	}
	ents := make([]journalEntry, len(files))
	// cleanup removes the temporary files, the links to the previous set
	// from links on, and the journal; and dir when it was made here and
	// is empty.
	cleanup := func(links []journalEntry) {
		for _, e := range ents {
			if e.New != "" {
				os.Remove(filepath.Join(dir, e.New))
			}
		}
		for _, e := range links {
			if e.Old != "" {
				os.Remove(filepath.Join(dir, e.Old))
			}
		}
		os.Remove(filepath.Join(dir, journalName))
		if statErr != nil {
			os.Remove(dir)
		}
	}
	for i, f := range files {
		ents[i].Name = f.Name
		name, err := writeTemp(dir, tmpPrefix+f.Name+"-", f.Write)
		if err != nil {
			cleanup(nil)
			if name == "" {
				return outDirError(dir, err)
			}
			return fmt.Errorf("writing %s: %w", filepath.Join(dir, f.Name), err)
		}
		ents[i].New = name
	}
	// Links to the files about to be replaced: the previous set.
	for i, f := range files {
		dst := filepath.Join(dir, f.Name)
		st, err := os.Lstat(dst)
		if errors.Is(err, os.ErrNotExist) {
			continue
		}
		if err == nil && !st.Mode().IsRegular() {
			err = fmt.Errorf("not a regular file")
		}
		if err == nil {
			old := oldPrefix + f.Name + "-" + strings.TrimPrefix(ents[i].New, tmpPrefix+f.Name+"-")
			if err = os.Link(dst, filepath.Join(dir, old)); err == nil {
				ents[i].Old = old
			}
		}
		if err != nil {
			cleanup(ents)
			return &inputError{fmt.Errorf("cannot replace %s: %w; the previous outputs are unchanged", dst, err)}
		}
	}
	if _, err := writeTemp(dir, journalName, jsonWriter(journal{Files: ents})); err != nil {
		cleanup(ents)
		return fmt.Errorf("writing %s: %w", filepath.Join(dir, journalName), err)
	}
	for i, e := range ents {
		if err := rename(filepath.Join(dir, e.New), filepath.Join(dir, e.Name)); err != nil {
			if rerr := rollback(dir, ents[:i], rename); rerr != nil {
				// Keep the journal and the links: the next writer
				// restores the previous set from them.
				return fmt.Errorf("replacing %s: %w; restoring the previous outputs failed too (%v): the next basin writing there restores them", filepath.Join(dir, e.Name), err, rerr)
			}
			cleanup(ents[i:])
			return fmt.Errorf("replacing %s: %w; the previous outputs are restored", filepath.Join(dir, e.Name), err)
		}
		ents[i].New = ""
		if sw.killed != nil && sw.killed(i) {
			return errors.New("killed")
		}
	}
	cleanup(ents) // the links to the previous set, and the journal
	outputsWritten.Store(true)
	return nil
}

// writeTemp writes a file of mode 0644 in dir under a fresh name starting
// with prefix (exactly name journalName for the journal) and returns its
// base name ("" when it could not be created).
func writeTemp(dir, prefix string, write func(io.Writer) error) (string, error) {
	journalFile := prefix == journalName
	pattern := prefix + "*"
	if journalFile {
		pattern = journalName + ".tmp*"
	}
	tf, err := os.CreateTemp(dir, pattern)
	if err != nil {
		return "", err
	}
	bw := bufio.NewWriter(tf)
	err = write(bw)
	if err == nil {
		err = bw.Flush()
	}
	if err == nil {
		err = tf.Sync()
	}
	if cerr := tf.Close(); err == nil {
		err = cerr
	}
	if err == nil {
		err = os.Chmod(tf.Name(), 0o644)
	}
	if err == nil && journalFile {
		err = os.Rename(tf.Name(), filepath.Join(dir, journalName))
	}
	if err != nil {
		os.Remove(tf.Name())
		return filepath.Base(tf.Name()), err
	}
	if journalFile {
		return journalName, nil
	}
	return filepath.Base(tf.Name()), nil
}

// rollback puts back the previous version of each renamed file (or
// removes it when it is new), and says whether all were put back.
func rollback(dir string, done []journalEntry, rename func(string, string) error) error {
	var first error
	for i := range done {
		e := &done[i]
		dst := filepath.Join(dir, e.Name)
		if e.Old == "" {
			os.Remove(dst)
			continue
		}
		if err := rename(filepath.Join(dir, e.Old), dst); err != nil {
			if first == nil {
				first = err
			}
			continue
		}
		e.Old = ""
	}
	return first
}

// recoverDir, run under the lock, rolls back a set a killed writer left
// half-swapped and removes basin's stale temporary files in dir: its own
// prefixes, and the temporary names of older versions of basin for the
// files about to be written.
func recoverDir(dir string, files []atomicFile) error {
	jpath := filepath.Join(dir, journalName)
	if b, err := os.ReadFile(jpath); err == nil {
		var j journal
		if json.Unmarshal(b, &j) == nil {
			for _, e := range j.Files {
				dst := filepath.Join(dir, filepath.Base(e.Name))
				if e.Old != "" {
					old := filepath.Join(dir, filepath.Base(e.Old))
					if _, err := os.Stat(old); err == nil {
						if err := os.Rename(old, dst); err != nil {
							return fmt.Errorf("restoring %s after an interrupted write: %w", dst, err)
						}
					}
					continue
				}
				// No previous version: if the new file was renamed into
				// place (its temporary name is gone), take it out.
				if _, err := os.Stat(filepath.Join(dir, filepath.Base(e.New))); errors.Is(err, os.ErrNotExist) {
					os.Remove(dst)
				}
			}
		}
		os.Remove(jpath)
	}
	ents, err := os.ReadDir(dir)
	if err != nil {
		return outDirError(dir, err)
	}
	for _, e := range ents {
		n := e.Name()
		stale := strings.HasPrefix(n, tmpPrefix) || strings.HasPrefix(n, oldPrefix) || strings.HasPrefix(n, journalName+".tmp")
		for _, f := range files {
			stale = stale || strings.HasPrefix(n, "."+f.Name+".tmp")
		}
		if stale && e.Type().IsRegular() {
			os.Remove(filepath.Join(dir, n))
		}
	}
	return nil
}

// mixedSet reports, for a file a command is about to read, whether its
// folder holds the journal of a basin killed while replacing the set: the
// files there may then come from two different runs.
func mixedSet(path string) error {
	dir := filepath.Dir(path)
	if _, err := os.Stat(filepath.Join(dir, journalName)); err == nil {
		return &inputError{fmt.Errorf("%s: a basin writing %s was stopped while replacing its outputs, which may now come from two runs; run that command again (it restores the previous set first)", path, dir)}
	}
	return nil
}
