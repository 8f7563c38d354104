package report

import (
	"fmt"
	"io"
	"math"
	"slices"
	"strings"

	"basin.example/cmd/basin/internal/human"
	"basin.example/fit"
	"basin.example/fit/poly"
	"basin.example/validate"
)

// Summary writes the plain-text summary of in to w: verdict and reason,
// the equilibrium with units, the model's equations, V, the region's
// extent per state in original units and what limited it (with what to
// record to let it grow), the held-out figures, the scenario bound and
// the caveat. Numbers are rounded to what the data can tell: coordinates
// to a thousandth of their state's scale, coefficients to 4 significant
// digits. It returns an error wrapping [ErrInput] for an unusable Input,
// or the writer's error.
func Summary(w io.Writer, in *Input) error {
	if _, err := in.check(); err != nil {
		return err
	}
	c := in.Cert
	var b strings.Builder
	fmt.Fprintf(&b, "verdict: %s (strength %s)\n", c.Verdict, c.Strength)
	if c.Reason != "" {
		fmt.Fprintf(&b, "  %s\n", c.Reason)
	}
	if line := ConflictLine(c); line != "" {
		fmt.Fprintf(&b, "  %s\n", line)
	}
	fmt.Fprintf(&b, "equilibrium: %s\n", statePoint(c, c.Equilibrium))
	if line := UnstableRuns(in.Model, NearestEquilibrium(in.Model, c.Equilibrium)); line != "" {
		fmt.Fprintf(&b, "  %s\n", line)
	}
	if line := noEquilibriumLine(in.Model, c.Equilibrium); line != "" {
		fmt.Fprintf(&b, "  %s\n", line)
	}
	if m := in.Model; m != nil {
		b.WriteString("model (original units):\n")
		for i, e := range m.Equations {
			u := ""
			if i < len(m.Units) {
				u = m.Units[i]
			}
			fmt.Fprintf(&b, "  %s\n", Formula(e.State, u, e.Exponents, e.Coefficients, m.Vars()))
		}
		if len(m.Held) > 0 {
			var at []string
			for _, h := range m.Held {
				at = append(at, fmt.Sprintf("%s = %s%s", h.Name, human.Sig(h.Value, 4), spaceUnit(h.Unit)))
			}
			fmt.Fprintf(&b, "  at the constant input %s (it never changed in the data: folded into the equations, which hold there only)\n", strings.Join(at, ", "))
		}
		if m.Average >= 2 {
			fmt.Fprintf(&b, "  fitted on the runs averaged in blocks of %d samples (--average %d; check and screen average new logs the same way)\n", m.Average, m.Average)
		}
		if len(m.Inputs) > 0 && len(m.RestInput) == len(m.Inputs) {
			var at []string
			for k, in := range m.Inputs {
				at = append(at, fmt.Sprintf("%s = %s%s", in.Name, human.Sig(m.RestInput[k], 4), spaceUnit(in.Unit)))
			}
			fmt.Fprintf(&b, "certificate at rest input %s: the region and its checks hold with the inputs held there (samples with the inputs away from rest are left out of them)\n", strings.Join(at, ", "))
			if g := c.InputGain; g != nil && len(g.Bound) == len(m.States) {
				var per []string
				for j, v := range g.Bound {
					u := ""
					if j < len(m.Units) {
						u = m.Units[j]
					}
					per = append(per, fmt.Sprintf("%s %s%s", m.States[j], human.Sig(v, 3), spaceUnit(u)))
				}
				unit := "unit"
				if len(m.Inputs) == 1 && m.Inputs[0].Unit != "" {
					unit = m.Inputs[0].Unit
				}
				fmt.Fprintf(&b, "input gain: an input kept within U of rest leaves the states, in the long run, within %s of the equilibrium per %s of U (dV/dt <= -%s V + %s |u - u_rest|^2 on %d recorded samples; empirical)\n",
					strings.Join(per, ", "), unit, human.Sig(g.Lambda, 3), human.Sig(g.Gamma, 3), g.Samples)
			}
		}
		if len(m.Equilibria) > 1 {
			var others []string
			for _, e := range m.Equilibria[1:] {
				if len(e.Point) == len(c.States) {
					cls := e.Class
					if cls == "outside envelope" {
						cls = "outside the data's envelope"
					}
					others = append(others, cls+" at "+statePoint(c, e.Point))
				}
			}
			fmt.Fprintf(&b, "  other equilibria of the fitted model: %s\n", strings.Join(others, "; "))
		}
		equationErrors(&b, m)
	}
	if len(c.V.Exponents) > 0 {
		text, dropped := vText(c)
		fmt.Fprintf(&b, "V(z) = %s\n", text)
		if dropped > 0 {
			fmt.Fprintf(&b, "  (%s below 1e-4 of the largest coefficient left out; certificate.json has them all)\n", human.Count(dropped, "term"))
		}
		b.WriteString("  z = (x - equilibrium) / scale, scale:")
		for j, s := range c.States {
			if j > 0 {
				b.WriteString(",")
			}
			fmt.Fprintf(&b, " %s %s%s", s, human.Num(c.Scale[j]), spaceUnit(c.Units[j]))
		}
		b.WriteString("\n")
	}
	inside := c.Level > 0 && len(c.Region.Extent) == len(c.States)
	noV := !hasV(c)
	if noV {
		fmt.Fprintf(&b, "V: none found, so no region is claimed: %s\n", noVWhy(c))
	} else if inside {
		fmt.Fprintf(&b, "region {V <= %s}:\n", human.Num(c.Level))
		for j, s := range c.States {
			e := c.Region.Extent[j]
			fmt.Fprintf(&b, "  %s from %s to %s%s\n", s, human.Near(e[0], c.Scale[j]), human.Near(e[1], c.Scale[j]), spaceUnit(c.Units[j]))
		}
		if l := limitText(c); l != "" {
			fmt.Fprintf(&b, "  limited by: %s\n", l)
		}
	} else {
		b.WriteString("region: none certified\n")
	}
	if v := c.Validation; v != nil {
		fmt.Fprintf(&b, "held-out: %s\n", heldoutPieces(c, v, in.heldoutCount(v)))
		fmt.Fprintf(&b, "scenario bound: %s\n", CertBoundText(c, v))
	} else {
		b.WriteString("held-out: none, so the verdict cannot be certified: hold out runs (split holdout in a manifest) or record more runs\n")
	}
	if len(in.Checks) > 0 {
		fmt.Fprintf(&b, "checked runs: %s\n", checkedLine(c, in.Checks))
	}
	restSections(&b, in)
	fmt.Fprintf(&b, "caveat: %s\n", fit.Caveat)
	_, err := io.WriteString(w, b.String())
	return err
}

