package report

import (
	"fmt"
	"io"
	"strconv"
	"strings"

	"basin.example/fit"
	"basin.example/fit/poly"
)

// Summary writes the plain-text summary of in to w: verdict and reason,
// the equilibrium with units, the model's equations, V, the region's
// extent per state in original units, the held-out figures, the scenario
// bound and the caveat. It returns an error wrapping [ErrInput] for an
// unusable Input, or the writer's error.
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
	b.WriteString("equilibrium:")
	for j, s := range c.States {
		if j > 0 {
			b.WriteString(",")
		}
		fmt.Fprintf(&b, " %s = %s%s", s, g(c.Equilibrium[j]), spaceUnit(c.Units[j]))
	}
	b.WriteString("\n")
	if m := in.Model; m != nil {
		b.WriteString("model (original units):\n")
		for _, e := range m.Equations {
			fmt.Fprintf(&b, "  d%s/dt = %s\n", e.State, polyText(e.Exponents, e.Coefficients, m.States))
		}
		if len(m.Equilibria) > 1 {
			fmt.Fprintf(&b, "  other equilibria found: %d\n", len(m.Equilibria)-1)
		}
	}
	if len(c.V.Exponents) > 0 {
		fmt.Fprintf(&b, "V(z) = %s\n", polyText(c.V.Exponents, c.V.Coefficients, zNames(c.States)))
		b.WriteString("  z = (x - equilibrium) / scale, scale:")
		for j, s := range c.States {
			if j > 0 {
				b.WriteString(",")
			}
			fmt.Fprintf(&b, " %s %s%s", s, g(c.Scale[j]), spaceUnit(c.Units[j]))
		}
		b.WriteString("\n")
	}
	if c.Level > 0 && len(c.Region.Extent) == len(c.States) {
		fmt.Fprintf(&b, "region {V <= %s}:\n", g(c.Level))
		for j, s := range c.States {
			e := c.Region.Extent[j]
			fmt.Fprintf(&b, "  %s from %s to %s%s\n", s, g(e[0]), g(e[1]), spaceUnit(c.Units[j]))
		}
		if c.Region.Limit != "" {
			fmt.Fprintf(&b, "  limited by: %s\n", c.Region.Limit)
		}
	} else {
		b.WriteString("region: none certified\n")
	}
	if v := c.Validation; v != nil {
		fmt.Fprintf(&b, "held-out: %d runs; V fell on %s of %d pairs inside; %s of runs starting inside stayed inside; %d settled\n",
			v.HeldoutRuns, pct(v.DecreaseFraction), v.Pairs, pct(v.InvarianceFraction), v.Settled)
		fmt.Fprintf(&b, "scenario bound: a new sample violates the decrease with probability at most %s, at confidence %s\n",
			g(v.ViolationBound), strconv.FormatFloat(v.Confidence, 'g', -1, 64))
	} else {
		b.WriteString("held-out: none (so not certified)\n")
	}
	flagged := 0
	for _, r := range in.Checks {
		if r.Flagged {
			flagged++
		}
	}
	if len(in.Checks) > 0 {
		fmt.Fprintf(&b, "checked runs: %d, flagged: %d\n", len(in.Checks), flagged)
	}
	fmt.Fprintf(&b, "caveat: %s\n", fit.Caveat)
	_, err := io.WriteString(w, b.String())
	return err
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
			b.WriteString(g(a))
		} else {
			fmt.Fprintf(&b, "%s %s", g(a), m)
		}
	}
	return b.String()
}
