package main

import (
	"flag"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"basin.example/fit"
	"basin.example/ingest"
)

// Defaults shared by every command that has the option: one value each.
const (
	defaultOut       = "basin-out"
	defaultDegree    = 3
	defaultVDegree   = 2
	defaultFolds     = 5 // held-out folds of run
	defaultSelect    = 5 // inner folds that choose the threshold
	defaultSeed      = 1
	defaultBootstrap = 100
	defaultGrowth    = 8
	defaultBeta      = 1e-6
	defaultMinDecr   = 0.99
)

// inputFlags say how logs are read; every command that reads logs has them.
type inputFlags struct {
	TimeCol  string
	Rate     float64
	RunCol   string
	States   string
	Inputs   string
	Manifest string
	// the time window and the trimming
	From, To   float64
	KeepHead   bool
	KeepEvents bool
	Average    int
	// hold: take an input constant throughout as a known constant (the
	// fitting commands; not a flag)
	hold bool
}

// register adds the input flags to fs; --manifest only when manifest.
func (f *inputFlags) register(fs *flag.FlagSet, manifest bool) {
	fs.StringVar(&f.TimeCol, "time-col", "", "the time column is `NAME`")
	fs.Float64Var(&f.Rate, "rate", 0, "rows are evenly sampled at `HZ` (no time column)")
	fs.StringVar(&f.RunCol, "run-col", "", "split files into runs by column `NAME`")
	fs.StringVar(&f.States, "states", "", "state columns `a,b,c` (default: every numeric column but time, run and inputs)")
	fs.StringVar(&f.Inputs, "inputs", "", "measured columns `a,b` that are not states (a drive, a setpoint)")
	if manifest {
		fs.StringVar(&f.Manifest, "manifest", "", "run manifest `FILE.csv` (path,run,split)")
	}
	fs.Float64Var(&f.From, "from", 0, "keep samples from `S` seconds after each run's first sample")
	fs.Float64Var(&f.To, "to", 0, "keep samples up to `S` seconds after each run's first sample (default: to the end)")
	fs.BoolVar(&f.KeepHead, "keep-head", false, "keep a run's resting start before its first motion (default: trimmed)")
	fs.BoolVar(&f.KeepEvents, "keep-events", false, "keep runs whole across one-sample jumps far beyond the noise (default: split there)")
	fs.IntVar(&f.Average, "average", 0, "average each run in blocks of `K` samples (logs sampled far faster than their noise changes)")
}

// maxAverage is the largest --average block.
const maxAverage = 1 << 16

// adopt takes the averaging a model or certificate (file) was fitted
// with, avg samples a block (0: none), for the logs read against it:
// without --average, the same; with another, a usage error, since the
// file's noise and tolerances are those of the samples it was fitted on.
func (f *inputFlags) adopt(file string, avg int) error {
	switch {
	case avg >= 2 && f.Average == 0:
		f.Average = avg
	case avg >= 2 && f.Average != avg:
		return usagef("%s was fitted on runs averaged in blocks of %d samples: give --average %d or leave it out, not --average %d", file, avg, avg, f.Average)
	case avg < 2 && f.Average >= 2:
		return usagef("%s was fitted on samples not averaged: leave out --average %d", file, f.Average)
	}
	return nil
}

// options turns the flags into ingest options.
func (f *inputFlags) options() (*ingest.Options, error) {
	if f.Rate != 0 && !(f.Rate >= ingest.MinRate && f.Rate <= ingest.MaxRate) { // NaN fails too
		return nil, usagef("--rate must be a sampling rate in Hz from %g to %g, got %g", ingest.MinRate, ingest.MaxRate, f.Rate)
	}
	switch {
	case !(f.From >= 0) || math.IsInf(f.From, 0):
		return nil, usagef("--from must be 0 or more seconds, got %g", f.From)
	case !(f.To >= 0) || math.IsInf(f.To, 0):
		return nil, usagef("--to must be more than 0 seconds, got %g", f.To)
	case f.To > 0 && f.From > f.To:
		return nil, usagef("--from %g is after --to %g", f.From, f.To)
	case f.Average < 0 || f.Average > maxAverage:
		return nil, usagef("--average must be a block of 1 to %d samples, got %d", maxAverage, f.Average)
	}
	o := &ingest.Options{TimeCol: f.TimeCol, Rate: f.Rate, RunCol: f.RunCol, Manifest: f.Manifest,
		From: f.From, To: f.To, KeepHead: f.KeepHead, KeepEvents: f.KeepEvents, HoldConstantInputs: f.hold, Average: f.Average}
	var err error
	if o.States, err = nameList("--states", f.States); err != nil {
		return nil, err
	}
	if o.Inputs, err = nameList("--inputs", f.Inputs); err != nil {
		return nil, err
	}
	return o, nil
}