// checkedLine counts the held-out checks and the flagged ones, and says
// what the flags were and which of them bear on the claim: a flagged run
// that never entered the region (one settling at another rest point)
// lies outside it, and unsettled runs do not contradict a certificate of
// strength stable, which claims no settling. "flagged: 4" alone beside a
// certified verdict read as four failures.
func checkedLine(c *fit.Certificate, checks []validate.RunScreen) string {
	flagged, never, elsewhere := 0, 0, 0
	kinds := map[string]int{}
	var order []string
	for _, r := range checks {
		if !r.Flagged {
			continue
		}
		flagged++
		if !r.EverInside {
			never++
		}
		if slices.ContainsFunc(r.Flags, func(f validate.Flag) bool { return f.RestPoint != nil }) {
			elsewhere++
		}
		seen := map[string]bool{}
		for _, f := range r.Flags {
			k := string(f.Kind)
			if seen[k] {
				continue
			}
			seen[k] = true
			if kinds[k] == 0 {
				order = append(order, k)
			}
			kinds[k]++
		}
	}
	line := fmt.Sprintf("%d, flagged: %d", len(checks), flagged)
	if flagged == 0 {
		return line
	}
	var parts []string
	for _, k := range order {
		parts = append(parts, fmt.Sprintf("%d %s", kinds[k], k))
	}
	notes := []string{strings.Join(parts, ", ")}
	if elsewhere > 0 {
		notes = append(notes, fmt.Sprintf("%d settled at another rest point, outside this certificate's region", elsewhere))
	}
	if !hasV(c) {
		notes = append(notes, "no V, so no region: they contradict no claim")
	} else if never > 0 {
		they := "they lie"
		if never == 1 {
			they = "it lies"
		}
		notes = append(notes, fmt.Sprintf("%d of the flagged never entered the region, so %s outside its claim", never, they))
	}
	if c.Strength == fit.Stable && kinds[string(validate.FlagUnsettled)] > 0 {
		notes = append(notes, "strength stable claims no settling, so unsettled runs do not contradict it")
	}
	return line + " (" + strings.Join(notes, "; ") + ")"
}

