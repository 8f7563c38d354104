// Command certify is a runnable example of basin's library API: it reads
// logs, fits the vector field, fits a Lyapunov certificate, validates it
// on held-out runs and screens every run against it, the same steps as
// 'basin run' without the report.
//
// Usage:
//
//	go run ./examples/certify [DIR]
//
// With no DIR it writes the demo data set (package internal/demodata) into a
// temporary directory first. When DIR holds a truth.json (as the demo data
// do), the screened runs are compared with the runs known to leave.
package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"os/signal"
	"path/filepath"
	"slices"
	"strings"

	"basin.example/fit"
	"basin.example/ingest"
	"basin.example/internal/demodata"
	"basin.example/validate"
)

var errMismatch = errors.New("flagged runs differ from the truth")

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	err := run(ctx, os.Stdout, os.Args[1:])
	stop()
	if err != nil {
		fmt.Fprintln(os.Stderr, "certify:", err)
		os.Exit(1)
	}
}

// run does the job on args, printing to w. It returns errMismatch when the
// flagged runs differ from the runs the demo's truth says leave.
func run(ctx context.Context, w io.Writer, args []string) error {
	if len(args) > 1 {
		return errors.New("usage: certify [DIR]")
	}
	dir := ""
	if len(args) == 1 {
		dir = args[0]
	} else {
		tmp, err := os.MkdirTemp("", "basin-example-")
		if err != nil {
			return err
		}
		defer os.RemoveAll(tmp)
		dir = filepath.Join(tmp, "data")
		if _, err := demodata.WriteDir(ctx, dir, 1, nil); err != nil {
			return err
		}
		fmt.Fprintf(w, "wrote the demo data set to %s\n", dir)
	}

	// 1. Read the logs: every CSV or Parquet file of the directory.
	ds, err := ingest.Load(ctx, []string{dir}, nil)
	if err != nil {
		return err // a *ingest.ParseError names file, line and column
	}
	fmt.Fprintf(w, "%d runs, %d samples, states %v\n", len(ds.Runs), ds.Samples(), ds.States)

	// 2. The vector field, on all runs (defaults: degree 3, 5 folds).
	m, err := fit.Field(ctx, ds, nil)
	if err != nil {
		return err
	}
	fmt.Fprintf(w, "equilibrium %v, eigenvalues %v\n", m.Equilibrium, m.JacobianEigenvalues)

	// 3. A certificate for that field on the same runs. Its verdict stays
	// inconclusive: nothing has been checked on unseen runs yet.
	c, err := fit.Certify(ctx, m, ds, nil)
	if err != nil {
		return err
	}
	fmt.Fprintf(w, "in-sample certificate: found %v, level %.4g, verdict %s\n", c.Found, c.Level, c.Verdict)

	// 4. The honest figure: fit and certify on some runs, check on the
	// others (folds by run), and give the verdict.
	res, err := validate.Evaluate(ctx, ds, &validate.Options{Folds: 5, Seed: 1})
	if err != nil {
		return err
	}
	cert := res.Certificate
	fmt.Fprintf(w, "verdict %s (%s): %s\n", cert.Verdict, cert.Strength, cert.Reason)
	if v := cert.Validation; v != nil {
		fmt.Fprintf(w, "held-out runs %d, decrease %.4f, invariance %.4f, violation bound %.3g at confidence %g\n",
			v.HeldoutRuns, v.DecreaseFraction, v.InvarianceFraction, v.ViolationBound, v.Confidence)
	}
	fmt.Fprintln(w, fit.Caveat)

	// 5. Screen every run against the validated certificate.
	s := validate.NewScreener(cert, nil)
	var flagged []string
	for i := range ds.Runs {
		var rs validate.RunScreen
		s.Screen(&rs, ds.Runs[i].Source.File, &ds.Runs[i])
		if rs.Flagged {
			flagged = append(flagged, filepath.Base(rs.File))
		}
	}
	fmt.Fprintf(w, "flagged %d of %d runs: %s\n", len(flagged), len(ds.Runs), strings.Join(flagged, ", "))

	// 6. With the demo's truth at hand, compare.
	f, err := os.Open(filepath.Join(dir, demodata.TruthFile))
	if errors.Is(err, fs.ErrNotExist) {
		return nil
	} else if err != nil {
		return err
	}
	defer f.Close()
	truth, err := demodata.ReadTruth(f)
	if err != nil {
		return err
	}
	if !slices.Equal(flagged, truth.Leaving) {
		return fmt.Errorf("%w: the runs that leave the basin are %s", errMismatch, strings.Join(truth.Leaving, ", "))
	}
	fmt.Fprintln(w, "the flagged runs are exactly the runs that leave the basin")
	return nil
}
