package ingest

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"

	"basin.example/internal/parallel"
)

// readable says whether a file found in a folder is read.
func readable(name string) bool {
	switch strings.ToLower(filepath.Ext(name)) {
	case ".csv", ".tsv", ".txt", ".parquet":
		return true
	}
	return false
}

// Expand turns INPUTS into the list of files to read: a folder becomes its
// .csv, .tsv, .txt and .parquet files and those of its key=value
// partition folders (sorted by name, hidden files skipped; see
// [ExpandTree], which also gives the partition values); "-" and files
// stay as given. A folder with no such file is an error wrapping
// [ErrNoFiles]; a path that does not exist is an *fs.PathError.
func Expand(paths []string) ([]string, error) {
	in, _, err := ExpandTree(paths, nil)
	if err != nil {
		return nil, err
	}
	out := make([]string, len(in))
	for i := range in {
		out[i] = in[i].Path
	}
	return out, nil
}

// ReadFile reads one log file: Parquet when its name ends in .parquet,
// CSV otherwise; "-" reads CSV from opts.Stdin (os.Stdin when nil). The
// manifest is not applied (see [Load]).
func ReadFile(ctx context.Context, path string, opts *Options) (*Dataset, error) {
	ds, err := readFile(ctx, path, opts)
	if err != nil {
		return nil, err
	}
	return ds, finish(ds, opts)
}

// readFile is ReadFile without the data-set-wide checks of [finish].
func readFile(ctx context.Context, path string, opts *Options) (*Dataset, error) {
	return readFileWith(ctx, path, opts, nil)
}

// readFileWith is readFile reading a CSV file with bufs' buffers (and
// bufs.cols' columns; nil: new ones, see readCSVWith).
func readFileWith(ctx context.Context, path string, opts *Options, bufs *csvBufs) (*Dataset, error) {
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	if opts == nil {
		opts = &Options{}
	}
	if path == "-" {
		in := opts.Stdin
		if in == nil {
			in = os.Stdin
		}
		return readCSV(in, "-", opts)
	}
	if strings.EqualFold(filepath.Ext(path), ".parquet") {
		return readParquet(ctx, path, opts)
	}
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return readCSVWith(f, path, opts, bufs)
}

// Load reads every input (see [Expand]), several files at a time, and
// joins their runs in input order into one data set. Every file must have
// the same state columns as the first (else a *ParseError wrapping
// [ErrColumns] names the file). With opts.Manifest set, the manifest's
// splits are applied, and with no paths its files are read. The first
// error in input order is returned.
func Load(ctx context.Context, paths []string, opts *Options) (*Dataset, error) {
	if opts == nil {
		opts = &Options{}
	}
	if err := opts.checkWindow(); err != nil {
		return nil, err
	}
	var man []ManifestEntry
	if opts.Manifest != "" {
		var err error
		if man, err = ReadManifest(opts.Manifest); err != nil {
			return nil, err
		}
		if len(paths) == 0 {
			seen := map[string]bool{}
			for _, e := range man {
				if !seen[e.Path] {
					seen[e.Path] = true
					paths = append(paths, e.Path)
				}
			}
		}
	}
	files, err := Expand(paths)
	if err != nil {
		return nil, err
	}
	if len(files) == 0 {
		return nil, fmt.Errorf("%w: no inputs", ErrEmpty)
	}
	stdin := 0
	for _, f := range files {
		if f == "-" {
			stdin++
		}
	}
	if stdin > 1 {
		return nil, fmt.Errorf("%w: \"-\" (stdin) given %d times", ErrFormat, stdin)
	}
	// Files are read in parallel; a failure cancels only the files after
	// it, so the error returned is always the earliest bad file's,
	// whatever the timing, and a panic in a reader is an error naming the
	// file, not a crash with the bad-input exit code.
	dss, err := parallel.Map(ctx, len(files), 0, func(ctx context.Context, i int) (*Dataset, error) {
		return readFile(ctx, files[i], opts)
	})
	var pe *parallel.PanicError
	if errors.As(err, &pe) {
		return nil, fmt.Errorf("internal error reading %s: %v", files[pe.Index], pe.Value)
	}
	if err != nil {
		return nil, err
	}
	out := dss[0]
	for i, ds := range dss[1:] {
		reorderLike(out, ds)
		if err := sameColumns(out, ds, files[0], files[i+1]); err != nil {
			return nil, err
		}
		out.Runs = append(out.Runs, ds.Runs...)
		out.Gaps += ds.Gaps
		out.Missing += ds.Missing
		out.Events = append(out.Events, ds.Events...)
		out.Heads = append(out.Heads, ds.Heads...)
		out.Window += ds.Window
		out.Dropped += ds.Dropped
		out.longest = max(out.longest, ds.longest)
		out.files = append(out.files, ds.files...)
		out.Warnings = append(out.Warnings, ds.Warnings...)
		out.latin = append(out.latin, ds.latin...)
		for _, c := range ds.Ignored {
			if !hasColumn(out.Ignored, c.Name) {
				out.Ignored = append(out.Ignored, c)
			}
		}
	}
	if man != nil {
		if err := applyManifest(out, man, opts.Manifest, opts.RunCol); err != nil {
			return nil, err
		}
	}
	return out, finish(out, opts)
}

