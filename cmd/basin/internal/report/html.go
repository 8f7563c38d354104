package report

import (
	_ "embed"
	"fmt"
	"html/template"
	"io"
	"math"
	"strconv"
	"strings"

	"basin.example/cmd/basin/internal/human"
	"basin.example/fit"
	"basin.example/fit/poly"
)

//go:embed page.html.tmpl
var pageSrc string

var page = template.Must(template.New("page").Parse(pageSrc))

// num is a number shown to people (4 digits) that carries its exact value
// (shortest round-trip form) for machines and tests.
type num struct {
	Text  string
	Exact string
}

func mk(x float64) num { return num{g(x), strconv.FormatFloat(x, 'g', -1, 64)} }

// mkNear is mk for a coordinate of a state whose scale is scale: shown to
// a thousandth of the scale (round-off around zero shows as 0).
func mkNear(x, scale float64) num {
	return num{human.Near(x, scale), strconv.FormatFloat(x, 'g', -1, 64)}
}

type pageData struct {
	Title, Caveat, CertCaveat string
	Verdict, Strength, Reason string
	Conflict                  string // the LP conflict's line, "" when none
	VerdictClass              string
	Level                     num
	Found                     bool
	Equilibrium               []stateVal
	Extent                    []extentRow
	Limit                     string
	EnvelopeShare             num
	Plane                     *figure
	CloseUp                   *figure
	CloseKeys                 []keyItem
	PlaneA, PlaneB            string
	PlaneSlice                string
	OtherOff                  int
	Clipped                   bool
	VFig                      *figure
	Keys                      []keyItem
	VKeys                     []keyItem
	VPieces                   bool // the V figure draws the pieces where the inputs rest
	Model                     bool
	// Averaged is the block of samples the runs were averaged in (0:
	// none); HeldInputs the constant inputs folded into the equations
	Averaged    int
	HeldInputs  string
	Equations   []eqRow
	VTerms      []vTerm
	VDropped    string // "2 more terms" of V left out of the table (zero or below 1e-4 of the largest)
	NoV         string // in place of the V table when it has no term to list
	NoRegion    string // in place of the extent table when there is none
	HeldoutNoV  string // before the held-out figures when there is no V
	PlaneRegion bool   // the phase plane draws the region's boundary
	Val         *fit.Validation
	ValRows     []valRow
	Runs        []runRow
	Settings    []kv
	Noise       num
	Tolerance   num
	// ValDerivErr is the model's derivative check on the held-out runs,
	// as a percentage of each derivative's spread.
	ValDerivErr []stateNum
}

type stateNum struct {
	Name  string
	Value num
}

type stateVal struct {
	Name, Unit string
	Value      num
	Scale      num
}

type extentRow struct {
	Name, Unit string
	Lo, Hi     num
}

type eqRow struct {
	State        string
	Terms        []termRow
	HeldoutError num
	HeldoutRMS   num
	RateUnit     string
	HeldoutShare string
	Warning      string
	// Extrapolation is the equation's note on held-out runs outside the
	// fitted runs' range (fit.Equation.Extrapolation).
	Extrapolation string
}

type termRow struct {
	Name                string
	Coef, IntLo, IntHi  num
	KeptShare           num
	HasInterval, Rarely bool
	KeptSharePercentage string
}

type vTerm struct {
	Name string
	Coef num
}

type valRow struct {
	Key, Label string
	Exact      string // the certificate's value, for machines and tests
	Text       string // what people read
}

type runRow struct {
	Run, File   string
	Samples     int
	StartInside bool
	Settled     string // SettledText
	Flagged     bool
	Flags       string
}

type keyItem struct {
	Label  string
	Colour string
	Dash   string // SVG stroke-dasharray, empty for solid
	Width  float64
	Mark   string // "square", "triangle", "cross" or "" for a line
}

// HTML writes the report page for in to w: one self-contained HTML file
// with inline SVG figures, no scripts and no external resources. Every
// name taken from the user's files is escaped. It returns an error
// wrapping [ErrInput] for an unusable Input, or the writer's error.
func HTML(w io.Writer, in *Input) error {
	pl, err := in.check()
	if err != nil {
		return err
	}
	d, err := build(in, pl)
	if err != nil {
		return err
	}
	return page.Execute(w, d)
}

