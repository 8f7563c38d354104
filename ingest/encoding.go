package ingest

import (
	"bytes"
	"fmt"
	"strings"
	"unicode/utf8"
)

// cp1252High maps the bytes 0x80 to 0x9F of Windows-1252 to their
// characters; 0 marks the five bytes the code page leaves undefined (0x81,
// 0x8D, 0x8F, 0x90, 0x9D). Bytes 0xA0 to 0xFF are the Latin-1 characters
// of the same number (U+00A0 to U+00FF), and bytes below 0x80 are ASCII.
// From the Unicode Consortium's mapping file for the code page
// (MAPPINGS/VENDORS/MICSFT/WINDOWS/CP1252.TXT); TestCP1252 checks every
// byte against golang.org/x/text/encoding/charmap.
var cp1252High = [32]rune{
	0x20AC, 0, 0x201A, 0x0192, 0x201E, 0x2026, 0x2020, 0x2021,
	0x02C6, 0x2030, 0x0160, 0x2039, 0x0152, 0, 0x017D, 0,
	0, 0x2018, 0x2019, 0x201C, 0x201D, 0x2022, 0x2013, 0x2014,
	0x02DC, 0x2122, 0x0161, 0x203A, 0x0153, 0, 0x017E, 0x0178,
}

// textCP1252 is the name of the code page a CSV file's text is read in
// when it is not UTF-8, as warnings and errors give it.
const textCP1252 = "Windows-1252 (Latin-1)"

// decodeText returns b as UTF-8 text: b itself when it is valid UTF-8,
// else b read as Windows-1252, with latin true. bad is the offset in b of
// the first byte that fits neither (a byte Windows-1252 leaves undefined),
// -1 when there is none; s is then "".
func decodeText(b []byte) (s string, latin bool, bad int) {
	if utf8.Valid(b) {
		return string(b), false, -1
	}
	var sb strings.Builder
	sb.Grow(len(b) + len(b)/2)
	for i, c := range b {
		switch {
		case c < 0x80:
			sb.WriteByte(c)
		case c < 0xA0:
			r := cp1252High[c-0x80]
			if r == 0 {
				return "", true, i
			}
			sb.WriteRune(r)
		default:
			sb.WriteRune(rune(c))
		}
	}
	return sb.String(), true, -1
}

// encodingError is the error for text that is neither UTF-8 nor
// Windows-1252: what (a header cell, a run name) and the byte, with its
// offset in the cell.
func encodingError(what string, b []byte, bad int) error {
	return fmt.Errorf("%w: %s %q is neither UTF-8 nor %s text (byte 0x%02X at byte %d of the cell)",
		ErrFormat, what, b, textCP1252, b[bad], bad+1)
}

// latinNote records where a CSV file's text was first read as
// Windows-1252, for the file's one warning.
type latinNote struct {
	line, col int    // 1-based
	what      string // "header cell", "unit", "run name"
	text      string // decoded
}

// warning is the file's one warning about its encoding.
func (n *latinNote) warning(file string) string {
	return fmt.Sprintf("%s:%d:%d: %s %q is not UTF-8 text: the file's text is read as %s",
		file, n.line, n.col, n.what, n.text, textCP1252)
}

// utf16BOM says data starts with a UTF-16 byte-order mark, and which.
func utf16BOM(data []byte) string {
	switch {
	case bytes.HasPrefix(data, []byte{0xFF, 0xFE}):
		return "UTF-16 little-endian"
	case bytes.HasPrefix(data, []byte{0xFE, 0xFF}):
		return "UTF-16 big-endian"
	}
	return ""
}
