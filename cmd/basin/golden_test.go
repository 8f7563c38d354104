package main

import (
	"bytes"
	"context"
	"flag"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"runtime"
	"strconv"
	"strings"
	"sync"
	"testing"
)

// update rewrites the golden files from this run:
//
//	go test ./cmd/basin -run Golden -update
//
// A change to model.json, certificate.json or summary.txt of the demo
// commits the regenerated golden files with it, so the change is a diff
// a reviewer reads.
var update = flag.Bool("update", false, "rewrite testdata/golden from this run")

// demoDir holds the shared demo output (see sharedDemoRun); TestMain
// removes it.
var demoDir string

// demoResult is one `basin demo` run shared by the tests of the package:
// the pipeline on the demo data set takes seconds (tens under -race), so
// it runs once per test binary.
type demoResult struct {
	dir            string // --out
	code           int
	stdout, stderr string
}

var sharedDemoRun = sync.OnceValues(func() (*demoResult, error) {
	dir, err := os.MkdirTemp("", "basin-demo-")
	if err != nil {
		return nil, err
	}
	demoDir = dir
	var o, e bytes.Buffer
	code := basinMain(context.Background(), []string{"demo", "--out", dir}, &o, &e)
	return &demoResult{dir: dir, code: code, stdout: o.String(), stderr: e.String()}, nil
})

// sharedDemo returns the shared demo run, failing the test if it failed.
// Tests must not write into its directory.
func sharedDemo(t *testing.T) *demoResult {
	t.Helper()
	d, err := sharedDemoRun()
	if err != nil {
		t.Fatal(err)
	}
	if d.code != 0 {
		t.Fatalf("basin demo: exit %d: %s\n%s", d.code, d.stderr, d.stdout)
	}
	return d
}

// TestGolden compares the demo's model.json, certificate.json and
// summary.txt with testdata/golden. The demo is seeded and the pipeline
// is deterministic (parallel results go in by index), so on amd64, where
// the golden files are made, the comparison is byte for byte. Other
// architectures may fuse a*b+c into one rounding (the Go spec allows it;
// arm64, ppc64 and s390x do), which moves the last bits of a result: there
// the text between numbers must still match exactly and each decimal
// number within 1e-9 relative or one unit of its last printed digit
// (whichever is larger); integers stay exact.
func TestGolden(t *testing.T) {
	d := sharedDemo(t)
	for _, name := range []string{"model.json", "certificate.json", "summary.txt"} {
		t.Run(name, func(t *testing.T) {
			got, err := os.ReadFile(filepath.Join(d.dir, name))
			if err != nil {
				t.Fatal(err)
			}
			// The outputs name the input directory; the golden file says OUT.
			got = bytes.ReplaceAll(got, []byte(d.dir), []byte("OUT"))
			golden := filepath.Join("testdata", "golden", name+".golden")
			if *update {
				if err := os.MkdirAll(filepath.Dir(golden), 0o755); err != nil {
					t.Fatal(err)
				}
				if err := os.WriteFile(golden, got, 0o644); err != nil {
					t.Fatal(err)
				}
				return
			}
			want, err := os.ReadFile(golden)
			if err != nil {
				t.Fatalf("%v (go test ./cmd/basin -run Golden -update writes it)", err)
			}
			if bytes.Equal(got, want) {
				return
			}
			if runtime.GOARCH != "amd64" {
				if err := sameUpToRounding(string(got), string(want)); err == nil {
					return
				}
			}
			t.Errorf("%s differs from %s (if the change is meant, run go test ./cmd/basin -run Golden -update and commit the golden file):\n%s",
				name, golden, firstDiff(string(got), string(want)))
		})
	}
}

// numberRE matches a decimal number as the outputs print it.
var numberRE = regexp.MustCompile(`[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?`)