func build(in *Input, pl [2]int) (*pageData, error) {
	c := in.Cert
	d := &pageData{
		Title:      in.Title,
		Caveat:     fit.Caveat,
		CertCaveat: c.Caveat,
		Verdict:    string(c.Verdict), Strength: string(c.Strength), Reason: c.Reason,
		Conflict:     ConflictLine(c),
		VerdictClass: map[fit.Verdict]string{fit.Certified: "v-ok", fit.Rejected: "v-no", fit.Inconclusive: "v-open"}[c.Verdict],
		Level:        mk(c.Level), Found: c.Found,
		Limit:         limitText(c),
		EnvelopeShare: num{boundPercent(c.Region.EnvelopeShare), strconv.FormatFloat(c.Region.EnvelopeShare, 'g', -1, 64)},
		Noise:         mk(c.NoiseRadius), Tolerance: mk(c.Tolerance),
		Val:      c.Validation,
		Settings: in.settings(),
		Model:    in.Model != nil,
	}
	if d.Title == "" {
		d.Title = "basin report"
	}
	if d.CertCaveat == d.Caveat {
		d.CertCaveat = ""
	}
	for j, s := range c.States {
		d.Equilibrium = append(d.Equilibrium, stateVal{s, c.Units[j], mkNear(c.Equilibrium[j], c.Scale[j]), mk(c.Scale[j])})
	}
	for j, e := range c.Region.Extent {
		// as the summary: a region needs a V and a level (a file may keep
		// an extent without them)
		if j < len(c.States) && hasV(c) && c.Level > 0 {
			d.Extent = append(d.Extent, extentRow{c.States[j], c.Units[j], mkNear(e[0], c.Scale[j]), mkNear(e[1], c.Scale[j])})
		}
	}
	big := 0.0
	for _, a := range c.V.Coefficients {
		big = math.Max(big, math.Abs(a))
	}
	dropped := 0
	for k, e := range c.V.Exponents {
		if math.Abs(c.V.Coefficients[k]) <= 1e-4*big {
			dropped++ // zero, or LP round-off
			continue
		}
		d.VTerms = append(d.VTerms, vTerm{poly.MonomialName(e, zNames(c.States)), mk(c.V.Coefficients[k])})
	}
	if dropped > 0 {
		d.VDropped = human.Count(dropped, "more term")
	}
	switch {
	case len(d.VTerms) > 0:
	case len(c.V.Exponents) == 0:
		d.NoV = "No V was found, so there are no terms to list; the finding above says why."
	default:
		d.NoV = "Every coefficient of V is zero, so there are no terms to list."
	}
	d.NoRegion = "No certified region."
	if !hasV(c) {
		d.NoRegion = "No V was found, so no region is claimed: " + noVWhy(c) + "."
		d.HeldoutNoV = "With no V there is no region: the figures below count nothing inside one, and the runs' flags contradict no claim."
	}
	if len(c.States) >= 2 && pl[0] != pl[1] {
		f, err := planeFigure(in, pl, false)
		if err != nil {
			return nil, err
		}
		d.Plane, d.OtherOff, d.PlaneRegion = f, f.offFigure, len(f.contour) > 0
		if f.wide {
			cf, err := planeFigure(in, pl, true)
			if err != nil {
				return nil, err
			}
			if closer(cf, f) {
				d.CloseUp, d.Clipped = cf, cf.clipped
				d.CloseKeys = planeKeys(cf, c, in.Model)
			}
		}
		d.PlaneA, d.PlaneB = c.States[pl[0]], c.States[pl[1]]
		if len(c.States) > 2 {
			var others []string
			for j, s := range c.States {
				if j != pl[0] && j != pl[1] {
					others = append(others, s)
				}
			}
			d.PlaneSlice = strings.Join(others, ", ")
		}
	}
	vf, err := vFigure(in)
	if err != nil {
		return nil, err
	}
	d.VFig = vf
	d.VPieces = in.Data != nil && len(in.Data.Inputs) > 0 && in.Model != nil && len(in.Model.RestInput) == len(in.Data.Inputs)
	if d.Plane != nil {
		d.Keys = planeKeys(d.Plane, c, in.Model)
	}
	d.VKeys = []keyItem{
		{Label: "held-out run, not flagged", Colour: hex(inkCalm), Width: 0.9},
		{Label: "held-out run, flagged", Colour: hex(inkFlagged), Width: 1.4, Dash: "5 2"},
		{Label: "level bounding the region", Colour: hex(inkLevel), Width: 1.6, Dash: "8 3"},
		{Label: "first time of a flag", Colour: hex(inkViolMark), Mark: "cross"},
	}
	if m := in.Model; m != nil {
		for _, e := range m.Equations {
			row := eqRow{State: e.State, HeldoutError: mk(e.HeldoutError), HeldoutRMS: mk(e.HeldoutRMS),
				RateUnit: "1/s", HeldoutShare: human.Percent(e.HeldoutShare), Warning: e.Warning, Extrapolation: e.Extrapolation}
			if i := len(d.Equations); i < len(m.Units) {
				row.RateUnit = RateUnit(m.Units[i])
			}
			for k, x := range e.Exponents {
				t := termRow{Name: poly.MonomialName(x, m.Vars()), Coef: mk(e.Coefficients[k])}
				if k < len(e.Terms) {
					tm := e.Terms[k]
					t.HasInterval = true
					t.IntLo, t.IntHi, t.KeptShare, t.Rarely = mk(tm.Interval[0]), mk(tm.Interval[1]), mk(tm.KeptShare), tm.RarelyKept
					t.KeptSharePercentage = fmt.Sprintf("%.0f%%", 100*tm.KeptShare)
				}
				row.Terms = append(row.Terms, t)
			}
			d.Equations = append(d.Equations, row)
		}
		d.Averaged = m.Average
		var at []string
		for _, h := range m.Held {
			at = append(at, fmt.Sprintf("%s = %s%s", h.Name, human.Sig(h.Value, 4), spaceUnit(h.Unit)))
		}
		d.HeldInputs = strings.Join(at, ", ")
	}
	if v := c.Validation; v != nil {
		d.ValRows = valRows(v, in.heldoutCount(v))
		for j, e := range v.DerivativeError {
			if j < len(c.States) {
				d.ValDerivErr = append(d.ValDerivErr, stateNum{c.States[j], num{human.Percent(e), strconv.FormatFloat(e, 'g', -1, 64)}})
			}
		}
	}
	for i := range in.Checks {
		r := &in.Checks[i]
		var fl []string
		for _, f := range r.Flags {
			fl = append(fl, FlagText(c, f, r))
		}
		d.Runs = append(d.Runs, runRow{r.Run, r.File, r.Samples, r.StartInside, SettledText(r), r.Flagged, strings.Join(fl, "; ")})
	}
	return d, nil
}

