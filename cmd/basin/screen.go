package main

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"
	"text/tabwriter"

	"basin.example/cmd/basin/internal/human"
	"basin.example/fit"
	"basin.example/ingest"
	"basin.example/internal/parallel"
	"basin.example/validate"
)

// screenFlags are basin screen's flags.
type screenFlags struct {
	inputFlags
	outputFlags
	Cert      string
	Tolerance float64
	Workers   int
	Recursive bool
	Format    string
}

func (f *screenFlags) register(fs *flag.FlagSet) {
	f.inputFlags.register(fs, false) // every run given is screened: no manifest
	f.outputFlags.register(fs)
	fs.StringVar(&f.Cert, "cert", "", "the certificate `FILE` (certificate.json)")
	fs.Float64Var(&f.Tolerance, "rise-tol", 0, "tolerated rise of V between samples `DV` (0: the certificate's)")
	fs.Float64Var(&f.Tolerance, "tolerance", 0, "deprecated: the old name of --rise-tol `DV`")
	fs.IntVar(&f.Workers, "workers", 0, "files screened at once `N` (default: the number of CPUs)")
	fs.BoolVar(&f.Recursive, "recursive", false, "descend into every subfolder, not only key=value partition folders")
	fs.StringVar(&f.Format, "format", "table", "output `FORMAT`: table, or csv (one row per run)")
}

var cmdScreen = &command{
	UsageLine: "basin screen --cert certificate.json [flags] INPUTS...",
	Short:     "flag runs whose V rises, that leave the region, or that do not settle",
	Long: `Screens new logs against a saved certificate. A run is flagged when V
rises beyond the tolerance between samples inside the region (rises), when
it leaves the region after entering it by more than the noise (leaves: V
above the level by more than the tolerance, or outside the box by more
than the noise radius), when it entered the region and does not settle,
or ends outside the region (unsettled), or when V decays more slowly than
the certificate's held-out runs allow (slow: the run's decay rate, minus
the slope of log V against time over its approach, inside the region and
outside the noise ball up to its first sample inside the ball, is below
half the slowest held-out run's; a long rest after settling does not
count). Per run it reports each
flag with the first time it happened and the worst excess, in units of V;
rises and leaves also say how far past the boundary, per state in the
states' units; and the run's decay rate. A run that starts outside and
comes in to settle is not flagged. Each piece of a recording split at a
gap or a one-sample jump (a hit) is screened as a run of its own, but
only the recording's last piece is judged on settling: the others ended
where the log was cut (as in check; the SQL of export --lang sql does
the same over the pieces it splits at a missing cell, and splits at no
jump). A certificate without held-out decay
rates (an older file, or too few held-out runs with a positive rate)
screens without the slow flag, with one warning saying why. A certificate
of strength stable does not claim that runs settle: against it no run is
flagged unsettled or slow (rises, leaves and stuck only), with one
warning, and --json has settling_unclaimed.
A run whose V grows over it (its end above its lowest earlier 50-sample
stretch by more than the tolerance, and V over its last samples above the
settle level) is flagged rises too; one at rest off the equilibrium is
unsettled (a run still on its way must end below every earlier stretch by
the settle level, or by a quarter of the geometric mean of its end's V
and that level when less); a state whose reading holds one value over
the run's last 50 samples or more, from a sample where the run was away
from rest (V above the settle level), is stuck (state names it): a
quantised sensor holding its reading at rest is not.

Folders are read with their key=value subfolders (the partition layout of
data lakes and Parquet writers: logs/vehicle=17/day=2026-11-30/run.parquet),
and each run reports its partition values (partition in --json, a column
per key in the table and in --format csv); other subfolders are skipped,
with a note, unless --recursive. --format csv prints one row per run:
the partition columns, run, file, samples, flagged, rises, leaves,
unsettled, slow, never_inside, decay_rate and stuck.

Each worker screens one file at a time, in buffers reused from file to
file. A Parquet file of more than 65,536 rows, or a CSV file above
64 MiB, is streamed: read a row group (or CSV block) at a time in two
passes (the runs' boundaries, then the heads, events and screen; with a
certificate's noise, up to two more for a file that is not one run of
all its rows: the noise of the runs that end before its last row, then
the runs whose own noise changed their tolerance, each reading only the
row groups of the runs it needs), so memory stays bounded by a row group per worker however large the file;
the runs, and so the flags, are exactly those of reading it whole.
Smaller files are read whole in one pass; files that cannot be streamed
exactly (with --run-col, --from/--to or --inputs, date-time stamps,
stdin, a gap limit only the whole column decides, a resting head longer
than 65,536 samples) are read whole, so memory then grows with the
largest such file.
The state columns are the certificate's, in its order, unless --states
says otherwise. Exit status 1 when any run is flagged.`,
}

