package main

import (
	"bytes"
	"context"
	"errors"
	"flag"
	"go/token"
	"math"

	"basin.example/fit"
	"basin.example/fit/export"
)

// exportFlags are basin export's flags.
type exportFlags struct {
	Cert    string
	Lang    string
	Package string
	Prefix  string
	Table   string
	RiseTol float64
	Quiet   bool
}

func (f *exportFlags) register(fs *flag.FlagSet) {
	fs.StringVar(&f.Cert, "cert", "", "the certificate `FILE` (certificate.json)")
	fs.StringVar(&f.Lang, "lang", "", "target `LANG`: go, c, python or sql")
	fs.StringVar(&f.Package, "package", "", "Go package `NAME` (default basinv)")
	fs.StringVar(&f.Prefix, "prefix", "", "C identifier `PREFIX` (default basin_)")
	fs.StringVar(&f.Table, "table", "", "SQL table `NAME` the query reads (default samples; letters, digits, _, parts joined by dots)")
	fs.Float64Var(&f.RiseTol, "rise-tol", 0, "SQL: tolerated rise of V between samples `DV`, as for screen (0: the certificate's)")
	fs.BoolVar(&f.Quiet, "quiet", false, "no warnings")
}

var cmdExport = &command{
	UsageLine: "basin export --cert certificate.json --lang go|c|python|sql [--table NAME] [--rise-tol DV]",
	Short:     "write a dependency-free function that evaluates V, or the screening rule as SQL",
	Long: `Writes, on standard output, a small function with no dependencies that
evaluates the certificate's Lyapunov function V at a state vector in the
logs' original units (the scaling z = (x - equilibrium)/scale is built in)
and tests membership of the region: V <= level and inside the box. The
constants are printed to full precision and the arithmetic follows basin's
own order, so the result matches basin's to the last bit on IEEE 754
machines (compile C without -ffast-math or FMA contraction).

With --lang sql it writes one query in standard SQL that screens the
samples of a table (default samples; --table NAME) by the rules and
tolerances of basin screen: the table has columns run, t and one column
per state named as in the certificate, and the query returns one row per
run with the booleans flagged, rises, leaves, unsettled and, when the
certificate records held-out decay rates, slow (unsettled is always
false, and slow absent, for a certificate of strength stable, which
claims no settling: screen flags neither). It uses window functions
over PARTITION BY run ORDER BY t and no vendor functions, so it runs on
PostgreSQL, SQLite and engines that follow the standard, distributed ones
included (the work partitions by run). Identifiers are quoted, so names
match exactly, case included. --rise-tol DV sets the tolerated rise of V
between samples as basin screen --rise-tol does (default: the
certificate's), so the query flags what screen flags with the same flag.
A row with a missing state (NULL, or NaN) splits its run there, as
screen splits a log at an empty or NaN cell, and the run is flagged when
any piece is. The query does not split a run at a one-sample jump (a
hammer hit) nor trim a resting start, as screen does by default: it
flags what basin screen --keep-events --keep-head flags, unless those
pieces are stored as runs of their own.

A certificate that is not certified still exports, with a warning in the
code and on standard error: its region claims nothing.`,
}

func init() { cmdExport.Run = runExport }

func runExport(ctx context.Context, e *env, args []string) error {
	c := new(exportFlags)
	fs := cmdExport.flagSet()
	c.register(fs)
	args, err := cmdExport.parse(e, fs, args)
	if err != nil {
		return err
	}
	if err := noInputs(cmdExport, args); err != nil {
		return err
	}
	if c.Cert == "" {
		return usagef("--cert FILE is required")
	}
	switch c.Lang {
	case export.Go, export.C, export.Python, export.SQL:
	case "":
		return usagef("--lang is required: go, c, python or sql")
	default:
		return usagef("--lang must be go, c, python or sql, got %q", c.Lang)
	}
	if c.Table != "" && c.Lang != export.SQL {
		return usagef("--table applies to --lang sql only")
	}
	if !(c.RiseTol >= 0) || math.IsInf(c.RiseTol, 0) { // NaN fails the first test
		return usagef("--rise-tol must be a finite number >= 0, got %g", c.RiseTol)
	}
	if c.RiseTol != 0 && c.Lang != export.SQL {
		return usagef("--rise-tol applies to --lang sql only")
	}
	cert, err := certFromFile(c.Cert)
	if err != nil {
		return err
	}
	var b bytes.Buffer
	if c.Package != "" && (!token.IsIdentifier(c.Package) || c.Package == "_") {
		return usagef("--package %q: not a valid identifier for a Go package (a keyword, or not an identifier)", printable(c.Package))
	}
	err = export.Write(&b, cert, c.Lang, &export.Options{Package: c.Package, Prefix: c.Prefix, Table: c.Table, RiseTolerance: c.RiseTol})
	switch {
	case errors.Is(err, export.ErrName):
		return usagef("%v", err)
	case err != nil:
		return classify(err, c.Cert)
	}
	if cert.Verdict != fit.Certified {
		warnf(e, c.Quiet, "%s: verdict is %s; the exported region claims nothing", c.Cert, cert.Verdict)
	}
	if c.Lang == export.SQL {
		if w := settleWarning(cert, "the query does not check for it (unsettled is always false, no slow column)", "the query is without the slow column"); w != "" {
			warnf(e, c.Quiet, "%s: %s", c.Cert, w)
		}
	}
	_, err = e.stdout.Write(b.Bytes())
	return err
}

// certFromFile reads and checks a certificate.json; a missing or bad file
// is an input error (exit 2) naming the file.
func certFromFile(path string) (*fit.Certificate, error) { return readFile(path, fit.ReadCertificate) }
