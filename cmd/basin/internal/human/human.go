// Package human formats numbers, counts and shares for people to read:
// to a stated number of significant digits or to a resolution, without
// the noise digits of binary floating point (0.30000000000000004,
// 9.999999999999999e-05, 499.99999999999955), with plurals that agree
// with their counts and shares that never round to 100% or 0% unless
// they are exactly that.
//
// JSON outputs keep full precision; this package is for text, tables and
// figure labels only.
package human

import (
	"math"
	"strconv"
	"strings"
)

// Num formats x with 4 significant digits: plain decimals from 1e-4 up to
// 1e6 ("0.6402", "753.8", "12500"), otherwise a short exponent form
// ("1.2e-5", "3.4e+7"). Trailing zeros are dropped; NaN is "n/a".
func Num(x float64) string { return Sig(x, 4) }

// Sig formats x with n significant digits (n >= 1) as [Num] does.
func Sig(x float64, n int) string {
	switch {
	case math.IsNaN(x):
		return "n/a"
	case math.IsInf(x, 1):
		return "∞"
	case math.IsInf(x, -1):
		return "-∞"
	case x == 0:
		return "0"
	}
	n = max(n, 1)
	// Round first so that 9.99995 becomes 10 and picks its decade.
	r, _ := strconv.ParseFloat(strconv.FormatFloat(x, 'e', n-1, 64), 64)
	a := math.Abs(r)
	if a < 1e-4 || a >= 1e6 {
		return shortExp(strconv.FormatFloat(r, 'e', n-1, 64))
	}
	dec := max(0, n-1-int(math.Floor(math.Log10(a))))
	return trimZeros(strconv.FormatFloat(r, 'f', dec, 64))
}

// Res formats x rounded to the resolution res > 0: a value within res/2
// of zero is "0", and no digit finer than res's leading digit is shown
// (Res(2.019e-28, 0.001) is "0", Res(0.123456, 0.001) is "0.123",
// Res(499.99999999999955, 1e-6) is "500"). A res that is not positive
// and finite falls back to [Num].
func Res(x, res float64) string {
	if !(res > 0) || math.IsInf(res, 0) || math.IsNaN(x) || math.IsInf(x, 0) {
		return Num(x)
	}
	if math.Abs(x) < res/2 {
		return "0"
	}
	e := int(math.Floor(math.Log10(res)))
	if e >= 0 {
		q := math.Pow(10, float64(e))
		return noNegZero(trimZeros(strconv.FormatFloat(math.Round(x/q)*q, 'f', 0, 64)))
	}
	// Beyond 15 significant digits the float cannot tell anyway.
	if digits := int(math.Floor(math.Log10(math.Abs(x)))) - e + 1; digits > 15 {
		return Sig(x, 15)
	}
	return noNegZero(trimZeros(strconv.FormatFloat(x, 'f', -e, 64)))
}

// noNegZero turns "-0" (a value that rounded to zero) into "0".
func noNegZero(s string) string {
	if s == "-0" {
		return "0"
	}
	return s
}

// Count writes n and the noun, plural unless n is 1: Count(1, "run") is
// "1 run", Count(2, "run") "2 runs". Nouns ending in s, x, ch or sh take
// "es"; pass the plural yourself with [CountAs] for anything irregular.
func Count(n int, noun string) string {
	if n == 1 {
		return "1 " + noun
	}
	pl := noun + "s"
	for _, suf := range []string{"s", "x", "ch", "sh"} {
		if strings.HasSuffix(noun, suf) {
			pl = noun + "es"
			break
		}
	}
	return strconv.Itoa(n) + " " + pl
}

// CountAs is [Count] with an explicit plural.
func CountAs(n int, one, many string) string {
	if n == 1 {
		return "1 " + one
	}
	return strconv.Itoa(n) + " " + many
}

// Percent formats a share p in [0, 1] as a percentage with one decimal
// ("99.5%"), except that a share below 1 never prints as "100.0%" and a
// share above 0 never as "0.0%": more decimals are shown until it
// differs ("99.98%", "0.02%"), up to four; past that it says "<0.0001%"
// or ">99.9999%". NaN is "n/a".
func Percent(p float64) string {
	switch {
	case math.IsNaN(p):
		return "n/a"
	case p >= 1:
		return strconv.FormatFloat(100*p, 'f', 0, 64) + "%"
	case p <= 0:
		return strconv.FormatFloat(100*p, 'f', 0, 64) + "%"
	}
	for dec := 1; dec <= 4; dec++ {
		s := strconv.FormatFloat(100*p, 'f', dec, 64)
		v, _ := strconv.ParseFloat(s, 64)
		if v < 100 && v > 0 {
			return s + "%"
		}
	}
	if p > 0.5 {
		return ">99.9999%"
	}
	return "<0.0001%"
}