// outputFlags say what is printed.
type outputFlags struct {
	Quiet bool
	JSON  bool
}

func (f *outputFlags) register(fs *flag.FlagSet) {
	fs.BoolVar(&f.Quiet, "quiet", false, "no progress or warnings (fit, certify and run then print nothing: their results are the files they write)")
	fs.BoolVar(&f.JSON, "json", false, "print JSON on stdout instead of a table")
}

// fieldFlags set the vector field fit (fit and run).
type fieldFlags struct {
	Degree      int
	InputDegree int
	SelectFolds int
	Deriv       string
	Bootstrap   int
}

// memFlags hold the memory budget (fit, certify and run).
type memFlags struct {
	MaxMemory byteSize
}

func (f *memFlags) register(fs *flag.FlagSet) {
	f.MaxMemory = fit.DefaultMaxMemory
	fs.Var(&f.MaxMemory, "max-memory", "memory budget `SIZE` (as 512MiB, 8GiB), checked in closed form before the work")
}

// checkV refuses, before any allocation, a certificate whose V family in
// n states is too large for the memory budget: the LP holds about
// certLPRows rows of its terms.
func (f *memFlags) checkV(n, degree int) error {
	terms := fit.LibraryTerms(n, degree) - 1 - float64(n) // degrees 2..D
	const certLPRows = 8000
	if need := 8 * terms * (certLPRows + terms); need > float64(f.MaxMemory) {
		return &inputError{fmt.Errorf("V of degree %d in %d states has %.4g terms; its LP would need about %.3g GiB, over the budget of %s; lower --v-degree or raise --max-memory",
			degree, n, terms, need/(1<<30), f.MaxMemory.String())}
	}
	return nil
}

func (f *fieldFlags) register(fs *flag.FlagSet) {
	fs.IntVar(&f.Degree, "degree", defaultDegree, "highest degree `N` of the field's polynomial terms")
	fs.IntVar(&f.InputDegree, "input-degree", 1, "highest degree `K` of the --inputs in a term (1: the field is affine in the inputs, f(x) + g(x)·u; at most --degree)")
	fs.IntVar(&f.SelectFolds, "select-folds", defaultSelect, "folds `K` over the fit runs that choose the sparsity threshold")
	fs.StringVar(&f.Deriv, "deriv", "", "derivative `METHOD`: auto (each tried, least held-out error kept), savitzky-golay, fornberg or integral (default "+fit.DefaultDerivative+")")
	fs.IntVar(&f.Bootstrap, "bootstrap", defaultBootstrap, "bootstrap refits over runs `N` (0: none)")
}

// options turns the flags into fit options.
func (f *fieldFlags) options(seed uint64, mem *memFlags) (*fit.FieldOptions, error) {
	switch {
	case f.Degree < 1 || f.Degree > 8:
		return nil, usagef("--degree must be 1..8, got %d", f.Degree)
	case f.InputDegree < 1 || f.InputDegree > f.Degree:
		return nil, usagef("--input-degree must be 1..%d (--degree), got %d", f.Degree, f.InputDegree)
	case f.SelectFolds < 2 || f.SelectFolds > 100:
		return nil, usagef("--select-folds must be 2..100, got %d", f.SelectFolds)
	}
	switch f.Deriv {
	case "", fit.DerivAuto, fit.DerivSavitzkyGolay, fit.DerivFornberg, fit.DerivIntegral:
	default:
		return nil, usagef("--deriv must be auto, savitzky-golay, fornberg or integral, got %q", f.Deriv)
	}
	if f.Bootstrap < 0 || f.Bootstrap > 10000 {
		return nil, usagef("--bootstrap must be 0..10000, got %d", f.Bootstrap)
	}
	b := f.Bootstrap
	if b == 0 {
		b = -1
	}
	return &fit.FieldOptions{Degree: f.Degree, InputDegree: f.InputDegree, Folds: f.SelectFolds, Seed: seed, Derivative: f.Deriv, Bootstrap: b,
		MaxMemory: int64(mem.MaxMemory)}, nil
}

