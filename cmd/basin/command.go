package main

import (
	"bytes"
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"strings"
)

// A command is one subcommand of basin, on the model of cmd/go's
// base.Command: each lives in its own file with its own flag struct, and
// its Run makes a fresh [flag.FlagSet], so no flag outlives a call.
type command struct {
	// UsageLine is the one-line usage; its second word is the name.
	UsageLine string
	Short     string // one line for 'basin help'
	Long      string // the rest of 'basin help NAME'
	// Run parses args (flags anywhere among the INPUTS) and does the work.
	// With -h it prints the help and returns errHelp.
	Run func(ctx context.Context, e *env, args []string) error
}

// Name is the command's name: the second word of UsageLine.
func (c *command) Name() string {
	f := strings.Fields(c.UsageLine)
	if len(f) < 2 {
		return ""
	}
	return f[1]
}

// commands are basin's commands in the order 'basin help' lists them.
var commands = []*command{cmdRun, cmdInspect, cmdFit, cmdCertify, cmdCheck, cmdScreen, cmdExport, cmdDemo, cmdHelp, cmdVersion}

// env is what a command may touch besides its flags.
type env struct {
	stdout, stderr io.Writer
	stdin          io.Reader
}

func lookup(name string) *command {
	for _, c := range commands {
		if c.Name() == name {
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
	if len(args) == 0 {
		printOverview(stdout)
		return 2
	}
	name := args[0]
	if name == "-h" || name == "--help" || name == "-help" {
		name = "help"
	}
	c := lookup(name)
	if c == nil {
		fmt.Fprintf(stderr, "basin: unknown command %q; try 'basin help'\n", printable(name))
		return 2
	}
	defer func() {
		if r := recover(); r != nil {
			// A bare panic would exit 2, the code for bad input.
			pe := recovered("in "+name, r)
			fmt.Fprintf(stderr, "basin %s: %s\n", name, printable(pe.Error()))
			if trace() {
				stderr.Write(pe.stack)
			}
			code = 3
		}
	}()
	err := c.Run(ctx, &env{stdout: stdout, stderr: stderr, stdin: stdin}, args[1:])
	return exitCode(stderr, name, err)
}

// flagSet returns a fresh, silent FlagSet for c.
func (c *command) flagSet() *flag.FlagSet {
	fs := flag.NewFlagSet("basin "+c.Name(), flag.ContinueOnError)
	fs.SetOutput(io.Discard)
	return fs
}

// parse parses args into fs, flags before or after the positional
// arguments. On -h it prints c's help to e.stdout and returns errHelp; a
// bad flag is a usage error.
func (c *command) parse(e *env, fs *flag.FlagSet, args []string) ([]string, error) {
	pos, err := parseAnywhere(fs, args)
	if errors.Is(err, flag.ErrHelp) {
		c.printHelp(e.stdout, fs)
		return nil, errHelp
	}
	if err != nil {
		// The flag package spells the flag with one dash; basin's help uses two.
		msg := strings.Replace(err.Error(), ": -", ": --", 1)
		msg = strings.Replace(msg, " for flag -", " for flag --", 1)
		msg = strings.Replace(msg, "invalid boolean value", "invalid value", 1)
		msg = strings.Replace(msg, " for -", " for flag --", 1)
		return nil, &usageError{msg + wantText(fs, err)}
	}
	return pos, nil
}

// wantText says what a flag whose value did not parse takes (the flag
// package says only "parse error"), from the type of its value.
func wantText(fs *flag.FlagSet, err error) string {
	m := err.Error()
	if !strings.HasPrefix(m, "invalid ") {
		return ""
	}
	_, rest, ok := strings.Cut(m, " for flag -")
	if !ok {
		_, rest, ok = strings.Cut(m, " for -") // a boolean flag's wording
	}
	if !ok {
		return ""
	}
	name, _, _ := strings.Cut(rest, ":")
	f := fs.Lookup(name)
	if f == nil {
		return ""
	}
	g, ok := f.Value.(flag.Getter)
	if !ok {
		return ""
	}
	switch g.Get().(type) {
	case uint, uint64:
		return " (a whole number, 0 or more)"
	case int, int64:
		return " (a whole number)"
	case float64:
		return " (a number)"
	case bool:
		return " (true or false)"
	}
	return ""
}

// printHelp writes c's usage, description and flags (with their defaults).
func (c *command) printHelp(w io.Writer, fs *flag.FlagSet) {
	fmt.Fprintf(w, "Usage: %s\n\n%s.\n", c.UsageLine, capitalise(c.Short))
	if c.Long != "" {
		fmt.Fprintf(w, "\n%s\n", strings.TrimSpace(c.Long))
	}
	var b bytes.Buffer
	fs.SetOutput(&b)
	fs.PrintDefaults()
	fs.SetOutput(io.Discard)
	if b.Len() > 0 {
		fmt.Fprintf(w, "\nFlags:\n%s", strings.ReplaceAll(b.String(), "  -", "  --"))
	}
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

// noInputs refuses positional arguments for a command that takes none.
func noInputs(c *command, args []string) error {
	if len(args) > 0 {
		return usagef("%s takes no INPUTS, got %q", c.Name(), printable(args[0]))
	}
	return nil
}

func capitalise(s string) string {
	if s == "" {
		return s
	}
	return strings.ToUpper(s[:1]) + s[1:]
}
