package main

import (
	"flag"
	"fmt"
	"strings"

	"basin.example/ingest"
)

// commonFlags are the flags every log-reading command shares.
type commonFlags struct {
	Out      string
	Degree   int
	VDegree  int
	Folds    int
	Seed     uint64
	Quiet    bool
	JSON     bool
	TimeCol  string
	Rate     float64
	RunCol   string
	States   string
	Inputs   string
	Manifest string
}

// addInputFlags registers the flags that say how logs are read.
func (c *commonFlags) addInputFlags(fs *flag.FlagSet) {
	fs.StringVar(&c.TimeCol, "time-col", "", "the time column is `NAME`")
	fs.Float64Var(&c.Rate, "rate", 0, "rows are evenly sampled at `HZ` (no time column)")
	fs.StringVar(&c.RunCol, "run-col", "", "split files into runs by column `NAME`")
	fs.StringVar(&c.States, "states", "", "state columns `a,b,c` (default: every numeric column but time, run and inputs)")
	fs.StringVar(&c.Inputs, "inputs", "", "measured columns `a,b` that are not states (a drive, a setpoint)")
	fs.StringVar(&c.Manifest, "manifest", "", "run manifest `FILE.csv` (path,run,split)")
	fs.BoolVar(&c.Quiet, "quiet", false, "no progress or warnings")
	fs.BoolVar(&c.JSON, "json", false, "print JSON on stdout instead of a table")
}

// addFitFlags registers the fitting flags.
func (c *commonFlags) addFitFlags(fs *flag.FlagSet, out string) {
	fs.StringVar(&c.Out, "out", out, "write outputs to `DIR`")
	fs.IntVar(&c.Degree, "degree", 3, "field library degree `N`")
	fs.IntVar(&c.VDegree, "v-degree", 2, "certificate degree `N` (even)")
	fs.IntVar(&c.Folds, "folds", 5, "held-out folds `K`, by run")
	fs.Uint64Var(&c.Seed, "seed", 1, "random seed `N`")
}

// ingestOptions turns the flags into ingest options.
func (c *commonFlags) ingestOptions() (*ingest.Options, error) {
	if c.Rate < 0 {
		return nil, usagef("--rate must be positive, got %g", c.Rate)
	}
	o := &ingest.Options{TimeCol: c.TimeCol, Rate: c.Rate, RunCol: c.RunCol, Manifest: c.Manifest}
	if c.States != "" {
		for _, s := range strings.Split(c.States, ",") {
			s = strings.TrimSpace(s)
			if s == "" {
				return nil, usagef("--states: empty name in %q", c.States)
			}
			o.States = append(o.States, s)
		}
	}
	if c.Inputs != "" {
		for _, s := range strings.Split(c.Inputs, ",") {
			s = strings.TrimSpace(s)
			if s == "" {
				return nil, usagef("--inputs: empty name in %q", c.Inputs)
			}
			o.Inputs = append(o.Inputs, s)
		}
	}
	return o, nil
}

// checkFit validates the fitting flags.
func (c *commonFlags) checkFit() error {
	switch {
	case c.Degree < 1 || c.Degree > 8:
		return usagef("--degree must be 1..8, got %d", c.Degree)
	case c.VDegree < 2 || c.VDegree > 8 || c.VDegree%2 != 0:
		return usagef("--v-degree must be even, 2..8, got %d", c.VDegree)
	case c.Folds < 2 || c.Folds > 100:
		return usagef("--folds must be 2..100, got %d", c.Folds)
	}
	return nil
}

func needInputs(args []string) error {
	if len(args) == 0 {
		return usagef("no INPUTS given (files, directories or -)")
	}
	return nil
}

var _ = fmt.Sprintf
