// Package ingest reads logged runs of a physical system: CSV in the
// dialects data loggers write, Parquet, and run manifests.
//
// A [Dataset] holds runs with one consistent set of state columns. Samples
// are stored column-wise: Run.X[j][i] is state j at sample i, taken at time
// Run.T[i] in seconds. Missing cells never reach a Run: a run is split at a
// gap (a missing cell or a time step more than [GapFactor] times the median
// step) and the split is counted in [Dataset.Gaps] and named with a "~N"
// suffix on the run's name.
//
// Bad input is reported as a [*ParseError] naming file, line and column,
// wrapping one of the sentinel errors below; I/O errors stay *fs.PathError.
//
// A [Streamer] gives the runs [ReadFile] gives without holding a file's
// samples: it plans them in passes over the file, a Parquet row group or
// CSV block at a time, in memory bounded by a row group, and
// [StreamFile.Scan] visits their samples.
package ingest

import (
	"errors"
	"fmt"
	"io"
	"strconv"
	"strings"
	"time"
)

// GapFactor is the time-step jump, relative to a run's median step, at
// which a run is split.
const GapFactor = 5

// Column names a state (or time) column and carries its unit, read from a
// header cell "name [unit]" or "name (unit)", or, in a CSV file, from a
// units row under the header (see [ReadCSV]; the header's unit wins).
// Unit is empty when none was given.
type Column struct {
	Name string `json:"name"`
	Unit string `json:"unit"`
}

// Source says where a run came from.
type Source struct {
	File string // the path as given or found; "-" for stdin
	Line int    // 1-based line (CSV) or row (Parquet) of the run's first sample
}

// Run is one contiguous, strictly time-ordered recording.
type Run struct {
	// Name is the file's base name, or "file#value" for a --run-col split,
	// with a "~N" suffix (N = 1, 2, ...) for the pieces after the first when
	// a gap split it.
	Name   string
	Source Source
	// Split is "fit", "holdout" or "" (automatic), from a manifest.
	Split string
	// Gaps is the number of gap splits made in the recording (file, or
	// --run-col group) this run was cut from; every piece of it carries
	// the same number, and [Dataset.Gaps] counts each split once.
	Gaps int
	// Events is the number of event splits (see [Event]) made in the
	// recording this run was cut from, counted like Gaps.
	Events int
	// Epoch is the wall-clock time of T == 0 when the time column held
	// ISO 8601 date-times; the zero Time otherwise.
	Epoch time.Time
	// T holds the sample times in seconds, strictly increasing. When the
	// time column held numbers they are kept as logged; ISO 8601 times are
	// converted to seconds from the run's first sample.
	T []float64
	// X[j][i] is state j at sample i; len(X) == len(Dataset.States) and
	// len(X[j]) == len(T). Every value is finite.
	X [][]float64
	// U[k][i] is input k (see [Options.Inputs]) at sample i; len(U) ==
	// len(Dataset.Inputs) and len(U[k]) == len(T). Every value is finite.
	// Nil when there are no inputs.
	U [][]float64
}

// A HeldInput is an input column that held one value in every sample of
// every run (see [Options.HoldConstantInputs]).
type HeldInput struct {
	Column
	Value float64 // in Column.Unit
}

// Len returns the number of samples in r.
func (r *Run) Len() int { return len(r.T) }

