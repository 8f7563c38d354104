package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"math"
	"strings"

	"basin.example/cmd/basin/internal/human"
	"basin.example/cmd/basin/internal/report"
	"basin.example/fit"
	"basin.example/ingest"
)

// fitFlags are basin fit's flags.
type fitFlags struct {
	inputFlags
	outputFlags
	fieldFlags
	memFlags
	Out  string
	Seed uint64
}

func (f *fitFlags) register(fs *flag.FlagSet) {
	f.inputFlags.register(fs, true)
	f.outputFlags.register(fs)
	f.fieldFlags.register(fs)
	f.memFlags.register(fs)
	registerOut(fs, &f.Out, defaultOut, "write model.json into `DIR`")
	registerSeed(fs, &f.Seed)
}

var cmdFit = &command{
	UsageLine: "basin fit [flags] INPUTS...",
	Short:     "fit the vector field only; writes model.json",
	Long: `Fits a sparse polynomial vector field dx/dt = f(x) to the runs (those a
manifest marks holdout are left out): derivatives from the samples,
sequentially thresholded ridge regression on all monomials up to --degree,
threshold chosen by cross-validation over runs (--select-folds), a
bootstrap over runs for the share of fits that keep each term and its
interval, and the equilibria of the fitted field with their linearisation. Writes
DIR/model.json and prints the equations in the logs' units and the
equilibria, the first the one nearest where the runs settle (or end, when
none settles); at an unstable one it says that runs near it leave it and
what the runs do instead. --json prints the model instead.`,
}

func init() { cmdFit.Run = runFit } // runFit mentions cmdFit: break the init cycle

func runFit(ctx context.Context, e *env, args []string) error {
	var f fitFlags
	fs := cmdFit.flagSet()
	f.register(fs)
	args, err := cmdFit.parse(e, fs, args)
	if err != nil {
		return err
	}
	if err := checkOut(f.Out, args); err != nil {
		return err
	}
	opts, err := f.fieldFlags.options(f.Seed, &f.memFlags)
	if err != nil {
		return err
	}
	pg := newProgress(e.stderr, f.Quiet)
	defer pg.Done()
	pg.Stage("reading logs")
	f.hold = true // a constant input is folded into the equations, with a warning
	ds, err := loadInputs(ctx, e, &f.inputFlags, f.Quiet, args)
	if err != nil {
		return err
	}
	pg.Stage("fitting the field")
	m, err := fitModel(ctx, ds, opts)
	if err != nil {
		return err
	}
	pg.Done()
	return writeOutput(e, f.Out, &f.outputFlags, "model.json", m, func(w io.Writer) { printModel(w, m) })
}

// fitRuns returns ds without the runs a manifest holds out.
func fitRuns(ds *ingest.Dataset) *ingest.Dataset {
	use := *ds
	use.Runs = nil
	for _, r := range ds.Runs {
		if r.Split != "holdout" {
			use.Runs = append(use.Runs, r)
		}
	}
	return &use
}

// someFitRuns refuses data of which a manifest holds out every run.
func someFitRuns(ds *ingest.Dataset) error {
	if len(ds.Runs) > 0 && len(fitRuns(ds).Runs) == 0 {
		return usagef("--manifest holds out every one of the %d runs: none is left to fit; mark some fit, or leave their split empty", len(ds.Runs))
	}
	return nil
}

// fitModel fits on the runs not held out by a manifest.
func fitModel(ctx context.Context, ds *ingest.Dataset, opts *fit.FieldOptions) (*fit.Model, error) {
	if err := someFitRuns(ds); err != nil {
		return nil, err
	}
	m, err := fit.Field(ctx, fitRuns(ds), opts)
	if err != nil {
		return nil, classify(levelsHint(err, ds, opts.Degree), "")
	}
	flagModel(m)
	return m, nil
}

// point formats an equilibrium; a coordinate within a millionth of its
// state's spread of zero prints as 0 (Newton leaves round-off there).
func point(x []float64, m *fit.Model) string {
	s := make([]string, len(x))
	for i, v := range x {
		u := ""
		if i < len(m.Units) && m.Units[i] != "" {
			u = " " + m.Units[i]
		}
		sp := math.NaN()
		if i < len(m.Spread) {
			sp = m.Spread[i]
		}
		s[i] = m.States[i] + " = " + human.Near(v, sp) + u
	}
	return strings.Join(s, ", ")
}

