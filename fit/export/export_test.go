package export

import (
	"bufio"
	"bytes"
	"encoding/hex"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"

	"basin.example/fit"
	"basin.example/fit/poly"
)

// The check is against basin's own evaluation (fit.Certificate.Z followed
// by poly.Poly.Eval, and fit.Certificate.Inside), run by independent
// compilers and interpreters: the Go toolchain, the system C compiler and
// CPython. The issue asks for agreement to 1e-12 relative; the generated
// code repeats basin's operation order, so on IEEE 754 doubles without
// FMA contraction the values are identical, and 1e-12 leaves room for a
// platform that contracts a*b+c (error then ~ a few ulp of the terms).
const relTol = 1e-12

const points = 10000

// hostile names: quotes, comment closers, newlines, a trailing backslash,
// a trigraph, and non-ASCII text. They must survive as data.
var hostile = []string{"theta\"); panic(1) //", "*/ omega\n\\", "??=x \u00e9\u4e2d\U0001F600"}

func testCerts() map[string]*fit.Certificate {
	r := rand.New(rand.NewPCG(7, 0))
	mk := func(n, lo, hi int, withBox bool, names []string) *fit.Certificate {
		lib := poly.NewLibrary(n, lo, hi)
		c := &fit.Certificate{Format: fit.CertificateFormat, Verdict: fit.Certified, Strength: fit.Asymptotic,
			States: names, Units: make([]string, n)}
		for j := range n {
			c.Units[j] = fmt.Sprintf("u%d/s", j)
			c.Equilibrium = append(c.Equilibrium, r.NormFloat64()*3)
			c.Scale = append(c.Scale, 0.1+r.Float64()*5)
		}
		for k := range lib.Len() {
			c.V.Exponents = append(c.V.Exponents, lib.Exponents(k))
			co := r.NormFloat64()
			if lib.Degree(k) == 2 && allEven(lib.Exponents(k)) {
				co = 1 + r.Float64() // keep V roughly positive definite
			}
			c.V.Coefficients = append(c.V.Coefficients, co/3)
		}
		c.Level = 0.5 + r.Float64()
		if withBox {
			for j := range n {
				w := c.Scale[j] * (0.5 + r.Float64())
				c.Box = append(c.Box, [2]float64{c.Equilibrium[j] - w, c.Equilibrium[j] + w*0.7})
			}
		}
		return c
	}
	return map[string]*fit.Certificate{
		"quadratic2":    mk(2, 2, 2, true, []string{"theta", "omega"}),
		"quartic3":      mk(3, 2, 4, true, hostile),
		"sextic2-nobox": mk(2, 2, 6, false, []string{"a", "b"}),
		"quadratic4":    mk(4, 2, 2, true, []string{"p", "q", "r", "s"}),
	}
}

func allEven(e []int) bool {
	for _, q := range e {
		if q%2 != 0 {
			return false
		}
	}
	return true
}

// pointsFor draws points around the box (or equilibrium), about half inside.
func pointsFor(c *fit.Certificate) [][]float64 {
	r := rand.New(rand.NewPCG(11, 0))
	out := make([][]float64, points)
	spread := 1.5 / math.Sqrt(float64(len(c.States))/2)
	for i := range out {
		x := make([]float64, len(c.States))
		for j := range x {
			x[j] = c.Equilibrium[j] + c.Scale[j]*spread*(2*r.Float64()-1)
		}
		if i == 0 {
			copy(x, c.Equilibrium) // V = 0 exactly
		}
		out[i] = x
	}
	return out
}

