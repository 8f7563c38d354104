package ingest

import (
	"context"
	"errors"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
)

func writeFiles(t *testing.T, dir string, files map[string]string) {
	t.Helper()
	for name, body := range files {
		p := filepath.Join(dir, name)
		if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(p, []byte(body), 0o644); err != nil {
			t.Fatal(err)
		}
	}
}

func TestLoad(t *testing.T) {
	dir := t.TempDir()
	writeFiles(t, dir, map[string]string{
		"logs/b.csv":       "t,a [V]\n0,1\n1,2\n",
		"logs/a.tsv":       "t\ta [V]\n0\t3\n1\t4\n",
		"logs/notes.md":    "ignored",
		"logs/.hidden.csv": "broken",
		"logs/sub/c.csv":   "not read: folders are not entered",
		"manifest.csv":     "path,run,split\nlogs/b.csv,,holdout\nlogs/a.tsv,a.tsv,fit\n",
	})
	ctx := context.Background()
	files, err := Expand([]string{filepath.Join(dir, "logs")})
	if err != nil {
		t.Fatal(err)
	}
	if want := []string{filepath.Join(dir, "logs/a.tsv"), filepath.Join(dir, "logs/b.csv")}; !slices.Equal(files, want) {
		t.Errorf("Expand = %v, want %v", files, want)
	}
	ds, err := Load(ctx, []string{filepath.Join(dir, "logs"), "-"},
		&Options{Manifest: filepath.Join(dir, "manifest.csv"), Stdin: strings.NewReader("t,a [V]\n5,6\n6,7\n")})
	if err != nil {
		t.Fatal(err)
	}
	var got []string
	for _, r := range ds.Runs {
		got = append(got, r.Name+":"+r.Split)
	}
	if want := []string{"a.tsv:fit", "b.csv:holdout", "-:"}; !slices.Equal(got, want) {
		t.Errorf("runs %v, want %v", got, want)
	}
	if ds.States[0] != (Column{"a", "V"}) {
		t.Errorf("states %v", ds.States)
	}
	// manifest alone: its files
	ds, err = Load(ctx, nil, &Options{Manifest: filepath.Join(dir, "manifest.csv")})
	if err != nil || len(ds.Runs) != 2 {
		t.Fatalf("manifest only: %v, %v", err, ds)
	}
}

func TestLoadErrors(t *testing.T) {
	dir := t.TempDir()
	writeFiles(t, dir, map[string]string{
		"one.csv":    "t,a\n0,1\n",
		"two.csv":    "t,b\n0,1\n",
		"unit.csv":   "t,a [m]\n0,1\n",
		"bad.csv":    "t,a\n0,x\n",
		"empty/x.md": "",
		"m1.csv":     "path,run,split\nnowhere.csv,,\n",
		"m2.csv":     "path,run,split\none.csv,,test\n",
		"m3.csv":     "file,split\none.csv,fit\n",
		"m4.csv":     "path,run,split\none.csv,one.csv,fit\none.csv,R9,holdout\n",
		"long.csv":   "run,t,a\nA,0,1\nA,1,2\nB,0,3\nB,1,4\n",
		"m5.csv":     "path,run,split\nlong.csv,A,holdout\nlong.csv,C,holdout\n",
		"long2.csv":  "run,t,a\nA,0,1\nA,1,2\nB,2,3\nB,3,4\n",
		"m6.csv":     "path,run,split\nlong2.csv,A,holdout\n",
	})
	p := func(n string) string { return filepath.Join(dir, n) }
	for _, tc := range []struct {
		name  string
		paths []string
		opts  *Options
		err   error
		msg   string
	}{
		{"columns differ", []string{p("one.csv"), p("two.csv")}, nil, ErrColumns, p("two.csv") + ": columns differ from the first file's: " + p("two.csv") + " has [b], " + p("one.csv") + " has [a]"},
		{"units differ", []string{p("one.csv"), p("unit.csv")}, nil, ErrColumns, ""},
		{"first error in order", []string{p("one.csv"), p("bad.csv"), p("two.csv")}, nil, ErrNotNumber, p("bad.csv") + `:2:2: column "a": not a number "x"`},
		{"no readable files", []string{p("empty")}, nil, ErrNoFiles, p("empty") + ": no .csv, .tsv, .txt or .parquet files"},
		{"missing file", []string{p("nope.csv")}, nil, fs.ErrNotExist, ""},
		{"manifest names a missing file", []string{p("one.csv")}, &Options{Manifest: p("m1.csv")}, ErrManifest, p("m1.csv") + `:2: column "path": bad manifest entry: ` + p("nowhere.csv") + ": no such file or directory"},
		{"manifest bad split", []string{p("one.csv")}, &Options{Manifest: p("m2.csv")}, ErrManifest, p("m2.csv") + `:2: column "split": bad manifest entry: split "test" (want fit, holdout or empty)`},
		{"manifest bad header", []string{p("one.csv")}, &Options{Manifest: p("m3.csv")}, ErrManifest, ""},
		{"manifest names no run of its file", []string{p("one.csv")}, &Options{Manifest: p("m4.csv")}, ErrManifest, p("m4.csv") + `:3: column "run": bad manifest entry: no run "R9" in ` + p("one.csv") + ` (without Options.RunCol the file is one run, "one.csv")`},
		{"manifest names run values, no run column", []string{p("long2.csv")}, &Options{Manifest: p("m6.csv")}, ErrManifest, p("m6.csv") + `:2: column "run": bad manifest entry: no run "A" in ` + p("long2.csv") + ` (without Options.RunCol the file is one run, "long2.csv")`},
		{"manifest names no run value of a long file", []string{p("long.csv")}, &Options{Manifest: p("m5.csv"), RunCol: "run"}, ErrManifest, p("m5.csv") + `:3: column "run": bad manifest entry: no run "C" in ` + p("long.csv")},
		{"stdin twice", []string{"-", "-"}, nil, ErrFormat, ""},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := Load(context.Background(), tc.paths, tc.opts)
			if !errors.Is(err, tc.err) {
				t.Fatalf("err = %v, want %v", err, tc.err)
			}
			if tc.msg != "" && err.Error() != tc.msg {
				t.Errorf("message\n got %s\nwant %s", err, tc.msg)
			}
		})
	}
}

