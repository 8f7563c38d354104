package main

import (
	"bytes"
	"context"
	"flag"
	"fmt"
	"io"
	"strings"
	"text/tabwriter"
)

func init() {
	register(&command{
		Name:  "help",
		Usage: "basin help [COMMAND]",
		Short: "explain basin or one command",
		Run: func(ctx context.Context, e *env, _ any, args []string) error {
			if len(args) > 1 {
				return usagef("help takes at most one COMMAND")
			}
			name := ""
			if len(args) == 1 {
				name = args[0]
				if lookup(name) == nil {
					return usagef("unknown command %q", name)
				}
			}
			printHelp(e.stdout, name)
			return nil
		},
	})
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

func printHelp(w io.Writer, name string) {
	if name == "" {
		fmt.Fprint(w, overview)
		fmt.Fprintln(w, "\nCommands:")
		tw := tabwriter.NewWriter(w, 0, 8, 2, ' ', 0)
		for _, c := range commands {
			fmt.Fprintf(tw, "\t%s\t%s\n", c.Name, c.Short)
		}
		tw.Flush()
		fmt.Fprintln(w, "\nRun 'basin help COMMAND' for a command's flags.")
		return
	}
	c := lookup(name)
	fmt.Fprintf(w, "Usage: %s\n\n%s.\n", c.Usage, capitalise(c.Short))
	if c.Long != "" {
		fmt.Fprintf(w, "\n%s\n", strings.TrimSpace(c.Long))
	}
	if c.Flags != nil {
		fs := flag.NewFlagSet(name, flag.ContinueOnError)
		c.Flags(fs)
		var b bytes.Buffer
		fs.SetOutput(&b)
		fs.PrintDefaults()
		if b.Len() > 0 {
			fmt.Fprintf(w, "\nFlags:\n%s", strings.ReplaceAll(b.String(), "  -", "  --"))
		}
	}
}

func capitalise(s string) string {
	if s == "" {
		return s
	}
	return strings.ToUpper(s[:1]) + s[1:]
}
