package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"strings"

	"basin.example/cmd/basin/internal/human"
	"basin.example/cmd/basin/internal/report"
	"basin.example/fit"
	"basin.example/fit/poly"
)

// certifyFlags are basin certify's flags.
type certifyFlags struct {
	inputFlags
	outputFlags
	certFlags
	memFlags
	Model string
	Out   string
	Seed  uint64
}

func (f *certifyFlags) register(fs *flag.FlagSet) {
	f.inputFlags.register(fs, true)
	f.outputFlags.register(fs)
	f.certFlags.register(fs)
	f.memFlags.register(fs)
	fs.StringVar(&f.Model, "model", "", "the fitted model `FILE` (model.json from basin fit)")
	registerOut(fs, &f.Out, defaultOut, "write certificate.json into `DIR`")
	registerSeed(fs, &f.Seed)
}

var cmdCertify = &command{
	UsageLine: "basin certify --model model.json [flags] INPUTS...",
	Short:     "fit a Lyapunov certificate; writes certificate.json",
	Long: `Fits a Lyapunov function V for the model's primary equilibrium on the runs
(those a manifest marks holdout are left out) and finds the largest level
set {V <= level} on which V is positive and falls, inside the envelope the
data cover. V is a polynomial of even degree --v-degree in the scaled
coordinates z = (x - equilibrium)/scale. The start is the quadratic from
the Lyapunov equation of the fitted Jacobian; then a linear program on the
recorded samples, their consecutive pairs and fill points in the envelope
re-fits V on larger level sets while that gains volume (--growth rounds).
Writes DIR/certificate.json; the verdict stays inconclusive until the
certificate is checked on held-out runs (basin check, basin run).
--json prints the certificate instead of the summary.`,
}

func init() { cmdCertify.Run = runCertify }

func runCertify(ctx context.Context, e *env, args []string) error {
	var f certifyFlags
	fs := cmdCertify.flagSet()
	f.register(fs)
	args, err := cmdCertify.parse(e, fs, args)
	if err != nil {
		return err
	}
	if err := checkOut(f.Out, args); err != nil {
		return err
	}
	opts, err := f.certFlags.options(f.Seed)
	if err != nil {
		return err
	}
	if f.Model == "" {
		return usagef("--model FILE is required (the model.json written by basin fit)")
	}
	m, err := readModelFile(f.Model)
	if err != nil {
		return err
	}
	if err := f.checkV(len(m.States), f.VDegree); err != nil {
		return err
	}
	if err := f.adopt(f.Model, m.Average); err != nil {
		return err
	}
	ds, err := loadInputs(ctx, e, &f.inputFlags, f.Quiet, args)
	if err != nil {
		return err
	}
	if err := someFitRuns(ds); err != nil {
		return err
	}
	if err := sameUnits(f.Model, m.States, m.Units, ds); err != nil {
		return err
	}
	cert, err := fit.Certify(ctx, m, fitRuns(ds), opts)
	if err != nil {
		return classify(err, f.Model)
	}
	cert.Reason = flagNames(cert.Reason)
	if len(m.Inputs) > 0 {
		if g, err := fit.FitInputGain(m, fitRuns(ds)); err == nil {
			cert.InputGain = g
		}
	}
	if cert.V.Exponents == nil {
		cert.V = poly.Poly{Exponents: [][]int{}, Coefficients: []float64{}}
	}
	setCommand(cert, fit.CommandSettings{Inputs: strings.Join(args, " "), Model: f.Model})
	return writeOutput(e, f.Out, &f.outputFlags, "certificate.json", cert, func(w io.Writer) { printCertificate(w, cert) })
}

// readModelFile opens and decodes a model.json; any failure is bad input.
func readModelFile(path string) (*fit.Model, error) { return readFile(path, fit.ReadModel) }

// readFile opens path and decodes it with read, after checking that its
// folder is not a set of outputs left half replaced (mixedSet); a missing
// or bad file is an input error (exit 2) naming the file.
func readFile[T any](path string, read func(io.Reader) (T, error)) (T, error) {
	var zero T
	if err := mixedSet(path); err != nil {
		return zero, err
	}
	f, err := os.Open(path)
	if err != nil {
		return zero, &inputError{err}
	}
	defer f.Close()
	v, err := read(f)
	if err != nil {
		return zero, &inputError{fmt.Errorf("%s: %w", path, err)}
	}
	return v, nil
}

