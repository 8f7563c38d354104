package ingest

import (
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"github.com/gocarina/gocsv"
)

// ManifestEntry is one row of a run manifest (columns path,run,split).
type ManifestEntry struct {
	// Path is the log file, made absolute-or-relative to the working
	// directory: a relative path in the manifest is taken from the
	// manifest's folder.
	Path string `csv:"path"`
	// Run names one run of the file (a --run-col value, or the run's full
	// name); empty means every run of the file.
	Run string `csv:"run"`
	// Split is "fit", "holdout" or "" (automatic).
	Split string `csv:"split"`
	// Line is the manifest line the entry came from.
	Line int `csv:"-"`
}

// ReadManifest reads a run manifest: a CSV file with a header naming the
// columns path, run and split (run and split may be left out). Paths are
// relative to the manifest's folder. Every named file must exist. Errors
// are *ParseError values naming the manifest's line, wrapping ErrManifest.
func ReadManifest(path string) ([]ManifestEntry, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	b = bytes.TrimPrefix(b, []byte("\xef\xbb\xbf"))
	// gocsv reads the records; check the header ourselves for a clear error.
	hdr, err := csv.NewReader(bytes.NewReader(b)).Read()
	if err != nil {
		return nil, &ParseError{File: path, Line: 1, Err: fmt.Errorf("%w: no header line (want path,run,split)", ErrManifest)}
	}
	hasPath := false
	for i, h := range hdr {
		switch strings.TrimSpace(h) {
		case "path":
			hasPath = true
		case "run", "split":
		default:
			return nil, &ParseError{File: path, Line: 1, Column: i + 1, Name: h,
				Err: fmt.Errorf("%w: unknown column (want path,run,split)", ErrManifest)}
		}
	}
	if !hasPath {
		return nil, &ParseError{File: path, Line: 1, Err: fmt.Errorf("%w: no path column", ErrManifest)}
	}
	var es []ManifestEntry
	if err := gocsv.UnmarshalBytes(b, &es); err != nil {
		var pe *csv.ParseError
		if errors.As(err, &pe) {
			return nil, &ParseError{File: path, Line: pe.Line, Column: pe.Column, Err: fmt.Errorf("%w: %v", ErrManifest, pe.Err)}
		}
		return nil, &ParseError{File: path, Err: fmt.Errorf("%w: %v", ErrManifest, err)}
	}
	dir := filepath.Dir(path)
	for i := range es {
		e := &es[i]
		e.Line = i + 2 // one record a line after the header
		e.Path, e.Run, e.Split = strings.TrimSpace(e.Path), strings.TrimSpace(e.Run), strings.TrimSpace(e.Split)
		switch e.Split {
		case "", "fit", "holdout":
		default:
			return nil, &ParseError{File: path, Line: e.Line, Name: "split",
				Err: fmt.Errorf("%w: split %q (want fit, holdout or empty)", ErrManifest, e.Split)}
		}
		if e.Path == "" {
			return nil, &ParseError{File: path, Line: e.Line, Name: "path", Err: fmt.Errorf("%w: empty path", ErrManifest)}
		}
		if !filepath.IsAbs(e.Path) {
			e.Path = filepath.Join(dir, e.Path)
		}
		st, err := os.Stat(e.Path)
		if err != nil {
			return nil, &ParseError{File: path, Line: e.Line, Name: "path",
				Err: fmt.Errorf("%w: %s: %v", ErrManifest, pathText(e.Path), errors.Unwrap(err))}
		}
		if st.IsDir() {
			return nil, &ParseError{File: path, Line: e.Line, Name: "path", Err: fmt.Errorf("%w: %s is a folder", ErrManifest, pathText(e.Path))}
		}
	}
	return es, nil
}

// applyManifest sets Run.Split from the entries. A run matches an entry
// when it comes from the entry's file and the entry's run is empty, the
// run's name, its name without a "~N" gap suffix, or its --run-col value.
// An entry that names a run of a file that was read, but that matches no
// run of it, is an error naming the manifest's line (a misspelt run would
// otherwise leave the run in the automatic split without a word), unless
// the time window left whole recordings out (the run may be one of them).
// Entries whose file is not among the inputs read are left alone.
func applyManifest(ds *Dataset, es []ManifestEntry, manifest string, runCol string) error {
	abs := func(p string) string {
		if a, err := filepath.Abs(p); err == nil {
			return a
		}
		return filepath.Clean(p)
	}
	byFile := map[string][]int{}
	for i, e := range es {
		k := abs(e.Path)
		byFile[k] = append(byFile[k], i)
	}
	matched := make([]bool, len(es))
	first := map[string]string{} // a file's first run's name
	for i := range ds.Runs {
		r := &ds.Runs[i]
		if k := abs(r.Source.File); first[k] == "" {
			first[k] = r.Name
		}
		name := r.Name
		if k := strings.LastIndexByte(name, '~'); k >= 0 {
			name = name[:k]
		}
		value := ""
		if k := strings.LastIndexByte(name, '#'); k >= 0 {
			value = name[k+1:]
		}
		for _, k := range byFile[abs(r.Source.File)] {
			if e := es[k]; e.Run == "" || e.Run == r.Name || e.Run == name || (value != "" && e.Run == value) {
				r.Split = e.Split
				matched[k] = true
			}
		}
	}
	if ds.Window > 0 {
		return nil
	}
	read := map[string]bool{}
	for _, f := range ds.files {
		read[abs(f)] = true
	}
	for k, e := range es {
		if !matched[k] && e.Run != "" && read[abs(e.Path)] {
			hint := ""
			if n := first[abs(e.Path)]; runCol == "" && n != "" {
				// a long-format file read without its run column
				hint = fmt.Sprintf(" (without Options.RunCol the file is one run, %q)", n)
			}
			return &ParseError{File: manifest, Line: e.Line, Name: "run",
				Err: fmt.Errorf("%w: no run %q in %s%s", ErrManifest, e.Run, pathText(e.Path), hint)}
		}
	}
	return nil
}

// pathText is p as it is, or quoted Go-style when it holds a control
// character (a newline would break the one-line error).
func pathText(p string) string {
	for _, r := range p {
		if r < 0x20 || r == 0x7f {
			return strconv.Quote(p)
		}
	}
	return p
}
