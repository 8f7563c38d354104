package main

import (
	"context"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"strings"

	"basin.example/cmd/basin/internal/human"
	"basin.example/internal/demodata"
)

// demoFlags are basin demo's flags.
type demoFlags struct {
	Out      string
	Seed     uint64
	Quiet    bool
	DataOnly bool
}

func (f *demoFlags) register(fs *flag.FlagSet) {
	fs.StringVar(&f.Out, "out", "basin-demo", "write the data and the outputs to `DIR`")
	fs.Uint64Var(&f.Seed, "seed", defaultSeed, "random seed `N` of the demo data")
	fs.BoolVar(&f.Quiet, "quiet", false, "print only where the outputs are")
	fs.BoolVar(&f.DataOnly, "data-only", false, "write the data set only; do not run the job")
}

var cmdDemo = &command{
	UsageLine: "basin demo [--out DIR]",
	Short:     "write the demo data set and run the job on it",
	Long: `Writes the built-in demo data set into DIR/data and runs 'basin run
--out DIR DIR/data' on it, then says where the report is.

The data are invented: a pitch-stabilised camera mount on a vibration rig
(states theta [rad] and omega [rad/s]; natural frequency 1.51 Hz, damping
ratio 0.15, a softening spring with saddles at ±0.346 rad). 40 runs of
10 s at 200 Hz start from kicks or from vibration bursts; 5 of them leave
the basin and end at the end stop (|theta| >= 0.8 rad). DIR/data/truth.json
says which (it is not read as a log). The same --seed gives the same bytes.`,
}

func init() { cmdDemo.Run = runDemo }

func runDemo(ctx context.Context, e *env, args []string) error {
	c := new(demoFlags)
	fs := cmdDemo.flagSet()
	c.register(fs)
	args, err := cmdDemo.parse(e, fs, args)
	if err != nil {
		return err
	}
	if err := noInputs(cmdDemo, args); err != nil {
		return err
	}
	if err := checkDemoOut(c.Out); err != nil {
		return err
	}
	data := filepath.Join(c.Out, "data")
	truth, err := writeDemoData(data, c.Seed)
	if err != nil {
		return err
	}
	fmt.Fprintf(e.stdout, "wrote the demo data set: %d runs of a camera mount in %s (truth in %s)\n",
		len(truth.Runs), data, filepath.Join(data, demodata.TruthFile))
	if !c.Quiet {
		fmt.Fprintf(e.stdout, "%s the basin: %s\n", human.CountAs(len(truth.Leaving), "run leaves", "runs leave"), strings.Join(truth.Leaving, ", "))
	}
	if c.DataOnly {
		return nil
	}
	quiet := []string(nil)
	if c.Quiet {
		quiet = []string{"--quiet"}
	}
	if !c.Quiet {
		fmt.Fprintf(e.stdout, "\nbasin run --out %s %s\n", c.Out, data)
	}
	err = cmdRun.Run(ctx, e, append(append([]string{"--out", c.Out}, quiet...), data))
	if err != nil {
		return fmt.Errorf("run: %w", err)
	}
	report := filepath.Join(c.Out, "report.html")
	if _, err := os.Stat(report); err == nil {
		fmt.Fprintf(e.stdout, "\nthe report is %s (open it in a browser); summary in %s\n", report, filepath.Join(c.Out, "summary.txt"))
	} else {
		fmt.Fprintf(e.stdout, "\noutputs are in %s\n", c.Out)
	}
	return nil
}

// writeDemoData generates the demo data set and writes it into dir,
// atomically: every run's CSV file and truth.json, or nothing.
func writeDemoData(dir string, seed uint64) (*demodata.Truth, error) {
	runs, err := demodata.Generate(seed, nil)
	if err != nil {
		return nil, err
	}
	truth := demodata.NewTruth(seed, nil, runs)
	files := make([]atomicFile, 0, len(runs)+1)
	for i := range runs {
		files = append(files, atomicFile{Name: runs[i].File, Write: runs[i].WriteCSV})
	}
	files = append(files, atomicFile{Name: demodata.TruthFile, Write: truth.WriteJSON})
	if err := writeAtomic(dir, files...); err != nil {
		// Mostly an --out that names a file or an unwritable place.
		return nil, &inputError{fmt.Errorf("--out: %w", err)}
	}
	return truth, nil
}
