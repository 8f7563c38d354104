package main

import (
	"bytes"
	"context"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"basin.example/cmd/basin/internal/human"
	"basin.example/cmd/basin/internal/report"
	"basin.example/fit"
	"basin.example/fit/poly"
	"basin.example/ingest"
	"basin.example/validate"
)

// runFlags are basin run's flags.
type runFlags struct {
	inputFlags
	outputFlags
	fieldFlags
	certFlags
	memFlags
	Out         string
	Seed        uint64
	Folds       int
	MinDecrease float64
	Beta        float64
	Plane       string
	Equilibrium string
	AllFolds    bool
	Workers     int
}

func (f *runFlags) register(fs *flag.FlagSet) {
	f.inputFlags.register(fs, true)
	f.outputFlags.register(fs)
	f.fieldFlags.register(fs)
	f.certFlags.register(fs)
	f.memFlags.register(fs)
	registerOut(fs, &f.Out, defaultOut, "write the outputs into `DIR`")
	registerSeed(fs, &f.Seed)
	fs.IntVar(&f.Folds, "folds", defaultFolds, "held-out folds `K`, by run: about one run in K is held out")
	fs.Float64Var(&f.MinDecrease, "min-decrease", defaultMinDecr, "share `F` of held-out pairs on which V must fall for certified")
	fs.Float64Var(&f.Beta, "beta", defaultBeta, "scenario bound holds with confidence 1-`B`")
	fs.StringVar(&f.Equilibrium, "equilibrium", "", "certify in certificate.json the fitted equilibrium nearest `name=value,...` (every state named; default: the one most runs settle on)")
	fs.StringVar(&f.Plane, "plane", "", "states `a,b` of the report's phase plane (default: the two with most variance)")
	fs.IntVar(&f.Workers, "workers", 0, "folds fitted and checked at once `N` (default: the number of CPUs; the outputs do not depend on it)")
	fs.BoolVar(&f.AllFolds, "all-folds", true, "hold every fold out once and certify only when all folds agree (false: fit only the released split; faster, but the verdict may depend on --seed)")
}

var cmdRun = &command{
	UsageLine: "basin run [flags] INPUTS...",
	Short:     "the whole job: fit, certify, validate, report",
	Long: `Reads the logs, holds out about one run in --folds (or the runs a manifest
marks holdout), fits the vector field and the certificate on the other
runs, checks the certificate on the held-out runs (decrease, invariance,
settling, and a scenario-approach bound on the chance of a violation), and
gives the verdict: certified, rejected or inconclusive, with its strength.

Writes, atomically, into --out: model.json, certificate.json, report.html
and summary.txt, and prints the summary. The same input and --seed give
byte-identical outputs. When the runs settle at several rest points,
certificate.json is about the one most runs settle at (or --equilibrium's),
and each other stable one gets its own certificate in the same set,
certificate-2.json, certificate-3.json, ..., in falling order of the runs
settling there; the summary has a section for each.

The verdict is empirical evidence from recorded samples, not a proof;
safety-relevant decisions defer to the applicable codes and to licensed
engineering judgement.`,
}

func init() { cmdRun.Run = runRun }

// options turns the flags into validate options.
func (f *runFlags) options() (*validate.Options, error) {
	fo, err := f.fieldFlags.options(f.Seed, &f.memFlags)
	if err != nil {
		return nil, err
	}
	co, err := f.certFlags.options(f.Seed)
	if err != nil {
		return nil, err
	}
	switch {
	case f.Folds < 2 || f.Folds > 100:
		return nil, usagef("--folds must be 2..100, got %d", f.Folds)
	case !(f.MinDecrease > 0 && f.MinDecrease <= 1):
		return nil, usagef("--min-decrease must be in (0, 1], got %g", f.MinDecrease)
	case !(f.Beta > 0 && f.Beta < 1):
		return nil, usagef("--beta must be in (0, 1), got %g", f.Beta)
	case f.Workers < 0 || f.Workers > 1024:
		return nil, usagef("--workers must be 0..1024, got %d", f.Workers)
	}
	return &validate.Options{
		Folds: f.Folds, Seed: f.Seed, Beta: f.Beta, MinDecrease: f.MinDecrease, AllFolds: f.AllFolds, OneFold: !f.AllFolds, Workers: f.Workers,
		Field: fo, Certify: co,
	}, nil
}

