package certlp

import (
	"bytes"
	"os"
	"path/filepath"
	"slices"
	"testing"
)

// TestFileRoundTrip writes a small LP and reads it back bit for bit, and
// refuses files of the wrong size.
func TestFileRoundTrip(t *testing.T) {
	d := New(2, 4, 50, 2, Duffing2, 3).Dense()
	name := filepath.Join(t.TempDir(), "lp.f64")
	if err := d.WriteFile(name); err != nil {
		t.Fatal(err)
	}
	got, err := ReadFile(name)
	if err != nil {
		t.Fatal(err)
	}
	for _, p := range [][2][]float64{{got.C, d.C}, {got.Lower, d.Lower}, {got.Upper, d.Upper}, {got.G, d.G}, {got.H, d.H}} {
		if !slices.Equal(p[0], p[1]) {
			t.Fatalf("read %v, wrote %v", p[0], p[1])
		}
	}
	var buf bytes.Buffer
	if err := d.Write(&buf); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(name, buf.Bytes()[:buf.Len()-8], 0o644); err != nil {
		t.Fatal(err)
	}
	if _, err := ReadFile(name); err == nil {
		t.Error("a truncated file was read")
	}
}
