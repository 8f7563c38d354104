// Package export writes a certificate's Lyapunov function V as a small,
// dependency-free function in Go, C or Python, for a monitor on the rig,
// or the whole screening rule of basin screen as one standard-SQL query
// ([SQL]) for screening logs where they are stored.
//
// The SQL query reads a table of samples (columns run, t and one per
// state) and returns one row per run with the flags basin screen gives:
// it evaluates V per row, carries each run's state with the window
// functions LAG, ROW_NUMBER, COUNT and MAX over PARTITION BY run ORDER BY
// t (ISO SQL:2003), and aggregates per run with GROUP BY. It uses only
// CAST, CASE, arithmetic, LN, AVG, SUM, MIN and MAX, so it runs unchanged
// on PostgreSQL, SQLite (3.35 or later with its math functions) and
// engines that follow the standard.
//
// The generated code has the scaling built in: it takes a state vector in
// the logs' original units and order, computes z_j = (x_j - e_j)/s_j, and
// evaluates V(z) with the same sequence of floating-point operations as
// [poly.Poly.Eval] after [fit.Certificate.Z], so on an IEEE 754 machine
// without fused multiply-add contraction it returns the very value basin
// computes. It also tests membership of the certified region: V <= level
// and x inside the certificate's box, as [fit.Certificate.Inside] does.
//
// Every constant is printed with strconv's 'g' format at the shortest
// precision that round-trips, so no digit is lost in the source. User
// supplied names (states, units) appear only inside quoted string literals
// escaped for the target language, never as identifiers or bare comments.
package export

import (
	"errors"
	"fmt"
	"io"
	"regexp"
	"strconv"
	"strings"
	"unicode/utf8"

	"basin.example/fit"
)

// Languages that [Write] knows.
const (
	Go     = "go"
	C      = "c"
	Python = "python"
)

// Errors returned by [Write], possibly wrapped.
var (
	ErrLang = errors.New("unknown language (want go, c, python or sql)")
	ErrNoV  = errors.New("certificate holds no V")
	ErrName = errors.New("not a valid identifier")
	// ErrOption reports an Options value out of its range.
	ErrOption = errors.New("option out of range")
)

// Options controls [Write]. A nil *Options means all defaults.
type Options struct {
	// Package is the Go package name of the generated file. Empty means
	// "basinv". Ignored for C and Python.
	Package string
	// Prefix starts every C identifier, so that two exported functions can
	// live in one program. Empty means "basin_". Ignored for Go and Python.
	Prefix string
	// Table is the table the SQL query reads: one to three identifiers
	// joined by dots. Empty means "samples". Ignored for other languages.
	Table string
	// RiseTolerance is the SQL query's tolerated rise of V between
	// consecutive samples, in units of V, as [validate.ScreenOptions]
	// Tolerance is for basin screen (it also widens the leave level and
	// is scaled by each run's noise in the same way). 0 means the
	// certificate's Tolerance. Write returns an error wrapping
	// [ErrOption] when it is negative, NaN or infinite. Ignored for other
	// languages.
	RiseTolerance float64
}

var ident = regexp.MustCompile(`^[A-Za-z_][A-Za-z0-9_]*$`)

// Write writes the source of V and the membership test for cert in lang
// (one of [Go], [C], [Python]) to w, or for [SQL] the screening query
// (see the package doc; opts.Table names its table). It returns an error wrapping [ErrLang]
// for an unknown language, [ErrNoV] for a certificate without V terms,
// [ErrName] for a bad Options name (a Table that is not one to three
// identifiers joined by dots), [ErrOption] for an SQL RiseTolerance that
// is negative or not finite, or the writer's error. Nothing is written
// on an error other than the writer's.
func Write(w io.Writer, cert *fit.Certificate, lang string, opts *Options) error {
	o := Options{Package: "basinv", Prefix: "basin_"}
	if opts != nil {
		if opts.Package != "" {
			o.Package = opts.Package
		}
		if opts.Prefix != "" {
			o.Prefix = opts.Prefix
		}
	}
	if len(cert.V.Exponents) == 0 {
		return ErrNoV
	}
	if !ident.MatchString(o.Package) {
		return fmt.Errorf("package %q: %w", o.Package, ErrName)
	}
	if !ident.MatchString(o.Prefix) {
		return fmt.Errorf("prefix %q: %w", o.Prefix, ErrName)
	}
	var b strings.Builder
	if strings.ToLower(lang) == SQL {
		if err := writeSQL(&b, cert, opts); err != nil {
			return err
		}
		_, err := io.WriteString(w, b.String())
		return err
	}
	switch strings.ToLower(lang) {
	case Go:
		writeGo(&b, cert, o.Package)
	case C:
		writeC(&b, cert, o.Prefix)
	case Python, "py":
		writePython(&b, cert)
	default:
		return fmt.Errorf("%q: %w", lang, ErrLang)
	}
	_, err := io.WriteString(w, b.String())
	return err
}

// num formats x so that parsing it back gives x exactly.
func num(x float64) string {
	s := strconv.FormatFloat(x, 'g', -1, 64)
	if !strings.ContainsAny(s, ".eEn") { // keep it a floating literal in C
		s += ".0"
	}
	return s
}

// pow writes z^q as left-associated products (z*z*z), the order poly's
// integer power uses; q >= 1.
func pow(z string, q int) string {
	parts := make([]string, q)
	for i := range parts {
		parts[i] = z
	}
	return strings.Join(parts, " * ")
}

// headerLines are the comment lines every file starts with. They hold no
// user-supplied text.
func headerLines(cert *fit.Certificate) []string {
	n := len(cert.States)
	l := []string{
		"Generated by basin export. Do not edit: export again from certificate.json.",
		"",
		fmt.Sprintf("V is the Lyapunov function of a basin certificate over %d states (verdict %s,", n, safeWord(string(cert.Verdict))),
		fmt.Sprintf("strength %s). x is a state vector in the logs' original units, in the", safeWord(string(cert.Strength))),
		"order of the state names below; the scaling z = (x - equilibrium) / scale is built in.",
		"The region is {x : V(x) <= level and x inside the box}.",
		"",
	}
	if cert.Verdict != fit.Certified {
		l = append(l, "WARNING: this certificate is NOT certified; its region is no claim at all.", "")
	}
	l = append(l, wrap(fit.Caveat, 76)...)
	return l
}

// safeWord keeps only letters, digits and a few marks, for the verdict and
// strength (read from a file that may have been edited).
func safeWord(s string) string {
	var b strings.Builder
	for _, r := range s {
		if r < utf8.RuneSelf && (r == '-' || r == '_' || r == ' ' || ('a' <= r && r <= 'z') || ('A' <= r && r <= 'Z') || ('0' <= r && r <= '9')) {
			b.WriteRune(r)
		}
	}
	return b.String()
}

func wrap(s string, width int) []string {
	var out []string
	line := ""
	for _, w := range strings.Fields(s) {
		if line != "" && len(line)+1+len(w) > width {
			out = append(out, line)
			line = w
			continue
		}
		if line != "" {
			line += " "
		}
		line += w
	}
	if line != "" {
		out = append(out, line)
	}
	return out
}

// terms returns, per V term, the factors after the coefficient, in state
// order, using the scaled-coordinate variable names zname(j).
func terms(cert *fit.Certificate, zname func(j int) string) [][]string {
	out := make([][]string, len(cert.V.Exponents))
	for k, e := range cert.V.Exponents {
		for j, q := range e {
			if q > 0 {
				out[k] = append(out[k], pow(zname(j), q))
			}
		}
	}
	return out
}
