package fit

import (
	"errors"
	"strings"
	"testing"
)

// TestReadCertificateWhere: a file that is not a certificate's JSON is
// refused with the line and column where decoding stopped, and wraps
// ErrFormat. encoding/json reports the bytes read when it found the error
// (SyntaxError.Offset, UnmarshalTypeError.Offset; Go standard library
// documentation): the byte before is the one at fault, counted here from
// 1 in lines and columns as editors count: the ',' of "t,x" (column 2),
// the closing quote of the string value "high" (column 16), the last
// byte of a truncated file (column 15).
func TestReadCertificateWhere(t *testing.T) {
	for _, tc := range []struct {
		name, text, want string
	}{
		{"a CSV given as the certificate", "t,x\n0,1\n", "certificate: line 1, column 2: not JSON"},
		{"a string where a number belongs", "{\"format\": \"basin.certificate/1\",\n \"level\": \"high\"}", "certificate: line 2, column 16: field level: a JSON string where float64 belongs"},
		{"truncated", "{\"format\": \"basin.certificate/1\",\n \"states\": [\"a\"", "certificate: line 2, column 15: the JSON ends early"},
		{"empty", "", "certificate: empty file, not JSON"},
	} {
		_, err := ReadCertificate(strings.NewReader(tc.text))
		if err == nil || !strings.HasPrefix(err.Error(), tc.want) || !errors.Is(err, ErrFormat) {
			t.Errorf("%s: %v, want an ErrFormat starting %q", tc.name, err, tc.want)
		}
	}
}