// Dataset is a set of runs sharing the same state columns.
type Dataset struct {
	States []Column
	// Inputs are the measured columns that are not states (a drive, a
	// setpoint), in the order of [Options.Inputs]; Run.U holds their
	// samples. Empty without inputs.
	Inputs []Column
	// Held lists the inputs that held one value throughout, taken out of
	// Inputs by Options.HoldConstantInputs. Empty otherwise.
	Held []HeldInput
	// Average is Options.Average when the runs were averaged in blocks of
	// that many samples; 0 when not.
	Average int
	Time    Column
	Runs    []Run
	// Gaps counts the splits made at gaps, over all runs.
	Gaps int
	// Events lists the one-sample jumps far beyond the noise at which
	// runs were split, one per state that jumped, in input order. Nil
	// with Options.KeepEvents.
	Events []Event
	// Heads lists the resting heads trimmed from the start of
	// recordings. Nil with Options.KeepHead.
	Heads []Head
	// Dropped counts samples dropped at events: spikes, and pieces of
	// fewer than 3 samples between two event cuts.
	Dropped int
	// ShortPieces counts the pieces of split recordings left out for
	// having fewer than Options.MinPiece samples.
	ShortPieces int
	// Window counts, when Options.From or Options.To is set, the
	// recordings left out because no sample fell in the time window.
	Window int
	// longest is the longest recording's duration before the window, in
	// seconds, for the message when the window leaves nothing.
	longest float64
	// files are the files read, for that message.
	files []string
	// latin holds, per file whose text was read as Windows-1252, its
	// warning; finish makes them one
	latin []string
	// Missing counts samples dropped because a cell was empty or NaN.
	Missing int
	// Ignored lists columns that were neither time, run nor state: text
	// columns (decided on a CSV column's first filled cell and the filled
	// cells after it, see [ReadCSV]) and columns left out by
	// Options.States.
	Ignored []Column
	// TimeLogged is the time column's unit as logged when the times were
	// converted to seconds (see [TimeUnits]); Time.Unit is then "s".
	// Empty when no conversion was made.
	TimeLogged string
	// Warnings are findings that did not stop the read, one line each:
	// a time unit that is not known, so times are kept as logged.
	Warnings []string
}

// TimeUnits maps the units a time column may carry in its header
// ("time [ms]") to seconds per unit. Times in these units are converted
// to seconds; a time column with another unit is kept as logged, with a
// warning in [Dataset.Warnings]; one with no unit is taken as seconds.
var TimeUnits = map[string]float64{
	"s": 1, "sec": 1, "secs": 1, "second": 1, "seconds": 1,
	"ms": 1e-3, "msec": 1e-3,
	"us": 1e-6, "\u00b5s": 1e-6, "\u03bcs": 1e-6, // micro sign and Greek mu
	"ns":  1e-9,
	"min": 60, "minute": 60, "minutes": 60,
	"h": 3600, "hr": 3600, "hour": 3600, "hours": 3600,
}

// Samples returns the total number of samples over all runs.
func (ds *Dataset) Samples() int {
	n := 0
	for i := range ds.Runs {
		n += len(ds.Runs[i].T)
	}
	return n
}

// Options controls how logs are read. A nil *Options means all defaults.
type Options struct {
	// TimeCol names the time column. Empty means the first column whose
	// name, without a unit suffix, is t, time, timestamp or time_s, in any
	// case.
	TimeCol string
	// Rate, in Hz, says rows are evenly sampled at that rate when there is
	// no time column. Zero means a time column is required.
	Rate float64
	// RunCol names a column whose value splits a file into runs ("long
	// format"). Empty means one run per file.
	RunCol string
	// States lists the state columns to keep, in order. Nil means every
	// numeric column other than time, run and the inputs.
	States []string
	// Inputs lists measured columns that are not states (a drive, a
	// setpoint), in order; their samples go to Run.U. A missing cell in
	// an input is a missing sample, as in a state. Nil means none.
	Inputs []string
	// Manifest is a CSV file with columns path,run,split. Empty means none.
	Manifest string
	// From and To keep, of each recording (a file, or a --run-col
	// group), the samples with time in [From, To] seconds from its first
	// sample. Zero From means from the start; zero To means to the end.
	// Negative values, or From after a nonzero To, are an error wrapping
	// [ErrWindow].
	From, To float64
	// KeepHead keeps a recording's resting head (see [Head]). False means
	// it is trimmed.
	KeepHead bool
	// KeepEvents keeps a run whole across a one-sample jump far beyond
	// the noise (see [Event]). False means the run is split there.
	KeepEvents bool
	// MinPiece leaves out the pieces of a split recording (cut at a gap
	// or an event, see [Run.Gaps] and [Run.Events]) that have fewer than
	// MinPiece samples: a piece the split made too short to use is not
	// the logger's fault. Their samples are counted in
	// [Dataset.ShortPieces], with one warning. A recording that was never
	// split is kept whatever its length. Zero means keep every piece.
	MinPiece int
	// HoldConstantInputs takes an input that holds one value in every
	// sample of every run (see [Dataset.ConstantInputs]) as a known
	// constant: it is left out of Dataset.Inputs and Run.U and listed in
	// [Dataset.Held] with its value, so that a fit folds it into the
	// states' equations (its effect cannot be told from their constant
	// terms). One warning says so. False keeps it among the inputs, with a
	// warning.
	HoldConstantInputs bool
	// Average, when 2 or more, replaces each run by the means of its
	// consecutive blocks of Average samples (times, states and inputs
	// alike; a last block shorter than that is left out), after the runs
	// are split: for logs sampled much faster than their noise changes
	// (a sensor behind a filter), whose noise is then correlated from
	// sample to sample. [Dataset.Average] records it, with one warning.
	// Zero or 1 keeps every sample.
	Average int
	// Stdin is read for the input "-". Nil means os.Stdin.
	Stdin io.Reader `json:"-"`

	// Test hooks, set only by the package's own tests and benchmarks.
	viaArrow     bool          // send every Parquet file through pqarrow (the general path)
	decodeBudget time.Duration // base time to decode one Parquet file; 0 means parquetBudget

	// csvSink, when set, receives each parsed CSV chunk in order instead
	// of the table (the Streamer's CSV passes); the chunk's buffers are
	// reused after it returns.
	csvSink func(*table, *chunk)
}

