package ingest

import "encoding/binary"

// scanFastBefore is scanFast as it was before the branch-free sign
// (kept for BenchmarkScanCells, which times both on the same cells, and
// for the fuzz test, which checks that both take the same numbers), and
// fastRowsBefore is fastRows before its number parse was inlined (for
// BenchmarkFastRows).
func scanFastBefore(b []byte) (f float64, n int, ok bool) {
	i := 0
	neg := false
	if len(b) > 0 && (b[0] == '-' || b[0] == '+') {
		neg = b[0] == '-'
		i = 1
	}
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
	exp := 0
	if i < len(b) && b[i] == '.' {
		i++
		fs := i
		for digits <= 11 && i+8 <= len(b) { // 8 more digits keep 19 or fewer
			x := binary.LittleEndian.Uint64(b[i:])
			if !eightDigits(x) {
				break
			}
			mant = mant*100000000 + eightValue(x)
			i += 8
			digits += 8
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
	if digits == 0 || digits > 19 {
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
		} else {
			return 0, 0, false
		}
	}
	if mant == 0 {
		if neg {
			return negZero, i, true
		}
		return 0, i, true
	}
	f = float64(int64(mant)) // mant <= 2^53: exact, and one signed conversion
	if exp >= 0 {
		f *= exactPow10[exp]
	} else {
		f /= exactPow10[-exp]
	}
	if neg {
		f = -f
	}
	return f, i, true
}

func (p *csvParser) fastRowsBefore(c *chunk, cols [][]float64, data []byte) (rows, used int) {
	d := p.lay.delim
	slot := p.lay.slot
	r := c.rows
	for used < len(data) {
		i := used
		for j, s := range slot {
			if j > 0 {
				if i >= len(data) || data[i] != d {
					return rows, used
				}
				i++
			}
			if s < 0 {
				for i < len(data) && data[i] != d && data[i] != '\n' {
					i++
				}
				continue
			}
			v, n, ok := scanFastBefore(data[i:])
			if !ok {
				return rows, used
			}
			cols[s][r] = v
			i += n
		}
		if i < len(data) {
			switch {
			case data[i] == '\n':
				i++
			case data[i] == '\r' && i+1 == len(data):
				i++
			case data[i] == '\r' && data[i+1] == '\n':
				i += 2
			default:
				return rows, used
			}
		}
		rows++
		r++
		used = i
	}
	return rows, used
}
