package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"text/tabwriter"
)

var cmdHelp = &command{
	UsageLine: "basin help [COMMAND]",
	Short:     "explain basin or one command",
}

func init() { cmdHelp.Run = runHelp }

func runHelp(ctx context.Context, e *env, args []string) error {
	fs := cmdHelp.flagSet()
	args, err := cmdHelp.parse(e, fs, args)
	if err != nil {
		return err
	}
	switch {
	case len(args) > 1:
		return usagef("help takes at most one COMMAND")
	case len(args) == 0:
		printOverview(e.stdout)
		return nil
	}
	c := lookup(args[0])
	if c == nil {
		return usagef("unknown command %q", printable(args[0]))
	}
	// The command prints its own help: one source for the usage text.
	if err := c.Run(ctx, e, []string{"-h"}); !errors.Is(err, errHelp) {
		return err
	}
	return nil
}

const overview = `basin reads logged runs of a physical system, fits a sparse polynomial
model of its dynamics, and looks for a Lyapunov function that shows, from
the data alone, that the system settles to its operating point and from
how far away. Its certificates are empirical evidence, not proofs:
safety-relevant decisions defer to the applicable codes and to licensed
engineering judgement.

Usage:

	basin COMMAND [flags] INPUTS...

INPUTS are .csv, .tsv, .txt or .parquet files, directories of them, or -
for CSV on standard input. Flags may come before or after INPUTS.

Exit codes: 0 done; 1 screen flagged a run; 2 usage or input error;
3 internal failure.
`

// printOverview writes what basin is and its command list.
func printOverview(w io.Writer) {
	fmt.Fprint(w, overview)
	fmt.Fprintln(w, "\nCommands:")
	tw := tabwriter.NewWriter(w, 0, 8, 2, ' ', 0)
	for _, c := range commands {
		fmt.Fprintf(tw, "\t%s\t%s\n", c.Name(), c.Short)
	}
	tw.Flush()
	fmt.Fprintln(w, "\nRun 'basin help COMMAND' for a command's flags.")
}