// restHeader heads the rest-point sections: how many are listed, how
// many have a certificate and how many not, and the order, true to the
// list below it (the certificates first, in their files' order, then the
// rest points without one). The files are in falling order of the runs
// settling there, except that certificate.json may come first with fewer
// (--equilibrium picked it, or no fitted equilibrium lay near the rest
// point most runs settle at).
func restHeader(in *Input) string {
	with, without := len(in.Rests), len(in.Skipped)
	const falling = "in falling order of the runs settling there"
	order := "as the files are numbered"
	if with > 1 {
		down := true
		for i := 2; i < with; i++ {
			down = down && in.Rests[i].Runs <= in.Rests[i-1].Runs
		}
		switch {
		case down && in.Rests[1].Runs <= in.Rests[0].Runs:
			order = falling + " (as the files are numbered)"
		case down:
			order = in.Rests[0].File + " first, then the others " + falling + " (as the files are numbered)"
		}
	}
	var certs string
	switch {
	case with == 0:
		certs = "none with a certificate"
	case with == 1:
		certs = fmt.Sprintf("1 with a certificate (%s)", in.Rests[0].File)
	case without == 0:
		certs = "each with a certificate, " + order
	default:
		certs = fmt.Sprintf("%d with a certificate, %s", with, order)
	}
	if without == 0 {
		return fmt.Sprintf("%d, %s", with, certs)
	}
	skips := fmt.Sprintf("then %d without one", without)
	if without > 1 {
		skips += ", " + falling
	}
	if with == 0 {
		return fmt.Sprintf("%d, %s", without, certs)
	}
	return fmt.Sprintf("%d: %s; %s", with+without, certs, skips)
}

// hasV reports whether c holds a V (terms; a file from before "found"
// was written reads Found false, so the terms decide). A certificate
// without one claims no region.
func hasV(c *fit.Certificate) bool { return len(c.V.Exponents) > 0 }

// noVWhy says in a few words why c has no V, from its reason kind; the
// verdict's reason above it says more.
func noVWhy(c *fit.Certificate) string {
	switch c.ReasonKind {
	case fit.ReasonUnstableLinearisation:
		return "the fitted linearisation at the equilibrium is unstable (an eigenvalue with positive real part), so no V can show it stable"
	case fit.ReasonLinearMarginal:
		return "the fitted linearisation has an eigenvalue too near the imaginary axis to tell slow growth from light damping, so no V was fitted"
	case fit.ReasonLPInfeasible:
		return "no V of the degree tried falls along the fitted field on the fit runs"
	case fit.ReasonLPFailed:
		return "the LP solver failed on the certificate's LP"
	case fit.ReasonTooFewSamples:
		return "too few samples for the V family"
	case fit.ReasonOutsideData:
		return "the equilibrium lies outside the part of the state space the model is trusted in"
	case fit.ReasonTrustDegenerate:
		return "the model's trust region could not be computed (a collinear library over the samples)"
	case fit.ReasonEigenvalues:
		return "the Jacobian's eigenvalues could not be computed"
	case fit.ReasonLyapunovSingular:
		return "the Lyapunov equation of the linearisation has no unique solution"
	}
	if c.Contradicted {
		return "the data contradict stability of the equilibrium"
	}
	return "see the reason under the verdict"
}

// restSections writes a section per rest point when there are several.
func restSections(b *strings.Builder, in *Input) {
	if len(in.Rests) == 0 && len(in.Skipped) == 0 {
		return
	}
	fmt.Fprintf(b, "rest points: %s\n", restHeader(in))
	for _, r := range in.Rests {
		c := r.Cert
		fmt.Fprintf(b, "  %s: rest point %s\n", r.File, statePoint(c, c.Equilibrium))
		fmt.Fprintf(b, "    verdict: %s (strength %s)\n", c.Verdict, c.Strength)
		fmt.Fprintf(b, "    runs settling there: %d\n", r.Runs)
		if c.Level > 0 && len(c.Region.Extent) == len(c.States) {
			fmt.Fprintf(b, "    region {V <= %s}:", human.Num(c.Level))
			for j, s := range c.States {
				e := c.Region.Extent[j]
				if j > 0 {
					b.WriteString(",")
				}
				fmt.Fprintf(b, " %s from %s to %s%s", s, human.Near(e[0], c.Scale[j]), human.Near(e[1], c.Scale[j]), spaceUnit(c.Units[j]))
			}
			b.WriteString("\n")
		} else if !hasV(c) {
			fmt.Fprintf(b, "    V: none found, so no region is claimed: %s\n", noVWhy(c))
		} else {
			b.WriteString("    region: none certified\n")
		}
	}
	for _, s := range in.Skipped {
		fmt.Fprintf(b, "  no certificate: %s\n", s)
	}
}

