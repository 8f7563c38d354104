package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"text/tabwriter"

	"basin.example/cmd/basin/internal/human"
	"basin.example/cmd/basin/internal/report"
	"basin.example/fit"
	"basin.example/ingest"
	"basin.example/validate"
)

// checkFlags are the flags of basin check.
type checkFlags struct {
	inputFlags
	outputFlags
	Cert        string
	MinDecrease float64
	Beta        float64
	Tolerance   float64
}

func (f *checkFlags) register(fs *flag.FlagSet) {
	f.inputFlags.register(fs, true)
	f.outputFlags.register(fs)
	fs.StringVar(&f.Cert, "cert", "", "the certificate `FILE` (certificate.json)")
	fs.Float64Var(&f.MinDecrease, "min-decrease", defaultMinDecr, "decrease fraction `F` a certified verdict needs")
	fs.Float64Var(&f.Beta, "beta", defaultBeta, "scenario bound confidence parameter `B` (confidence 1-B)")
	fs.Float64Var(&f.Tolerance, "rise-tol", 0, "tolerated rise of V between samples `DV` (0: the certificate's)")
}

var cmdCheck = &command{
	UsageLine: "basin check --cert certificate.json [flags] INPUTS...",
	Short:     "validate a certificate on runs it has not seen",
	Long: `Checks a saved certificate on new runs: per run, whether it starts inside
the region, stays inside, settles, and on how many consecutive pairs
inside the region V fell (within the certificate's noise tolerance);
overall the decrease and invariance fractions, the worst violation, and
the scenario bound on the chance that a new sample from the same envelope
violates the decrease condition (counting only samples one decorrelation
time apart). The verdict on these runs follows the same rules as 'run'.
With --inputs and a certificate at rest input, the runs are checked in
pieces where the inputs rest; a piece that ends where an input comes on
is not judged on settling (settled reads "cut: drive on at T s", --json
gives the run's cut), its rises and leaves still are. So is a piece that
ends where a one-sample jump (a hit) or a gap split its recording, every
piece but the recording's last: settled reads "cut: jump in v at T s" or
"cut: gap from T1 s to T2 s", and --json's cut has reason jump (time,
state) or gap (time, until).
A run that came to rest outside the region settled at another rest point:
its unsettled flag says where (rest_point in --json) and, when a
certificate-N.json or model.json beside the certificate has an
equilibrium there, names it (rest_name); it lies outside the claim.
Without --states the certificate's states are read by name, in any column
order, other columns left out; a state missing, or a state column in other
units than the certificate's, is an input error. Folders are read with
their key=value subfolders, as screen reads them; the table has a column
per partition key and the file of each run, and --json gives each run's
partition.

The exit status is 0 whatever the verdict, rejected included (status 1
belongs to 'screen'): read the verdict line, or summary.verdict with
--json. To stop a pipeline on a bad run, use 'basin screen'.`,
}

func init() { cmdCheck.Run = runCheck }

// checkJSON is the contract's check --json shape.
type checkJSON struct {
	Certificate string             `json:"certificate"`
	Runs        []checkRun         `json:"runs"`
	States      []stateJSON        `json:"states"`
	Summary     checkSummary       `json:"summary"`
	Validation  *fit.Validation    `json:"validation"`
	Options     map[string]float64 `json:"options"`
}

// checkRun is one run's check and the partition of its file (its
// key=value folders), as screen reports it.
type checkRun struct {
	validate.RunScreen
	Partition partition `json:"partition,omitempty"`
}

type stateJSON struct {
	Name string `json:"name"`
	Unit string `json:"unit"`
}

