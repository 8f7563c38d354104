package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"runtime/debug"
	"sort"
	"strings"
	"sync"
)

// A command is one subcommand of basin.
type command struct {
	Name  string
	Usage string // "basin inspect [flags] INPUTS..."
	Short string
	Long  string
	// Flags adds the command's flags to fs and returns the parsed values.
	Flags func(fs *flag.FlagSet) any
	// Run does the work. args are the positional arguments.
	Run func(ctx context.Context, env *env, opts any, args []string) error
}

// env is what a command may touch besides its flags.
type env struct {
	stdout, stderr io.Writer
	stdin          io.Reader
}

var (
	commands  []*command
	stubsOnce sync.Once
)

func register(c *command) { commands = append(commands, c) }

func lookup(name string) *command {
	for _, c := range commands {
		if c.Name == name {
			return c
		}
	}
	return nil
}

// basinMain runs basin with args and returns the exit code.
func basinMain(ctx context.Context, args []string, stdout, stderr io.Writer) (code int) {
	return basinMainIn(ctx, args, stdout, stderr, nil)
}

func basinMainIn(ctx context.Context, args []string, stdout, stderr io.Writer, stdin io.Reader) (code int) {
	stubsOnce.Do(addStubs)
	sort.SliceStable(commands, func(i, j int) bool { return commands[i].Name < commands[j].Name })
	if len(args) == 0 {
		printHelp(stdout, "")
		return 2
	}
	name := args[0]
	if name == "-h" || name == "--help" || name == "-help" {
		name = "help"
	}
	c := lookup(name)
	if c == nil {
		fmt.Fprintf(stderr, "basin: unknown command %q; try 'basin help'\n", name)
		return 2
	}
	defer func() {
		if r := recover(); r != nil {
			fmt.Fprintf(stderr, "basin %s: internal failure: %v\n%s", name, r, debug.Stack())
			code = 3
		}
	}()
	fs := flag.NewFlagSet("basin "+name, flag.ContinueOnError)
	fs.SetOutput(io.Discard)
	var opts any
	if c.Flags != nil {
		opts = c.Flags(fs)
	}
	pos, err := parseAnywhere(fs, args[1:])
	if errors.Is(err, flag.ErrHelp) {
		printHelp(stdout, name)
		return 0
	}
	if err != nil {
		fmt.Fprintf(stderr, "basin %s: %v\n", name, err)
		return 2
	}
	e := &env{stdout: stdout, stderr: stderr, stdin: stdin}
	err = c.Run(ctx, e, opts, pos)
	return exitCode(stderr, name, err)
}

// parseAnywhere parses flags before and after positional arguments: flag
// parsing stops at the first non-flag, so parse, collect, parse the rest.
// "--" ends flags; "-" is a positional argument (stdin).
func parseAnywhere(fs *flag.FlagSet, args []string) ([]string, error) {
	var pos []string
	for {
		if err := fs.Parse(args); err != nil {
			return nil, err
		}
		rest := fs.Args()
		if len(rest) == 0 {
			return pos, nil
		}
		// flag stops after "--" too; if the previous arg was "--", keep all.
		consumed := len(args) - len(rest)
		if consumed > 0 && args[consumed-1] == "--" {
			return append(pos, rest...), nil
		}
		pos = append(pos, rest[0])
		args = rest[1:]
	}
}

// Errors that choose the exit code.
type usageError struct{ msg string }

func (e *usageError) Error() string { return e.msg }

// inputError marks bad input: exit 2 with one line.
type inputError struct{ err error }

func (e *inputError) Error() string { return e.err.Error() }
func (e *inputError) Unwrap() error { return e.err }

var errFlagged = errors.New("at least one run flagged")

var errNotBuilt = errors.New("not built yet")

func usagef(format string, a ...any) error { return &usageError{fmt.Sprintf(format, a...)} }

// exitCode prints err (one line) and maps it to the contract's exit codes.
func exitCode(stderr io.Writer, name string, err error) int {
	if err == nil {
		return 0
	}
	if errors.Is(err, errFlagged) {
		return 1
	}
	msg := strings.ReplaceAll(err.Error(), "\n", " ")
	var ue *usageError
	var ie *inputError
	switch {
	case errors.As(err, &ue), errors.As(err, &ie):
		fmt.Fprintf(stderr, "basin %s: %s\n", name, msg)
		return 2
	case errors.Is(err, context.Canceled):
		fmt.Fprintf(stderr, "basin %s: interrupted; no output written\n", name)
		return 3
	}
	fmt.Fprintf(stderr, "basin %s: %s\n", name, msg)
	return 3
}
