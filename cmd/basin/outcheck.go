package main

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"

	"basin.example/ingest"
	"basin.example/internal/demodata"
)

// checkOut validates --out before any work: not empty, not a file, not
// under a file, and not one of the input folders (whose next reading
// would take summary.txt for a log).
func checkOut(out string, inputs []string) error {
	if strings.TrimSpace(out) == "" {
		return usagef("--out needs a folder name")
	}
	st, err := os.Stat(out)
	switch {
	case err == nil && !st.IsDir():
		return usagef("cannot write to --out %s: it is a file, not a folder", printable(out))
	case err != nil && !errors.Is(err, os.ErrNotExist):
		// A path through a file (ENOTDIR) or an unreadable parent.
		return usagef("cannot write to --out %s: %v", printable(out), err)
	case err != nil:
		// The folder will be made: its nearest existing parent must be one.
		for p := filepath.Dir(filepath.Clean(out)); ; p = filepath.Dir(p) {
			if pst, perr := os.Stat(p); perr == nil {
				if !pst.IsDir() {
					return usagef("cannot write to --out %s: %s is a file, not a folder", printable(out), printable(p))
				}
				break
			}
			if p == filepath.Dir(p) {
				break
			}
		}
		return nil
	}
	for _, in := range inputs {
		if in == "-" {
			continue
		}
		ist, err := os.Stat(in)
		if err == nil && ist.IsDir() && os.SameFile(ist, st) {
			return usagef("--out %s is also an input folder: its outputs would be read as logs by the next run; write them elsewhere", printable(out))
		}
	}
	return nil
}

// demoOutputs are the names 'basin demo' writes into its folder.
var demoOutputs = []string{"data", "model.json", "certificate.json", "report.html", "summary.txt"}

// checkDemoOut refuses a demo folder that holds files basin demo did not
// write, before writing anything: a folder with DIR/data/truth.json is a
// demo's own, and then DIR/data may hold only the files it lists; a
// folder without one may hold anything but the names demo writes.
func checkDemoOut(out string) error {
	if err := checkOut(out, nil); err != nil {
		return err
	}
	data := filepath.Join(out, "data")
	st, err := os.Stat(data)
	if errors.Is(err, os.ErrNotExist) {
		for _, n := range demoOutputs {
			if _, err := os.Lstat(filepath.Join(out, n)); err == nil && !strings.HasPrefix(n, "certificate") {
				return usagef("--out %s already holds %s, which basin demo did not write; give an empty or new folder", printable(out), n)
			}
		}
		return nil
	}
	if err != nil || !st.IsDir() {
		return usagef("--out %s: %s is not a folder basin demo wrote; give an empty or new folder", printable(out), printable(data))
	}
	ents, err := os.ReadDir(data)
	if err != nil {
		return usagef("--out %s: %v", printable(out), err)
	}
	own := map[string]bool{demodata.TruthFile: true}
	if f, err := os.Open(filepath.Join(data, demodata.TruthFile)); err == nil {
		t, terr := demodata.ReadTruth(f)
		f.Close()
		if terr == nil {
			for _, r := range t.Runs {
				own[r.File] = true
			}
		} else {
			own = nil
		}
	} else {
		own = nil
	}
	for _, e := range ents {
		n := e.Name()
		if strings.HasPrefix(n, ".basin-") {
			continue // basin's working files, cleaned up by the write
		}
		if own == nil || !own[n] || !e.Type().IsRegular() {
			return usagef("--out %s: %s holds %s, which basin demo did not write; nothing was changed; give an empty or new folder",
				printable(out), printable(data), printable(n))
		}
	}
	return nil
}

// sameUnits refuses data whose state columns carry other units than the
// model's or certificate's in file (names are compared by the libraries),
// naming the first data file, its header line and the column:
// a certificate in deg and deg/s says nothing about logs in rad. A column
// or a file without a unit is not compared.
func sameUnits(file string, names, units []string, ds *ingest.Dataset) error {
	for j, c := range ds.States {
		if j >= len(units) || j >= len(names) || c.Name != names[j] {
			return nil // a name mismatch: the library says which
		}
		if c.Unit != "" && units[j] != "" && c.Unit != units[j] {
			// Every file of ds has the same units: the first one is named.
			data := "the data"
			if len(ds.Runs) > 0 && ds.Runs[0].Source.File != "" {
				data = ds.Runs[0].Source.File
			}
			return &inputError{fmt.Errorf("%s:1: column %q: in %s in the data but in %s in %s; convert the logs or refit",
				printable(data), printable(c.Name), printable(c.Unit), printable(units[j]), printable(file))}
		}
	}
	return nil
}