func init() { cmdScreen.Run = runScreen }

// screenJSON is the contract's screen --json shape.
type screenJSON struct {
	Runs    []screenRun   `json:"runs"`
	States  []screenState `json:"states"`
	Summary screenSummary `json:"summary"`
	// Partitions lists the partition keys met, in order of first
	// appearance.
	Partitions []string `json:"partition_keys,omitempty"`
	// SlowBound is the decay rate (1/s) below which a run is slow, 0
	// when the certificate records no held-out decay rates or claims no
	// settling.
	SlowBound float64 `json:"slow_bound"`
	// SettleUnclaimed says the certificate's strength is stable: it does
	// not claim that runs settle, so no run is flagged unsettled or slow.
	SettleUnclaimed bool `json:"settling_unclaimed,omitempty"`
}

// screenRun is one run's screening and the partition of its file.
type screenRun struct {
	validate.RunScreen
	Partition partition `json:"partition,omitempty"`
	// JumpSplits is how many one-sample jumps far beyond the noise (a
	// hit, a step) split the recording this run was cut from; each piece
	// is screened apart, and a piece that starts outside the region after
	// a hit is not flagged for it.
	JumpSplits int `json:"jump_splits,omitempty"`
}

// partition is a file's key=value folders, written as a JSON object in
// path order.
type partition []ingest.Partition

func (p partition) MarshalJSON() ([]byte, error) {
	var b bytes.Buffer
	b.WriteByte('{')
	for i, kv := range p {
		if i > 0 {
			b.WriteByte(',')
		}
		k, err := json.Marshal(kv.Key)
		if err != nil {
			return nil, err
		}
		v, err := json.Marshal(kv.Value)
		if err != nil {
			return nil, err
		}
		b.Write(k)
		b.WriteByte(':')
		b.Write(v)
	}
	b.WriteByte('}')
	return b.Bytes(), nil
}

// value returns the value of key, or "" when p has none.
func (p partition) value(key string) string {
	for _, kv := range p {
		if kv.Key == key {
			return kv.Value
		}
	}
	return ""
}

type screenState struct {
	Name string `json:"name"`
	Unit string `json:"unit"`
}

type screenSummary struct {
	Runs    int `json:"runs"`
	Flagged int `json:"flagged"`
	Files   int `json:"files"`
	Samples int `json:"samples"`
	// Counts per flag kind, over all runs.
	Rises     int `json:"rises"`
	Leaves    int `json:"leaves"`
	Unsettled int `json:"unsettled"`
	Slow      int `json:"slow"`
	Stuck     int `json:"stuck"`
	// NeverInside counts runs that never entered the region.
	NeverInside int `json:"never_inside"`
	// JumpSplits counts the splits at one-sample jumps far beyond the
	// noise over all files, and JumpFiles the files that had one.
	JumpSplits int `json:"jump_splits"`
	JumpFiles  int `json:"jump_files"`
}

