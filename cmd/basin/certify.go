package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"strings"

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
	ds, err := loadInputs(ctx, e, &f.inputFlags, f.Quiet, args)
	if err != nil {
		return err
	}
	if err := sameUnits(f.Model, m.States, m.Units, ds); err != nil {
		return err
	}
	cert, err := fit.Certify(ctx, m, fitRuns(ds), opts)
	if err != nil {
		return classify(err, f.Model)
	}
	if cert.V.Exponents == nil {
		cert.V = poly.Poly{Exponents: [][]int{}, Coefficients: []float64{}}
	}
	return writeOutput(e, f.Out, &f.outputFlags, "certificate.json", cert, func(w io.Writer) { printCertificate(w, cert) })
}

// readModelFile opens and decodes a model.json; any failure is bad input.
func readModelFile(path string) (*fit.Model, error) {
	if err := mixedSet(path); err != nil {
		return nil, err
	}
	f, err := os.Open(path)
	if err != nil {
		return nil, &inputError{err}
	}
	defer f.Close()
	m, err := fit.ReadModel(f)
	if err != nil {
		return nil, &inputError{fmt.Errorf("%s: %w", path, err)}
	}
	return m, nil
}

// zNames returns the names of the scaled coordinates, "z_theta".
func zNames(states []string) []string {
	out := make([]string, len(states))
	for i, s := range states {
		out[i] = "z_" + s
	}
	return out
}

// vText renders V in the scaled coordinates, skipping zero terms.
func vText(v poly.Poly, states []string) string {
	names := zNames(states)
	var b strings.Builder
	first := true
	for k, c := range v.Coefficients {
		if c == 0 {
			continue
		}
		sign := "+"
		if c < 0 {
			sign = "-"
		}
		switch {
		case first && sign == "-":
			b.WriteString("-")
		case !first:
			b.WriteString(" " + sign + " ")
		}
		first = false
		b.WriteString(coef(c) + " " + poly.MonomialName(v.Exponents[k], names))
	}
	if first {
		return "0"
	}
	return b.String()
}

// printCertificate writes the readable form of a certificate.
func printCertificate(w io.Writer, c *fit.Certificate) {
	fmt.Fprintf(w, "verdict: %s (strength %s)\n", c.Verdict, c.Strength)
	fmt.Fprintf(w, "%s\n\n", c.Reason)
	if c.Contradicted {
		fmt.Fprintf(w, "the data contradict stability: %s\n\n", c.Contradiction)
	}
	if !c.Found {
		fmt.Fprintf(w, "%s\n", c.Caveat)
		return
	}
	var zs []string
	for j, s := range c.States {
		u := ""
		if c.Units[j] != "" {
			u = " " + c.Units[j]
		}
		x0 := c.Equilibrium[j]
		if math.Abs(x0) < 1e-9*c.Scale[j] { // round-off of a zero
			x0 = 0
		}
		zs = append(zs, fmt.Sprintf("z_%s = (%s - %.4g)/%.4g%s", s, s, x0, c.Scale[j], u))
	}
	fmt.Fprintf(w, "V = %s\n  with %s\n", vText(c.V, c.States), strings.Join(zs, ", "))
	fmt.Fprintf(w, "level: V <= %.6g (margin %.3g, noise radius %.3g in z, pair tolerance %.3g)\n",
		c.Level, c.Margin, c.NoiseRadius, c.Tolerance)
	fmt.Fprintf(w, "region: %.1f%% of the envelope the data cover, limited by %s\n", 100*c.Region.EnvelopeShare, c.Region.Limit)
	for j, s := range c.States {
		u := ""
		if c.Units[j] != "" {
			u = " " + c.Units[j]
		}
		fmt.Fprintf(w, "  %-12s %.4g .. %.4g%s\n", s, c.Region.Extent[j][0], c.Region.Extent[j][1], u)
	}
	fmt.Fprintf(w, "in sample: %d pairs inside, V fell on %.1f%% of them; %d LP solves, %d rounds, %d active rows\n",
		c.InSample.Pairs, 100*c.InSample.DecreaseFraction, c.Region.Solves, c.Region.LPRounds, c.Region.LPRows)
	ru := "no"
	if c.RadiallyUnbounded {
		ru = "yes"
	}
	fmt.Fprintf(w, "top-degree part positive definite (sampled): %s\n\n%s\n", ru, c.Caveat)
}
