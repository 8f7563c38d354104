package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"strings"
	"text/tabwriter"
	"time"

	"basin.example/cmd/basin/internal/human"
	"basin.example/fit"
	"basin.example/ingest"
)

// inspectFlags are basin inspect's flags.
type inspectFlags struct {
	inputFlags
	outputFlags
}

var cmdInspect = &command{
	UsageLine: "basin inspect [flags] INPUTS...",
	Short:     "say what the logs hold",
	Long: `Reads the logs and says what it found: per run and in total, samples,
start and duration, median sampling rate and its jitter (interquartile
range of the time steps over their median), gaps, per-column ranges and
units, inputs, and the rest points the runs settle on: a run (of at least
81 samples) settles when, over its last tenth, it neither trends nor
spreads beyond its own noise (README.md, Input, Settled, has the rule),
its settle point is the median of its last 5%, and settle points within
a tenth of each state's range over all runs are one rest point, reported
with its count of runs (most first). Also lists the one-sample jumps
runs were split at, the resting starts trimmed and the recordings a
--from/--to window left out.`,
}

func init() { cmdInspect.Run = runInspect }

// loadInputs reads the inputs per the flags; bad input becomes an
// inputError (exit 2).
func loadInputs(ctx context.Context, e *env, f *inputFlags, quiet bool, args []string) (*ingest.Dataset, error) {
	if err := needInputs(args); err != nil && f.Manifest == "" {
		return nil, err
	}
	opts, err := f.options()
	if err != nil {
		return nil, err
	}
	opts.Stdin = e.stdin
	// a piece too short for a derivative, made by splitting at a gap or
	// an event, is left out with a warning rather than failing the fit
	opts.MinPiece = fit.MinRunSamples
	ds, err := ingest.Load(ctx, args, opts)
	if err != nil {
		return nil, classify(runColHint(err, f.RunCol), "")
	}
	for _, w := range ds.Warnings {
		warnf(e, quiet, "%s", w)
	}
	for _, w := range ingest.CollapseCopies(ds) {
		warnf(e, quiet, "%s", w)
	}
	warnStepped(e, quiet, ds, f.Inputs)
	return ds, nil
}

// runColHint adds to an error of time going back, when no --run-col
// was given, that a file holding several runs one after another needs
// one: its time restarts at each new run, which reads as going back.
func runColHint(err error, runCol string) error {
	if runCol != "" || !errors.Is(err, ingest.ErrTimeOrder) || !strings.Contains(err.Error(), "goes back") {
		return err
	}
	return fmt.Errorf("%w; if the file holds several runs one after another, give --run-col NAME, the column that tells them apart", err)
}

// warnStepped warns of each state column that holds its value exactly
// between jumps (see [ingest.Dataset.SteppedStates]): a drive or setpoint
// read as a state gets an equation of zero, and the fitted model a line
// of equilibria instead of a rest point. inputs is --inputs as given, so
// the hint names the whole flag to type.
func warnStepped(e *env, quiet bool, ds *ingest.Dataset, inputs string) {
	for _, s := range ds.SteppedStates() {
		name := ds.States[s.State].Name
		flag := name
		if inputs != "" {
			flag = inputs + "," + name
		}
		warnf(e, quiet, "state %q holds its value exactly between jumps (on %.0f%% of sample pairs, %s): it looks like a drive or a setpoint, not a state; if it is one, give --inputs %s",
			name, math.Floor(100*s.Held), levelsText(s.Levels), flag)
	}
}

// levelsText says how many distinct values a stepped column takes.
func levelsText(n int) string {
	if n >= 1000 {
		return "1000 or more levels"
	}
	return fmt.Sprintf("%d levels", n)
}

// inspectJSON is the contract's inspect --json shape (plus extra fields).
type inspectJSON struct {
	Runs    []inspectRun   `json:"runs"`
	States  []inspectState `json:"states"`
	Inputs  []inspectState `json:"inputs"`
	Time    ingest.Column  `json:"time"`
	Ignored []string       `json:"ignored,omitempty"`
	Summary inspectSummary `json:"summary"`
	// Events are the one-sample jumps runs were split at; Heads the
	// resting starts trimmed.
	Events []ingest.Event `json:"events"`
	Heads  []ingest.Head  `json:"heads"`
}

