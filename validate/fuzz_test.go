package validate

import (
	"bytes"
	"context"
	"encoding/json"
	"math"
	"testing"

	"basin.example/fit"
	"basin.example/ingest"
)

// FuzzScreenCertificate: any certificate that fit.ReadCertificate accepts
// can be screened and checked without a panic, and the results encode as
// JSON (no NaN or Inf reaches an output).
func FuzzScreenCertificate(f *testing.F) {
	f.Add([]byte(`{"format":"basin.certificate/1","verdict":"certified","states":["a","b"],"units":["",""],
		"equilibrium":[0,0],"scale":[1,1],"V":{"exponents":[[2,0],[0,2]],"coefficients":[1,1]},"level":1,"found":true,"tolerance":1e-3}`))
	f.Add([]byte(`{"format":"basin.certificate/1","verdict":"inconclusive","states":["a","b"],"units":["",""],
		"equilibrium":[0,0],"scale":[1e-300,1e300],"V":{"exponents":[[4,0],[1,3],[0,0]],"coefficients":[-1,1e308,1]},"level":0,"box":[[1,-1],[0,0]]}`))
	run := makeRun("r", 300, 0.01, func(t float64) (float64, float64) { return math.Exp(-t) * math.Cos(5*t), 2 * math.Sin(t) })
	ds := &ingest.Dataset{States: []ingest.Column{{Name: "a"}, {Name: "b"}}, Runs: []ingest.Run{run, run}}
	f.Fuzz(func(t *testing.T, in []byte) {
		cert, err := fit.ReadCertificate(bytes.NewReader(in))
		if err != nil {
			return
		}
		var rs RunScreen
		NewScreener(cert, nil).Screen(&rs, "f", &run)
		if _, err := json.Marshal(rs); err != nil {
			t.Fatalf("screen result not encodable: %v", err)
		}
		if len(cert.States) != 2 || cert.States[0] != "a" || cert.States[1] != "b" {
			return
		}
		val, runs, err := Check(context.Background(), cert, ds, nil)
		if err != nil {
			t.Fatal(err)
		}
		Decide(cert, val, runs, nil, nil)
		if _, err := json.Marshal(cert); err != nil {
			t.Fatalf("certificate not encodable: %v", err)
		}
	})
}