// planeKeys is the key of a phase-plane figure: the lines, the
// equilibrium, and one entry per kind of other equilibrium drawn. A region
// drawn for a certificate that is not certified (its V and level were
// found on the fit runs, the held-out check did not pass) is called what
// it is: checked, not certified. The equilibrium's entry says what m,
// the fitted model (nil when there is none), makes of c's equilibrium.
func planeKeys(f *figure, c *fit.Certificate, m *fit.Model) []keyItem {
	certified := c.Verdict == fit.Certified
	keys := []keyItem{
		{Label: "fit run (used to fit the model and V)", Colour: hex(inkFit), Width: 0.7},
		{Label: "held-out run (checked, not fitted)", Colour: hex(inkHeldout), Width: 1.3, Dash: "4 2"},
	}
	// the region's keys only for what is drawn
	if len(f.contour) > 0 {
		label := "boundary of the certified region, V = level"
		if !certified {
			label = "boundary of the region checked, V = level (not certified: see the finding)"
		}
		keys = append(keys, keyItem{Label: label, Colour: hex(inkRegion), Width: 2.4})
	}
	if f.box {
		keys = append(keys, keyItem{Label: "box bounding the region", Colour: hex(inkBox), Width: 0.8, Dash: "1 2.5"})
	}
	keys = append(keys, keyItem{Label: equilibriumLabel(c, m), Colour: hex(inkEquil), Mark: "square"})
	if f.restRegions {
		keys = append(keys, keyItem{Label: "boundary of another rest point's certified region (certificate-2.json, ...)", Colour: hex(inkRegion), Width: 1.6, Dash: "5 2"})
	}
	for _, k := range f.others {
		keys = append(keys, keyItem{Label: otherMarks[k].label, Colour: hex(inkOther), Mark: otherMarks[k].swatch})
	}
	return keys
}

// equilibriumLabel names c's equilibrium in the phase plane's key: the
// rest point the runs settle on when the fitted model m calls it stable
// and some run settles, else what the model calls it (an unstable focus,
// a saddle) and, when no run settles, that none does: a rejected system's
// runs spiral away from the mark, not into it.
func equilibriumLabel(c *fit.Certificate, m *fit.Model) string {
	if m == nil || len(m.Equilibria) == 0 {
		return "equilibrium of the certificate"
	}
	// the model's equilibrium nearest c's, in c's scaled coordinates
	// (the primary one unless --equilibrium picked another)
	class, best := "", math.Inf(1)
	for _, e := range m.Equilibria {
		if len(e.Point) != len(c.Equilibrium) {
			continue
		}
		d := 0.0
		for j, x := range e.Point {
			d += math.Pow((x-c.Equilibrium[j])/c.Scale[j], 2)
		}
		if d < best {
			class, best = e.Class, d
		}
	}
	if class == "" {
		return "equilibrium of the certificate"
	}
	if strings.HasPrefix(class, "stable") && m.SettledRuns > 0 {
		return "equilibrium the runs settle on"
	}
	words := map[string]string{
		"saddle":           "a saddle",
		"unstable node":    "an unstable node",
		"unstable focus":   "an unstable focus",
		"stable node":      "a stable node",
		"stable focus":     "a stable focus",
		"non-hyperbolic":   "an eigenvalue on the imaginary axis",
		"outside envelope": "outside the data's envelope",
	}[class]
	if words == "" {
		words = class
	}
	label := "fitted equilibrium (" + words
	if m.SettledRuns == 0 {
		label += "; no run settles on it"
	}
	return label + ")"
}