func TestSummarise(t *testing.T) {
	// Run a settles: it decays, and over its last tenth (10 samples of
	// 100) it moves by less than a hundredth of its range. Run b
	// oscillates with constant amplitude (20 samples a period), a spread
	// no noise explains.
	var sa, sb strings.Builder
	sa.WriteString("t,x,y\n")
	sb.WriteString("t,x,y\n")
	for i := range 100 {
		ti := float64(i) * 0.01
		if i == 50 {
			ti += 0.002 // one uneven step: jitter is the IQR of steps over their median
		}
		x := 1.0
		for range i {
			x *= 0.9
		}
		sa.WriteString(ftoa(ti) + "," + ftoa(2+x) + "," + ftoa(-x) + "\n")
		sb.WriteString(ftoa(float64(i)*0.01) + "," + ftoa(math.Sin(2*math.Pi*float64(i)/20)) + ",1\n")
	}
	dir := t.TempDir()
	writeFiles(t, dir, map[string]string{"a.csv": sa.String(), "b.csv": sb.String()})
	ds, err := Load(context.Background(), []string{dir}, nil)
	if err != nil {
		t.Fatal(err)
	}
	s := Summarise(ds)
	a, b := s.Runs[0], s.Runs[1]
	if !a.Settled || b.Settled || s.SettledRuns != 1 {
		t.Fatalf("settled a=%v b=%v n=%d", a.Settled, b.Settled, s.SettledRuns)
	}
	// the median of the last 5 values of 2+0.9^i, i = 95..99, is 2+0.9^97
	x97 := 1.0
	for range 97 {
		x97 *= 0.9
	}
	if a.Settle[0] != atof(ftoa(2+x97)) || s.Settle[1] != atof(ftoa(-x97)) {
		t.Errorf("settle %v / %v, want %v", a.Settle, s.Settle, 2+x97)
	}
	if a.Samples != 100 || s.Total.Samples != 200 || s.Files != 2 {
		t.Errorf("samples %d total %d files %d", a.Samples, s.Total.Samples, s.Files)
	}
	// 99 steps of 0.01 s with two perturbed (0.012, 0.008): median 0.01,
	// quartiles 0.01; rate 100 Hz to rounding of the decimal times.
	if !scalar.EqualWithinAbs(a.RateHz, 100, 1e-9) || !(a.Jitter <= 1e-9) {
		t.Errorf("rate %v jitter %v", a.RateHz, a.Jitter)
	}
	if s.States[1].Min != -1 || s.States[1].Max != 1 {
		t.Errorf("y range %v..%v", s.States[1].Min, s.States[1].Max)
	}
}

// TestLoadManifestRuns checks which runs a manifest's run entries reach:
// a run value of a long file, and an entry about a file that is not among
// the inputs (left alone, not an error).
func TestLoadManifestRuns(t *testing.T) {
	dir := t.TempDir()
	writeFiles(t, dir, map[string]string{
		"one.csv":  "t,a\n0,1\n1,2\n",
		"long.csv": "run,t,a\nA,0,1\nA,1,2\nB,0,3\nB,1,4\n",
		"m1.csv":   "path,run,split\nlong.csv,A,holdout\nlong.csv,B,fit\n",
		"m2.csv":   "path,run,split\nlong.csv,C,holdout\none.csv,,holdout\n",
	})
	p := func(n string) string { return filepath.Join(dir, n) }
	for _, tc := range []struct {
		name     string
		paths    []string
		manifest string
		runCol   string
		want     []string
	}{
		{"run values of a long file", []string{p("long.csv")}, p("m1.csv"), "run", []string{"long.csv#A:holdout", "long.csv#B:fit"}},
		{"entry about a file not read", []string{p("one.csv")}, p("m2.csv"), "", []string{"one.csv:holdout"}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			ds, err := Load(context.Background(), tc.paths, &Options{Manifest: tc.manifest, RunCol: tc.runCol})
			if err != nil {
				t.Fatal(err)
			}
			var got []string
			for _, r := range ds.Runs {
				got = append(got, r.Name+":"+r.Split)
			}
			if !slices.Equal(got, tc.want) {
				t.Errorf("runs %v, want %v", got, tc.want)
			}
		})
	}
}
