package fit

import (
	"bytes"
	"encoding/json"
	"math"
	"testing"
)

// FuzzReadModel: any input is refused with a one-line error, or gives a
// model that encodes to JSON, reads back to the same encoding, and whose
// field and Jacobian evaluate at its equilibrium without a panic, the
// field agreeing between Model.EvalTo and a FieldEvaluator (the same
// polynomials summed two ways: equal up to rounding of the sums, checked
// at 1e-9 relative to the sum of the terms' magnitudes).
func FuzzReadModel(f *testing.F) {
	f.Add([]byte(`{"format":"basin.model/1","states":["theta","omega"],"units":["rad","rad/s"],` +
		`"equations":[{"exponents":[[0,1]],"coefficients":[1]},{"exponents":[[1,0],[0,1],[3,0]],"coefficients":[-90,-2.8,750]}],` +
		`"equilibrium":[0,0]}`))
	f.Add([]byte(`{"format":"basin.model/1","states":["x"],"units":[""],"equations":[{"exponents":[[16]],"coefficients":[1e308]}],"equilibrium":[1e10]}`))
	f.Add([]byte(`{"format":"basin.model/1","states":["x"],"units":["u"],"equations":[{"exponents":[[-1]],"coefficients":[1]}],"equilibrium":[0]}`))
	f.Add([]byte(`{"format":"basin.model/1"}`))
	f.Fuzz(func(t *testing.T, data []byte) {
		m, err := ReadModel(bytes.NewReader(data))
		if err != nil {
			if bytes.ContainsRune([]byte(err.Error()), '\n') {
				t.Fatalf("multi-line error %q", err)
			}
			return
		}
		b, err := json.Marshal(m)
		if err != nil {
			t.Fatalf("accepted model does not encode: %v", err)
		}
		m2, err := ReadModel(bytes.NewReader(b))
		if err != nil {
			t.Fatalf("re-reading the encoded model: %v\n%s", err, b)
		}
		if b2, _ := json.Marshal(m2); !bytes.Equal(b, b2) {
			t.Fatalf("round trip changed the model:\n%s\n%s", b, b2)
		}
		n := len(m.States)
		x := m.Equilibrium
		f1 := m.EvalTo(make([]float64, n), x)
		fe := NewFieldEvaluator(m)
		f2 := fe.EvalTo(make([]float64, n), x)
		fe.JacobianTo(make([]float64, n*n), make([]float64, n), x)
		for i := range f1 {
			mag := 0.0
			for k, e := range m.Equations[i].Exponents {
				v := math.Abs(m.Equations[i].Coefficients[k])
				for j, p := range e {
					v *= math.Pow(math.Abs(x[j]), float64(p))
				}
				mag += v
			}
			if math.IsInf(mag, 0) || math.IsNaN(mag) {
				continue // overflow: no comparison to make
			}
			if !(math.Abs(f1[i]-f2[i]) <= 1e-9*mag) && f1[i] != f2[i] {
				t.Fatalf("equation %d at %v: EvalTo %v, FieldEvaluator %v", i, x, f1[i], f2[i])
			}
		}
	})
}
