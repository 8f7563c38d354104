package export

import (
	"fmt"
	"strconv"
	"strings"
	"unicode/utf8"

	"basin.example/fit"
)

func writeGo(b *strings.Builder, cert *fit.Certificate, pkg string) {
	n := len(cert.States)
	for _, l := range headerLines(cert) {
		b.WriteString(strings.TrimRight("// "+l, " ") + "\n")
	}
	fmt.Fprintf(b, "package %s\n\n", pkg)
	fmt.Fprintf(b, "// N is the number of states.\nconst N = %d\n\n", n)
	b.WriteString("// States and Units name the entries of x, in order.\nvar (\n\tStates = [N]string{")
	for j, s := range cert.States {
		if j > 0 {
			b.WriteString(", ")
		}
		b.WriteString(strconv.QuoteToASCII(s))
	}
	b.WriteString("}\n\tUnits  = [N]string{")
	for j, s := range cert.Units {
		if j > 0 {
			b.WriteString(", ")
		}
		b.WriteString(strconv.QuoteToASCII(s))
	}
	b.WriteString("}\n)\n\n")
	fmt.Fprintf(b, "// Level bounds V on the region.\nconst Level = %s\n\n", num(cert.Level))
	b.WriteString("// V returns the Lyapunov function at x (original units).\nfunc V(x *[N]float64) float64 {\n")
	for j := range n {
		fmt.Fprintf(b, "\tz%d := (x[%d] - %s) / %s\n", j, j, num(cert.Equilibrium[j]), num(cert.Scale[j]))
	}
	used := usedVars(cert)
	for j := range n {
		if !used[j] {
			fmt.Fprintf(b, "\t_ = z%d\n", j)
		}
	}
	b.WriteString("\tv := 0.0\n\tvar t float64\n")
	writeTerms(b, cert, "\tt = %s\n", "\tt *= %s\n", "\tv += t\n")
	b.WriteString("\treturn v\n}\n\n")
	b.WriteString("// Inside reports whether x (original units) is in the region:\n// V(x) <= Level")
	if cert.Box != nil {
		b.WriteString(" and x inside the box")
	}
	b.WriteString(". It is false when V is NaN.\nfunc Inside(x *[N]float64) bool {\n")
	b.WriteString("\tif v := V(x); !(v <= Level) {\n\t\treturn false\n\t}\n")
	for j, bx := range cert.Box {
		fmt.Fprintf(b, "\tif x[%d] < %s || x[%d] > %s {\n\t\treturn false\n\t}\n", j, num(bx[0]), j, num(bx[1]))
	}
	b.WriteString("\treturn true\n}\n")
}

func writeC(b *strings.Builder, cert *fit.Certificate, p string) {
	n := len(cert.States)
	b.WriteString("/*\n")
	for _, l := range headerLines(cert) {
		b.WriteString(strings.TrimRight(" * "+l, " ") + "\n")
	}
	b.WriteString(" *\n * Compile without -ffast-math or FMA contraction (-ffp-contract=off) for\n * results identical to basin's.\n */\n\n")
	up := strings.ToUpper(p)
	fmt.Fprintf(b, "#define %sN %d\n\n", up, n)
	fmt.Fprintf(b, "const char *const %sstates[%sN] = {", p, up)
	for j, s := range cert.States {
		if j > 0 {
			b.WriteString(", ")
		}
		b.WriteString(cQuote(s))
	}
	fmt.Fprintf(b, "};\nconst char *const %sunits[%sN] = {", p, up)
	for j, s := range cert.Units {
		if j > 0 {
			b.WriteString(", ")
		}
		b.WriteString(cQuote(s))
	}
	b.WriteString("};\n")
	fmt.Fprintf(b, "const double %slevel = %s;\n\n", p, num(cert.Level))
	fmt.Fprintf(b, "/* V at x (original units, %sN entries in the order of %sstates). */\n", up, p)
	fmt.Fprintf(b, "double %sv(const double x[%sN])\n{\n", p, up)
	used := usedVars(cert)
	for j := range n {
		fmt.Fprintf(b, "\tconst double z%d = (x[%d] - %s) / %s;\n", j, j, num(cert.Equilibrium[j]), num(cert.Scale[j]))
		if !used[j] {
			fmt.Fprintf(b, "\t(void)z%d;\n", j)
		}
	}
	b.WriteString("\tdouble v = 0.0, t;\n")
	writeTerms(b, cert, "\tt = %s;\n", "\tt *= %s;\n", "\tv += t;\n")
	b.WriteString("\treturn v;\n}\n\n")
	fmt.Fprintf(b, "/* 1 when x is in the region (V <= level%s), else 0; 0 when V is NaN. */\n",
		map[bool]string{true: " and inside the box", false: ""}[cert.Box != nil])
	fmt.Fprintf(b, "int %sinside(const double x[%sN])\n{\n", p, up)
	fmt.Fprintf(b, "\tconst double v = %sv(x);\n\tif (!(v <= %slevel))\n\t\treturn 0;\n", p, p)
	for j, bx := range cert.Box {
		fmt.Fprintf(b, "\tif (x[%d] < %s || x[%d] > %s)\n\t\treturn 0;\n", j, num(bx[0]), j, num(bx[1]))
	}
	b.WriteString("\treturn 1;\n}\n")
}