// signed writes x with its sign, "+1.5" or "-1.5".
func signed(x float64) string {
	if x < 0 {
		return human.Num(x)
	}
	return "+" + human.Num(x)
}

func eigenText(ev [][2]float64) string {
	var s []string
	for i := 0; i < len(ev); i++ {
		re, im := ev[i][0], ev[i][1]
		if im != 0 && i+1 < len(ev) && ev[i+1][0] == re && ev[i+1][1] == -im {
			s = append(s, human.Num(re)+"±"+human.Num(math.Abs(im))+"i")
			i++
			continue
		}
		if im != 0 {
			s = append(s, fmt.Sprintf("%s%si", human.Num(re), signed(im)))
			continue
		}
		s = append(s, human.Num(re))
	}
	return strings.Join(s, ", ")
}

// printModel writes the readable form of m.
func printModel(w io.Writer, m *fit.Model) {
	fmt.Fprintf(w, "field fitted on %s, %s (degree %d, derivative %s, cross-validated by %s over %s)\n",
		human.Count(m.Runs, "run"), human.Count(m.Samples, "sample"), m.Degree, m.Derivative, m.CVBy, human.Count(m.CVGroups, "group"))
	fmt.Fprintf(w, "threshold %s, ridge %s, condition %s, held-out error %s (share of the window-mean slope's variance unexplained)\n\n",
		human.Sig(m.Threshold, 3), human.Sig(m.Ridge, 1), human.Sig(m.Condition, 2), human.Sig(m.HeldoutError, 3))
	var rare []string
	for i, eq := range m.Equations {
		fmt.Fprintf(w, "%s\n", report.Formula(eq.State, m.Units[i], eq.Exponents, eq.Coefficients, m.Vars()))
		for _, t := range eq.Terms {
			if t.RarelyKept {
				rare = append(rare, fmt.Sprintf("%s in d(%s)/dt (kept in %.0f%% of bootstrap fits)", t.Name, eq.State, 100*t.KeptShare))
			}
		}
	}
	if len(rare) > 0 {
		fmt.Fprintf(w, "\nrarely kept terms (most bootstrap fits dropped them): %s\n", strings.Join(rare, "; "))
	}
	for i, eq := range m.Equations {
		fmt.Fprintf(w, "held-out error of d(%s)/dt: %s %s (%s of its spread)\n", eq.State, human.Sig(eq.HeldoutRMS, 3), report.RateUnit(m.Units[i]), human.Percent(eq.HeldoutShare))
		if eq.Warning != "" {
			fmt.Fprintf(w, "warning: d(%s)/dt: %s\n", eq.State, eq.Warning)
		}
		if eq.Extrapolation != "" {
			fmt.Fprintf(w, "note: d(%s)/dt: %s\n", eq.State, eq.Extrapolation)
		}
	}
	if len(m.Inputs) > 0 {
		var at []string
		for k, in := range m.Inputs {
			at = append(at, fmt.Sprintf("%s = %s%s", in.Name, human.Sig(m.RestInput[k], 4), unitSuffix(in.Unit)))
		}
		fmt.Fprintf(w, "\nequilibria and certificate at rest input %s\n", strings.Join(at, ", "))
	}
	if len(m.Held) > 0 {
		var at []string
		for _, h := range m.Held {
			at = append(at, fmt.Sprintf("%s = %s%s", h.Name, human.Sig(h.Value, 4), unitSuffix(h.Unit)))
		}
		fmt.Fprintf(w, "\nthe equations hold at the constant input %s (folded in: it never changed)\n", strings.Join(at, ", "))
	}
	fmt.Fprintf(w, "\nequilibria (%s):\n", report.FirstEquilibrium(m))
	if len(m.Equilibria) == 0 {
		fmt.Fprintf(w, "  none found; %s\n", m.Note)
	}
	for i, q := range m.Equilibria {
		fmt.Fprintf(w, "  %s: %s; eigenvalues %s 1/s\n", q.Class, point(q.Point, m), eigenText(q.Eigenvalues))
		if line := report.UnstableRuns(m, &m.Equilibria[i]); i == 0 && line != "" {
			fmt.Fprintf(w, "    %s\n", line)
		}
	}
	if m.Note != "" && len(m.Equilibria) > 0 {
		fmt.Fprintf(w, "  note: %s\n", m.Note)
	}
	fmt.Fprintln(w)
}

func unitSuffix(u string) string {
	if u == "" {
		return ""
	}
	return " " + u
}
