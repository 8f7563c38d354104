package ingest

import (
	"encoding/binary"
	"math"
	"math/big"
	"math/bits"
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
// A cell that [scanFast] takes whole is done there, exactly; anything else
// (long mantissas, large exponents, hex, inf, nan, underscores, junk) goes
// to strconv.ParseFloat.
func parseFloat(b []byte) (f float64, ok bool) {
	if f, n, ok := scanFast(b); ok && n == len(b) {
		return f, true
	}
	return slowFloat(b)
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

// scanFast parses the plain decimal number at the start of b, as far as it
// goes, when the exact fast path applies to it (digits, an optional sign,
// point and exponent; at most 19 digits, leading zeros included, so the
// mantissa cannot overflow; mantissa m <= 2^53; decimal exponent e with
// |e| <= 22). n is the number of bytes used. ok is false when b does not
// start with such a number; the caller then parses the cell with
// parseFloat, which agrees with strconv.ParseFloat everywhere.
//
// Both m and 10^|e| are exact float64 values, so m*10^e (or m/10^-e) is
// one correctly rounded IEEE 754 operation and gives the nearest float64
// to the decimal value, the same answer ParseFloat's round-to-nearest-even
// must give (the fast path of Clinger, "How to read floating point numbers
// accurately", PLDI 1990). A mantissa above 2^53 (16 to 19 digits, as
// shortest and 17-digit printing write) or a larger exponent goes to
// [eiselLemire], which is correctly rounded too or declines.
//
// The sign is read without a branch (logged signs are random, and a
// mispredicted branch costs as much as the rest of a short number); the
// digits of the fraction, 8 at a time where there are 8.
func scanFast(b []byte) (f float64, n int, ok bool) {
	if len(b) == 0 {
		return 0, 0, false
	}
	// The sign without a branch: a logged column's signs are random, and
	// a mispredicted branch costs more than the rest of a short number.
	s := b[0]
	i := int((uint64(uint8(s-'+')&^2) - 1) >> 63) // 1 for '+' or '-' ('+'+2)
	neg := (uint64(s^'-') - 1) >> 63
	var mant uint64
	start := i
	// the integer part: most often short, so byte by byte first
	for i < len(b) && i-start < 8 {
		c := b[i] - '0'
		if c > 9 {
			break
		}
		mant = mant*10 + uint64(c)
		i++
	}
	if i-start == 8 { // a long one: on 8 at a time
		for i+8 <= len(b) {
			x := binary.LittleEndian.Uint64(b[i:])
			if !eightDigits(x) {
				break
			}
			mant = mant*100000000 + eightValue(x)
			i += 8
		}
		for i < len(b) {
			c := b[i] - '0'
			if c > 9 {
				break
			}
			mant = mant*10 + uint64(c)
			i++
		}
	}
	digits := i - start
	lead := 0 // zeros before the first nonzero digit: none of the mantissa's
	exp := 0
	if i < len(b) && b[i] == '.' {
		i++
		fs := i
		if mant == 0 && digits <= 19 { // 0.000123: shortest printing's 17 digits after the zeros (19 digits or fewer: no overflow)
			for i < len(b) && b[i] == '0' {
				i++
			}
			lead = digits + i - fs
			digits = lead
		}
		if digits-lead <= 11 && i+8 <= len(b) { // 8 more digits keep 19 or fewer
			if x := binary.LittleEndian.Uint64(b[i:]); eightDigits(x) {
				mant = mant*100000000 + eightValue(x)
				i += 8
				digits += 8
			}
		}
		k := i
		for i < len(b) {
			c := b[i] - '0'
			if c > 9 {
				break
			}
			mant = mant*10 + uint64(c)
			i++
		}
		digits += i - k
		exp = fs - i
	}
	if digits == 0 || digits-lead > 19 {
		return 0, 0, false
	}
	if i < len(b) && (b[i] == 'e' || b[i] == 'E') {
		i++
		eneg := false
		if i < len(b) && (b[i] == '-' || b[i] == '+') {
			eneg = b[i] == '-'
			i++
		}
		es := i
		e := 0
		for ; i < len(b) && i-es < 4; i++ {
			c := b[i] - '0'
			if c > 9 {
				break
			}
			e = e*10 + int(c)
		}
		if i == es || (i < len(b) && b[i]-'0' <= 9) {
			return 0, 0, false
		}
		if eneg {
			e = -e
		}
		exp += e
	}
	if mant > 1<<53 || exp > 22 || exp < -22 {
		if mant == 0 && exp >= -400 && exp <= 400 {
			exp = 0 // zero with any exponent is zero
		} else if f, ok := eiselLemire(mant, exp, neg != 0); ok {
			return f, i, true
		} else {
			return 0, 0, false
		}
	}
	f = float64(int64(mant)) // mant <= 2^53: exact, and one signed conversion
	if exp >= 0 {
		f *= exactPow10[exp]
	} else {
		f /= exactPow10[-exp]
	}
	// the sign bit set without a branch (a zero mantissa gives -0)
	return math.Float64frombits(math.Float64bits(f) | neg<<63), i, true
}

// eightDigits reports whether the 8 bytes of x (little-endian) are all
// ASCII digits: each byte's high nibble is 3 and adding 6 does not carry
// past 9: the eight-digit SWAR (SIMD within a register) test described by
// Lemire, "Number parsing at a gigabyte per second", Software: Practice
// and Experience 51(8), 2021.
func eightDigits(x uint64) bool {
	return (x&0xF0F0F0F0F0F0F0F0)|(((x+0x0606060606060606)&0xF0F0F0F0F0F0F0F0)>>4) == 0x3333333333333333
}

// fourDigits reports whether the low 4 bytes of x (the high 4 zero) are
// all ASCII digits: [eightDigits]' test on half a word.
func fourDigits(x uint64) bool {
	return (x&0xF0F0F0F0)|(((x+0x06060606)&0xF0F0F0F0)>>4) == 0x33333333
}

// fourValue is the value of the 4 ASCII digits in the low bytes of x, the
// first byte most significant: [eightValue]'s steps on half a word.
func fourValue(x uint64) uint64 {
	x -= 0x30303030
	x = x*10 + x>>8 // pairs in bytes 0 and 2
	return (x&0xFF)*100 + (x>>16)&0xFF
}

// eightValue is the value of 8 ASCII digits in x, the first byte most
// significant: pairs, then quads, then the whole, by multiply-and-shift
// (the eight-digit SWAR conversion of Lemire, "Number parsing at a
// gigabyte per second", 2021).
func eightValue(x uint64) uint64 {
	x -= 0x3030303030303030
	x = x*10 + x>>8
	x = ((x&0x000000FF000000FF)*(100+(1000000<<32)) + ((x>>16)&0x000000FF000000FF)*(1+(10000<<32))) >> 32
	return x
}

// pow10Min and pow10Max are the decimal exponents of the first and last
// rows of pow10Table.
const pow10Min, pow10Max = -348, 347

// pow10Table holds, for q = pow10Min .. pow10Max, 10^q to 128 bits,
// rounded down, normalized so that the top bit is set: {low, high}
// words of m with 10^q ~ m * 2^(floor(log2 10^q) - 127). Computed once,
// exactly, with math/big.
var pow10Table = func() (t [pow10Max - pow10Min + 1][2]uint64) {
	mask := new(big.Int).SetUint64(^uint64(0))
	for q := pow10Min; q <= pow10Max; q++ {
		m := new(big.Int)
		if q >= 0 {
			m.Exp(big.NewInt(10), big.NewInt(int64(q)), nil)
			if n := m.BitLen(); n > 128 {
				m.Rsh(m, uint(n-128))
			} else {
				m.Lsh(m, uint(128-n))
			}
		} else {
			d := new(big.Int).Exp(big.NewInt(10), big.NewInt(int64(-q)), nil)
			m.Lsh(big.NewInt(1), uint(d.BitLen()+127)) // 2^k / d in (2^127, 2^128): d is no power of 2
			m.Quo(m, d)
		}
		lo := new(big.Int).And(m, mask)
		t[q-pow10Min] = [2]uint64{lo.Uint64(), new(big.Int).Rsh(m, 64).Uint64()}
	}
	return t
}()

// eiselLemire returns the float64 nearest to man * 10^exp10 (ties to
// even), neg for a negative one, when it can tell it from a 128-bit
// product of man and the power of ten: ok is false when the product is too
// close to halfway between two float64 values to decide (the caller then
// uses strconv), or the result is zero, subnormal, infinite or out of the
// table. The algorithm of Lemire, "Number parsing at a gigabyte per
// second", 2021, section 5 (after Eisel), with Go's math/bits for the
// 64x64 -> 128-bit multiply; fuzzed bit for bit against strconv.ParseFloat.
func eiselLemire(man uint64, exp10 int, neg bool) (float64, bool) {
	if man == 0 || exp10 < pow10Min || exp10 > pow10Max {
		return 0, false
	}
	// normalize the mantissa: top bit set
	clz := bits.LeadingZeros64(man)
	man <<= uint(clz)
	// 217706 / 2^16 ~ log2(10): the binary exponent of 10^exp10, exact
	// over the table's range, biased for float64
	retExp2 := uint64(217706*exp10>>16+64+1023) - uint64(clz)
	pw := &pow10Table[exp10-pow10Min]
	xHi, xLo := bits.Mul64(man, pw[1])
	// the low bits may decide the rounding: take the next 64 bits of the
	// power too
	if xHi&0x1FF == 0x1FF && xLo+man < man {
		yHi, yLo := bits.Mul64(man, pw[0])
		mHi, mLo := xHi, xLo+yHi
		if mLo < xLo {
			mHi++
		}
		if mHi&0x1FF == 0x1FF && mLo+1 == 0 && yLo+man < man {
			return 0, false
		}
		xHi, xLo = mHi, mLo
	}
	// 54 bits of the product, the top one at bit 63 or 62
	msb := xHi >> 63
	mant := xHi >> (msb + 9)
	retExp2 -= 1 ^ msb
	// exactly halfway: undecided
	if xLo == 0 && xHi&0x1FF == 0 && mant&3 == 1 {
		return 0, false
	}
	// round to 53 bits, ties to even
	mant += mant & 1
	mant >>= 1
	if mant>>53 > 0 {
		mant >>= 1
		retExp2++
	}
	if retExp2-1 >= 0x7FF-1 { // subnormal, zero, or infinite
		return 0, false
	}
	b := retExp2<<52 | mant&(1<<52-1)
	if neg {
		b |= 1 << 63
	}
	return math.Float64frombits(b), true
}
