package ingest

import (
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"
)

// Column roles in a header. An input column (see [Options.Inputs]) has
// role roleState while it is read: the readers fill one table column per
// state or input, states first, and [table.dataset] separates them.
const (
	roleSkip int8 = iota
	roleTime
	roleRun
	roleState
)

// MinRate and MaxRate bound Options.Rate: outside them the sample times
// i/Rate underflow, overflow or repeat in float64.
const (
	MinRate = 1e-6
	MaxRate = 1e9
)

// roles is the column assignment shared by the CSV and Parquet readers.
// states holds the state columns followed by the nInput input columns;
// stateOf maps a header column of role roleState to its index there.
type roles struct {
	role     []int8
	stateOf  []int
	states   []Column
	stateCol []int
	nInput   int
	timeCol  Column
	timeIdx  int
	rate     float64
	ignored  []Column
	explicit bool // states named by Options.States
}

// isInput reports whether header column j is an input column.
func (r *roles) isInput(j int) bool {
	return r.role[j] == roleState && r.stateOf[j] >= len(r.states)-r.nInput
}

func findCol(cols []Column, name string) int {
	for j, c := range cols {
		if c.Name == name {
			return j
		}
	}
	for j, c := range cols {
		if strings.EqualFold(c.Name, name) {
			return j
		}
	}
	return -1
}

// timeUnitCol returns the first column whose header unit is a time unit
// (see [TimeUnits]), or -1.
func timeUnitCol(cols []Column) int {
	for j, c := range cols {
		if c.Unit == "" {
			continue
		}
		if _, ok := TimeUnits[c.Unit]; ok {
			return j
		}
		if _, ok := TimeUnits[strings.ToLower(c.Unit)]; ok {
			return j
		}
	}
	return -1
}

// assignRoles picks the time, run, state and input columns per the
// contract: time by name (or none with a rate), the run column, the
// inputs, then the states named, or else every other column.
func assignRoles(file string, cols []Column, opts *Options) (*roles, error) {
	r := &roles{role: make([]int8, len(cols)), stateOf: make([]int, len(cols))}
	ti := -1
	if opts.TimeCol != "" {
		ti = findCol(cols, opts.TimeCol)
		if ti < 0 {
			return nil, &ParseError{File: file, Err: fmt.Errorf("%w: Options.TimeCol %q is not a column", ErrNoTime, opts.TimeCol)}
		}
	} else {
		for j, c := range cols {
			switch strings.ToLower(c.Name) {
			case "t", "time", "timestamp", "time_s":
				ti = j
			}
			if ti >= 0 {
				break
			}
		}
	}
	if ti < 0 && (math.IsNaN(opts.Rate) || opts.Rate > 0 && !(opts.Rate >= MinRate && opts.Rate <= MaxRate)) {
		return nil, &ParseError{File: file, Err: fmt.Errorf("%w: Options.Rate %g is not a usable sampling rate (a finite number of Hz from %g to %g)",
			ErrFormat, opts.Rate, MinRate, MaxRate)}
	}
	if ti < 0 && !(opts.Rate > 0) {
		if j := timeUnitCol(cols); j >= 0 {
			// a time column under another name ("elapsed [s]"): say which
			return nil, &ParseError{File: file, Line: 1, Column: j + 1, Name: cols[j].Name,
				Err: fmt.Errorf("%w; this column has the time unit %q: if it is the time, name it with Options.TimeCol %s", ErrNoTime, cols[j].Unit, cols[j].Name)}
		}
		return nil, &ParseError{File: file, Err: ErrNoTime}
	}
	if ti >= 0 && opts.Rate > 0 {
		// Both say when the samples were taken: one would be ignored
		// without a word, and they need not agree.
		return nil, &ParseError{File: file, Line: 1, Column: ti + 1, Name: cols[ti].Name,
			Err: fmt.Errorf("%w: Options.Rate %g is given, but this is a time column; leave out one of the two", ErrFormat, opts.Rate)}
	}
	if ti >= 0 {
		r.role[ti] = roleTime
		r.timeCol, r.timeIdx = cols[ti], ti+1
	} else {
		r.rate = opts.Rate
		r.timeCol = Column{Name: "t", Unit: "s"}
	}
	ri := -1
	if opts.RunCol != "" {
		ri = findCol(cols, opts.RunCol)
		if ri < 0 {
			return nil, &ParseError{File: file, Err: fmt.Errorf("%w: Options.RunCol %q is not a column", ErrFormat, opts.RunCol)}
		}
		if ri == ti {
			return nil, &ParseError{File: file, Err: fmt.Errorf("%w: Options.RunCol %q is the time column", ErrFormat, opts.RunCol)}
		}
		r.role[ri] = roleRun
	}
	// Inputs are resolved first, so that the default states leave them
	// out; they are appended after the states below.
	inputAt := make([]int, 0, len(opts.Inputs))
	isIn := map[int]bool{}
	for _, s := range opts.Inputs {
		j := findCol(cols, s)
		switch {
		case j < 0:
			return nil, &ParseError{File: file, Name: s, Err: fmt.Errorf("%w: no column has this name", ErrInputColumn)}
		case j == ti:
			return nil, &ParseError{File: file, Column: j + 1, Name: cols[j].Name, Err: fmt.Errorf("%w: it is the time column", ErrInputColumn)}
		case j == ri:
			return nil, &ParseError{File: file, Column: j + 1, Name: cols[j].Name, Err: fmt.Errorf("%w: it is the run column", ErrInputColumn)}
		case isIn[j]:
			return nil, &ParseError{File: file, Column: j + 1, Name: cols[j].Name, Err: fmt.Errorf("%w: named twice", ErrInputColumn)}
		}
		isIn[j] = true
		inputAt = append(inputAt, j)
	}
	if opts.States != nil {
		r.explicit = true
		for _, s := range opts.States {
			j := findCol(cols, s)
			if j < 0 {
				return nil, &ParseError{File: file, Err: fmt.Errorf("%w: Options.States names %q, which is not a column", ErrNoStates, s)}
			}
			if isIn[j] {
				return nil, &ParseError{File: file, Column: j + 1, Name: cols[j].Name, Err: ErrStateAndInput}
			}
			if r.role[j] != roleSkip {
				return nil, &ParseError{File: file, Err: fmt.Errorf("%w: Options.States names %q, the time or run column", ErrNoStates, s)}
			}
			r.addState(j, cols[j])
		}
		r.addInputs(inputAt, cols)
		for j, c := range cols {
			if r.role[j] == roleSkip && c.Name != "" {
				r.ignored = append(r.ignored, c)
			}
		}
		return r, nil
	}
	for j, c := range cols {
		if r.role[j] != roleSkip || c.Name == "" || isIn[j] {
			continue
		}
		r.addState(j, c)
	}
	if len(r.states) == 0 {
		return nil, &ParseError{File: file, Err: ErrNoStates}
	}
	r.addInputs(inputAt, cols)
	return r, nil
}