// certFlags set the certificate fit (certify and run).
type certFlags struct {
	VDegree int
	Growth  int
}

func (f *certFlags) register(fs *flag.FlagSet) {
	fs.IntVar(&f.VDegree, "v-degree", defaultVDegree, "certificate degree `N` (even)")
	fs.IntVar(&f.Growth, "growth", defaultGrowth, "region growth rounds `N` (LP re-fits on larger level sets)")
}

func (f *certFlags) options(seed uint64) (*fit.CertifyOptions, error) {
	switch {
	case f.VDegree < 2 || f.VDegree > 8 || f.VDegree%2 != 0:
		return nil, usagef("--v-degree must be even, 2..8, got %d", f.VDegree)
	case f.Growth < 1 || f.Growth > 100:
		return nil, usagef("--growth must be 1..100, got %d", f.Growth)
	}
	return &fit.CertifyOptions{Degree: f.VDegree, Seed: seed, Growth: f.Growth}, nil
}

// registerOut adds --out.
func registerOut(fs *flag.FlagSet, out *string, def, usage string) {
	fs.StringVar(out, "out", def, usage)
}

// registerSeed adds --seed.
func registerSeed(fs *flag.FlagSet, seed *uint64) {
	fs.Uint64Var(seed, "seed", defaultSeed, "random seed `N`")
}

func needInputs(args []string) error {
	if len(args) == 0 {
		return usagef("no INPUTS given (files, directories or -)")
	}
	return nil
}

// byteSize is a flag value of bytes, written with an optional binary unit:
// 1500, 64KiB, 512MiB, 8GiB, 1TiB (K, M, G, T mean the same).
type byteSize int64

func (b *byteSize) String() string {
	v := int64(*b)
	for _, u := range []struct {
		s string
		n int64
	}{{"TiB", 1 << 40}, {"GiB", 1 << 30}, {"MiB", 1 << 20}, {"KiB", 1 << 10}} {
		if v >= u.n && v%u.n == 0 {
			return strconv.FormatInt(v/u.n, 10) + u.s
		}
	}
	return strconv.FormatInt(v, 10)
}

func (b *byteSize) Set(s string) error {
	num := strings.TrimRight(s, "BbIiKkMmGgTt")
	unit := strings.ToUpper(strings.TrimSuffix(strings.TrimSuffix(s[len(num):], "B"), "b"))
	mult := map[string]float64{"": 1, "K": 1 << 10, "KI": 1 << 10, "M": 1 << 20, "MI": 1 << 20, "G": 1 << 30, "GI": 1 << 30, "T": 1 << 40, "TI": 1 << 40}[unit]
	v, err := strconv.ParseFloat(strings.TrimSpace(num), 64)
	if err != nil || mult == 0 || !(v > 0) || v*mult > math.MaxInt64/2 || strings.ContainsAny(num, "_xXpP") {
		return fmt.Errorf("not a size such as 512MiB or 8GiB")
	}
	*b = byteSize(v * mult)
	return nil
}

// nameList splits a comma-separated list of column names given to flag,
// refusing an empty name and a name given twice; "" gives nil.
func nameList(flag, list string) ([]string, error) {
	if list == "" {
		return nil, nil
	}
	var out []string
	for _, s := range strings.Split(list, ",") {
		s = strings.TrimSpace(s)
		if s == "" {
			return nil, usagef("%s: empty name in %q", flag, list)
		}
		if slices.Contains(out, s) {
			return nil, usagef("%s names %q twice", flag, s)
		}
		out = append(out, s)
	}
	return out, nil
}