func writePython(b *strings.Builder, cert *fit.Certificate) {
	n := len(cert.States)
	for _, l := range headerLines(cert) {
		b.WriteString(strings.TrimRight("# "+l, " ") + "\n")
	}
	b.WriteString("\n")
	fmt.Fprintf(b, "N = %d\n", n)
	b.WriteString("STATES = (")
	for _, s := range cert.States {
		b.WriteString(pyQuote(s) + ", ")
	}
	b.WriteString(")\nUNITS = (")
	for _, s := range cert.Units {
		b.WriteString(pyQuote(s) + ", ")
	}
	b.WriteString(")\n")
	fmt.Fprintf(b, "LEVEL = %s\n", num(cert.Level))
	if cert.Box != nil {
		b.WriteString("BOX = (")
		for _, bx := range cert.Box {
			fmt.Fprintf(b, "(%s, %s), ", num(bx[0]), num(bx[1]))
		}
		b.WriteString(")\n")
	} else {
		b.WriteString("BOX = None\n")
	}
	b.WriteString("\ndef v(x):\n    \"\"\"V at x, a sequence of N floats in original units (order of STATES).\"\"\"\n")
	for j := range n {
		fmt.Fprintf(b, "    z%d = (float(x[%d]) - %s) / %s\n", j, j, num(cert.Equilibrium[j]), num(cert.Scale[j]))
	}
	b.WriteString("    s = 0.0\n")
	writeTerms(b, cert, "    t = %s\n", "    t *= %s\n", "    s += t\n")
	b.WriteString("    return s\n\n")
	b.WriteString("def inside(x):\n    \"\"\"True when x is in the region: V(x) <= LEVEL and x inside BOX.\"\"\"\n")
	b.WriteString("    if not (v(x) <= LEVEL):\n        return False\n")
	if cert.Box != nil {
		b.WriteString("    for j, (lo, hi) in enumerate(BOX):\n        if x[j] < lo or x[j] > hi:\n            return False\n")
	}
	b.WriteString("    return True\n")
}

// writeTerms writes V's evaluation term by term in basin's order of
// operations (see terms), in one language's syntax: per term, set with
// the coefficient, mul once per factor, then add.
func writeTerms(b *strings.Builder, cert *fit.Certificate, set, mul, add string) {
	for k, fs := range terms(cert, func(j int) string { return fmt.Sprintf("z%d", j) }) {
		fmt.Fprintf(b, set, num(cert.V.Coefficients[k]))
		for _, f := range fs {
			fmt.Fprintf(b, mul, f)
		}
		b.WriteString(add)
	}
}

// usedVars says which states appear in some V term.
func usedVars(cert *fit.Certificate) []bool {
	u := make([]bool, len(cert.States))
	for _, e := range cert.V.Exponents {
		for j, q := range e {
			if q > 0 {
				u[j] = true
			}
		}
	}
	return u
}

// cQuote writes s as a C string literal: printable ASCII as is (with \\
// and \" escaped), every other byte as a three-digit octal escape (which,
// unlike \x, cannot swallow the next character).
func cQuote(s string) string {
	var b strings.Builder
	b.WriteByte('"')
	for i := 0; i < len(s); i++ {
		c := s[i]
		switch {
		case c == '\\' || c == '"':
			b.WriteByte('\\')
			b.WriteByte(c)
		case c == '?': // no trigraphs
			b.WriteString(`\?`)
		case c >= 0x20 && c < 0x7f:
			b.WriteByte(c)
		default:
			fmt.Fprintf(&b, "\\%03o", c)
		}
	}
	b.WriteByte('"')
	return b.String()
}

// pyQuote writes s as a Python 3 string literal using only ASCII.
func pyQuote(s string) string {
	var b strings.Builder
	b.WriteByte('"')
	for _, r := range s {
		switch {
		case r == '\\' || r == '"':
			b.WriteByte('\\')
			b.WriteRune(r)
		case r >= 0x20 && r < 0x7f:
			b.WriteRune(r)
		case r == utf8.RuneError:
			b.WriteString(`\ufffd`)
		case r < 0x10000:
			fmt.Fprintf(&b, "\\u%04x", r)
		default:
			fmt.Fprintf(&b, "\\U%08x", r)
		}
	}
	b.WriteByte('"')
	return b.String()
}