func (r *roles) addState(j int, c Column) {
	r.role[j] = roleState
	r.stateOf[j] = len(r.states)
	r.states = append(r.states, c)
	r.stateCol = append(r.stateCol, j+1)
}

func (r *roles) addInputs(at []int, cols []Column) {
	for _, j := range at {
		r.addState(j, cols[j])
	}
	r.nInput = len(at)
}

// dropState turns state column j into an ignored one (a text column). It
// must not be an input column.
func (r *roles) dropState(j int) {
	k := r.stateOf[j]
	r.ignored = append(r.ignored, r.states[k])
	r.states = append(r.states[:k:k], r.states[k+1:]...)
	r.stateCol = append(r.stateCol[:k:k], r.stateCol[k+1:]...)
	r.role[j] = roleSkip
	for i := range r.role {
		if r.role[i] == roleState && r.stateOf[i] > k {
			r.stateOf[i]--
		}
	}
}

// ConstantInputs returns the indices into ds.Inputs of the input columns
// that hold one value in every sample of every run: such an input cannot
// be told apart from a constant term and adds nothing to a fit.
func (ds *Dataset) ConstantInputs() []int {
	var out []int
	for k := range ds.Inputs {
		if _, ok := ds.constantInput(k); ok {
			out = append(out, k)
		}
	}
	return out
}

// constantInput returns the value input k holds throughout, if it does.
func (ds *Dataset) constantInput(k int) (float64, bool) {
	first, seen := 0.0, false
	for i := range ds.Runs {
		for _, v := range ds.Runs[i].U[k] {
			if !seen {
				first, seen = v, true
			} else if v != first {
				return 0, false
			}
		}
	}
	return first, seen
}