type inspectRun struct {
	File     string    `json:"file"`
	Run      string    `json:"run"`
	Line     int       `json:"line"`
	Samples  int       `json:"samples"`
	Start    float64   `json:"start"`
	Epoch    string    `json:"epoch,omitempty"`
	Duration float64   `json:"duration"`
	RateHz   float64   `json:"rate_hz"`
	Jitter   float64   `json:"jitter"`
	Gaps     int       `json:"gaps"`
	Events   int       `json:"events"`
	Split    string    `json:"split,omitempty"`
	Min      []float64 `json:"min"`
	Max      []float64 `json:"max"`
	Settled  bool      `json:"settled"`
	Settle   []float64 `json:"settle,omitempty"`
}

type inspectState struct {
	Name   string   `json:"name"`
	Unit   string   `json:"unit"`
	Min    float64  `json:"min"`
	Max    float64  `json:"max"`
	Settle *float64 `json:"settle,omitempty"`
	// CorrelatedNoise, for a state whose noise is correlated over many
	// samples (see fit's correlated_noise), the lag and the ratio
	CorrelatedNoise *noiseCorr `json:"correlated_noise,omitempty"`
}

// noiseCorr is a state's correlated noise, as inspect reports it.
type noiseCorr struct {
	Samples int     `json:"samples"`
	Ratio   float64 `json:"ratio"`
}

type inspectSummary struct {
	Files       int       `json:"files"`
	Runs        int       `json:"runs"`
	Samples     int       `json:"samples"`
	Duration    float64   `json:"duration"`
	RateHz      float64   `json:"rate_hz"`
	Jitter      float64   `json:"jitter"`
	Gaps        int       `json:"gaps"`
	Missing     int       `json:"missing"`
	Events      int       `json:"events"`
	Heads       int       `json:"heads"`
	LeftOut     int       `json:"window_left_out"`
	SettledRuns int       `json:"settled_runs"`
	Settle      []float64 `json:"settle,omitempty"`
	// RestPoints are the clusters of the runs' settle points, the one
	// most runs settle on first (Settle is its point).
	RestPoints []inspectRest `json:"rest_points"`
	Jitterdef  string        `json:"jitter_definition"`
}

type inspectRest struct {
	Point    []float64 `json:"point"`
	Runs     int       `json:"runs"`
	RunNames []string  `json:"run_names"`
}

func runInspect(ctx context.Context, e *env, args []string) error {
	c := new(inspectFlags)
	fs := cmdInspect.flagSet()
	c.inputFlags.register(fs, true)
	c.outputFlags.register(fs)
	args, err := cmdInspect.parse(e, fs, args)
	if err != nil {
		return err
	}
	ds, err := loadInputs(ctx, e, &c.inputFlags, c.Quiet, args)
	if err != nil {
		return err
	}
	s := ingest.Summarise(ds)
	if c.JSON {
		return writeJSON(e.stdout, inspectDoc(ds, s))
	}
	return inspectTable(e.stdout, ds, s)
}

func inspectDoc(ds *ingest.Dataset, s *ingest.Summary) *inspectJSON {
	doc := &inspectJSON{Time: ds.Time, Runs: []inspectRun{}, States: []inspectState{}, Inputs: []inspectState{},
		Events: ds.Events, Heads: ds.Heads}
	if doc.Events == nil {
		doc.Events = []ingest.Event{}
	}
	if doc.Heads == nil {
		doc.Heads = []ingest.Head{}
	}
	for i, r := range s.Runs {
		ir := inspectRun{File: r.File, Run: r.Name, Line: r.Line, Samples: r.Samples, Start: r.Start,
			Duration: roundDuration(r.Duration), RateHz: roundRate(r.RateHz), Jitter: roundJitter(r.Jitter), Gaps: r.Gaps, Split: r.Split,
			Min: r.Min, Max: r.Max, Settled: r.Settled, Settle: r.Settle, Events: ds.Runs[i].Events}
		if !r.Epoch.IsZero() {
			ir.Epoch = r.Epoch.Format(time.RFC3339Nano)
		}
		doc.Runs = append(doc.Runs, ir)
	}
	for j, st := range s.States {
		is := inspectState{Name: st.Name, Unit: st.Unit, Min: st.Min, Max: st.Max}
		if st.NoiseRatio >= ingest.CorrelatedRatio {
			is.CorrelatedNoise = &noiseCorr{Samples: st.NoiseLag, Ratio: st.NoiseRatio}
		}
		if s.Settle != nil {
			v := s.Settle[j]
			is.Settle = &v
		}
		doc.States = append(doc.States, is)
	}
	for _, in := range s.Inputs {
		doc.Inputs = append(doc.Inputs, inspectState{Name: in.Name, Unit: in.Unit, Min: in.Min, Max: in.Max})
	}
	for _, c := range ds.Ignored {
		doc.Ignored = append(doc.Ignored, c.Name)
	}
	doc.Summary = inspectSummary{Files: s.Files, Runs: len(s.Runs), Samples: s.Total.Samples,
		Duration: roundDuration(s.Total.Duration), RateHz: roundRate(s.Total.RateHz), Jitter: roundJitter(s.Total.Jitter), Gaps: ds.Gaps,
		Missing: s.Missing, Events: len(ds.Events), Heads: len(ds.Heads), LeftOut: ds.Window,
		SettledRuns: s.SettledRuns, Settle: s.Settle,
		Jitterdef: "interquartile range of the time steps divided by their median", RestPoints: []inspectRest{}}
	for _, rp := range s.RestPoints {
		doc.Summary.RestPoints = append(doc.Summary.RestPoints, inspectRest{Point: rp.Point, Runs: rp.Runs, RunNames: rp.RunNames})
	}
	return doc
}

