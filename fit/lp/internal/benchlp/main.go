// Command benchlp times fit/lp against HiGHS on the same certificate LPs:
// it writes the LP files of certlp.Cases into a directory, then, in one
// interleaved sequence, solves each file with fit/lp (SolveCuts, and Solve
// on the whole LP) and with HiGHS's dual simplex from SciPy (a
// row-generation loop, and the whole LP) in a Python process fed the same
// files, and prints the times, their ratios and whether the optima agree.
//
// HiGHS is only a yardstick here; basin never calls it. Run it with
// make bench-lp, which installs Debian's python3-scipy when missing.
//
// Usage:
//
//	go run ./fit/lp/internal/benchlp [-dir DIR] [-reps N] [-whole] [-python PATH]
package main

import (
	"bufio"
	_ "embed"
	"encoding/json"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strings"
	"syscall"
	"text/tabwriter"
	"time"

	"basin.example/fit/lp"
	"basin.example/fit/lp/internal/certlp"
)

//go:embed highs.py
var highsScript string

// agreeTol is the relative agreement asked of the two optima: HiGHS drops
// matrix entries below 1e-9, so closer agreement is not to be expected.
const agreeTol = 1e-9

// violTol is the relative violation that counts a row as violated, in
// both loops (SolveCuts's default).
const violTol = 1e-7

type timing struct {
	cpu, wall float64
	obj       float64
	rounds    int
	active    int
	err       string
}

func cpuNow() float64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return math.NaN()
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano()).Seconds()
}

type highs struct {
	cmd *exec.Cmd
	in  io.WriteCloser
	out *bufio.Scanner
}

func startHighs(python, dir string) (*highs, error) {
	script := filepath.Join(dir, "highs.py")
	if err := os.WriteFile(script, []byte(highsScript), 0o644); err != nil {
		return nil, err
	}
	cmd := exec.Command(python, script)
	cmd.Env = append(os.Environ(), "OPENBLAS_NUM_THREADS=1", "OMP_NUM_THREADS=1")
	cmd.Stderr = os.Stderr
	in, err := cmd.StdinPipe()
	if err != nil {
		return nil, err
	}
	out, err := cmd.StdoutPipe()
	if err != nil {
		return nil, err
	}
	if err := cmd.Start(); err != nil {
		return nil, err
	}
	sc := bufio.NewScanner(out)
	sc.Buffer(make([]byte, 1<<16), 1<<20)
	return &highs{cmd: cmd, in: in, out: sc}, nil
}

func (h *highs) run(op, file string, initial, batch int) timing {
	b, _ := json.Marshal(map[string]any{"op": op, "file": file, "initial": initial, "batch": batch, "tol": violTol})
	if _, err := h.in.Write(append(b, '\n')); err != nil {
		return timing{err: err.Error()}
	}
	if !h.out.Scan() {
		return timing{err: fmt.Sprintf("no answer from HiGHS (%v)", h.out.Err())}
	}
	var r struct {
		CPU, Wall float64
		Status    int
		Message   string
		Objective *float64
		Rounds    int
		Active    int
	}
	if err := json.Unmarshal(h.out.Bytes(), &r); err != nil {
		return timing{err: err.Error()}
	}
	t := timing{cpu: r.CPU, wall: r.Wall, rounds: r.Rounds, active: r.Active, obj: math.NaN()}
	if r.Objective != nil {
		t.obj = *r.Objective
	} else {
		t.err = r.Message
	}
	return t
}

func goCuts(d *certlp.Dense, opts *lp.CutOptions) timing {
	c0, w0 := cpuNow(), time.Now()
	r, err := lp.SolveCuts(d.C, lp.DenseRows{G: d.G, H: d.H}, d.Lower, d.Upper, opts)
	t := timing{cpu: cpuNow() - c0, wall: time.Since(w0).Seconds(), obj: math.NaN()}
	if err != nil {
		t.err = err.Error()
		return t
	}
	t.obj, t.rounds, t.active = r.Objective, r.Rounds, len(r.Active)
	return t
}

func goWhole(d *certlp.Dense, opts *lp.Options) timing {
	p := &lp.Problem{C: d.C, G: d.G, H: d.H, Lower: d.Lower, Upper: d.Upper}
	c0, w0 := cpuNow(), time.Now()
	r, err := lp.Solve(p, opts)
	t := timing{cpu: cpuNow() - c0, wall: time.Since(w0).Seconds(), obj: math.NaN(), rounds: 1, active: len(d.H)}
	if err != nil {
		t.err = err.Error()
		return t
	}
	t.obj = r.Objective
	return t
}

func median(v []float64) float64 {
	s := slices.Clone(v)
	slices.Sort(s)
	if len(s) == 0 {
		return math.NaN()
	}
	if len(s)%2 == 1 {
		return s[len(s)/2]
	}
	return (s[len(s)/2-1] + s[len(s)/2]) / 2
}

type series struct{ ours, theirs []timing }

