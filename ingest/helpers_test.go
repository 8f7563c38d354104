package ingest

import (
	"os"
	"path/filepath"
	"strconv"
	"testing"
)

// writeFile writes text to dir/name and returns the path.
func writeFile(t *testing.T, dir, name, text string) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func ftoa(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }

func atof(s string) float64 {
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		panic(err)
	}
	return v
}