func g(v float64) string {
	if math.IsNaN(v) {
		return "-"
	}
	return human.Sig(v, 5)
}

// Rates, durations and jitter come from differences of time stamps, whose
// last digits are floating-point noise (a 200 Hz log gives a rate of
// 199.99999999999997 and a jitter of 1e-13): they are rounded to what
// the stamps can tell before they are shown or written.
func roundRate(hz float64) float64    { return human.RoundSig(hz, 9) }
func roundDuration(s float64) float64 { return human.RoundSig(s, 12) }
func roundJitter(j float64) float64   { return human.RoundTo(j, 1e-9) }

func inspectTable(w io.Writer, ds *ingest.Dataset, s *ingest.Summary) error {
	tw := tabwriter.NewWriter(w, 0, 4, 2, ' ', 0)
	fmt.Fprintln(tw, "run\tsamples\tstart\tduration\trate Hz\tjitter\tgaps\tsplit\tsettled")
	for _, r := range s.Runs {
		settled := "no"
		if r.Settled {
			settled = "yes"
		}
		split := r.Split
		if split == "" {
			split = "auto"
		}
		fmt.Fprintf(tw, "%s\t%d\t%s\t%s\t%s\t%s\t%d\t%s\t%s\n", printable(r.Name), r.Samples, g(r.Start), g(roundDuration(r.Duration)),
			g(roundRate(r.RateHz)), g(roundJitter(r.Jitter)), r.Gaps, split, settled)
	}
	fmt.Fprintf(tw, "total\t%d\t\t%s\t%s\t%s\t%d\t\t%d of %d\n", s.Total.Samples, g(s.Total.Duration),
		g(roundRate(s.Total.RateHz)), g(roundJitter(s.Total.Jitter)), ds.Gaps, s.SettledRuns, len(s.Runs))
	if err := tw.Flush(); err != nil {
		return err
	}
	fmt.Fprintln(w)
	tw = tabwriter.NewWriter(w, 0, 4, 2, ' ', 0)
	if len(s.RestPoints) > 1 {
		fmt.Fprintln(tw, "state\tunit\tmin\tmax\tsettles at (most runs)")
	} else {
		fmt.Fprintln(tw, "state\tunit\tmin\tmax\tsettles at")
	}
	for j, st := range s.States {
		at := "-"
		if s.Settle != nil {
			at = g(s.Settle[j])
		}
		unit := st.Unit
		if unit == "" {
			unit = "-"
		}
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%s\n", printable(st.Name), printable(unit), g(st.Min), g(st.Max), at)
	}
	for _, in := range s.Inputs {
		unit := in.Unit
		if unit == "" {
			unit = "-"
		}
		fmt.Fprintf(tw, "%s (input)\t%s\t%s\t%s\t-\n", printable(in.Name), printable(unit), g(in.Min), g(in.Max))
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	if len(s.RestPoints) > 1 {
		fmt.Fprintf(w, "\n%d rest points the runs settle on (settle points within a tenth of each state's range are one):\n", len(s.RestPoints))
		for k, rp := range s.RestPoints {
			fmt.Fprintf(w, "  %d. ", k+1)
			for j, st := range s.States {
				if j > 0 {
					fmt.Fprint(w, ", ")
				}
				fmt.Fprintf(w, "%s = %s", printable(st.Name), g(rp.Point[j]))
				if st.Unit != "" {
					fmt.Fprintf(w, " %s", printable(st.Unit))
				}
			}
			fmt.Fprintf(w, ": %d of %d settled runs\n", rp.Runs, s.SettledRuns)
		}
	}
	fmt.Fprintf(w, "\n%s, %s, %s; time column %q", human.Count(s.Files, "file"), human.Count(len(s.Runs), "run"), human.Count(s.Total.Samples, "sample"), ds.Time.Name)
	if ds.Time.Unit != "" {
		fmt.Fprintf(w, " [%s]", printable(ds.Time.Unit))
	}
	fmt.Fprintf(w, "; %s split runs, %s missing\n", human.Count(ds.Gaps, "gap"), human.Count(s.Missing, "sample"))
	inspectEvents(w, ds)
	for _, st := range s.States {
		if st.NoiseRatio >= ingest.CorrelatedRatio {
			fmt.Fprintf(w, "noise: %s's noise is correlated over about %d samples (%.2g times what sample-to-sample differences show: logged faster than it changes, as behind a sensor's filter); fit with --average %d\n",
				printable(st.Name), st.NoiseLag, st.NoiseRatio, st.NoiseLag)
		}
	}
	if len(ds.Ignored) > 0 {
		fmt.Fprintf(w, "ignored columns (not numeric or not chosen):")
		for _, c := range ds.Ignored {
			fmt.Fprintf(w, " %s", printable(c.Name))
		}
		fmt.Fprintln(w)
	}
	fmt.Fprintln(w, "jitter: interquartile range of the time steps over their median; settled: over the last tenth of a run (of 81 samples or more), no trend and no spread beyond the noise")
	return nil
}

// maxListed is the most events or heads inspect's table lists.
const maxListed = 20

// inspectEvents lists the events runs were split at and the resting
// heads trimmed.
func inspectEvents(w io.Writer, ds *ingest.Dataset) {
	unit := map[string]string{}
	for _, c := range ds.States {
		unit[c.Name] = c.Unit
	}
	if n := len(ds.Events); n > 0 {
		places := ""
		if k := ingest.EventPlaces(ds.Events); k < n {
			places = fmt.Sprintf(" at %d place", k)
			if k > 1 {
				places += "s"
			}
		}
		fmt.Fprintf(w, "\n%d one-sample jumps far beyond the noise%s split runs (a step or kink splits there, a spike's sample is dropped; %d samples dropped):\n", n, places, ds.Dropped)
		tw := tabwriter.NewWriter(w, 0, 4, 2, ' ', 0)
		fmt.Fprintln(tw, "  run\ttime s\tstate\tkind\tsize\tnoise\ttimes the noise")
		for _, ev := range ds.Events[:min(n, maxListed)] {
			times := "-"
			if ev.Sigmas > 0 {
				times = human.Sig(math.Round(ev.Sigmas), 6)
			}
			u := unit[ev.State]
			if u != "" {
				u = " " + u
			}
			su := u
			if ev.Kind == ingest.EventKink { // a change of slope
				su += "/s"
			}
			fmt.Fprintf(tw, "  %s\t%s\t%s\t%s\t%s%s\t%s%s\t%s\n", printable(ev.Run), g(ev.Time), printable(ev.State), ev.Kind, g(ev.Size), su, g(ev.Noise), u, times)
		}
		tw.Flush()
		if n > maxListed {
			fmt.Fprintf(w, "  ... and %d more (--json lists them all; --keep-events keeps runs whole)\n", n-maxListed)
		}
	}
	if n := len(ds.Heads); n > 0 {
		fmt.Fprintf(w, "\nresting starts trimmed before the first motion (--keep-head keeps them):\n")
		for _, h := range ds.Heads[:min(n, maxListed)] {
			fmt.Fprintf(w, "  %s: %s s (%d samples)\n", printable(h.Run), g(h.Duration), h.Samples)
		}
		if n > maxListed {
			fmt.Fprintf(w, "  ... and %d more\n", n-maxListed)
		}
	}
	if ds.Window > 0 {
		fmt.Fprintf(w, "\n%d recordings left out: no samples in the --from/--to window\n", ds.Window)
	}
}