func writePoints(t *testing.T, dir string, pts [][]float64) string {
	var b bytes.Buffer
	for _, x := range pts {
		for j, v := range x {
			if j > 0 {
				b.WriteByte(' ')
			}
			b.WriteString(strconv.FormatFloat(v, 'g', -1, 64))
		}
		b.WriteByte('\n')
	}
	p := filepath.Join(dir, "points.txt")
	if err := os.WriteFile(p, b.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

const goHarness = `package main

import (
	"bufio"
	"encoding/hex"
	"fmt"
	"os"
	"strconv"
	"strings"

	"m/basinv"
)

func main() {
	var names []string
	for _, s := range basinv.States {
		names = append(names, hex.EncodeToString([]byte(s)))
	}
	fmt.Println(strings.Join(names, ","))
	f, _ := os.Open(os.Args[1])
	sc := bufio.NewScanner(f)
	w := bufio.NewWriter(os.Stdout)
	defer w.Flush()
	for sc.Scan() {
		var x [basinv.N]float64
		for j, s := range strings.Fields(sc.Text()) {
			x[j], _ = strconv.ParseFloat(s, 64)
		}
		in := 0
		if basinv.Inside(&x) {
			in = 1
		}
		fmt.Fprintf(w, "%s %d\n", strconv.FormatFloat(basinv.V(&x), 'g', -1, 64), in)
	}
}
`

const cHarness = `#include <stdio.h>
#include <string.h>
#include "v.c"

int main(int argc, char **argv)
{
	FILE *f = fopen(argv[1], "r");
	double x[BASIN_N];
	int j;
	size_t i;
	(void)argc;
	for (j = 0; j < BASIN_N; j++) {
		const char *s = basin_states[j];
		if (j > 0)
			putchar(',');
		for (i = 0; i < strlen(s); i++)
			printf("%02x", (unsigned char)s[i]);
	}
	putchar('\n');
	if (basin_units[0] == NULL)
		return 1;
	for (;;) {
		for (j = 0; j < BASIN_N; j++)
			if (fscanf(f, "%lf", &x[j]) != 1)
				return 0;
		printf("%.17g %d\n", basin_v(x), basin_inside(x));
	}
}
`

const pyHarness = `import sys
sys.path.insert(0, sys.argv[1])
import basinv
print(",".join(s.encode("utf-8").hex() for s in basinv.STATES))
out = []
with open(sys.argv[2]) as f:
    for line in f:
        x = [float(s) for s in line.split()]
        out.append("%r %d" % (basinv.v(x), 1 if basinv.inside(x) else 0))
print("\n".join(out))
`

// run builds and runs the generated code in lang and returns its output.
func run(t *testing.T, lang string, src []byte, dir, pts string) []byte {
	t.Helper()
	var cmd *exec.Cmd
	switch lang {
	case Go:
		if _, err := exec.LookPath("go"); err != nil {
			t.Skip("no go tool")
		}
		os.MkdirAll(filepath.Join(dir, "basinv"), 0o755)
		os.WriteFile(filepath.Join(dir, "go.mod"), []byte("module m\n\ngo 1.22\n"), 0o644)
		os.WriteFile(filepath.Join(dir, "basinv", "v.go"), src, 0o644)
		os.WriteFile(filepath.Join(dir, "main.go"), []byte(goHarness), 0o644)
		vet := exec.Command("go", "vet", "./...")
		vet.Dir = dir
		vet.Env = append(os.Environ(), "GOTOOLCHAIN=local", "GOPROXY=off", "GOWORK=off", "GOFLAGS=")
		if out, err := vet.CombinedOutput(); err != nil {
			t.Fatalf("go vet of the generated code: %v\n%s\n%s", err, out, src)
		}
		cmd = exec.Command("go", "run", ".", pts)
		cmd.Env = vet.Env
	case C:
		cc, err := exec.LookPath("cc")
		if err != nil {
			t.Skip("no C compiler")
		}
		os.WriteFile(filepath.Join(dir, "v.c"), src, 0o644)
		os.WriteFile(filepath.Join(dir, "main.c"), []byte(cHarness), 0o644)
		bin := filepath.Join(dir, "harness")
		build := exec.Command(cc, "-std=c99", "-pedantic", "-Wall", "-Wextra", "-Werror", "-O2",
			"-ffp-contract=off", "-o", bin, "main.c")
		build.Dir = dir
		if out, err := build.CombinedOutput(); err != nil {
			t.Fatalf("cc: %v\n%s\n%s", err, out, src)
		}
		cmd = exec.Command(bin, pts)
	case Python:
		py, err := exec.LookPath("python3")
		if err != nil {
			t.Skip("no python3")
		}
		os.WriteFile(filepath.Join(dir, "basinv.py"), src, 0o644)
		os.WriteFile(filepath.Join(dir, "harness.py"), []byte(pyHarness), 0o644)
		cmd = exec.Command(py, "-B", "harness.py", dir, pts)
	}
	cmd.Dir = dir
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("%s: %v\n%s", lang, err, stderr.Bytes())
	}
	return out
}

// TestGeneratedAgrees compiles and runs the generated Go, C and Python on
// 10,000 points per certificate and compares with basin's own evaluation.
func TestGeneratedAgrees(t *testing.T) {
	if testing.Short() {
		t.Skip("compiles and runs external programs")
	}
	certs := testCerts()
	for _, name := range []string{"quadratic2", "quartic3", "sextic2-nobox", "quadratic4"} {
		c := certs[name]
		pts := pointsFor(c)
		want := make([]float64, len(pts))
		wantIn := make([]bool, len(pts))
		z := make([]float64, len(c.States))
		nIn := 0
		for i, x := range pts {
			want[i] = c.V.Eval(c.Z(z, x))
			wantIn[i] = c.Inside(x, want[i])
			if wantIn[i] {
				nIn++
			}
		}
		if nIn < points/20 || nIn > points-points/20 {
			t.Fatalf("%s: %d of %d points inside: the test points do not exercise both sides", name, nIn, points)
		}
		for _, lang := range []string{Go, C, Python} {
			t.Run(name+"/"+lang, func(t *testing.T) {
				t.Parallel()
				var src bytes.Buffer
				if err := Write(&src, c, lang, nil); err != nil {
					t.Fatal(err)
				}
				dir := t.TempDir()
				out := run(t, lang, src.Bytes(), dir, writePoints(t, dir, pts))
				sc := bufio.NewScanner(bytes.NewReader(out))
				sc.Scan()
				var names []string
				for _, h := range strings.Split(sc.Text(), ",") {
					b, err := hex.DecodeString(h)
					if err != nil {
						t.Fatalf("names line %q: %v", sc.Text(), err)
					}
					names = append(names, string(b))
				}
				if strings.Join(names, "\x00") != strings.Join(c.States, "\x00") {
					t.Errorf("state names read back %q, want %q", names, c.States)
				}
				i, worst := 0, 0.0
				for sc.Scan() {
					f := strings.Fields(sc.Text())
					if len(f) != 2 || i >= len(pts) {
						t.Fatalf("line %d: %q", i+1, sc.Text())
					}
					got, err := strconv.ParseFloat(f[0], 64)
					if err != nil {
						t.Fatalf("line %d: %v", i+1, err)
					}
					d := math.Abs(got-want[i]) / math.Max(math.Abs(want[i]), math.SmallestNonzeroFloat64)
					if want[i] == 0 {
						d = math.Abs(got)
					}
					worst = max(worst, d)
					if !(d <= relTol) {
						t.Fatalf("point %d %v: V = %v, basin %v (rel %g)", i, pts[i], got, want[i], d)
					}
					if (f[1] == "1") != wantIn[i] && !scalar.EqualWithinAbs(want[i], c.Level, relTol*c.Level) {
						t.Fatalf("point %d %v: inside = %s, basin %v (V %v, level %v)", i, pts[i], f[1], wantIn[i], want[i], c.Level)
					}
					i++
				}
				if i != len(pts) {
					t.Fatalf("%d results for %d points", i, len(pts))
				}
				t.Logf("%d points, worst relative difference %g", i, worst)
			})
		}
	}
}

func TestWriteErrors(t *testing.T) {
	c := testCerts()["quadratic2"]
	cases := []struct {
		name string
		cert *fit.Certificate
		lang string
		opts *Options
		want error
	}{
		{"lang", c, "fortran", nil, ErrLang},
		{"no V", &fit.Certificate{States: []string{"a"}}, Go, nil, ErrNoV},
		{"package", c, Go, &Options{Package: "a-b"}, ErrName},
		{"prefix", c, C, &Options{Prefix: "1x"}, ErrName},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			if err := Write(&bytes.Buffer{}, tc.cert, tc.lang, tc.opts); !errors.Is(err, tc.want) {
				t.Fatalf("err = %v, want %v", err, tc.want)
			}
		})
	}
}

// TestConstantsRoundTrip checks that every constant printed parses back to
// the same float64 (strconv 'g' -1 is the shortest round-trip form).
func TestConstantsRoundTrip(t *testing.T) {
	for _, x := range []float64{0.1, 1.0 / 3, 1e-300, 5e-324, math.MaxFloat64, -2.5e17, 3, 0, math.Nextafter(1, 2)} {
		s := num(x)
		y, err := strconv.ParseFloat(s, 64)
		if err != nil || y != x {
			t.Errorf("num(%v) = %q, parses to %v, %v", x, s, y, err)
		}
		if !strings.ContainsAny(s, ".eE") {
			t.Errorf("num(%v) = %q is not a floating literal", x, s)
		}
	}
}