// Errors that can be returned in [ParseError.Err], or alone.
var (
	ErrNotNumber  = errors.New("not a number")
	ErrNoTime     = errors.New("no time column (name one with Options.TimeCol, or give Options.Rate)")
	ErrNoStates   = errors.New("no state columns")
	ErrTimeOrder  = errors.New("time does not increase")
	ErrEmpty      = errors.New("no samples")
	ErrRagged     = errors.New("wrong number of fields")
	ErrColumns    = errors.New("columns differ from the first file's")
	ErrFormat     = errors.New("not a readable log file")
	ErrAllMissing = errors.New("every cell is missing")
	ErrNoFiles    = errors.New("no .csv, .tsv, .txt or .parquet files")
	ErrManifest   = errors.New("bad manifest entry")
	// ErrInputColumn: an input column that is not a usable column.
	ErrInputColumn = errors.New("bad input column")
	// ErrStateAndInput: a column named both as a state and as an input.
	ErrStateAndInput = errors.New("named both as a state and as an input")
	// ErrWindow: a time window that is not one, or that leaves no sample.
	ErrWindow = errors.New("time window")
)

// A ParseError reports an unusable cell or file. Line and Column are
// 1-based; Column counts fields. Line or Column is 0 when it does not
// apply, and is then left out of the message.
type ParseError struct {
	File   string // as given on the command line; "-" for stdin
	Line   int    // for Parquet: the row number
	Column int
	Name   string // column header, when known
	Err    error
}

func (e *ParseError) Error() string {
	switch {
	case e.Line > 0 && e.Column == 0 && e.Name != "":
		return fmt.Sprintf("%s:%d: column %q: %v", e.File, e.Line, e.Name, e.Err)
	case e.Line > 0 && e.Column == 0:
		return fmt.Sprintf("%s:%d: %v", e.File, e.Line, e.Err)
	case e.Line > 0 && e.Name != "":
		return fmt.Sprintf("%s:%d:%d: column %q: %v", e.File, e.Line, e.Column, e.Name, e.Err)
	case e.Line > 0:
		return fmt.Sprintf("%s:%d:%d: %v", e.File, e.Line, e.Column, e.Err)
	case e.Name != "":
		return fmt.Sprintf("%s: column %q: %v", e.File, e.Name, e.Err)
	}
	return fmt.Sprintf("%s: %v", e.File, e.Err)
}

func (e *ParseError) Unwrap() error { return e.Err }

// PieceOf splits a run's name as the readers form it into its
// recording's name and its piece number: "log.csv~2" is piece 2 of
// "log.csv", and a name without a "~N" suffix (N a positive integer
// written plainly) is piece 0, the recording's first (a base name that
// holds '~' itself included).
func PieceOf(name string) (recording string, piece int) {
	j := strings.LastIndexByte(name, '~')
	if j <= 0 {
		return name, 0
	}
	n, err := strconv.Atoi(name[j+1:])
	if err != nil || n < 1 || strconv.Itoa(n) != name[j+1:] {
		return name, 0
	}
	return name[:j], n
}