// equilibrium resolves --equilibrium name=value,... against the states.
func (c *runFlags) equilibrium(states []ingest.Column) ([]float64, error) {
	if c.Equilibrium == "" {
		return nil, nil
	}
	x := make([]float64, len(states))
	set := make([]bool, len(states))
	for _, part := range strings.Split(c.Equilibrium, ",") {
		name, val, ok := strings.Cut(strings.TrimSpace(part), "=")
		if !ok {
			return nil, usagef("--equilibrium needs name=value pairs, got %q", part)
		}
		k := -1
		for j, s := range states {
			if s.Name == strings.TrimSpace(name) {
				k = j
			}
		}
		if k < 0 {
			return nil, usagef("--equilibrium: no state %q", name)
		}
		v, err := strconv.ParseFloat(strings.TrimSpace(val), 64)
		if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, usagef("--equilibrium: %s=%q is not a finite number", name, val)
		}
		x[k], set[k] = v, true
	}
	for j, s := range states {
		if !set[j] {
			return nil, usagef("--equilibrium: no value for state %q", s.Name)
		}
	}
	return x, nil
}

// plane resolves --plane against the state names.
func (c *runFlags) plane(states []ingest.Column) ([]int, error) {
	if c.Plane == "" {
		return nil, nil
	}
	parts := strings.Split(c.Plane, ",")
	if len(parts) != 2 {
		return nil, usagef("--plane needs two states a,b, got %q", c.Plane)
	}
	var idx []int
	for _, p := range parts {
		p = strings.TrimSpace(p)
		k := -1
		for j, s := range states {
			if s.Name == p {
				k = j
			}
		}
		if k < 0 {
			return nil, usagef("--plane: no state %q", p)
		}
		idx = append(idx, k)
	}
	if idx[0] == idx[1] {
		return nil, usagef("--plane needs two different states, got %q", c.Plane)
	}
	return idx, nil
}

// setCommand adds the facts only the command line knows (the INPUTS as
// typed) to cert's settings; the libraries have recorded their options.
func setCommand(cert *fit.Certificate, cs fit.CommandSettings) {
	if cert.Settings == nil {
		cert.Settings = &fit.Settings{}
	}
	cert.Settings.Command = &cs
}