// StatePoint writes x as "theta = 0.1 rad, omega = 0 rad/s", each
// coordinate to a thousandth of its state's scale in the certificate c.
func StatePoint(c *fit.Certificate, x []float64) string { return statePoint(c, x) }

// HeldoutText describes held-out figures v of the certificate c in one
// sentence: the runs, the share of pairs where V did not rise, and what
// the runs that started inside did (or what to record when none did).
func HeldoutText(c *fit.Certificate, v *fit.Validation) string { return heldoutText(c, v) }

// HeldoutRunsText is [HeldoutText] for checks made on the pieces of runs
// runs where the inputs rest (when pieces; v counts the pieces): "6 runs
// (18 pieces where the inputs rest); ...", the later counts in pieces.
func HeldoutRunsText(c *fit.Certificate, v *fit.Validation, runs int, pieces bool) string {
	return heldoutPieces(c, v, heldoutCount{Runs: runs, Pieces: pieces})
}

// BoundText states the scenario bound of v with its confidence and what
// it rests on.
func BoundText(v *fit.Validation) string { return boundText(v) }

// CertBoundText is [BoundText] for the held-out figures v of c: without
// a V there is no region and nothing to bound.
func CertBoundText(c *fit.Certificate, v *fit.Validation) string {
	if !hasV(c) {
		return "none: with no V there is no region, so nothing to bound"
	}
	return boundText(v)
}

// HasV reports whether c holds a V; a certificate without one claims no
// region.
func HasV(c *fit.Certificate) bool { return hasV(c) }

// LimitText says what stopped the certificate's region growing, where,
// and what would let it grow, in the states' units ("" when nothing did).
func LimitText(c *fit.Certificate) string { return limitText(c) }

// VText writes the certificate's V in z without the terms that are zero
// or below 1e-4 of the largest coefficient, and how many it left out.
func VText(c *fit.Certificate) (string, int) { return vText(c) }

func statePoint(c *fit.Certificate, x []float64) string {
	var b strings.Builder
	for j, s := range c.States {
		if j >= len(x) {
			break
		}
		if j > 0 {
			b.WriteString(", ")
		}
		fmt.Fprintf(&b, "%s = %s%s", s, human.Near(x[j], c.Scale[j]), spaceUnit(c.Units[j]))
	}
	return b.String()
}

// stateRanges writes the region's extent as "theta -0.18 to 0.16 rad,
// omega -1.6 to 1.7 rad/s".
func stateRanges(c *fit.Certificate) string {
	var parts []string
	for j, s := range c.States {
		if j >= len(c.Region.Extent) {
			break
		}
		e := c.Region.Extent[j]
		parts = append(parts, fmt.Sprintf("%s %s to %s%s", s, human.Near(e[0], c.Scale[j]), human.Near(e[1], c.Scale[j]), spaceUnit(c.Units[j])))
	}
	return strings.Join(parts, ", ")
}

