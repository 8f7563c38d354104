package ingest

import (
	"strconv"
	"unsafe"
)

// exactPow10 holds the powers of ten that float64 represents exactly
// (10^0 .. 10^22; 5^22 < 2^53).
var exactPow10 = [...]float64{
	1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11,
	1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
}

// parseFloat parses a decimal number as strconv.ParseFloat(s, 64) does and
// returns the same bits. ok is false when b is not a number (ParseFloat's
// syntax error) or is out of range.
//
// The fast path takes a mantissa m <= 2^53 and a decimal exponent e with
// |e| <= 22: both m and 10^|e| are exact float64 values, so m*10^e (or
// m/10^-e) is one correctly rounded IEEE 754 operation and gives the
// nearest float64 to the decimal value, the same answer ParseFloat's
// round-to-nearest-even must give. Anything else (long mantissas, large
// exponents, hex, inf, nan, underscores) goes to strconv.ParseFloat.
func parseFloat(b []byte) (f float64, ok bool) {
	i := 0
	n := len(b)
	neg := false
	if i < n && (b[i] == '-' || b[i] == '+') {
		neg = b[i] == '-'
		i++
	}
	var mant uint64
	digits := 0 // significant digits accumulated in mant
	exp := 0    // decimal exponent to apply to mant
	sawDigit := false
	// integer part
	for ; i < n; i++ {
		c := b[i] - '0'
		if c > 9 {
			break
		}
		sawDigit = true
		if mant == 0 && c == 0 {
			continue // leading zeros are not significant
		}
		if digits >= 19 {
			return slowFloat(b)
		}
		mant = mant*10 + uint64(c)
		digits++
	}
	if i < n && b[i] == '.' {
		i++
		for ; i < n; i++ {
			c := b[i] - '0'
			if c > 9 {
				break
			}
			sawDigit = true
			if mant == 0 && c == 0 {
				exp--
				continue
			}
			if digits >= 19 {
				return slowFloat(b)
			}
			mant = mant*10 + uint64(c)
			digits++
			exp--
		}
	}
	if !sawDigit {
		return slowFloat(b) // inf, nan, hex, or not a number
	}
	if i < n && (b[i] == 'e' || b[i] == 'E') {
		i++
		eneg := false
		if i < n && (b[i] == '-' || b[i] == '+') {
			eneg = b[i] == '-'
			i++
		}
		if i == n {
			return 0, false
		}
		e := 0
		for ; i < n; i++ {
			c := b[i] - '0'
			if c > 9 {
				return slowFloat(b)
			}
			if e < 10000 {
				e = e*10 + int(c)
			}
		}
		if eneg {
			e = -e
		}
		exp += e
	}
	if i != n {
		return slowFloat(b) // underscores, trailing junk: let strconv decide
	}
	if mant == 0 {
		if neg {
			return negZero, true
		}
		return 0, true
	}
	if mant > 1<<53 || exp > 22 || exp < -22 {
		return slowFloat(b)
	}
	f = float64(mant)
	if exp >= 0 {
		f *= exactPow10[exp]
	} else {
		f /= exactPow10[-exp]
	}
	if neg {
		f = -f
	}
	return f, true
}

var negZero = func() float64 { z := 0.0; return -z }()

// slowFloat is the fallback: strconv.ParseFloat without copying b.
func slowFloat(b []byte) (float64, bool) {
	if len(b) == 0 {
		return 0, false
	}
	// ParseFloat does not retain s (its *NumError clones the input).
	f, err := strconv.ParseFloat(unsafe.String(&b[0], len(b)), 64)
	return f, err == nil
}