type checkSummary struct {
	Runs               int            `json:"runs"`
	Flagged            int            `json:"flagged"`
	StartedInside      int            `json:"runs_started_inside"`
	Settled            int            `json:"runs_settled"`
	CutShort           int            `json:"runs_cut_short,omitempty"`
	CutShortBy         map[string]int `json:"runs_cut_short_by,omitempty"`
	DecreaseFraction   float64        `json:"decrease_fraction"`
	InvarianceFraction float64        `json:"invariance_fraction"`
	ViolationBound     float64        `json:"violation_bound"`
	Confidence         float64        `json:"confidence"`
	Verdict            fit.Verdict    `json:"verdict"`
	Strength           fit.Strength   `json:"strength"`
	Reason             string         `json:"reason"`
	Caveat             string         `json:"caveat"`
}

func runCheck(ctx context.Context, e *env, args []string) error {
	c := new(checkFlags)
	fs := cmdCheck.flagSet()
	c.register(fs)
	args, err := cmdCheck.parse(e, fs, args)
	if err != nil {
		return err
	}
	switch {
	case c.Cert == "":
		return usagef("--cert FILE is required")
	case !(c.MinDecrease > 0 && c.MinDecrease <= 1):
		return usagef("--min-decrease must be in (0, 1], got %g", c.MinDecrease)
	case !(c.Beta > 0 && c.Beta < 1):
		return usagef("--beta must be in (0, 1), got %g", c.Beta)
	case c.Tolerance < 0 || math.IsNaN(c.Tolerance) || math.IsInf(c.Tolerance, 0):
		return usagef("--rise-tol must be a finite number >= 0, got %g", c.Tolerance)
	}
	cert, err := certFromFile(c.Cert)
	if err != nil {
		return err
	}
	if err := c.adopt(c.Cert, cert.Average); err != nil {
		return err
	}
	// Without --states the certificate's states are read by name, as
	// screen reads them: a file may hold them in any order, and other
	// columns (a temperature, a status word) are left out.
	fromCert := c.States == "" && !slices.ContainsFunc(cert.States, func(s string) bool { return strings.Contains(s, ",") })
	if fromCert {
		c.States = strings.Join(cert.States, ",")
	}
	ds, err := loadInputs(ctx, e, &c.inputFlags, c.Quiet, args)
	var pe *ingest.ParseError
	if err != nil && fromCert && errors.Is(err, ingest.ErrNoStates) && errors.As(err, &pe) {
		return missingStates(pe, cert.States)
	}
	if err != nil {
		return err
	}
	if err := sameUnits(c.Cert, cert.States, cert.Units, ds); err != nil {
		return err
	}
	recorded, pieces := len(ds.Runs), false
	var recording *ingest.Dataset // the runs before the pieces were cut
	if g := cert.InputGain; g != nil && len(ds.Inputs) > 0 && len(ds.Inputs) == len(g.RestInput) {
		// A certificate at rest input is checked where the inputs rest.
		whole := map[string]bool{}
		for _, r := range ds.Runs {
			whole[r.Name] = true
		}
		recording = ds
		ds = fit.RestSegments(ds, g.RestInput)
		pieces = len(ds.Runs) != recorded
		for _, r := range ds.Runs {
			pieces = pieces || !whole[r.Name] // a piece is named "run@t"
		}
	}
	opts := &validate.Options{Beta: c.Beta, MinDecrease: c.MinDecrease, Tolerance: c.Tolerance, Whole: recording}
	val, runs, err := validate.Check(ctx, cert, ds, opts)
	if err != nil {
		return classify(err, c.Cert)
	}
	names, points := restsBeside(c.Cert, cert)
	validate.NameRests(runs, cert, names, points)
	judged := *cert
	validate.Decide(&judged, val, runs, nil, opts)
	judged.Reason = flagNames(judged.Reason)
	doc := &checkJSON{Certificate: c.Cert, Validation: val,
		Options: map[string]float64{"min_decrease": c.MinDecrease, "beta": c.Beta, "rise_tol": c.Tolerance}}
	// the partition of each file, from its key=value folders (the files
	// were read, so the folders expand as they did for the read)
	parts := map[string]partition{}
	if in, _, err := ingest.ExpandTree(args, nil); err == nil {
		for _, f := range in {
			parts[f.Path] = f.Partition
		}
	}
	for _, r := range runs {
		if r.Flags == nil {
			r.Flags = []validate.Flag{} // the contract's list, as screen writes it: [] not null
		}
		doc.Runs = append(doc.Runs, checkRun{RunScreen: r, Partition: parts[r.File]})
	}
	if doc.Runs == nil {
		doc.Runs = []checkRun{}
	}
	for _, s := range ds.States {
		doc.States = append(doc.States, stateJSON{s.Name, s.Unit})
	}
	sum := &doc.Summary
	sum.Runs = len(runs)
	for _, r := range runs {
		if r.Flagged {
			sum.Flagged++
		}
	}
	sum.StartedInside, sum.Settled, sum.CutShort, sum.CutShortBy = val.StartInside, val.Settled, val.CutShort, val.CutShortBy
	sum.DecreaseFraction, sum.InvarianceFraction = val.DecreaseFraction, val.InvarianceFraction
	sum.ViolationBound, sum.Confidence = val.ViolationBound, val.Confidence
	sum.Verdict, sum.Strength, sum.Reason, sum.Caveat = judged.Verdict, judged.Strength, judged.Reason, fit.Caveat
	if c.JSON {
		return writeJSON(e.stdout, doc)
	}
	return checkTable(e, doc, cert, recorded, pieces)
}