// warnConstantInputs appends a warning to ds.Warnings for each input
// column that [Dataset.ConstantInputs] finds; with hold, it also takes
// each out of the inputs into ds.Held.
func warnConstantInputs(ds *Dataset, hold bool) {
	ks := ds.ConstantInputs()
	for _, k := range ks {
		v, _ := ds.constantInput(k)
		c := ds.Inputs[k]
		val := valueText(v, c.Unit)
		w := fmt.Sprintf("input %s is constant (%s in every sample): its effect cannot be told from a constant term", c.Name, val)
		if hold {
			w += fmt.Sprintf(", so it is taken as known, held at %s and folded into the states' equations (the model has no input %s)", val, c.Name)
			ds.Held = append(ds.Held, HeldInput{Column: c, Value: v})
		}
		ds.Warnings = append(ds.Warnings, w)
	}
	if !hold || len(ks) == 0 {
		return
	}
	keep := func(k int) bool { return !slices.Contains(ks, k) }
	var in []Column
	for k, c := range ds.Inputs {
		if keep(k) {
			in = append(in, c)
		}
	}
	ds.Inputs = in
	for i := range ds.Runs {
		r := &ds.Runs[i]
		var u [][]float64
		for k, col := range r.U {
			if keep(k) {
				u = append(u, col)
			}
		}
		r.U = u
	}
}

// valueText is v with its unit, as warnings and errors quote a value.
func valueText(v float64, unit string) string {
	s := strconv.FormatFloat(v, 'g', -1, 64)
	if unit != "" {
		s += " " + unit
	}
	return s
}

// finish makes the checks that need the whole data set, once it is read
// and joined: a time window that leaves no run is an error; files read
// as Windows-1252 (one warning for all), recordings the window leaves
// out, and inputs that never change, are warnings.
func finish(ds *Dataset, opts *Options) error {
	if opts == nil {
		opts = &Options{}
	}
	if len(ds.Runs) == 0 {
		err := fmt.Errorf("%w: no samples from %s: every run ends before, the longest lasts %g s",
			ErrWindow, windowText(opts.From, opts.To), ds.longest)
		if len(ds.files) == 1 {
			return &ParseError{File: ds.files[0], Err: err}
		}
		return err
	}
	if len(ds.latin) > 0 { // one warning for every file read as Windows-1252
		w := ds.latin[0]
		if n := len(ds.latin) - 1; n == 1 {
			w += ", and so is 1 more file"
		} else if n > 1 {
			w += fmt.Sprintf(", and so are %d more files", n)
		}
		ds.Warnings = append([]string{w}, ds.Warnings...)
		ds.latin = nil
	}
	if ds.Window > 0 {
		ds.Warnings = append(ds.Warnings, fmt.Sprintf("%d of %d recordings have no samples from %s and are left out",
			ds.Window, ds.Window+ds.recordings(), windowText(opts.From, opts.To)))
	}
	warnEvents(ds)
	dropShortPieces(ds, opts.MinPiece)
	warnConstantInputs(ds, opts.HoldConstantInputs)
	return average(ds, opts.Average)
}

// average replaces each run of ds by the means of its consecutive
// blocks of k samples (see [Options.Average]), with one warning; k below
// 2 does nothing. A run left with fewer than two blocks is an error
// naming it.
func average(ds *Dataset, k int) error {
	if k < 2 {
		return nil
	}
	before, after := 0, 0
	for i := range ds.Runs {
		r := &ds.Runs[i]
		n := r.Len() / k
		if n < 2 {
			return fmt.Errorf("%w: run %s has %d samples, fewer than two blocks of %d to average (ingest.Options.Average)", ErrEmpty, r.Name, r.Len(), k)
		}
		before += r.Len()
		after += n
		r.T = blockMeans(r.T, k, n)
		for j := range r.X {
			r.X[j] = blockMeans(r.X[j], k, n)
		}
		for j := range r.U {
			r.U[j] = blockMeans(r.U[j], k, n)
		}
	}
	ds.Average = k
	ds.Warnings = append(ds.Warnings, fmt.Sprintf("the runs are averaged in blocks of %d samples (%d samples become %d)", k, before, after))
	return nil
}

// blockMeans returns the means of the first n blocks of k values of x, in
// a new slice (the runs may share their columns with a reader's buffers).
func blockMeans(x []float64, k, n int) []float64 {
	out := make([]float64, n)
	for b := range out {
		s := 0.0
		for _, v := range x[b*k : (b+1)*k] {
			s += v
		}
		out[b] = s / float64(k)
	}
	return out
}

