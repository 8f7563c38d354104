// Command benchlp times fit/lp against HiGHS on the same certificate LPs:
// it writes the LP files of certlp.Cases into a directory, then, in one
// interleaved sequence, solves each file with fit/lp (SolveCuts, and Solve
// on the whole LP) and with HiGHS's dual simplex from SciPy (a
// row-generation loop, and the whole LP) in a Python process fed the same
// files, and prints the CPU times (medians), their ratios and whether
// every run's optimum agrees with HiGHS's to 1e-9 relative.
//
// HiGHS runs in two loops: its own (the most violated rows, 10 rows per
// unknown at the start and 2 per round) and fit/lp's (the same start,
// batch and selection of nearly parallel rows as SolveCuts's dual
// simplex), so that the second one differs from fit/lp's only in the LP
// solver and the row evaluation. Both evaluate the rows as fit/lp does:
// one matrix-vector product, and the magnitude only of the rows it finds
// violated. SciPy's linprog cannot start from a basis, so every HiGHS
// round solves from scratch; that is the anchor's loop as SciPy offers
// it.
//
// HiGHS is only a yardstick here; basin never calls it. Run it with
// make bench-lp, which installs Debian's python3-scipy when missing.
//
// Usage:
//
//	go run ./fit/lp/internal/benchlp [-dir DIR] [-reps N] [-whole=false] [-cases LIST] [-python PATH]
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
	solve     float64 // HiGHS: CPU inside linprog
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

// loop is a row-generation loop around HiGHS: initial rows, rows added
// per round, and the selection ("top": the most violated; "diverse":
// fit/lp's, which leaves out rows nearly parallel to one taken).
type loop struct {
	name           string
	initial, batch int
	sel            string
}