// checkTable prints doc as a table and its figures; the runs were
// recorded runs, checked as pieces where the inputs rest when pieces.
func checkTable(e *env, doc *checkJSON, cert *fit.Certificate, recorded int, pieces bool) error {
	tw := tabwriter.NewWriter(e.stdout, 0, 4, 2, ' ', 0)
	// partition keys in order of first appearance, a column each, then
	// the file: in a partitioned fleet base names repeat across folders
	var keys []string
	seen := map[string]bool{}
	for _, r := range doc.Runs {
		for _, kv := range r.Partition {
			if !seen[kv.Key] {
				seen[kv.Key] = true
				keys = append(keys, kv.Key)
			}
		}
	}
	for _, k := range keys {
		fmt.Fprintf(tw, "%s\t", printable(k))
	}
	fmt.Fprintln(tw, "run\tfile\tsamples\tstarts inside\tsettled\tpairs inside\tof them, V did not rise\tflags")
	for i := range doc.Runs {
		r := &doc.Runs[i]
		for _, k := range keys {
			fmt.Fprintf(tw, "%s\t", printable(r.Partition.value(k)))
		}
		kept := "-"
		if r.Pairs > 0 {
			kept = human.Percent(float64(r.Decreased) / float64(r.Pairs))
		}
		var fl []string
		for _, f := range r.Flags {
			fl = append(fl, report.FlagText(cert, f, &r.RunScreen))
		}
		flags := strings.Join(fl, "; ")
		if flags == "" {
			flags = "-"
		}
		fmt.Fprintf(tw, "%s\t%s\t%d\t%s\t%s\t%d\t%s\t%s\n", printable(r.Run), printable(r.File), r.Samples, checkYesNo(r.StartInside), report.SettledText(&r.RunScreen), r.Pairs, kept, printable(flags))
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	v, s := doc.Validation, doc.Summary
	w := e.stdout
	if pieces {
		fmt.Fprintf(w, "\n%s checked (%s where the inputs rest), %d flagged\n", human.Count(recorded, "run"), human.Count(s.Runs, "piece"), s.Flagged)
	} else {
		fmt.Fprintf(w, "\n%s checked, %d flagged\n", human.Count(s.Runs, "run"), s.Flagged)
	}
	fmt.Fprintf(w, "%s\n", report.HeldoutRunsText(cert, v, recorded, pieces))
	if v.Worst != nil {
		fmt.Fprintf(w, "worst violation, in run %s%s at %s: %s\n", printable(v.Worst.Run), worstFile(doc.Runs, v.Worst), report.StatePoint(cert, v.Worst.State),
			report.FlagText(cert, validate.Flag{Kind: v.Worst.Kind, Time: v.Worst.Time, Excess: v.Worst.Excess}, nil))
	}
	fmt.Fprintf(w, "scenario bound: %s\n", report.CertBoundText(cert, v))
	if v.Note != "" && report.HasV(cert) {
		fmt.Fprintf(w, "  (%s)\n", v.Note)
	}
	fmt.Fprintf(w, "verdict on these runs: %s (strength %s): %s\n%s\n", s.Verdict, s.Strength, s.Reason, s.Caveat)
	return nil
}

// restsBeside lists the rest points that the files beside certFile (as
// basin run writes them) know, for naming where a checked run came to
// rest: the equilibria of the other certificates (certificate.json,
// certificate-N.json), named "certificate-2.json's rest point", then
// the model's (model.json) equilibria, named by their class
// ("model.json's stable focus"). Files that are missing, unreadable or of other states are
// left out: they only name what check found.
func restsBeside(certFile string, cert *fit.Certificate) (names []string, points [][]float64) {
	dir := filepath.Dir(certFile)
	self, _ := filepath.Abs(certFile)
	files, _ := filepath.Glob(filepath.Join(dir, "certificate-*.json"))
	files = append([]string{filepath.Join(dir, "certificate.json")}, files...)
	for _, f := range files {
		if a, _ := filepath.Abs(f); a == self {
			continue
		}
		fh, err := os.Open(f)
		if err != nil {
			continue
		}
		o, err := fit.ReadCertificate(fh)
		fh.Close()
		if err != nil || !slices.Equal(o.States, cert.States) {
			continue
		}
		names = append(names, filepath.Base(f)+"'s rest point")
		points = append(points, o.Equilibrium)
	}
	if fh, err := os.Open(filepath.Join(dir, "model.json")); err == nil {
		m, err := fit.ReadModel(fh)
		fh.Close()
		if err == nil && slices.Equal(m.States, cert.States) {
			for _, q := range m.Equilibria {
				names = append(names, "model.json's "+q.Class)
				points = append(points, q.Point)
			}
		}
	}
	return names, points
}

func checkYesNo(b bool) string {
	if b {
		return "yes"
	}
	return "no"
}

// worstFile names, as " (FILE)", the file of the run that holds the
// worst violation when its run name is shared by runs of other files (a
// partitioned fleet's vehicle=1/log.csv and vehicle=2/log.csv): the one
// run of that name with a flag of the violation's kind, or "" when the
// name is unique or no single run fits.
func worstFile(runs []checkRun, worst *fit.Violation) string {
	var named, fits []string
	for i := range runs {
		r := &runs[i]
		if r.Run != worst.Run {
			continue
		}
		named = append(named, r.File)
		if slices.ContainsFunc(r.Flags, func(f validate.Flag) bool { return string(f.Kind) == worst.Kind }) {
			fits = append(fits, r.File)
		}
	}
	if len(named) < 2 || len(fits) != 1 {
		return ""
	}
	return " (" + printable(fits[0]) + ")"
}

// missingStates is the error for a file that lacks some of the
// certificate's states (read by name, without --states): it names the
// file and the first state missing.
func missingStates(pe *ingest.ParseError, states []string) error {
	missing := ""
	for _, s := range states {
		if strings.Contains(pe.Err.Error(), fmt.Sprintf("names %q,", s)) { // ingest names the first one missing
			missing = fmt.Sprintf(" (no column %q)", s)
			break
		}
	}
	return &inputError{fmt.Errorf("%s: the certificate's states %s are not all columns of this file%s; name the file's columns with --states",
		printable(pe.File), printable(strings.Join(states, ",")), printable(missing))}
}
