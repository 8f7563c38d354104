package ingest

import (
	"errors"
	"io/fs"
	"net/url"
	"os"
	"path/filepath"
	"strings"
)

// ErrPartition is wrapped by the error for a path that names the same
// partition key twice (vehicle=1/vehicle=2).
var ErrPartition = errors.New("partition key named twice in one path")

// Partition is one key=value pair of a partitioned data set's folder
// names, as data lakes and Parquet writers lay them out
// (logs/vehicle=17/day=2026-11-30/run.parquet).
type Partition struct {
	Key, Value string
}

// Input is one file found by [ExpandTree], with the partition values of
// the key=value folders it was found in, outermost first.
type Input struct {
	Path      string
	Partition []Partition
}

// ExpandOptions controls [ExpandTree]. A nil *ExpandOptions means the
// defaults.
type ExpandOptions struct {
	// Recursive descends into every subfolder; false (the default)
	// descends only into folders named key=value.
	Recursive bool
}

// ExpandTree turns INPUTS into the files to read, like [Expand], and
// descends into subfolders named key=value (any subfolder with
// opts.Recursive), sorted by name at each level, hidden entries skipped,
// symbolic links to folders not followed. Each Input carries the
// partition of the key=value folders between the INPUT folder and the
// file; a file named directly has none. A folder name splits at its first
// "="; its key must not be empty (=x is a plain folder), and its value is
// percent-decoded as partition writers encode it (%2F is "/"; a bad
// escape is kept as written). Skipped holds the plain subfolders not
// descended into. A folder with no such file anywhere below is an error
// wrapping [ErrNoFiles]; a key named twice in one path wraps
// [ErrPartition]; a path that does not exist is an *fs.PathError.
func ExpandTree(paths []string, opts *ExpandOptions) (files []Input, skipped []string, err error) {
	var o ExpandOptions
	if opts != nil {
		o = *opts
	}
	for _, p := range paths {
		if p == "-" {
			files = append(files, Input{Path: p})
			continue
		}
		st, err := os.Stat(p)
		if err != nil {
			return nil, nil, err
		}
		if !st.IsDir() {
			files = append(files, Input{Path: p})
			continue
		}
		n := len(files)
		if files, skipped, err = walkTree(files, skipped, p, nil, o); err != nil {
			return nil, nil, err
		}
		if len(files) == n {
			return nil, nil, &ParseError{File: p, Err: ErrNoFiles}
		}
	}
	return files, skipped, nil
}

// walkTree appends the files of dir and of its partition (or, when
// recursive, all) subfolders.
func walkTree(files []Input, skipped []string, dir string, part []Partition, o ExpandOptions) ([]Input, []string, error) {
	des, err := os.ReadDir(dir)
	if err != nil {
		return nil, nil, err
	}
	for _, de := range des {
		name := de.Name()
		if strings.HasPrefix(name, ".") {
			continue
		}
		path := filepath.Join(dir, name)
		switch t := de.Type(); {
		case t.IsDir():
			kv, ok := partitionOf(name)
			if !ok && !o.Recursive {
				skipped = append(skipped, path)
				continue
			}
			sub := part
			if ok {
				for _, q := range part {
					if q.Key == kv.Key {
						return nil, nil, &ParseError{File: path, Err: ErrPartition}
					}
				}
				sub = append(append([]Partition(nil), part...), kv)
			}
			if files, skipped, err = walkTree(files, skipped, path, sub, o); err != nil {
				return nil, nil, err
			}
		case t&fs.ModeType != 0 && t&fs.ModeSymlink == 0:
			// devices, pipes, sockets
		case readable(name):
			files = append(files, Input{Path: path, Partition: part})
		}
	}
	return files, skipped, nil
}

// partitionOf parses a folder name key=value; ok is false for a plain
// folder (no "=", or an empty key).
func partitionOf(name string) (Partition, bool) {
	k, v, ok := strings.Cut(name, "=")
	if !ok || k == "" {
		return Partition{}, false
	}
	if d, err := url.PathUnescape(v); err == nil {
		v = d
	}
	if d, err := url.PathUnescape(k); err == nil && d != "" {
		k = d
	}
	return Partition{Key: k, Value: v}, true
}