func (h *highs) run(op, file string, l loop) timing {
	b, _ := json.Marshal(map[string]any{"op": op, "file": file, "initial": l.initial, "batch": l.batch,
		"tol": violTol, "select": l.sel, "maxcos": diverseCos})
	if _, err := h.in.Write(append(b, '\n')); err != nil {
		return timing{err: err.Error()}
	}
	if !h.out.Scan() {
		return timing{err: fmt.Sprintf("no answer from HiGHS (%v)", h.out.Err())}
	}
	var r struct {
		CPU, Wall, Solve float64
		Status           int
		Message          string
		Objective        *float64
		Rounds           int
		Active           int
	}
	if err := json.Unmarshal(h.out.Bytes(), &r); err != nil {
		return timing{err: err.Error()}
	}
	t := timing{cpu: r.CPU, wall: r.Wall, solve: r.Solve, rounds: r.Rounds, active: r.Active, obj: math.NaN()}
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

// series holds the interleaved runs of one case: fit/lp's and, per
// HiGHS loop, HiGHS's.
type series struct {
	ours   []timing
	theirs [][]timing // per loop
}

// relDiff is |a - b| / |b|, the relative difference of two optima (+Inf
// when either is not a number).
func relDiff(a, b float64) float64 {
	d := math.Abs(a-b) / math.Abs(b)
	if math.IsNaN(d) {
		return math.Inf(1)
	}
	return d
}

func caseNames() string {
	var s []string
	for _, c := range certlp.Cases {
		s = append(s, c.Name())
	}
	return strings.Join(s, ", ")
}

func fail(err error) {
	fmt.Fprintln(os.Stderr, "benchlp:", err)
	os.Exit(1)
}

func main() {
	dir := flag.String("dir", filepath.Join(os.TempDir(), "basin-bench-lp"), "write the LP files to `DIR`")
	reps := flag.Int("reps", 5, "interleaved repetitions `N` of each row-generation solve")
	whole := flag.Bool("whole", true, "also solve each whole LP once with both solvers")
	python := flag.String("python", "/usr/bin/python3", "Python with SciPy, `PATH`")
	only := flag.String("cases", "", "comma-separated case names to run (default all)")
	hInit := flag.Int("highs-initial", 0, "initial rows of HiGHS's own loop (0: 10 x unknowns)")
	hBatch := flag.Int("highs-batch", 0, "rows added per round in HiGHS's own loop (0: 2 x unknowns)")
	oInit := flag.Int("initial", 0, "fit/lp's initial rows (0: SolveCuts's default)")
	oBatch := flag.Int("batch", 0, "fit/lp's rows added per round (0: SolveCuts's default)")
	flag.Parse()
	var copts *lp.CutOptions
	if *oInit > 0 || *oBatch > 0 {
		copts = &lp.CutOptions{Initial: *oInit, Batch: *oBatch}
	}
	if err := os.MkdirAll(*dir, 0o755); err != nil {
		fail(err)
	}
	var cases []certlp.Case
	for _, c := range certlp.Cases {
		if *only == "" || slices.Contains(strings.Split(*only, ","), c.Name()) {
			cases = append(cases, c)
		}
	}
	if *only != "" {
		for _, name := range strings.Split(*only, ",") {
			if !slices.ContainsFunc(cases, func(c certlp.Case) bool { return c.Name() == name }) {
				fail(fmt.Errorf("no case %q (cases: %s)", name, caseNames()))
			}
		}
	}
	if *reps < 1 {
		fail(fmt.Errorf("-reps %d: need at least 1", *reps))
	}
	// The files are written afresh each time, so that they always hold
	// the generator's current rows.
	files := make([]string, len(cases))
	for k, c := range cases {
		files[k] = filepath.Join(*dir, c.Name()+".lpf64")
		if err := c.LP().Dense().WriteFile(files[k]); err != nil {
			fail(err)
		}
	}
	h, err := startHighs(*python, *dir)
	if err != nil {
		fail(fmt.Errorf("HiGHS: %w", err))
	}
	cut := make([]series, len(cases))
	whl := make([]series, len(cases))
	loopsOf := make([][]loop, len(cases))
	for k, c := range cases {
		d, err := certlp.ReadFile(files[k])
		if err != nil {
			fail(err)
		}
		w := len(d.C)
		ini, bat := *hInit, *hBatch
		if ini <= 0 {
			ini = 10 * w
		}
		if bat <= 0 {
			bat = 2 * w
		}
		sameIni, sameBat := copts.Sizes(w, len(d.H))
		loops := []loop{
			{"HiGHS, top", ini, bat, "top"},
			{"HiGHS, fit/lp's", sameIni, sameBat, "diverse"},
		}
		loopsOf[k] = loops
		cut[k].theirs = make([][]timing, len(loops))
		for r := 0; r < *reps; r++ {
			// Rotate which solver goes first.
			for q := 0; q <= len(loops); q++ {
				switch j := (q + r) % (len(loops) + 1); j {
				case 0:
					cut[k].ours = append(cut[k].ours, goCuts(d, copts))
				default:
					cut[k].theirs[j-1] = append(cut[k].theirs[j-1], h.run("cuts", files[k], loops[j-1]))
				}
			}
			fmt.Fprintf(os.Stderr, "%s cuts %d: fit/lp %.3fs", c.Name(), r+1, cut[k].ours[r].cpu)
			for j, l := range loops {
				fmt.Fprintf(os.Stderr, ", %s %.3fs", l.name, cut[k].theirs[j][r].cpu)
			}
			fmt.Fprintln(os.Stderr, " (CPU)")
		}
		if *whole {
			whl[k].theirs = [][]timing{{h.run("whole", files[k], loop{})}}
			whl[k].ours = append(whl[k].ours, goWhole(d, nil))
			fmt.Fprintf(os.Stderr, "%s whole: fit/lp %.3fs, HiGHS %.3fs (CPU)\n", c.Name(),
				whl[k].ours[0].cpu, whl[k].theirs[0][0].cpu)
		}
	}
	h.in.Close()
	h.cmd.Wait()

	tw := tabwriter.NewWriter(os.Stdout, 2, 8, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintf(tw, "case\tsolve\tanchor\tfit/lp CPU s\tanchor CPU s\tin linprog\tratio CPU\tratio wall\tfit/lp rows\tanchor rows\tfit/lp rounds\tanchor rounds\tg fit/lp\tg anchor\tmax rel diff\tagree 1e-9\t\n")
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
	solve := func(t []timing) []float64 {
		v := make([]float64, len(t))
		for i := range t {
			v[i] = t[i].solve
		}
		return v
	}
	worst := 0.0 // the largest row-generation CPU ratio
	allAgree := true
	print := func(c certlp.Case, kind, anchor string, ours, theirs []timing) float64 {
		if len(ours) == 0 || len(theirs) == 0 {
			return math.NaN()
		}
		// Every run's optimum against HiGHS's first one.
		ref := -theirs[0].obj
		rel := 0.0
		var errs []string
		for _, t := range append(slices.Clone(ours), theirs...) {
			rel = max(rel, relDiff(-t.obj, ref))
			if t.err != "" {
				errs = append(errs, t.err)
			}
		}
		agree := "yes"
		if !(rel <= agreeTol) {
			agree = "NO"
			allAgree = false
		}
		if len(errs) > 0 {
			agree = "error: " + strings.Join(errs, " / ")
			allAgree = false
		}
		o, t := ours[len(ours)-1], theirs[len(theirs)-1]
		ratio := median(cpu(ours)) / median(cpu(theirs))
		fmt.Fprintf(tw, "%s\t%s\t%s\t%.4f\t%.4f\t%.4f\t%.2f\t%.2f\t%d\t%d\t%d\t%d\t%.10g\t%.10g\t%.1e\t%s\t\n",
			c.Name(), kind, anchor, median(cpu(ours)), median(cpu(theirs)), median(solve(theirs)),
			ratio, median(wall(ours))/median(wall(theirs)),
			o.active, t.active, o.rounds, t.rounds, -o.obj, -t.obj, rel, agree)
		return ratio
	}
	for k, c := range cases {
		for j, l := range loopsOf[k] {
			worst = max(worst, print(c, "cuts", l.name, cut[k].ours, cut[k].theirs[j]))
		}
		if len(whl[k].theirs) > 0 {
			print(c, "whole", "HiGHS", whl[k].ours, whl[k].theirs[0])
		}
	}
	tw.Flush()
	fmt.Printf("medians of %d interleaved runs (whole LPs: one run); ratio = fit/lp over the anchor (below 1: fit/lp faster); "+
		"anchors: HiGHS's dual simplex (SciPy linprog, highs-ds) in a row-generation loop, with the most violated rows (top; -highs-initial, -highs-batch: default 10 and 2 rows per unknown) "+
		"or with fit/lp's own selection and sizes; \"in linprog\": the anchor's CPU inside linprog; g = the optimum (largest decrease rate); rel diff over every run\n",
		*reps)
	fmt.Printf("largest row-generation CPU ratio: %.2f; optima agree to %g: %v\n", worst, agreeTol, allAgree)
	if !allAgree {
		os.Exit(1)
	}
}

// diverseCos is the cut selection's largest |cosine| between two rows of
// one round (fit/lp/cuts.go's diverseCos), repeated for the HiGHS loop
// that runs fit/lp's own selection.
const diverseCos = 0.99