// sameUpToRounding reports whether got and want differ only in decimal
// numbers, each by at most max(1e-9 relative, one unit of want's last
// printed digit); integers, and all text between numbers, must be equal.
func sameUpToRounding(got, want string) error {
	gi, wi := numberRE.FindAllStringIndex(got, -1), numberRE.FindAllStringIndex(want, -1)
	if len(gi) != len(wi) {
		return fmt.Errorf("%d numbers, want %d", len(gi), len(wi))
	}
	gp, wp := 0, 0
	for k := range gi {
		if got[gp:gi[k][0]] != want[wp:wi[k][0]] {
			return fmt.Errorf("text differs before number %d", k)
		}
		g, w := got[gi[k][0]:gi[k][1]], want[wi[k][0]:wi[k][1]]
		if g != w {
			if !strings.ContainsAny(w, ".eE") {
				return fmt.Errorf("integer %s, want %s", g, w)
			}
			gv, err1 := strconv.ParseFloat(g, 64)
			wv, err2 := strconv.ParseFloat(w, 64)
			if err1 != nil || err2 != nil {
				return fmt.Errorf("number %q, want %q", g, w)
			}
			// The 1e-6 slack absorbs the rounding of the difference itself.
			tol := math.Max(1e-9*math.Max(math.Abs(gv), math.Abs(wv)), lastDigit(w)*(1+1e-6))
			if !(math.Abs(gv-wv) <= tol) {
				return fmt.Errorf("number %s, want %s (tolerance %g)", g, w, tol)
			}
		}
		gp, wp = gi[k][1], wi[k][1]
	}
	if got[gp:] != want[wp:] {
		return fmt.Errorf("text differs after the last number")
	}
	return nil
}

// lastDigit is the value of one unit in the last printed digit of the
// decimal number s ("0.135" gives 0.001, "1.2e-05" 1e-06).
func lastDigit(s string) float64 {
	mant, exp := s, 0
	if i := strings.IndexAny(s, "eE"); i >= 0 {
		mant = s[:i]
		exp, _ = strconv.Atoi(s[i+1:])
	}
	frac := 0
	if i := strings.IndexByte(mant, '.'); i >= 0 {
		frac = len(mant) - i - 1
	}
	return math.Pow(10, float64(exp-frac))
}

// firstDiff shows the first differing line of got and want.
func firstDiff(got, want string) string {
	gl, wl := strings.Split(got, "\n"), strings.Split(want, "\n")
	for i := 0; i < max(len(gl), len(wl)); i++ {
		var g, w string
		if i < len(gl) {
			g = gl[i]
		}
		if i < len(wl) {
			w = wl[i]
		}
		if g != w {
			return fmt.Sprintf("line %d:\n  got:  %s\n  want: %s", i+1, g, w)
		}
	}
	return "(same lines, different bytes)"
}

// TestGoldenCompare checks the comparison used off amd64: rounding in the
// last digit passes, anything else fails.
func TestGoldenCompare(t *testing.T) {
	for _, tc := range []struct {
		got, want string
		ok        bool
	}{
		{"level 11.63 at 0.135", "level 11.63 at 0.135", true},
		{"level 11.64", "level 11.63", true},            // one unit of the last digit
		{"c = 0.10430000000000001", "c = 0.1043", true}, // 1e-9 relative
		{"level 11.65", "level 11.63", false},           // two units
		{"5 runs leave", "4 runs leave", false},         // integers exact
		{"level 11.63 rad", "level 11.63 deg", false},   // text exact
		{"x 1.2e-05", "x 1.3e-05", true},                // exponent form
		{"x 1.2e-05 y", "x 1.2e-05", false},             // extra text
		{"V = 0.64 z^2 + 0.1", "V = 0.64 z^2", false},   // extra number
		{"verdict: certified", "verdict: inconclusive", false},
	} {
		if err := sameUpToRounding(tc.got, tc.want); (err == nil) != tc.ok {
			t.Errorf("sameUpToRounding(%q, %q) = %v, want ok %v", tc.got, tc.want, err, tc.ok)
		}
	}
}