// dropShortPieces leaves out the pieces of split recordings with fewer
// than minLen samples, with one warning naming the first.
func dropShortPieces(ds *Dataset, minLen int) {
	if minLen <= 0 {
		return
	}
	kept := ds.Runs[:0]
	first, from := "", 0.0 // the first piece left out and its start
	samples := 0
	for _, r := range ds.Runs {
		if r.Len() < minLen && r.Len() > 0 && r.Gaps+r.Events > 0 {
			if samples == 0 {
				first, from = r.Name, r.T[0]
			}
			ds.ShortPieces++
			samples += r.Len()
			continue
		}
		kept = append(kept, r)
	}
	clear(ds.Runs[len(kept):])
	ds.Runs = kept
	switch {
	case ds.ShortPieces == 1:
		ds.Warnings = append(ds.Warnings, fmt.Sprintf("a piece of a split recording has %d samples, fewer than %d, and is left out: %s from %s s",
			samples, minLen, first, secondsText(from)))
	case ds.ShortPieces > 1:
		ds.Warnings = append(ds.Warnings, fmt.Sprintf("%d pieces of split recordings have fewer than %d samples and are left out (%d samples; %s from %s s first)",
			ds.ShortPieces, minLen, samples, first, secondsText(from)))
	}
}

// timesText writes a multiple of the noise as a whole number up to a
// million and with three significant digits beyond (a spike of 1e300 in
// a logger's overflow value would otherwise print 300 digits).
func timesText(x float64) string {
	if x < 1e6 {
		return fmt.Sprintf("%.0f", x)
	}
	return fmt.Sprintf("%.3g", x)
}

// secondsText writes a time in seconds as the warnings write their
// durations (%.4g: four significant digits, "12.34" for the
// 12.340000000000002 that 1234 steps of 0.01 s add up to), but in fixed
// point for times of 10^4 s and more, to the whole second, so that a
// clock counting from an epoch (1.7e9 s) still names its sample.
func secondsText(t float64) string {
	if math.IsNaN(t) || math.IsInf(t, 0) || t == 0 {
		return fmt.Sprintf("%g", t)
	}
	d := 3 - int(math.Floor(math.Log10(math.Abs(t))))
	if d <= 0 {
		return strconv.FormatFloat(t, 'f', 0, 64)
	}
	x := strconv.FormatFloat(t, 'f', d, 64)
	x = strings.TrimRight(x, "0")
	return strings.TrimSuffix(x, ".")
}

// warnEvents sums up the events and resting heads in one warning line
// each.
func warnEvents(ds *Dataset) {
	if n := len(ds.Events); n > 0 {
		ev := ds.Events[0]
		unit := ""
		for _, c := range ds.States {
			if c.Name == ev.State && c.Unit != "" {
				unit = " " + c.Unit
			}
		}
		more := ""
		if n > 1 {
			more = fmt.Sprintf(" (and %d more)", n-1)
		}
		far := "in data with no noise"
		if ev.Sigmas > 0 {
			far = fmt.Sprintf("%s times the noise", timesText(ev.Sigmas))
		}
		if ev.Kind == EventKink {
			unit += "/s"
		}
		what := "jumps"
		if n == 1 {
			what = "jump"
		}
		if k := EventPlaces(ds.Events); k < n {
			what += fmt.Sprintf(" (at %d %s: several states jumped at once)", k, plural(k, "place", "places"))
		}
		ds.Warnings = append(ds.Warnings, fmt.Sprintf("%d one-sample %s far beyond the noise split runs: %s at %s s, %s %s of %+.4g%s, %s%s",
			n, what, ev.Run, secondsText(ev.Time), ev.State, ev.Kind, ev.Size, unit, far, more))
	}
	if n := len(ds.Heads); n > 0 {
		total := 0.0
		for _, h := range ds.Heads {
			total += h.Duration
		}
		if n == 1 {
			ds.Warnings = append(ds.Warnings, fmt.Sprintf("resting start before the first motion trimmed: %s, %.4g s (%d samples)",
				ds.Heads[0].Run, ds.Heads[0].Duration, ds.Heads[0].Samples))
		} else {
			ds.Warnings = append(ds.Warnings, fmt.Sprintf("resting starts before the first motion trimmed from %d recordings (%.4g s in all; %s, %.4g s, first)",
				n, total, ds.Heads[0].Run, ds.Heads[0].Duration))
		}
	}
}

func windowText(from, to float64) string {
	if to > 0 {
		return fmt.Sprintf("%g s to %g s after their start", from, to)
	}
	return fmt.Sprintf("%g s after their start", from)
}