// closeUpShare is the largest share of the full view's width, along
// one axis at least, that a close-up may keep and still be drawn: one
// that keeps more of both axes (the model's equilibria at the edge of the
// data pull the view back out, or the runs barely reach beyond the box)
// shows little the full view does not. The demo's close-up keeps 57% of
// the height.
const closeUpShare = 2.0 / 3

// closer reports whether the close-up cf narrows the full view f to at
// most closeUpShare along some axis.
func closer(cf, f *figure) bool {
	w := func(r [2]float64) float64 { return r[1] - r[0] }
	return w(cf.xr) <= closeUpShare*w(f.xr) || w(cf.yr) <= closeUpShare*w(f.yr)
}

// valRows are the held-out figures as people read them, each with the
// certificate's exact value alongside. Shares come with their counts; a
// share of nothing says so instead of "0.0% of 0".
func valRows(v *fit.Validation, hc heldoutCount) []valRow {
	exact := func(x float64) string { return strconv.FormatFloat(x, 'g', -1, 64) }
	count := func(n int) string { return strconv.Itoa(n) }
	// with inputs, the checks are on the pieces of the held-out runs where
	// the inputs rest: the rows count pieces and say so
	u, held := "run", "held-out runs (not used to fit)"
	if hc.Pieces {
		u = "piece"
		held = fmt.Sprintf("held-out pieces where the inputs rest (not used to fit), from %s", human.Count(hc.Runs, "held-out run"))
	}
	decreased := int(math.Round(v.DecreaseFraction * float64(v.Pairs)))
	base, how := checkedRuns(v)
	stayed := int(math.Round(v.InvarianceFraction * float64(base)))
	inv := human.Share(stayed, base, u)
	settled := fmt.Sprintf("%d of %d", v.Settled, base)
	if v.CutShort > 0 {
		settled += fmt.Sprintf("; %d more cut short %s, not judged on settling", v.CutShort, cutWhere(v))
	}
	if base == 0 {
		inv = "no " + u + " entered the region"
		settled = inv
	}
	bound := boundPercent(v.ViolationBound)
	if v.ScenarioSamples == 0 && v.Pairs == 0 {
		bound = "none: no held-out sample lay inside a region" // not "at most 100%"
	}
	dec := human.Share(decreased, v.Pairs, "pair")
	if v.Pairs == 0 {
		dec = "no pair inside the region"
	}
	rows := []valRow{
		{"heldout_runs", held, exact(float64(v.HeldoutRuns)), count(v.HeldoutRuns)},
		{"pairs", "consecutive sample pairs inside the region", exact(float64(v.Pairs)), count(v.Pairs)},
		{"decrease_fraction", "of those, pairs where V did not rise beyond the noise tolerance", exact(v.DecreaseFraction), dec},
		{"runs_started_inside", "held-out " + u + "s that started inside the region", exact(float64(v.StartInside)), count(v.StartInside)},
		{"entered_runs", "held-out " + u + "s that entered the region (each checked from its first sample inside)", exact(float64(v.EnteredRuns)), count(v.EnteredRuns)},
		{"invariance_fraction", "of the " + u + "s that " + how + ", those that stayed inside", exact(v.InvarianceFraction), inv},
		{"runs_settled", "of the " + u + "s that " + how + ", those that settled", exact(float64(v.Settled)), settled},
		{"violation_bound", "scenario bound: chance that a new sample inside the region breaks the decrease, at most", exact(v.ViolationBound), bound},
		{"confidence", "confidence of that bound", exact(v.Confidence), human.Confidence(v.Confidence)},
		{"scenario_samples", "effectively independent samples the bound rests on", exact(float64(v.ScenarioSamples)),
			fmt.Sprintf("%d (at least %s s apart), %s", v.ScenarioSamples, human.Num(v.Decorrelation), human.Count(v.ScenarioViolations, "violation"))},
		{"runs_diverged", "held-out " + u + "s where the fitted model, simulated from the " + u + "'s first sample, ran away", exact(float64(v.Diverged)), count(v.Diverged)},
	}
	return rows
}

// zNames names the scaled coordinates z_name.
func zNames(states []string) []string {
	out := make([]string, len(states))
	for j, s := range states {
		out[j] = "z_" + s
	}
	return out
}