func runScreen(ctx context.Context, e *env, args []string) error {
	c := new(screenFlags)
	fs := cmdScreen.flagSet()
	c.register(fs)
	args, err := cmdScreen.parse(e, fs, args)
	if err != nil {
		return err
	}
	if c.Cert == "" {
		return usagef("--cert FILE is required")
	}
	if err := needInputs(args); err != nil {
		return err
	}
	if !(c.Tolerance >= 0) || math.IsInf(c.Tolerance, 0) { // NaN fails the first test
		return usagef("--rise-tol must be a finite number >= 0, got %g", c.Tolerance)
	}
	if c.Workers < 0 || c.Workers > 1024 {
		return usagef("--workers must be 0..1024, got %d", c.Workers)
	}
	switch c.Format {
	case "table", "csv":
	default:
		return usagef("--format must be table or csv, got %q", c.Format)
	}
	if c.JSON && c.Format == "csv" {
		return usagef("--json and --format csv: choose one")
	}
	cert, err := certFromFile(c.Cert)
	if err != nil {
		return err
	}
	if err := c.inputFlags.adopt(c.Cert, cert.Average); err != nil {
		return err
	}
	iopts, err := c.inputFlags.options()
	if err != nil {
		return err
	}
	if iopts.States == nil {
		iopts.States = cert.States
	}
	if len(iopts.States) != len(cert.States) {
		return usagef("--states names %d states, the certificate has %d", len(iopts.States), len(cert.States))
	}
	iopts.Stdin = e.stdin
	inputs, skipped, err := ingest.ExpandTree(args, &ingest.ExpandOptions{Recursive: c.Recursive})
	if err != nil {
		return asInputError(err)
	}
	for _, d := range skipped {
		warnf(e, c.Quiet, "%s: skipped folder (not key=value; --recursive reads it)", printable(d))
	}
	files := make([]string, len(inputs))
	for i := range inputs {
		files[i] = inputs[i].Path
	}
	res, err := screenFiles(ctx, cert, files, iopts, &validate.ScreenOptions{Tolerance: c.Tolerance}, c.Workers)
	var pe *ingest.ParseError
	if err != nil && c.States == "" && errors.Is(err, ingest.ErrNoStates) && errors.As(err, &pe) {
		// The states came from the certificate, not from --states.
		return missingStates(pe, cert.States)
	}
	if err != nil {
		return asInputError(runColHint(err, iopts.RunCol))
	}
	out := screenJSON{Runs: []screenRun{}, Summary: screenSummary{Files: len(files)}}
	seen := map[string]bool{}
	for _, in := range inputs {
		for _, kv := range in.Partition {
			if !seen[kv.Key] {
				seen[kv.Key] = true
				out.Partitions = append(out.Partitions, kv.Key)
			}
		}
	}
	for j, s := range cert.States {
		out.States = append(out.States, screenState{s, cert.Units[j]})
	}
	for i, rs := range res {
		if j := fileJumps(rs.runs, rs.jumps); j > 0 {
			out.Summary.JumpSplits += j
			out.Summary.JumpFiles++
		}
		for k, r := range rs.runs {
			if r.Flags == nil {
				r.Flags = []validate.Flag{}
			}
			out.Runs = append(out.Runs, screenRun{RunScreen: r, Partition: inputs[i].Partition, JumpSplits: rs.jumps[k]})
			out.Summary.Runs++
			out.Summary.Samples += r.Samples
			if r.Flagged {
				out.Summary.Flagged++
			}
			if !r.EverInside {
				out.Summary.NeverInside++
			}
			for _, f := range r.Flags {
				switch f.Kind {
				case validate.FlagRises:
					out.Summary.Rises++
				case validate.FlagLeaves:
					out.Summary.Leaves++
				case validate.FlagUnsettled:
					out.Summary.Unsettled++
				case validate.FlagSlow:
					out.Summary.Slow++
				case validate.FlagStuck:
					out.Summary.Stuck++
				}
			}
		}
	}
	if cert.Verdict != fit.Certified {
		warnf(e, c.Quiet, "%s: verdict is %s; screening against a region that claims nothing", c.Cert, cert.Verdict)
	}
	if v := cert.Validation; cert.Strength != fit.Stable && v != nil && v.Decay != nil && v.Decay.LowerBound > 0 {
		out.SlowBound = v.Decay.LowerBound
	}
	out.SettleUnclaimed = cert.Strength == fit.Stable
	if w := settleWarning(cert, "runs are not checked for settling (no unsettled or slow flag)", "screening without the slow flag"); w != "" {
		warnf(e, c.Quiet, "%s: %s", c.Cert, w)
	}
	switch {
	case c.JSON:
		if err := writeJSON(e.stdout, out); err != nil {
			return err
		}
	case c.Format == "csv":
		if err := screenCSV(e.stdout, &out); err != nil {
			return err
		}
	default:
		if err := screenTable(e.stdout, &out); err != nil {
			return err
		}
	}
	if out.Summary.Flagged > 0 {
		return errFlagged
	}
	return nil
}