// limitText says what stopped the region growing, where, and what would
// let it grow, in the states' units.
func limitText(c *fit.Certificate) string {
	r := c.Region
	at := ""
	if len(r.LimitPoint) == len(c.States) {
		at = " near " + statePoint(c, r.LimitPoint)
	}
	switch r.Limit {
	case "", "none":
		return ""
	case "envelope edge":
		where := " beyond that point"
		if at == "" {
			where = " outside " + stateRanges(c)
		}
		return "envelope edge: the region reached the edge of the states the runs cover" + at +
			"; to let it grow, add runs from larger kicks that start" + where
	case "trust region edge":
		where := " beyond that point"
		if at == "" {
			where = " outside " + stateRanges(c)
		}
		return "trust region edge: the model is uncertain beyond here (too few samples there to believe it)" + at +
			"; to let the region grow, record runs that start" + where
	case "model decrease fails":
		return "model decrease fails: the fitted model does not make V fall there, or is too uncertain to tell" + at +
			"; record runs that pass near that point"
	case "other equilibrium":
		return "other equilibrium: the region reached another equilibrium of the fitted model" + at +
			"; no region around this equilibrium can contain it"
	case "violated sample":
		run := ""
		if r.LimitRun != "" {
			run = " of run " + r.LimitRun
		}
		return "violated sample: a recorded sample" + run + " where V did not fall lies on the edge" + at +
			"; look at that run, or log longer or with less noise near that point"
	case "growth cap":
		return "growth cap: the region stopped at the most it may grow from its first size" + at +
			"; raise --growth if the data reach further"
	}
	return r.Limit + at
}

// heldoutText describes the held-out figures without contradicting the
// run table: settled counts are of the runs that started inside.
func heldoutText(c *fit.Certificate, v *fit.Validation) string {
	return heldoutPieces(c, v, heldoutCount{Runs: v.HeldoutRuns})
}

// heldoutCount is what the held-out figures count: Runs held-out runs,
// checked as themselves or, when Pieces is set, as the pieces of them
// where the inputs rest (v.HeldoutRuns of them).
type heldoutCount struct {
	Runs   int
	Pieces bool
}

// heldoutCount counts the held-out runs of in's data and says whether
// the checks were on pieces of them: a model with inputs is checked only
// where the inputs rest, so a run may give several pieces or none.
func (in *Input) heldoutCount(v *fit.Validation) heldoutCount {
	hc := heldoutCount{Runs: v.HeldoutRuns}
	if in.Data == nil || in.Heldout == nil {
		return hc
	}
	names := map[string]bool{}
	hc.Runs = 0
	for i, r := range in.Data.Runs {
		if in.Heldout[i] {
			hc.Runs++
			names[r.Name] = true
		}
	}
	hc.Pieces = hc.Runs != v.HeldoutRuns
	for _, r := range in.Checks {
		if !names[r.Run] {
			hc.Pieces = true // a piece of a run, named "run@t"
		}
	}
	return hc
}

// heldoutPieces is heldoutText with the runs counted by hc: "6 runs (18
// pieces where the inputs rest)", the later counts in pieces.
func heldoutPieces(c *fit.Certificate, v *fit.Validation, hc heldoutCount) string {
	var b strings.Builder
	unit := "run"
	b.WriteString(human.Count(hc.Runs, "run"))
	if hc.Pieces {
		unit = "piece"
		fmt.Fprintf(&b, " (%s where the inputs rest)", human.Count(v.HeldoutRuns, "piece"))
	}
	if !hasV(c) {
		b.WriteString("; with no V there is no region to check them against")
		return b.String()
	}
	if v.Pairs > 0 {
		fmt.Fprintf(&b, "; V did not rise beyond the noise tolerance on %s inside the region",
			human.Share(int(math.Round(v.DecreaseFraction*float64(v.Pairs))), v.Pairs, "sample pair"))
	} else {
		b.WriteString("; no held-out sample pair lay inside the region")
	}
	base, how := checkedRuns(v)
	switch {
	case base == 0 && len(c.Region.Extent) == len(c.States):
		fmt.Fprintf(&b, "; no %s entered the region, so none could show that it stays inside: record held-out runs that start or pass within %s", unit, stateRanges(c))
	case base == 0:
		fmt.Fprintf(&b, "; no %s entered the region", unit)
	default:
		stayed := int(math.Round(v.InvarianceFraction * float64(base)))
		fmt.Fprintf(&b, "; of the %s that %s, %d stayed inside and %d settled", human.Count(base, unit), how, stayed, v.Settled)
		if v.CutShort > 0 {
			they := "they"
			if v.CutShort == 1 {
				they = "it"
			}
			fmt.Fprintf(&b, ", %d cut short %s before %s could settle", v.CutShort, cutWhere(v), they)
		}
		if how == "entered the region" && v.StartInside > 0 {
			fmt.Fprintf(&b, " (%d started inside)", v.StartInside)
		}
	}
	return b.String()
}

