package report

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"basin.example/cmd/basin/internal/human"
	"basin.example/fit"
	"basin.example/validate"
)

// FlagText says what a screening flag found on a run, in words a test
// engineer reads without the documentation: when, and how much in terms
// of the region's own level. V has no unit; the level is where the
// region ends. r, when not nil, gives the run's own figures.
func FlagText(c *fit.Certificate, f validate.Flag, r *validate.RunScreen) string {
	at := human.Num(f.Time) + " s"
	level := human.Num(c.Level)
	switch f.Kind {
	case validate.FlagRises:
		return fmt.Sprintf("V rose at %s, by %s more than the noise tolerance (%s), inside the region", at, human.Num(f.Excess), human.Num(c.Tolerance))
	case validate.FlagLeaves:
		if f.Excess <= 0 {
			return fmt.Sprintf("left the region's box at %s", at)
		}
		return fmt.Sprintf("left the region at %s: V reached %s, beyond the region's edge at V = %s", at, human.Num(c.Level+f.Excess), level)
	case validate.FlagUnsettled:
		if f.RestPoint != nil {
			// came to rest outside the region: another rest point
			where := statePoint(c, f.RestPoint)
			if f.RestName != "" {
				where += " (" + f.RestName + ")"
			}
			return fmt.Sprintf("settled at another rest point by its end at %s, at %s: outside this certificate's region, so outside its claim", at, where)
		}
		if !c.Found {
			// no V: its value and the level (both 0) say nothing
			return fmt.Sprintf("had not settled by its end at %s", at)
		}
		if r != nil {
			return fmt.Sprintf("had not settled by its end at %s: V over its last samples was %s (region's edge at V = %s)", at, human.Num(r.VEnd), level)
		}
		return fmt.Sprintf("had not settled by its end at %s: V over its last samples was %s above settled", at, human.Num(f.Excess))
	}
	return fmt.Sprintf("%s at %s (excess %s in V)", f.Kind, at, human.Num(f.Excess))
}

// UnstableRuns says what the runs do at the fitted equilibrium e of m
// when its Jacobian has an eigenvalue with positive real part, and ""
// when none has: such an equilibrium is never where runs settle (an
// eigenvalue with positive real part makes runs near it leave it
// [Strogatz1994] §5.2, §6.3). It gives the largest real part, then how
// many of m's fit runs settle within the data and where (the median of
// their settle points), or that none does.
func UnstableRuns(m *fit.Model, e *fit.Equilibrium) string {
	if m == nil || e == nil {
		return ""
	}
	top, any := 0.0, false
	for _, l := range e.Eigenvalues {
		if l[0] > 0 && (!any || l[0] > top) {
			top, any = l[0], true
		}
	}
	if !any {
		return ""
	}
	var b strings.Builder
	if e.Class == fit.ClassNonHyperbolic {
		fmt.Fprintf(&b, "its linearisation has an eigenvalue on the imaginary axis (largest real part %s 1/s), so it does not show runs settling there", signedSig(top))
	} else {
		fmt.Fprintf(&b, "runs near it leave it (an eigenvalue with real part %s 1/s)", signedSig(top))
	}
	switch {
	case m.Runs == 0:
	case m.SettledRuns == 0:
		fmt.Fprintf(&b, "; none of the %s settles within the data: they end still moving (circling, drifting or on their way elsewhere)", human.Count(m.Runs, "fit run"))
	case len(stableEquilibria(m)) > 1:
		// runs that settle on two wells: the median of their settle
		// points lies between them and means nothing
		var at []string
		for _, q := range stableEquilibria(m) {
			at = append(at, modelPoint(m, q.Point))
		}
		fmt.Fprintf(&b, "; %d of the %s settle within the data, where the model has stable equilibria at %s", m.SettledRuns, human.Count(m.Runs, "fit run"), strings.Join(at, "; "))
	case len(m.Settle) == len(m.States):
		fmt.Fprintf(&b, "; %d of the %s settle within the data, the median of their settle points at %s", m.SettledRuns, human.Count(m.Runs, "fit run"), modelPoint(m, m.Settle))
	default:
		fmt.Fprintf(&b, "; %d of the %s settle within the data", m.SettledRuns, human.Count(m.Runs, "fit run"))
	}
	return b.String()
}

// stableEquilibria returns m's equilibria whose class is a stable one.
func stableEquilibria(m *fit.Model) []*fit.Equilibrium {
	var out []*fit.Equilibrium
	for i := range m.Equilibria {
		if strings.HasPrefix(m.Equilibria[i].Class, "stable") {
			out = append(out, &m.Equilibria[i])
		}
	}
	return out
}