// settleWarning says, when screening against cert leaves a settling
// check out, which and why: a certificate of strength stable does not
// claim that runs settle, so they are not checked for it (no unsettled,
// no slow flag); otherwise, without a slow bound, why there is none, and
// then what is done (noSlow); noSettle says what is done under stable.
// It is "" when every check is made.
func settleWarning(cert *fit.Certificate, noSettle, noSlow string) string {
	if cert.Strength == fit.Stable {
		return "strength stable: the certificate does not claim that runs settle, so " + noSettle
	}
	v := cert.Validation
	switch {
	case v != nil && v.Decay != nil && v.Decay.LowerBound > 0:
		return ""
	case v == nil || v.Decay == nil:
		return "no held-out decay rates recorded (an older certificate, or no held-out run had a rate); " + noSlow
	case strings.HasPrefix(v.Decay.Rule, "no bound: "):
		return "no slow bound recorded (" + strings.TrimPrefix(v.Decay.Rule, "no bound: ") + "); " + noSlow
	}
	return fmt.Sprintf("no slow bound recorded (%d held-out runs with a decay rate, smallest %.3g 1/s); %s", v.Decay.Runs, v.Decay.Min, noSlow)
}

// asInputError marks bad input (a file that cannot be read or parsed) so
// that it exits 2 with one line.
func asInputError(err error) error { return classify(err, "") }

// fileResult is the screening of one file.
type fileResult struct {
	runs  []validate.RunScreen
	jumps []int // per run, its recording's splits at jumps
	err   error
}

// screenFiles reads and screens files on up to workers goroutines (0: one
// per CPU) of internal/parallel, each with its own Screener and Streamer
// (buffers reused from file to file), holding at most one row group (or
// one window of rows) per worker. Results are stored by file index, so
// the output order is the input order whatever the timing. The first
// error in input order is returned, and stops the files after it.
func screenFiles(ctx context.Context, cert *fit.Certificate, files []string, iopts *ingest.Options,
	so *validate.ScreenOptions, workers int) ([]fileResult, error) {
	return screenFilesWith(ctx, cert, files, iopts, so, workers, nil)
}

// screenFilesWith is screenFiles with the Streamers' options (nil:
// defaults), for benchmarks.
func screenFilesWith(ctx context.Context, cert *fit.Certificate, files []string, iopts *ingest.Options,
	so *validate.ScreenOptions, workers int, sto *ingest.StreamOptions) ([]fileResult, error) {
	type worker struct {
		s   *validate.Screener
		st  *ingest.Streamer
		dst []validate.RunScreen
	}
	if sto == nil && len(files) < parallel.Workers(workers) {
		// spare cores: decode each file's next row group on one of them
		sto = &ingest.StreamOptions{Prefetch: true}
	}
	// the runs found as they are screened: one read of each file fewer
	lsto := ingest.StreamOptions{LateRuns: true}
	if sto != nil {
		lsto = *sto
		lsto.LateRuns = true
	}
	sto = &lsto
	res := make([]fileResult, len(files))
	err := parallel.For(ctx, len(files), workers, func() *worker {
		s := validate.NewScreener(cert, so)
		wsto := *sto
		wsto.Tap = s.Tap() // a one-run file's noise from the Streamer's first read
		return &worker{s: s, st: ingest.NewStreamer(iopts, &wsto)}
	}, func(ctx context.Context, i int, w *worker) error {
		res[i] = screenSafe(func() fileResult { return screenOne(ctx, w.s, w.st, &w.dst, cert, files[i]) }, files[i])
		return res[i].err
	})
	if err != nil {
		return nil, err
	}
	return res, nil
}