// Share formats k of n as a percentage and the counts, "99.98% (4200 of
// 4201 pairs)", using noun for the counted things; with n = 0 it is
// "none (0 noun)" so that nobody reads "0.0% of 0".
func Share(k, n int, noun string) string {
	if n == 0 {
		return "none (" + Count(0, noun) + ")"
	}
	return Percent(float64(k)/float64(n)) + " (" + strconv.Itoa(k) + " of " + Count(n, noun) + ")"
}

// Confidence formats a confidence level c in (0, 1) as a percentage with
// as many nines as it has: 0.999999 is "99.9999%", 0.95 "95%". It never
// prints "100%" for c < 1.
func Confidence(c float64) string {
	if math.IsNaN(c) || c <= 0 || c >= 1 {
		return Percent(c)
	}
	for dec := 0; dec <= 12; dec++ {
		s := strconv.FormatFloat(100*c, 'f', dec, 64)
		v, _ := strconv.ParseFloat(s, 64)
		if v < 100 && math.Abs(v-100*c) <= 1e-9*100 {
			return trimZeros(s) + "%"
		}
	}
	return Percent(c)
}

// shortExp turns Go's "1.200e-05" into "1.2e-5".
func shortExp(s string) string {
	i := strings.IndexByte(s, 'e')
	if i < 0 {
		return s
	}
	mant, exp := trimZeros(s[:i]), s[i+1:]
	sign := exp[:1]
	digits := strings.TrimLeft(exp[1:], "0")
	if digits == "" {
		digits = "0"
	}
	if sign == "+" {
		return mant + "e+" + digits
	}
	return mant + "e-" + digits
}

// trimZeros drops trailing zeros after a decimal point, and the point.
func trimZeros(s string) string {
	if !strings.Contains(s, ".") {
		return s
	}
	s = strings.TrimRight(s, "0")
	return strings.TrimSuffix(s, ".")
}

// Near formats x, a value of a quantity whose typical spread is scale,
// to a thousandth of that spread and at most 4 significant digits: a
// coordinate that is zero up to round-off (2.019e-28 mm on a 7 mm
// spread) prints as "0". A scale that is not positive and finite falls
// back to [Num].
func Near(x, scale float64) string {
	if !(scale > 0) || math.IsInf(scale, 0) || math.IsNaN(x) || math.IsInf(x, 0) {
		return Num(x)
	}
	res := decade(scale * 1e-3)
	if math.Abs(x) < res/2 {
		return "0"
	}
	return Res(x, math.Max(res, decade(math.Abs(x))*1e-3))
}

// decade is the power of ten at or below x > 0.
func decade(x float64) float64 { return math.Pow(10, math.Floor(math.Log10(x))) }

// RoundSig returns x rounded to n significant digits, for JSON values
// whose last digits are floating-point noise (499.99999999999955 with 9
// digits is 500). NaN, infinities and zero are returned as they are.
func RoundSig(x float64, n int) float64 {
	if x == 0 || math.IsNaN(x) || math.IsInf(x, 0) {
		return x
	}
	r, _ := strconv.ParseFloat(strconv.FormatFloat(x, 'e', max(n, 1)-1, 64), 64)
	return r
}

// RoundTo returns x rounded to a multiple of q > 0 (an absolute
// resolution), with the result's noise digits removed: RoundTo(1.1102e-13,
// 1e-9) is 0 and RoundTo(0.0123456, 1e-4) is 0.0123.
func RoundTo(x, q float64) float64 {
	if !(q > 0) || math.IsNaN(x) || math.IsInf(x, 0) {
		return x
	}
	r := math.Round(x/q) * q
	if r == 0 {
		return 0 // no -0
	}
	d := max(0, -int(math.Floor(math.Log10(q))))
	v, _ := strconv.ParseFloat(strconv.FormatFloat(r, 'f', d, 64), 64)
	return v
}
