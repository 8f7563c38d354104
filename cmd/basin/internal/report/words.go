package report

import (
	"fmt"
	"slices"

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

// SettledText is a run's entry in a table's settled column: yes, no,
// "another rest point" for a run that came to rest at another rest point (an
// unsettled flag's RestPoint), or, for a piece that ends where an input left rest (r.Cut), that it was
// cut short there, which input and when: "cut: drive on at 11.6 s".
func SettledText(r *validate.RunScreen) string {
	switch {
	case r.Settled:
		return "yes"
	case slices.ContainsFunc(r.Flags, func(f validate.Flag) bool { return f.RestPoint != nil }):
		return "another rest point"
	case r.Cut != nil && r.Cut.Input != "":
		return fmt.Sprintf("cut: %s on at %s s", r.Cut.Input, human.Num(r.Cut.Time))
	case r.Cut != nil:
		return fmt.Sprintf("cut: an input on at %s s", human.Num(r.Cut.Time))
	}
	return "no"
}