// checkWindow checks Options.From and Options.To.
func (o *Options) checkWindow() error {
	switch {
	case math.IsNaN(o.From) || math.IsInf(o.From, 0) || o.From < 0:
		return fmt.Errorf("%w: start %g s is not a time from the run's start (want 0 or more)", ErrWindow, o.From)
	case math.IsNaN(o.To) || math.IsInf(o.To, 0) || o.To < 0:
		return fmt.Errorf("%w: end %g s is not a time from the run's start (want more than 0)", ErrWindow, o.To)
	case o.To > 0 && o.From > o.To:
		return fmt.Errorf("%w: start %g s is after end %g s", ErrWindow, o.From, o.To)
	}
	return nil
}

// recordings counts the recordings the runs were cut from.
func (ds *Dataset) recordings() int {
	n := 0
	for i := range ds.Runs {
		if !strings.Contains(ds.Runs[i].Name, "~") {
			n++
		}
	}
	return n
}

// steppedShare: a state column whose value repeats exactly on at least
// this share of consecutive sample pairs holds still between jumps, as a
// commanded drive or a setpoint does; a measured state carries noise that
// changes its last digit from sample to sample.
const steppedShare = 0.9

// A coarse sensor (an encoder whose step is larger than the noise) also
// repeats its value, but it moves one quantum at a time through many
// levels: a column with at least quantumLevels levels whose changes are
// one quantum (the smallest change, within quantumTol of it) on at least
// quantumShare of them is taken for such a sensor. A drive's steps have
// sizes of their own. (A staircase setpoint of ten or more equal steps
// looks the same and is not reported.)
const (
	quantumLevels = 10
	quantumShare  = 0.5
	quantumTol    = 1e-6 // relative: decimals read back differ in the last bits
)

// Stepped is a state column that holds its value exactly from sample to
// sample except at a few jumps (see [Dataset.SteppedStates]).
type Stepped struct {
	// State is the column's index into [Dataset.States].
	State int
	// Held is the share of consecutive sample pairs, within runs, where
	// the value repeated exactly (0 to 1).
	Held float64
	// Levels counts the distinct values the column takes, up to 1000.
	Levels int
}

// SteppedStates returns the state columns that look like inputs rather
// than states: their value repeats exactly on at least 90% of
// consecutive sample pairs, and they take more than one value. A
// commanded drive or a setpoint logged as a column does that; a measured
// state rarely does (its noise moves it), unless its sensor is far
// coarser than its noise, and such a sensor, which moves one quantum at a
// time through ten or more levels, is not reported. Fitting a drive as a
// state gives it an equation of zero and the model a line of
// equilibria; it belongs among the inputs ([Options.Inputs]). Pairs are
// counted within runs, so a column that jumps only where a run was split
// still counts as held.
func (ds *Dataset) SteppedStates() []Stepped {
	const maxLevels = 1000
	var out []Stepped
	for j := range ds.States {
		pairs, held := 0, 0
		quantum := math.Inf(1) // the smallest change
		levels := make(map[float64]bool)
		for i := range ds.Runs {
			x := ds.Runs[i].X[j]
			for k, v := range x {
				if len(levels) < maxLevels {
					levels[v] = true
				}
				if k > 0 {
					pairs++
					if d := math.Abs(v - x[k-1]); d == 0 {
						held++
					} else {
						quantum = min(quantum, d)
					}
				}
			}
		}
		if pairs == 0 || len(levels) < 2 {
			continue
		}
		share := float64(held) / float64(pairs)
		if share < steppedShare || len(levels) >= quantumLevels && ds.quantumShare(j, quantum) >= quantumShare {
			continue
		}
		out = append(out, Stepped{State: j, Held: share, Levels: len(levels)})
	}
	return out
}

// quantumShare returns the share of state j's changes between
// consecutive samples that are one quantum q (within quantumTol), 0
// when it never changes within a run.
func (ds *Dataset) quantumShare(j int, q float64) float64 {
	changes, unit := 0, 0
	for i := range ds.Runs {
		x := ds.Runs[i].X[j]
		for k := 1; k < len(x); k++ {
			if d := math.Abs(x[k] - x[k-1]); d != 0 {
				changes++
				if d-q <= quantumTol*q {
					unit++
				}
			}
		}
	}
	if changes == 0 {
		return 0
	}
	return float64(unit) / float64(changes)
}

// EventPlaces returns the number of distinct places (run and time) of
// events: a hammer hit on a rig moves several states at one sample, one
// event a state, and splits the run once.
func EventPlaces(events []Event) int {
	type place struct {
		run string
		t   float64
	}
	seen := make(map[place]bool, len(events))
	for _, ev := range events {
		seen[place{ev.Run, ev.Time}] = true
	}
	return len(seen)
}

// plural returns one when k is 1, else many.
func plural(k int, one, many string) string {
	if k == 1 {
		return one
	}
	return many
}