func runRun(ctx context.Context, e *env, args []string) error {
	c := new(runFlags)
	fs := cmdRun.flagSet()
	c.register(fs)
	args, err := cmdRun.parse(e, fs, args)
	if err != nil {
		return err
	}
	opts, err := c.options()
	if err != nil {
		return err
	}
	if err := needInputs(args); err != nil && c.Manifest == "" { // a manifest may name every file
		return err
	}
	if err := checkOut(c.Out, args); err != nil {
		return err
	}
	prog := newProgress(e.stderr, c.Quiet)
	defer prog.Done()
	prog.Stage("reading logs")
	c.hold = true // a constant input is folded into the equations, with a warning
	ds, err := loadInputs(ctx, e, &c.inputFlags, c.Quiet, args)
	if err != nil {
		return err
	}
	if err := someFitRuns(ds); err != nil {
		return err
	}
	if err := c.checkV(len(ds.States), c.VDegree); err != nil {
		return err
	}
	if opts.Equilibrium, err = c.equilibrium(ds.States); err != nil {
		return err
	}
	plane, err := c.plane(ds.States)
	if err != nil {
		return err
	}
	opts.Progress = prog.Share
	all, skips, err := validate.EvaluateAll(ctx, ds, opts)
	if err != nil {
		return classify(levelsHint(err, ds, c.Degree), "")
	}
	for _, a := range all {
		if c := a.Result.Certificate; c != nil {
			c.Reason = flagNames(c.Reason)
		}
		flagModel(a.Result.Model)
	}
	res := all[0].Result
	if err := ctx.Err(); err != nil {
		return err
	}
	prog.Stage("writing the report")
	cert, m := res.Certificate, res.Model
	if cert.V.Exponents == nil {
		cert.V = poly.Poly{Exponents: [][]int{}, Coefficients: []float64{}}
	}
	setCommand(cert, fit.CommandSettings{Inputs: strings.Join(args, " ")})
	in := &report.Input{Model: m, Cert: cert, Data: ds, Heldout: res.Heldout, Checks: res.Runs, Plane: plane}
	// Several rest points: certificate-2.json, ... for the others.
	files := []atomicFile{
		{Name: "model.json", Write: jsonWriter(m)},
		{Name: "certificate.json", Write: jsonWriter(cert)},
	}
	names := []string{"model.json", "certificate.json"}
	if len(all) > 1 || len(skips) > 0 {
		in.Rests = append(in.Rests, report.Rest{File: "certificate.json", Cert: cert, Runs: all[0].Rest.Runs})
		for i, r := range all[1:] {
			ci := r.Certificate
			if ci.V.Exponents == nil {
				ci.V = poly.Poly{Exponents: [][]int{}, Coefficients: []float64{}}
			}
			setCommand(ci, fit.CommandSettings{Inputs: strings.Join(args, " ")})
			name := fmt.Sprintf("certificate-%d.json", i+2)
			files = append(files, atomicFile{Name: name, Write: jsonWriter(ci)})
			names = append(names, name)
			in.Rests = append(in.Rests, report.Rest{File: name, Cert: ci, Runs: r.Rest.Runs})
		}
		for _, s := range skips {
			settle := "settle there"
			if s.Rest.Runs == 1 {
				settle = "settles there"
			}
			if s.Unstable { // runs near an unstable equilibrium leave it: never "settle there"
				settle = "end near it"
				if s.Rest.Runs == 1 {
					settle = "ends near it"
				}
			}
			in.Skipped = append(in.Skipped, fmt.Sprintf("the rest point at %s (%s %s): %s",
				report.StatePoint(cert, s.Rest.Point), human.Count(s.Rest.Runs, "run"), settle, s.Why))
		}
	}
	// A held-out run that came to rest at another rest point is named by
	// that rest point's certificate, or the model's equilibrium there.
	var restNames []string
	var restPoints [][]float64
	for _, r := range in.Rests[min(1, len(in.Rests)):] {
		restNames, restPoints = append(restNames, r.File+"'s rest point"), append(restPoints, r.Cert.Equilibrium)
	}
	if m != nil {
		for _, q := range m.Equilibria {
			restNames, restPoints = append(restNames, "model.json's "+q.Class), append(restPoints, q.Point)
		}
	}
	validate.NameRests(res.Runs, cert, restNames, restPoints)
	// Render everything in memory first: a failure leaves nothing behind.
	var html, summary bytes.Buffer
	if err := report.HTML(&html, in); err != nil {
		return fmt.Errorf("report: %w", err)
	}
	if err := report.Summary(&summary, in); err != nil {
		return fmt.Errorf("summary: %w", err)
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	files = append(files,
		atomicFile{Name: "report.html", Write: bytesWriter(html.Bytes())},
		atomicFile{Name: "summary.txt", Write: bytesWriter(summary.Bytes())},
	)
	names = append(names, "report.html", "summary.txt")
	err = writeAtomic(c.Out, files...)
	if err != nil {
		return err
	}
	removeStaleRests(c.Out, len(all))
	for i, a := range all {
		if w := validate.ScatterWarning(a.Certificate); w != "" {
			warnf(e, c.Quiet, "%s: %s", names[min(i+1, len(names)-1)], w)
		}
	}
	prog.Done()
	if c.JSON {
		return writeJSON(e.stdout, cert)
	}
	if c.Quiet {
		return nil
	}
	e.stdout.Write(summary.Bytes())
	fmt.Fprintf(e.stdout, "\nwrote %s (%s)\n", c.Out, strings.Join(names, ", "))
	fmt.Fprintf(e.stdout, "report: %s\n", filepath.Join(c.Out, "report.html"))
	return nil
}

// removeStaleRests removes the certificate-N.json (N > have, digits
// only) that an earlier run with more rest points left in dir, so that
// the folder holds one set. It runs after the new set is in place; a
// basin killed in between leaves them, and the summary names the files
// of the set.
func removeStaleRests(dir string, have int) {
	ents, err := os.ReadDir(dir)
	if err != nil {
		return
	}
	for _, e := range ents {
		n := e.Name()
		num, ok := strings.CutPrefix(n, "certificate-")
		if num, ok = strings.CutSuffix(num, ".json"); !ok || !e.Type().IsRegular() {
			continue
		}
		k, err := strconv.Atoi(num)
		if err != nil || num != strconv.Itoa(k) || k <= have {
			continue
		}
		os.Remove(filepath.Join(dir, n))
	}
}

func bytesWriter(b []byte) func(io.Writer) error {
	return func(w io.Writer) error { _, err := w.Write(b); return err }
}