// zNames returns the names of the scaled coordinates, "z_theta".
func zNames(states []string) []string {
	out := make([]string, len(states))
	for i, s := range states {
		out[i] = "z_" + s
	}
	return out
}

// zDefinition says how the scaled coordinate of state s (unit u) is
// made: z_s = (s - x*)/scale, each number with its unit, the sign of the
// equilibrium folded in ("(latch + 1 mm)/(0.737 mm)", not "(latch - -1)/
// 0.737 mm") and a zero one left out.
func zDefinition(s, u string, eq, scale float64) string {
	with := func(v string) string {
		if u == "" {
			return v
		}
		return v + " " + u
	}
	sc := with(human.Num(scale))
	if u != "" {
		sc = "(" + sc + ")"
	}
	e := human.Near(eq, scale)
	switch {
	case e == "0":
		return fmt.Sprintf("z_%s = %s/%s", s, s, sc)
	case strings.HasPrefix(e, "-"):
		return fmt.Sprintf("z_%s = (%s + %s)/%s", s, s, with(e[1:]), sc)
	}
	return fmt.Sprintf("z_%s = (%s - %s)/%s", s, s, with(e), sc)
}

// printCertificate writes the readable form of a certificate.
func printCertificate(w io.Writer, c *fit.Certificate) {
	fmt.Fprintf(w, "verdict: %s (strength %s)\n", c.Verdict, c.Strength)
	fmt.Fprintf(w, "%s\n\n", c.Reason)
	if c.Contradicted {
		fmt.Fprintf(w, "the data contradict stability: %s\n\n", c.Contradiction)
	}
	if line := report.ConflictLine(c); line != "" {
		fmt.Fprintf(w, "%s\n\n", line)
	}
	if !c.Found {
		fmt.Fprintf(w, "%s\n", c.Caveat)
		return
	}
	var zs []string
	for j, s := range c.States {
		zs = append(zs, zDefinition(s, c.Units[j], c.Equilibrium[j], c.Scale[j]))
	}
	text, dropped := report.VText(c)
	fmt.Fprintf(w, "V = %s\n  with %s\n", text, strings.Join(zs, ", "))
	if dropped > 0 {
		fmt.Fprintf(w, "  (%s below 1e-4 of the largest coefficient left out; --json has them all)\n", human.Count(dropped, "term"))
	}
	fmt.Fprintf(w, "level: V <= %s (margin %s, noise radius %s in z, pair tolerance %s)\n",
		human.Sig(c.Level, 6), human.Sig(c.Margin, 3), human.Sig(c.NoiseRadius, 3), human.Sig(c.Tolerance, 3))
	fmt.Fprintf(w, "region: %s of the model's trust region (where the data support the fit)\n", human.Percent(c.Region.EnvelopeShare))
	for j, s := range c.States {
		u := ""
		if c.Units[j] != "" {
			u = " " + c.Units[j]
		}
		fmt.Fprintf(w, "  %-12s %s .. %s%s\n", s, human.Near(c.Region.Extent[j][0], c.Scale[j]), human.Near(c.Region.Extent[j][1], c.Scale[j]), u)
	}
	if l := report.LimitText(c); l != "" {
		fmt.Fprintf(w, "limited by: %s\n", l)
	}
	fmt.Fprintf(w, "in sample: V did not rise beyond the noise tolerance on %s inside; %d LP solves, %d rounds, %d active rows\n",
		human.Share(int(math.Round(c.InSample.DecreaseFraction*float64(c.InSample.Pairs))), c.InSample.Pairs, "pair"), c.Region.Solves, c.Region.LPRounds, c.Region.LPRows)
	ru := "no"
	if c.RadiallyUnbounded {
		ru = "yes"
	}
	fmt.Fprintf(w, "top-degree part positive definite (sampled): %s\n\n%s\n", ru, c.Caveat)
}
