package fit

import (
	"bytes"
	"encoding/json"
	"math"
	"testing"
)

// FuzzReadCertificate: any input is either refused with an error or gives
// a certificate that encodes back to JSON (finite numbers only).
func FuzzReadCertificate(f *testing.F) {
	f.Add([]byte(`{"format":"basin.certificate/1","verdict":"certified","strength":"asymptotic","empirical":true,` +
		`"states":["theta","omega"],"units":["rad","rad/s"],"equilibrium":[0,0],"scale":[0.5,2],` +
		`"V":{"exponents":[[2,0],[1,1],[0,2]],"coefficients":[1,0.1,0.3]},"level":0.8}`))
	f.Add([]byte(`{"format":"basin.certificate/1"}`))
	f.Add([]byte(`{"format":"basin.certificate/1","level":1e999}`))
	f.Fuzz(func(t *testing.T, data []byte) {
		c, err := ReadCertificate(bytes.NewReader(data))
		if err != nil {
			if bytes.ContainsRune([]byte(err.Error()), '\n') {
				t.Fatalf("multi-line error %q", err)
			}
			return
		}
		if math.IsNaN(c.Level) || math.IsInf(c.Level, 0) {
			t.Fatalf("level %v accepted", c.Level)
		}
		if _, err := json.Marshal(c); err != nil {
			t.Fatalf("accepted certificate does not encode: %v", err)
		}
	})
}