// checkedRuns is how many held-out runs the invariance and settling
// figures are over, and how they qualified: the runs that entered the
// region (checked from their first sample inside), or, in certificates
// written before entered_runs existed, the runs that started inside.
func checkedRuns(v *fit.Validation) (int, string) {
	if v.EnteredRuns == 0 && v.StartInside > 0 {
		return v.StartInside, "started inside"
	}
	return v.EnteredRuns, "entered the region"
}

// boundText states the scenario bound as a probability with its
// confidence and what it rests on.
func boundText(v *fit.Validation) string {
	if v.ScenarioSamples == 0 && v.Pairs == 0 {
		return "none: no held-out sample lay inside a region, so there is nothing to bound"
	}
	s := fmt.Sprintf("with confidence %s, a new sample inside the region breaks the decrease with probability at most %s",
		human.Confidence(v.Confidence), boundPercent(v.ViolationBound))
	if v.ScenarioSamples > 0 {
		s += fmt.Sprintf(" (from %s, %s)", human.CountAs(v.ScenarioSamples, "effectively independent sample", "effectively independent samples"),
			human.Count(v.ScenarioViolations, "violation"))
	}
	return s
}

// boundPercent writes a probability as a percentage to 3 significant
// digits ("11.5%", "0.69%").
func boundPercent(p float64) string {
	if math.IsNaN(p) {
		return "n/a"
	}
	return human.Sig(100*p, 3) + "%"
}

// vText writes V without the terms that are zero, or below 1e-4 of the
// largest coefficient (round-off of the LP), and says how many it left out.
func vText(c *fit.Certificate) (string, int) {
	big := 0.0
	for _, a := range c.V.Coefficients {
		big = math.Max(big, math.Abs(a))
	}
	var exps [][]int
	var coefs []float64
	for k, a := range c.V.Coefficients {
		if math.Abs(a) <= 1e-4*big {
			continue
		}
		exps, coefs = append(exps, c.V.Exponents[k]), append(coefs, a)
	}
	return polyText(exps, coefs, zNames(c.States)), len(c.V.Coefficients) - len(coefs)
}

// Formula writes one fitted equation the one way basin writes it
// everywhere: "d(theta)/dt [rad/s] = 0.9991 omega - 0.1 theta^3", with the
// rate's unit from the state's unit and 4 significant digits.
func Formula(state, unit string, exps [][]int, coefs []float64, names []string) string {
	return "d(" + state + ")/dt [" + RateUnit(unit) + "] = " + polyText(exps, coefs, names)
}

// RateUnit is the unit of d(x)/dt for a state in unit u: "rad" gives
// "rad/s", "rad/s" gives "rad/s^2", no unit gives "1/s".
func RateUnit(u string) string {
	switch {
	case u == "":
		return "1/s"
	case strings.HasSuffix(u, "/s"):
		return strings.TrimSuffix(u, "/s") + "/s^2"
	}
	return u + "/s"
}

func spaceUnit(u string) string {
	if u == "" {
		return ""
	}
	return " " + u
}

// polyText writes sum c_k m_k as "a x + b x^2 y - c", 4 significant digits.
func polyText(exps [][]int, coefs []float64, names []string) string {
	if len(exps) == 0 {
		return "0"
	}
	var b strings.Builder
	for k, e := range exps {
		c := coefs[k]
		m := poly.MonomialName(e, names)
		switch {
		case k == 0 && c < 0:
			b.WriteString("-")
		case k > 0 && c < 0:
			b.WriteString(" - ")
		case k > 0:
			b.WriteString(" + ")
		}
		a := c
		if a < 0 {
			a = -a
		}
		if m == "1" {
			b.WriteString(human.Num(a))
		} else {
			fmt.Fprintf(&b, "%s %s", human.Num(a), m)
		}
	}
	return b.String()
}

