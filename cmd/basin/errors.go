package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"strings"

	"basin.example/fit"
	"basin.example/fit/export"
	"basin.example/ingest"
	"basin.example/internal/parallel"
	"basin.example/validate"
)

// Errors that choose the exit code.
type usageError struct{ msg string }

func (e *usageError) Error() string { return e.msg }

// inputError marks bad input: exit 2 with one line.
type inputError struct{ err error }

func (e *inputError) Error() string { return e.err.Error() }
func (e *inputError) Unwrap() error { return e.err }

var (
	errFlagged = errors.New("at least one run flagged")
	// errHelp is returned after a command printed its help for -h: exit 0.
	errHelp = errors.New("help printed")
)

func usagef(format string, a ...any) error { return &usageError{fmt.Sprintf(format, a...)} }

// badInput lists the library errors that are findings about the user's
// files or options, not failures of basin: they exit 2.
var badInput = []error{
	ingest.ErrEmpty, ingest.ErrFormat, ingest.ErrNoFiles, ingest.ErrNoTime, ingest.ErrNoStates, ingest.ErrWindow,
	fit.ErrTooFewSamples, fit.ErrBudget, fit.ErrConstant, fit.ErrCollinear, fit.ErrFeedback, fit.ErrShortRun, fit.ErrMismatch, fit.ErrOptions,
	validate.ErrOptions, export.ErrNoV, export.ErrOption,
}

// optionFields are the Go option fields the libraries name in their
// errors and reasons, with the flags that set them.
var optionFields = []struct{ pkg, field, flag string }{
	{"ingest", "Options.TimeCol", "--time-col"}, {"ingest", "Options.Rate", "--rate"},
	{"ingest", "Options.RunCol", "--run-col"}, {"ingest", "Options.States", "--states"},
	{"ingest", "Options.Manifest", "--manifest"}, {"ingest", "Options.Inputs", "--inputs"},
	{"ingest", "Options.Average", "--average"},
	{"fit", "FieldOptions.Degree", "--degree"}, {"fit", "FieldOptions.InputDegree", "--input-degree"}, {"fit", "FieldOptions.Folds", "--select-folds"},
	{"fit", "FieldOptions.Derivative", "--deriv"}, {"fit", "FieldOptions.Bootstrap", "--bootstrap"},
	{"fit", "FieldOptions.MaxMemory", "--max-memory"},
	{"fit", "CertifyOptions.Degree", "--v-degree"}, {"fit", "CertifyOptions.Growth", "--growth"},
	{"export", "Options.RiseTolerance", "--rise-tol"},
	{"validate", "Options.Folds", "--folds"}, {"validate", "Options.Beta", "--beta"},
	{"validate", "Options.MinDecrease", "--min-decrease"},
}

// optionFlags rewrites each field of optionFields, with its package
// ("ingest.Options.States") or without ("Options.States", as a package
// names its own), as its flag; the qualified spellings come first, so
// they win.
var optionFlags = func() *strings.Replacer {
	var qualified, bare []string
	for _, o := range optionFields {
		qualified = append(qualified, o.pkg+"."+o.field, o.flag)
		bare = append(bare, o.field, o.flag)
	}
	return strings.NewReplacer(append(qualified, bare...)...)
}()

// flagNames rewords library prose that is not an error (a certificate's
// Reason) for the command line, as exitCode does for errors.
func flagNames(s string) string { return optionFlags.Replace(s) }

// flagModel rewords a model's equation warnings as flagNames does a
// reason, for what the command line prints and writes.
func flagModel(m *fit.Model) {
	if m == nil {
		return
	}
	for i := range m.Equations {
		m.Equations[i].Warning = flagNames(m.Equations[i].Warning)
	}
}

// flagged is a library error reworded for the command line: the Go option
// fields it names become the flags that set them.
type flagged struct{ err error }

func (e *flagged) Error() string { return optionFlags.Replace(e.err.Error()) }
func (e *flagged) Unwrap() error { return e.err }

// classify is the one place where a library error becomes a CLI error:
// bad files (a positioned parse error, an unreadable path) and the
// libraries' bad-input sentinels exit 2, with flags named in place of the
// options they set; anything else is left as it is (exit 3). prefix, when
// not empty, names the file the error is about ("model.json: ...").
func classify(err error, prefix string) error {
	var ue *usageError
	var ie *inputError
	var pp *parallel.PanicError
	// A recovered panic is a bug whatever its value wraps (a panic with a
	// sentinel must not pass for bad input): it stays as it is, exit 3.
	if err == nil || errors.As(err, &ue) || errors.As(err, &ie) || errors.Is(err, errFlagged) || errors.As(err, &pp) {
		return err
	}
	bad := false
	var pe *ingest.ParseError
	var fe *fs.PathError
	if errors.As(err, &pe) || errors.As(err, &fe) {
		bad = true
	}
	for _, s := range badInput {
		if errors.Is(err, s) {
			bad = true
		}
	}
	if !bad {
		return err
	}
	if prefix != "" {
		err = fmt.Errorf("%s: %w", prefix, err)
	}
	return &inputError{&flagged{err}}
}

// exitCode prints err (one line) and maps it to the contract's exit codes.
func exitCode(stderr io.Writer, name string, err error) int {
	if err == nil || errors.Is(err, errHelp) {
		return 0
	}
	if errors.Is(err, errFlagged) {
		return 1
	}
	msg := printable(strings.ReplaceAll(optionFlags.Replace(err.Error()), "\n", " "))
	var ue *usageError
	var ie *inputError
	var pp *parallel.PanicError
	if errors.As(err, &pp) { // a worker's panic: a bug, exit 3, never 2
		fmt.Fprintf(stderr, "basin %s: %s (a bug in basin, not in the input)\n", name, msg)
		if trace() {
			stderr.Write(pp.Stack)
		}
		return 3
	}
	switch {
	case errors.As(err, &ue), errors.As(err, &ie):
		fmt.Fprintf(stderr, "basin %s: %s\n", name, msg)
		return 2
	case errors.Is(err, context.Canceled):
		fmt.Fprintf(stderr, "basin %s: interrupted; no output written\n", name)
		return 3
	}
	fmt.Fprintf(stderr, "basin %s: %s\n", name, msg)
	var pe *panicError
	if errors.As(err, &pe) && trace() {
		stderr.Write(pe.stack)
	}
	return 3
}
