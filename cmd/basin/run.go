package main

import (
	"bytes"
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"path/filepath"
	"strings"

	"basin.example/cmd/basin/internal/report"
	"basin.example/fit"
	"basin.example/fit/poly"
	"basin.example/ingest"
	"basin.example/validate"
)

// runFlags are basin run's flags.
type runFlags struct {
	commonFlags
	Deriv       string
	Bootstrap   int
	Growth      int
	MinDecrease float64
	Beta        float64
	Plane       string
	AllFolds    bool
}

func init() {
	register(&command{
		Name:  "run",
		Usage: "basin run [flags] INPUTS...",
		Short: "the whole job: fit, certify, validate, report",
		Long: `Reads the logs, holds out about one run in --folds (or the runs a manifest
marks holdout), fits the vector field and the certificate on the other
runs, checks the certificate on the held-out runs (decrease, invariance,
settling, and a scenario-approach bound on the chance of a violation), and
gives the verdict: certified, rejected or inconclusive, with its strength.

Writes, atomically, into --out: model.json, certificate.json, report.html
and summary.txt, and prints the summary. The same input and --seed give
byte-identical outputs.

The verdict is empirical evidence from recorded samples, not a proof;
safety-relevant decisions defer to the applicable codes and to licensed
engineering judgement.`,
		Flags: func(fs *flag.FlagSet) any {
			c := &runFlags{}
			c.addInputFlags(fs)
			c.addFitFlags(fs, "basin-out")
			fs.StringVar(&c.Deriv, "deriv", "", "derivative `METHOD`: savitzky-golay, fornberg or integral (default "+fit.DefaultDerivative+")")
			fs.IntVar(&c.Bootstrap, "bootstrap", 100, "bootstrap refits over runs `N` (0: none)")
			fs.IntVar(&c.Growth, "growth", 8, "region growth rounds `N` (LP re-fits on larger level sets)")
			fs.Float64Var(&c.MinDecrease, "min-decrease", 0.99, "share `F` of held-out pairs on which V must fall for certified")
			fs.Float64Var(&c.Beta, "beta", 1e-6, "scenario bound holds with confidence 1-`B`")
			fs.StringVar(&c.Plane, "plane", "", "states `a,b` of the report's phase plane (default: the two with most variance)")
			fs.BoolVar(&c.AllFolds, "all-folds", false, "also refit with every other fold held out and count the folds that agree")
			return c
		},
		Run: runRun,
	})
}

// options turns the flags into validate options.
func (c *runFlags) options() (*validate.Options, error) {
	ff := &fitFlags{commonFlags: c.commonFlags, Deriv: c.Deriv, Bootstrap: c.Bootstrap}
	fo, err := ff.fieldOptions()
	if err != nil {
		return nil, err
	}
	switch {
	case c.Growth < 1 || c.Growth > 100:
		return nil, usagef("--growth must be 1..100, got %d", c.Growth)
	case !(c.MinDecrease > 0 && c.MinDecrease <= 1):
		return nil, usagef("--min-decrease must be in (0, 1], got %g", c.MinDecrease)
	case !(c.Beta > 0 && c.Beta < 1):
		return nil, usagef("--beta must be in (0, 1), got %g", c.Beta)
	}
	return &validate.Options{
		Folds: c.Folds, Seed: c.Seed, Beta: c.Beta, MinDecrease: c.MinDecrease, AllFolds: c.AllFolds,
		Field:   fo,
		Certify: &fit.CertifyOptions{Degree: c.VDegree, Seed: c.Seed, Growth: c.Growth},
	}, nil
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

// settings lists the options used, for the report and the certificate.
func (c *runFlags) settings(args []string) map[string]any {
	return map[string]any{
		"degree": c.Degree, "v_degree": c.VDegree, "folds": c.Folds, "seed": c.Seed,
		"derivative": orDefault(c.Deriv, fit.DefaultDerivative), "bootstrap": c.Bootstrap,
		"growth": c.Growth, "min_decrease": c.MinDecrease, "beta": c.Beta,
		"all_folds": c.AllFolds, "inputs": strings.Join(args, " "),
	}
}

func orDefault(s, d string) string {
	if s == "" {
		return d
	}
	return s
}

func runRun(ctx context.Context, e *env, o any, args []string) error {
	c := o.(*runFlags)
	opts, err := c.options()
	if err != nil {
		return err
	}
	if err := needInputs(args); err != nil {
		return err
	}
	prog := newProgress(e.stderr, c.Quiet)
	defer prog.Done()
	prog.Stage("reading logs")
	ds, err := loadInputs(ctx, e, &c.commonFlags, args)
	if err != nil {
		return err
	}
	plane, err := c.plane(ds.States)
	if err != nil {
		return err
	}
	prog.Stage("fitting, certifying and checking")
	res, err := validate.Evaluate(ctx, ds, opts)
	if err != nil {
		return classifyFitError(err)
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	prog.Stage("writing the report")
	cert, m := res.Certificate, res.Model
	if cert.V.Exponents == nil {
		cert.V = poly.Poly{Exponents: [][]int{}, Coefficients: []float64{}}
	}
	settings := c.settings(args)
	cert.Settings = settings
	in := &report.Input{Model: m, Cert: cert, Data: ds, Heldout: res.Heldout, Checks: res.Runs,
		Settings: settings, Plane: plane}
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
	err = writeAtomic(c.Out,
		atomicFile{Name: "model.json", Write: jsonWriter(m)},
		atomicFile{Name: "certificate.json", Write: jsonWriter(cert)},
		atomicFile{Name: "report.html", Write: bytesWriter(html.Bytes())},
		atomicFile{Name: "summary.txt", Write: bytesWriter(summary.Bytes())},
	)
	if err != nil {
		return err
	}
	prog.Done()
	if c.JSON {
		return writeJSON(e.stdout, cert)
	}
	if c.Quiet {
		return nil
	}
	e.stdout.Write(summary.Bytes())
	fmt.Fprintf(e.stdout, "\nwrote %s (model.json, certificate.json, report.html, summary.txt)\n", c.Out)
	fmt.Fprintf(e.stdout, "report: %s\n", filepath.Join(c.Out, "report.html"))
	return nil
}

func bytesWriter(b []byte) func(io.Writer) error {
	return func(w io.Writer) error { _, err := w.Write(b); return err }
}

// classifyFitError marks the fitting errors caused by the data as bad input.
func classifyFitError(err error) error {
	for _, s := range []error{fit.ErrTooFewSamples, fit.ErrConstant, fit.ErrCollinear, fit.ErrShortRun,
		fit.ErrMismatch, fit.ErrOptions, ingest.ErrNoStates, validate.ErrOptions} {
		if errors.Is(err, s) {
			return &inputError{err}
		}
	}
	return err
}
