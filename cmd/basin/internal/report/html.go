package report

import (
	_ "embed"
	"fmt"
	"html/template"
	"io"
	"strconv"
	"strings"

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

type pageData struct {
	Title, Caveat, CertCaveat string
	Verdict, Strength, Reason string
	VerdictClass              string
	Level                     num
	Found                     bool
	Equilibrium               []stateVal
	Extent                    []extentRow
	Limit                     string
	EnvelopeShare             num
	Plane                     *figure
	PlaneA, PlaneB            string
	PlaneSlice                string
	OtherOff                  int
	Clipped                   bool
	VFig                      *figure
	Keys                      []keyItem
	VKeys                     []keyItem
	Model                     bool
	Equations                 []eqRow
	VTerms                    []vTerm
	Val                       *fit.Validation
	ValRows                   []valRow
	Runs                      []runRow
	Settings                  []kv
	Noise                     num
	Tolerance                 num
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
	Value      num
	Text       string
}

type runRow struct {
	Run, File   string
	Samples     int
	StartInside bool
	Settled     bool
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
		VerdictClass: map[fit.Verdict]string{fit.Certified: "v-ok", fit.Rejected: "v-no", fit.Inconclusive: "v-open"}[c.Verdict],
		Level:        mk(c.Level), Found: c.Found,
		Limit:         c.Region.Limit,
		EnvelopeShare: mk(c.Region.EnvelopeShare),
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
		d.Equilibrium = append(d.Equilibrium, stateVal{s, c.Units[j], mk(c.Equilibrium[j]), mk(c.Scale[j])})
	}
	for j, e := range c.Region.Extent {
		if j < len(c.States) {
			d.Extent = append(d.Extent, extentRow{c.States[j], c.Units[j], mk(e[0]), mk(e[1])})
		}
	}
	for k, e := range c.V.Exponents {
		d.VTerms = append(d.VTerms, vTerm{poly.MonomialName(e, zNames(c.States)), mk(c.V.Coefficients[k])})
	}
	if len(c.States) >= 2 && pl[0] != pl[1] {
		f, err := planeFigure(in, pl)
		if err != nil {
			return nil, err
		}
		d.Plane, d.OtherOff, d.Clipped = f, f.offFigure, f.clipped
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
	d.Keys = []keyItem{
		{Label: "fit run (used to fit the model and V)", Colour: hex(inkFit), Width: 0.7},
		{Label: "held-out run (checked, not fitted)", Colour: hex(inkHeldout), Width: 1.3, Dash: "4 2"},
		{Label: "boundary of the certified region, V = level", Colour: hex(inkRegion), Width: 2.4},
		{Label: "box bounding the region", Colour: hex(inkBox), Width: 0.8, Dash: "1 2.5"},
		{Label: "equilibrium the runs settle on", Colour: hex(inkEquil), Mark: "square"},
		{Label: "other equilibrium of the fitted model", Colour: hex(inkOther), Mark: "triangle"},
	}
	d.VKeys = []keyItem{
		{Label: "held-out run, not flagged", Colour: hex(inkCalm), Width: 0.9},
		{Label: "held-out run, flagged", Colour: hex(inkFlagged), Width: 1.4, Dash: "5 2"},
		{Label: "level bounding the region", Colour: hex(inkLevel), Width: 1.6, Dash: "8 3"},
		{Label: "first time of a flag", Colour: hex(inkViolMark), Mark: "cross"},
	}
	if m := in.Model; m != nil {
		for _, e := range m.Equations {
			row := eqRow{State: e.State, HeldoutError: mk(e.HeldoutError)}
			for k, x := range e.Exponents {
				t := termRow{Name: poly.MonomialName(x, m.States), Coef: mk(e.Coefficients[k])}
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
	}
	if v := c.Validation; v != nil {
		d.ValRows = []valRow{
			{"heldout_runs", "held-out runs", mk(float64(v.HeldoutRuns)), ""},
			{"decrease_fraction", "share of held-out pairs inside the region where V fell", mk(v.DecreaseFraction), pct(v.DecreaseFraction)},
			{"invariance_fraction", "share of held-out runs starting inside that stayed inside", mk(v.InvarianceFraction), pct(v.InvarianceFraction)},
			{"violation_bound", "scenario bound on the chance a new sample violates the decrease", mk(v.ViolationBound), ""},
			{"confidence", "confidence of that bound", mk(v.Confidence), strconv.FormatFloat(v.Confidence, 'g', -1, 64)},
			{"pairs", "held-out sample pairs inside the region", mk(float64(v.Pairs)), ""},
			{"runs_started_inside", "held-out runs that started inside", mk(float64(v.StartInside)), ""},
			{"runs_settled", "held-out runs that settled", mk(float64(v.Settled)), ""},
			{"scenario_samples", "effectively independent samples used by the bound", mk(float64(v.ScenarioSamples)), ""},
			{"runs_diverged", "held-out runs that diverged", mk(float64(v.Diverged)), ""},
		}
	}
	for _, r := range in.Checks {
		var fl []string
		for _, f := range r.Flags {
			fl = append(fl, fmt.Sprintf("%s at %s s (excess %s)", f.Kind, g(f.Time), g(f.Excess)))
		}
		d.Runs = append(d.Runs, runRow{r.Run, r.File, r.Samples, r.StartInside, r.Settled, r.Flagged, strings.Join(fl, "; ")})
	}
	return d, nil
}

func pct(x float64) string { return fmt.Sprintf("%.1f%%", 100*x) }

// zNames names the scaled coordinates z_name.
func zNames(states []string) []string {
	out := make([]string, len(states))
	for j, s := range states {
		out[j] = "z_" + s
	}
	return out
}