// screenOne reads one file and screens each of its runs.
func screenOne(ctx context.Context, s *validate.Screener, st *ingest.Streamer, dst *[]validate.RunScreen,
	cert *fit.Certificate, file string) fileResult {
	sf, err := st.Open(ctx, file)
	if err != nil {
		return fileResult{err: err}
	}
	defer sf.Close()
	var r fileResult
	// A log in other units than the certificate's is refused, as check
	// refuses it: V of degrees read as radians flags every run.
	for j, col := range sf.States {
		if j < len(cert.Units) && col.Unit != "" && cert.Units[j] != "" && col.Unit != cert.Units[j] {
			return fileResult{err: &inputError{fmt.Errorf("%s:1: column %q: in %s in the data but in %s in the certificate; convert the logs or refit",
				printable(file), printable(col.Name), printable(col.Unit), printable(cert.Units[j]))}}
		}
	}
	*dst, err = s.ScreenFile(ctx, *dst, sf)
	if err != nil {
		return fileResult{err: err}
	}
	r.runs = make([]validate.RunScreen, len(*dst))
	r.jumps = make([]int, len(*dst))
	byName := make(map[string]int, len(sf.Runs))
	for _, sr := range sf.Runs {
		byName[sr.Name] = sr.Events
	}
	for k := range *dst {
		r.jumps[k] = byName[(*dst)[k].Run]
	}
	for k, rs := range *dst {
		// ScreenFile reuses each result's Flags storage; keep a copy.
		rs.Flags = append([]validate.Flag(nil), rs.Flags...)
		r.runs[k] = rs
	}
	return r
}

// fileJumps counts one file's splits at jumps: every piece of a
// recording carries its recording's count, so each recording (a run name
// without its "~N" piece suffix) is counted once.
func fileJumps(runs []validate.RunScreen, jumps []int) int {
	seen := map[string]bool{}
	n := 0
	for k, r := range runs {
		stem, _ := ingest.PieceOf(r.Run)
		if !seen[stem] {
			seen[stem] = true
			n += jumps[k]
		}
	}
	return n
}