// NearestEquilibrium returns the equilibrium of m nearest x in m's
// spreads (nil when m has none of x's length), by [fit.Model.Nearest].
func NearestEquilibrium(m *fit.Model, x []float64) *fit.Equilibrium {
	if m == nil {
		return nil
	}
	if k, _ := m.Nearest(x); k >= 0 {
		return &m.Equilibria[k]
	}
	return nil
}

// modelPoint writes x as "x = 0.1 rad, y = 0", each coordinate to a
// thousandth of its state's spread in m.
func modelPoint(m *fit.Model, x []float64) string {
	s := make([]string, 0, len(x))
	for j, v := range x {
		if j >= len(m.States) {
			break
		}
		sp := math.NaN()
		if j < len(m.Spread) {
			sp = m.Spread[j]
		}
		u := ""
		if j < len(m.Units) {
			u = spaceUnit(m.Units[j])
		}
		s = append(s, m.States[j]+" = "+human.Near(v, sp)+u)
	}
	return strings.Join(s, ", ")
}

// signedSig writes x to 3 significant digits with its sign ("+0.2").
func signedSig(x float64) string {
	if x < 0 {
		return human.Sig(x, 3)
	}
	return "+" + human.Sig(x, 3)
}

// FirstEquilibrium says what the first of m's equilibria is, for the
// heading of a list of them: where the runs settle only when every
// eigenvalue there has a negative real part and some run settles, else
// the one nearest where the runs end (the median of their settle points,
// or of their last samples when none settles).
func FirstEquilibrium(m *fit.Model) string {
	if m == nil || len(m.Equilibria) == 0 {
		return "none"
	}
	stable := len(m.Equilibria[0].Eigenvalues) > 0
	for _, l := range m.Equilibria[0].Eigenvalues {
		stable = stable && l[0] < 0
	}
	switch {
	case stable && m.SettledRuns > 0:
		return "the first is where the runs settle"
	case m.SettledRuns > 0:
		return "the first is the one nearest where the runs settle"
	}
	return "the first is the one nearest where the runs end; none settles"
}

// SettledText is a run's entry in a table's settled column: yes, no,
// "another rest point" for a run that came to rest at another rest point
// (an unsettled flag's RestPoint), or, for a piece cut short before its
// recording ends (r.Cut), where and why: "cut: jump in v at 6.03 s" (a
// one-sample jump split the recording), "cut: gap from 7.99 s to 9 s"
// (the log stops, and resumes), "cut: drive on at 11.6 s" (an input
// left rest).
func SettledText(r *validate.RunScreen) string {
	switch {
	case r.Settled:
		return "yes"
	case slices.ContainsFunc(r.Flags, func(f validate.Flag) bool { return f.RestPoint != nil }):
		return "another rest point"
	case r.Cut == nil:
		return "no"
	case r.Cut.Reason == validate.CutJump && r.Cut.State != "":
		return fmt.Sprintf("cut: jump in %s at %s s", r.Cut.State, human.Num(r.Cut.Time))
	case r.Cut.Reason == validate.CutJump:
		return fmt.Sprintf("cut: jump at %s s", human.Num(r.Cut.Time))
	case r.Cut.Reason == validate.CutGap && r.Cut.Until > r.Cut.Time:
		return fmt.Sprintf("cut: gap from %s s to %s s", human.Num(r.Cut.Time), human.Num(r.Cut.Until))
	case r.Cut.Reason == validate.CutGap:
		return fmt.Sprintf("cut: gap after %s s", human.Num(r.Cut.Time))
	case r.Cut.Input != "":
		return fmt.Sprintf("cut: %s on at %s s", r.Cut.Input, human.Num(r.Cut.Time))
	}
	return fmt.Sprintf("cut: an input on at %s s", human.Num(r.Cut.Time))
}

// cutWhere says where the held-out runs that v counts as cut short
// (CutShort) were cut, for the held-out lines: "at a one-sample jump"
// (a hit), or, for several reasons, "(2 at a one-sample jump, 1 at a
// gap in the log)". A certificate written before CutShortBy counted only
// pieces cut where an input left rest.
func cutWhere(v *fit.Validation) string {
	words := []struct{ reason, where string }{
		{validate.CutJump, "at a one-sample jump"},
		{validate.CutGap, "at a gap in the log"},
		{validate.CutInput, "where an input left rest"},
	}
	var parts []string
	for _, w := range words {
		if n := v.CutShortBy[w.reason]; n > 0 {
			if n == v.CutShort {
				return w.where
			}
			parts = append(parts, fmt.Sprintf("%d %s", n, w.where))
		}
	}
	if len(parts) == 0 {
		return "where an input left rest"
	}
	return "(" + strings.Join(parts, ", ") + ")"
}