// reorderLike puts b's states and inputs in a's order when b has the
// same columns (names and units) in another order: loggers reconfigured
// between sessions write the same channels in another order, and check
// and screen already match a certificate's states by name. Any other
// difference is left for sameColumns to report.
func reorderLike(a, b *Dataset) {
	perm := func(want, have []Column) []int {
		if len(want) != len(have) {
			return nil
		}
		p := make([]int, len(want))
		moved := false
		for i, w := range want {
			k := slices.Index(have, w)
			if k < 0 {
				return nil
			}
			p[i] = k
			moved = moved || k != i
		}
		if !moved {
			return nil
		}
		return p
	}
	if p := perm(a.States, b.States); p != nil {
		b.States = permuted(b.States, p)
		for r := range b.Runs {
			b.Runs[r].X = permuted(b.Runs[r].X, p)
		}
	}
	if p := perm(a.Inputs, b.Inputs); p != nil {
		b.Inputs = permuted(b.Inputs, p)
		for r := range b.Runs {
			if len(b.Runs[r].U) == len(p) {
				b.Runs[r].U = permuted(b.Runs[r].U, p)
			}
		}
	}
}

// permuted returns the elements of s in the order p gives (out[i] =
// s[p[i]]), in a new slice.
func permuted[T any](s []T, p []int) []T {
	out := make([]T, len(p))
	for i, k := range p {
		out[i] = s[k]
	}
	return out
}

func hasColumn(cs []Column, name string) bool {
	for _, c := range cs {
		if c.Name == name {
			return true
		}
	}
	return false
}

func sameColumns(a, b *Dataset, fa, fb string) error {
	names := func(cs []Column) []string {
		s := make([]string, len(cs))
		for i, c := range cs {
			s[i] = c.Name
		}
		return s
	}
	na, nb := names(a.States), names(b.States)
	same := len(na) == len(nb)
	for i := 0; same && i < len(na); i++ {
		same = na[i] == nb[i] && a.States[i].Unit == b.States[i].Unit
	}
	if !same {
		return &ParseError{File: fb, Err: fmt.Errorf("%w: %s has %s, %s has %s", ErrColumns,
			fb, colList(b.States), fa, colList(a.States))}
	}
	if !slices.Equal(a.Inputs, b.Inputs) {
		return &ParseError{File: fb, Err: fmt.Errorf("%w: %s has inputs %s, %s has %s", ErrColumns,
			fb, colList(b.Inputs), fa, colList(a.Inputs))}
	}
	if a.Time.Unit != b.Time.Unit && a.Time.Unit != "" && b.Time.Unit != "" {
		return &ParseError{File: fb, Name: b.Time.Name, Err: fmt.Errorf("%w: time unit %q, %s has %q", ErrColumns, b.Time.Unit, fa, a.Time.Unit)}
	}
	return nil
}

func colList(cs []Column) string {
	var sb strings.Builder
	sb.WriteByte('[')
	for i, c := range cs {
		if i > 0 {
			sb.WriteByte(' ')
		}
		sb.WriteString(c.Name)
		if c.Unit != "" {
			sb.WriteString(" [" + c.Unit + "]")
		}
	}
	sb.WriteByte(']')
	return sb.String()
}