// screenTable prints the runs in input order, then a summary line.
func screenTable(w io.Writer, out *screenJSON) error {
	tw := tabwriter.NewWriter(w, 0, 8, 2, ' ', 0)
	for _, k := range out.Partitions {
		fmt.Fprintf(tw, "%s\t", printable(k))
	}
	fmt.Fprintln(tw, "run\tfile\tsamples\tverdict\tdecay 1/s\tflags")
	for _, r := range out.Runs {
		for _, k := range out.Partitions {
			fmt.Fprintf(tw, "%s\t", printable(r.Partition.value(k)))
		}
		verdict := "ok"
		switch {
		case r.Flagged:
			verdict = "FLAGGED"
		case !r.EverInside:
			verdict = "never inside"
		}
		var fl []string
		for _, f := range r.Flags {
			fl = append(fl, flagText(f, out.States))
		}
		rate := "-"
		if r.DecaySamples > 0 {
			rate = human.Sig(r.DecayRate, 3)
		}
		fmt.Fprintf(tw, "%s\t%s\t%d\t%s\t%s\t%s\n", printable(r.Run), printable(r.File), r.Samples, verdict, rate, strings.Join(fl, "; "))
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	s := out.Summary
	_, err := fmt.Fprintf(w, "%s in %s, %s: %d flagged (%d rises, %d leaves, %d unsettled, %d slow), %d never inside the region\n",
		human.Count(s.Runs, "run"), human.Count(s.Files, "file"), human.Count(s.Samples, "sample"), s.Flagged, s.Rises, s.Leaves, s.Unsettled, s.Slow, s.NeverInside)
	if err == nil && s.Stuck > 0 {
		_, err = fmt.Fprintf(w, "stuck: %d run(s) whose reading of a state held one value over their last 50 samples or more\n", s.Stuck)
	}
	if err == nil && out.SlowBound > 0 {
		_, err = fmt.Fprintf(w, "slow: decay rate of V below %.3g 1/s (half the slowest held-out run's)\n", out.SlowBound)
	}
	if err == nil && s.JumpSplits > 0 {
		_, err = fmt.Fprintf(w, "jumps: %s split at %s far beyond the noise (a hit or a step from outside); the pieces were screened apart, and a piece that starts outside the region after one is not flagged for it (--keep-events screens each recording whole)\n",
			human.Count(s.JumpFiles, "file"), human.Count(s.JumpSplits, "one-sample jump"))
	}
	if err == nil {
		_, err = fmt.Fprintln(w, fit.Caveat)
	}
	return err
}

// screenCSV prints one CSV row per run: the partition columns (a key
// that repeats a fixed column's name gets a "partition." prefix), then
// run, file, samples, the flags as true or false, never_inside and the
// decay rate (empty when the run has none), then stuck.
func screenCSV(w io.Writer, out *screenJSON) error {
	fixed := []string{"run", "file", "samples", "flagged", "rises", "leaves", "unsettled", "slow", "never_inside", "decay_rate", "stuck"}
	var head []string
	for _, k := range out.Partitions {
		k = printable(k)
		if slices.Contains(fixed, k) {
			k = "partition." + k
		}
		head = append(head, k)
	}
	cw := csv.NewWriter(w)
	if err := cw.Write(append(head, fixed...)); err != nil {
		return err
	}
	tf := strconv.FormatBool
	for _, r := range out.Runs {
		var row []string
		for _, k := range out.Partitions {
			row = append(row, printable(r.Partition.value(k)))
		}
		kinds := map[string]bool{}
		for _, f := range r.Flags {
			kinds[f.Kind] = true
		}
		rate := ""
		if r.DecaySamples > 0 {
			rate = strconv.FormatFloat(r.DecayRate, 'g', -1, 64)
		}
		row = append(row, printable(r.Run), printable(r.File), strconv.Itoa(r.Samples), tf(r.Flagged),
			tf(kinds[validate.FlagRises]), tf(kinds[validate.FlagLeaves]), tf(kinds[validate.FlagUnsettled]),
			tf(kinds[validate.FlagSlow]), tf(!r.EverInside), rate, tf(kinds[validate.FlagStuck]))
		if err := cw.Write(row); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

// flagText is one flag in the table: kind, time, excess and, for rises
// and leaves, the distance per state with its unit.
func flagText(f validate.Flag, states []screenState) string {
	if f.Kind == validate.FlagStuck {
		return fmt.Sprintf("%s: %s held one value from %s s for %s s", f.Kind, printable(f.State), human.Sig(f.Time, 4), human.Sig(f.Excess, 3))
	}
	if f.Kind == validate.FlagSlow {
		return fmt.Sprintf("%s: decay rate of V %s 1/s short of the bound", f.Kind, human.Sig(f.Excess, 3)) // Excess is bound - rate; the rate is its own column
	}
	var t string
	switch f.Kind {
	case validate.FlagRises:
		t = fmt.Sprintf("rises at %s s: V up %s more than the tolerance", human.Num(f.Time), human.Sig(f.Excess, 3))
	case validate.FlagLeaves:
		t = fmt.Sprintf("leaves at %s s: V %s above the region's level", human.Num(f.Time), human.Sig(f.Excess, 3))
	case validate.FlagUnsettled:
		t = fmt.Sprintf("unsettled at the end, %s s: V %s above settled", human.Num(f.Time), human.Sig(f.Excess, 3))
	default:
		t = fmt.Sprintf("%s at %s s: %s in V", f.Kind, human.Num(f.Time), human.Sig(f.Excess, 3))
	}
	var d []string
	for j, x := range f.Distance {
		if x == 0 || j >= len(states) {
			continue
		}
		u := ""
		if states[j].Unit != "" {
			u = " " + states[j].Unit
		}
		d = append(d, fmt.Sprintf("%s %s%s", printable(states[j].Name), human.Sig(x, 3), u))
	}
	if len(d) > 0 && f.Kind == validate.FlagRises {
		t += ", as much as a move of " + strings.Join(d, ", ")
	} else if len(d) > 0 {
		t += ", past the boundary by " + strings.Join(d, ", ")
	}
	return t
}

// printable replaces control characters (which would break the table or
// the terminal) in a name taken from the user's files.
func printable(s string) string {
	return strings.Map(func(r rune) rune {
		// C0 and C1 controls (ESC, CSI, CR, newline), and the
		// bidirectional overrides that reorder what a terminal shows.
		if r < 0x20 || r >= 0x7f && r <= 0x9f || r >= 0x202a && r <= 0x202e || r >= 0x2066 && r <= 0x2069 {
			return '?'
		}
		return r
	}, s)
}