// equationErrors writes each equation's held-out error (the window-mean
// slope on held-out runs) in the state's unit per second and as a share
// of its spread, the derivative method, and any equation's warning.
func equationErrors(b *strings.Builder, m *fit.Model) {
	fmt.Fprintf(b, "held-out error per equation (derivative %s):", m.Derivative)
	for i, e := range m.Equations {
		if i > 0 {
			b.WriteString(",")
		}
		u := "1/s"
		if i < len(m.Units) {
			u = RateUnit(m.Units[i])
		}
		fmt.Fprintf(b, " d(%s)/dt %s %s (%s of its spread)", e.State, human.Num(e.HeldoutRMS), u, human.Percent(e.HeldoutShare))
	}
	b.WriteString("\n")
	if len(m.NoiseRange) == len(m.States) {
		b.WriteString("noise per run (lowest to highest estimate):")
		for j, s := range m.States {
			if j > 0 {
				b.WriteString(",")
			}
			u := ""
			if j < len(m.Units) {
				u = spaceUnit(m.Units[j])
			}
			fmt.Fprintf(b, " %s %s to %s%s", s, human.Num(m.NoiseRange[j][0]), human.Num(m.NoiseRange[j][1]), u)
		}
		b.WriteString("\n")
	}
	for _, e := range m.Equations {
		if e.Warning != "" {
			fmt.Fprintf(b, "  warning: d(%s)/dt: %s\n", e.State, e.Warning)
		}
		if e.Extrapolation != "" {
			fmt.Fprintf(b, "  note: d(%s)/dt: %s\n", e.State, e.Extrapolation)
		}
	}
}

// ConflictLine says in one line what the certificate LP's conflict
// (Certificate.LPConflict) proves and where; empty when there is none.
func ConflictLine(c *fit.Certificate) string {
	lc := c.LPConflict
	if lc == nil || len(lc.Families) == 0 {
		return ""
	}
	who := "the fitted field contradicts"
	data := 0.0
	var parts []string
	for i, f := range lc.Families {
		if f.Family == "data decrease" {
			data += f.Share
		}
		if i < 3 {
			parts = append(parts, fmt.Sprintf("%s %s%%", f.Family, human.Sig(100*f.Share, 2)))
		}
	}
	if data >= 0.5 {
		who = "the recorded runs contradict"
	}
	line := fmt.Sprintf("LP conflict: %s every V of degree %d: %d rows carry the contradiction (%s), %d of them at recorded samples",
		who, lc.VDegree, lc.Rows, strings.Join(parts, ", "), lc.Samples)
	for _, r := range lc.Strongest {
		if len(r.Point) != len(c.States) {
			continue
		}
		line += "; the strongest near " + statePoint(c, r.Point)
		if r.Sample != nil {
			line += fmt.Sprintf(" (run %s, sample %d)", r.Run, *r.Sample)
		}
		break
	}
	return line + "."
}

// noEquilibriumLine says, when the fitted model has no equilibrium in the
// data's box (Model.Equilibria empty), that the point above is only where
// the runs settle, and names the state whose rate is farthest from zero
// there (as a share of its spread over the box): a state that drifts
// steadily (a temperature that keeps rising) has no rest point, and the
// certificate cannot claim one. Empty otherwise.
func noEquilibriumLine(m *fit.Model, at []float64) string {
	// stillShare: a rate at the settle point of at most a thousandth of
	// its state's spread per second is no drift (over a 100 s log it
	// moves the state a tenth of its spread at most)
	const stillShare = 1e-3
	if m == nil || len(m.Equilibria) > 0 || len(at) != len(m.States) {
		return ""
	}
	f := fit.NewFieldEvaluator(m).EvalTo(make([]float64, len(m.States)), at)
	worst, share := -1, 0.0
	for j, v := range f {
		if j >= len(m.Spread) || !(m.Spread[j] > 0) {
			continue
		}
		if s := math.Abs(v) / m.Spread[j]; s > share || worst < 0 {
			worst, share = j, s
		}
	}
	if worst < 0 {
		return "the fitted model has no equilibrium in the data's box: the point above is where the runs settle, not a rest point of the model"
	}
	if share <= stillShare {
		// the field vanishes where the runs settle, yet no isolated
		// equilibrium was found: a line (or plane) of them, as a column
		// with no dynamics of its own gives (a drive left among the
		// states: its equation is zero)
		return "the fitted model has no isolated equilibrium in the data's box: its field vanishes where the runs settle (the point above) along a line or more of rest points, as when a column with no dynamics of its own (a drive, a setpoint) is read as a state; name such a column with --inputs"
	}
	u := ""
	if worst < len(m.Units) && m.Units[worst] != "" {
		u = " " + m.Units[worst] + "/s"
	}
	return fmt.Sprintf("the fitted model has no equilibrium in the data's box: the point above is where the runs settle, and d(%s)/dt is %s%s there; a state that drifts has no rest point (leave it out with --states, or log it at rest)",
		m.States[worst], human.Sig(f[worst], 3), u)
}