func main() {
	dir := flag.String("dir", filepath.Join(os.TempDir(), "basin-bench-lp"), "write the LP files to `DIR`")
	reps := flag.Int("reps", 3, "interleaved repetitions `N` of each row-generation solve")
	whole := flag.Bool("whole", true, "also solve each whole LP once with both solvers")
	python := flag.String("python", "/usr/bin/python3", "Python with SciPy, `PATH`")
	only := flag.String("cases", "", "comma-separated case names to run (default all)")
	hInit := flag.Int("highs-initial", 0, "initial rows of HiGHS's loop (0: 10 x unknowns)")
	hBatch := flag.Int("highs-batch", 0, "rows added per round in HiGHS's loop (0: 2 x unknowns)")
	oInit := flag.Int("initial", 0, "fit/lp's initial rows (0: SolveCuts's default)")
	oBatch := flag.Int("batch", 0, "fit/lp's rows added per round (0: SolveCuts's default)")
	flag.Parse()
	var copts *lp.CutOptions
	if *oInit > 0 || *oBatch > 0 {
		copts = &lp.CutOptions{Initial: *oInit, Batch: *oBatch}
	}
	if err := os.MkdirAll(*dir, 0o755); err != nil {
		fmt.Fprintln(os.Stderr, "benchlp:", err)
		os.Exit(1)
	}
	var cases []certlp.Case
	for _, c := range certlp.Cases {
		if *only == "" || slices.Contains(strings.Split(*only, ","), c.Name()) {
			cases = append(cases, c)
		}
	}
	files := make([]string, len(cases))
	for k, c := range cases {
		files[k] = filepath.Join(*dir, c.Name()+".lpf64")
		if _, err := os.Stat(files[k]); err == nil {
			continue
		}
		if err := c.LP().Dense().WriteFile(files[k]); err != nil {
			fmt.Fprintln(os.Stderr, "benchlp:", err)
			os.Exit(1)
		}
	}
	h, err := startHighs(*python, *dir)
	if err != nil {
		fmt.Fprintln(os.Stderr, "benchlp: HiGHS:", err)
		os.Exit(1)
	}
	cut := make([]series, len(cases))
	whl := make([]series, len(cases))
	for k, c := range cases {
		d, err := certlp.ReadFile(files[k])
		if err != nil {
			fmt.Fprintln(os.Stderr, "benchlp:", err)
			os.Exit(1)
		}
		w := len(d.C)
		ini, bat := *hInit, *hBatch
		if ini <= 0 {
			ini = 10 * w
		}
		if bat <= 0 {
			bat = 2 * w
		}
		for r := 0; r < *reps; r++ {
			// Alternate which solver goes first.
			if r%2 == 0 {
				cut[k].ours = append(cut[k].ours, goCuts(d, copts))
				cut[k].theirs = append(cut[k].theirs, h.run("cuts", files[k], ini, bat))
			} else {
				cut[k].theirs = append(cut[k].theirs, h.run("cuts", files[k], ini, bat))
				cut[k].ours = append(cut[k].ours, goCuts(d, copts))
			}
			fmt.Fprintf(os.Stderr, "%s cuts %d: ours %.3fs, HiGHS %.3fs (CPU)\n", c.Name(), r+1,
				cut[k].ours[r].cpu, cut[k].theirs[r].cpu)
		}
		if *whole {
			whl[k].theirs = append(whl[k].theirs, h.run("whole", files[k], 0, 0))
			whl[k].ours = append(whl[k].ours, goWhole(d, nil))
			fmt.Fprintf(os.Stderr, "%s whole: ours %.3fs, HiGHS %.3fs (CPU)\n", c.Name(),
				whl[k].ours[0].cpu, whl[k].theirs[0].cpu)
		}
	}
	h.in.Close()
	h.cmd.Wait()

	tw := tabwriter.NewWriter(os.Stdout, 2, 8, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintf(tw, "case\tsolve\trows\tunknowns\tfit/lp CPU s\tHiGHS CPU s\tratio CPU\tratio wall\tfit/lp rows\tHiGHS rows\tfit/lp rounds\tHiGHS rounds\tg fit/lp\tg HiGHS\trel diff\tagree 1e-9\t\n")
	print := func(c certlp.Case, kind string, s series, rows, w int) {
		if len(s.ours) == 0 {
			return
		}
		cpu := func(t []timing) []float64 {
			v := make([]float64, len(t))
			for i := range t {
				v[i] = t[i].cpu
			}
			return v
		}
		wall := func(t []timing) []float64 {
			v := make([]float64, len(t))
			for i := range t {
				v[i] = t[i].wall
			}
			return v
		}
		o, t := s.ours[len(s.ours)-1], s.theirs[len(s.theirs)-1]
		go_, hi := -o.obj, -t.obj
		rel := math.Abs(go_-hi) / max(1, math.Abs(hi))
		agree := "yes"
		if !(rel <= agreeTol) {
			agree = "NO"
		}
		if o.err != "" || t.err != "" {
			agree = "error: " + o.err + " / " + t.err
		}
		fmt.Fprintf(tw, "%s\t%s\t%d\t%d\t%.3f\t%.3f\t%.2f\t%.2f\t%d\t%d\t%d\t%d\t%.10g\t%.10g\t%.1e\t%s\t\n",
			c.Name(), kind, rows, w, median(cpu(s.ours)), median(cpu(s.theirs)),
			median(cpu(s.ours))/median(cpu(s.theirs)), median(wall(s.ours))/median(wall(s.theirs)),
			o.active, t.active, o.rounds, t.rounds, go_, hi, rel, agree)
	}
	for k, c := range cases {
		lpc := c.LP()
		print(c, "cuts", cut[k], lpc.Len(), lpc.Unknowns())
		print(c, "whole", whl[k], lpc.Len(), lpc.Unknowns())
	}
	tw.Flush()
	fmt.Printf("medians of %d interleaved runs (whole LPs: one run); ratio = fit/lp over HiGHS (below 1: fit/lp faster); g = the optimum (largest decrease rate)\n", *reps)
}
