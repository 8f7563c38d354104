package main

import (
	"bytes"
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// TestInspectBadInput: each bad input exits 2 with one line on stderr
// naming the file (and line and column where there is one), prints
// nothing on stdout and writes no file.
func TestInspectBadInput(t *testing.T) {
	bad := filepath.Join("..", "..", "testdata", "bad")
	for _, tc := range []struct {
		name string
		args []string
		want string // a part of the stderr line
	}{
		{"empty file", []string{"empty.csv"}, "empty.csv: no samples: no header line"},
		{"header only", []string{"header-only.csv"}, "header-only.csv: no samples: a header but no data rows"},
		{"non-numeric cell", []string{"not-a-number.csv"}, `not-a-number.csv:4:2: column "theta": not a number "0.1O"`},
		// the same typo in the first data row, numbers after it: not a text column to ignore
		{"non-numeric first cell", []string{"first-cell-typo.csv"}, `first-cell-typo.csv:2:2: column "theta": not a number "0.1O"`},
		{"number beyond float64 in the first row", []string{"out-of-range.csv"}, `out-of-range.csv:2:3: column "v": not a number: "1e400" is infinite or out of range`},
		{"ragged rows", []string{"ragged.csv"}, "ragged.csv:3:2: wrong number of fields: 2, the header has 3"},
		{"time repeats", []string{"time-repeats.csv"}, `time-repeats.csv:4:1: column "t": time does not increase: repeats`},
		{"time reverses", []string{"time-reverses.csv"}, `time-reverses.csv:4:1: column "t": time does not increase: goes back`},
		{"column all missing", []string{"all-missing.csv"}, `all-missing.csv: column "omega": every cell is missing`},
		{"text named .parquet", []string{"not-parquet.parquet"}, "not-parquet.parquet: not a readable log file: not a Parquet file"},
		{"truncated parquet", []string{"truncated.parquet"}, "truncated.parquet: not a readable log file: truncated Parquet file"},
		{"binary named .csv", []string{"garbage.csv"}, "garbage.csv: not a readable log file: binary data, not text"},
		{"folder without logs", []string{"nofiles"}, "nofiles: no .csv, .tsv, .txt or .parquet files"},
		{"manifest names a missing file", []string{"--manifest", "manifest-missing.csv", "ok.csv"}, `manifest-missing.csv:3: column "path": bad manifest entry:`},
		{"no such file", []string{"nope.csv"}, "nope.csv: no such file or directory"},
		{"no inputs", nil, "no INPUTS given"},
		{"stdin ragged", []string{"-"}, "-:3:2: wrong number of fields"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			args := []string{"inspect"}
			for _, a := range tc.args {
				if strings.HasSuffix(a, ".csv") || strings.HasSuffix(a, ".parquet") || a == "nofiles" {
					a = filepath.Join(bad, a)
				}
				args = append(args, a)
			}
			stdin, err := os.ReadFile(filepath.Join(bad, "ragged.csv"))
			if err != nil {
				t.Fatal(err)
			}
			before := listDir(t, ".")
			var stdout, stderr bytes.Buffer
			code := basinMainIn(context.Background(), args, &stdout, &stderr, bytes.NewReader(stdin))
			if code != 2 {
				t.Errorf("exit %d, want 2; stderr %q", code, stderr.String())
			}
			if stdout.Len() != 0 {
				t.Errorf("stdout %q, want nothing", stdout.String())
			}
			msg := stderr.String()
			if strings.Count(msg, "\n") != 1 || !strings.HasPrefix(msg, "basin inspect: ") || !strings.Contains(msg, tc.want) {
				t.Errorf("stderr %q, want one line containing %q", msg, tc.want)
			}
			if after := listDir(t, "."); after != before {
				t.Errorf("files written: %s", after)
			}
		})
	}
}

// TestRunOutOfRange: run, like inspect, refuses a log whose first data
// row holds a number beyond float64's range (1e400; the largest float64
// is about 1.798e308 [IEEE754]) with one line naming file, line and
// column, exit 2 and no output folder; the column was taken for text and
// the run went on without that state.
func TestRunOutOfRange(t *testing.T) {
	out := filepath.Join(t.TempDir(), "out")
	in := filepath.Join("..", "..", "testdata", "bad", "out-of-range.csv")
	code, msg := run1(t, "run", "--out", out, in)
	want := `basin run: ` + in + `:2:3: column "v": not a number: "1e400" is infinite or out of range`
	if code != 2 || msg != want {
		t.Errorf("exit %d %q, want 2 and %q", code, msg, want)
	}
	if _, err := os.Stat(out); !os.IsNotExist(err) {
		t.Errorf("%s written (stat: %v)", out, err)
	}
}

// TestFirstCellTypoCommands: fit, run, check and screen refuse a log whose
// first data row holds a typo of a number followed by numbers, as inspect
// does (TestInspectBadInput): one line naming file, line and column,
// exit 2, nothing written. The column was taken for text and fit and run
// went on without that state.
func TestFirstCellTypoCommands(t *testing.T) {
	in := filepath.Join("..", "..", "testdata", "bad", "first-cell-typo.csv")
	cert := writeTestCert(t, strings.Replace(certJSON, `["pitch", "rate"]`, `["theta", "omega"]`, 1))
	for _, cmd := range []string{"fit", "run", "check", "screen"} {
		t.Run(cmd, func(t *testing.T) {
			out := filepath.Join(t.TempDir(), "out")
			args := []string{cmd, "--out", out, in}
			if cmd == "check" || cmd == "screen" {
				args = []string{cmd, "--cert", cert, in}
			}
			before := listDir(t, ".")
			code, msg := run1(t, args...)
			want := `basin ` + cmd + `: ` + in + `:2:2: column "theta": not a number "0.1O"`
			if code != 2 || msg != want {
				t.Errorf("exit %d %q, want 2 and %q", code, msg, want)
			}
			if _, err := os.Stat(out); !os.IsNotExist(err) {
				t.Errorf("%s written (stat: %v)", out, err)
			}
			if after := listDir(t, "."); after != before {
				t.Errorf("files written: %s", after)
			}
		})
	}
}

func listDir(t *testing.T, dir string) string {
	t.Helper()
	des, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, d := range des {
		names = append(names, d.Name())
	}
	return strings.Join(names, " ")
}

func TestInspectJSON(t *testing.T) {
	dir := t.TempDir()
	in := "# bench rig\nt [s],theta [rad],omega (rad/s),mode\n"
	for i := range 200 {
		x := 0.0
		if i < 100 {
			x = 1 - float64(i)/100
		}
		cell := "0.5"
		if i == 120 {
			cell = "" // a missing sample: the run splits here
		}
		in += ftoa(float64(i)*0.01) + "," + ftoa(x) + "," + cell + ",idle\n"
	}
	if err := os.WriteFile(filepath.Join(dir, "a.csv"), []byte(in), 0o644); err != nil {
		t.Fatal(err)
	}
	var stdout, stderr bytes.Buffer
	code := basinMainIn(context.Background(), []string{"inspect", dir, "--json"}, &stdout, &stderr, nil)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr.String())
	}
	var doc struct {
		Runs []struct {
			File     string  `json:"file"`
			Run      string  `json:"run"`
			Samples  int     `json:"samples"`
			Start    float64 `json:"start"`
			Duration float64 `json:"duration"`
			RateHz   float64 `json:"rate_hz"`
			Gaps     int     `json:"gaps"`
		} `json:"runs"`
		States []struct {
			Name string `json:"name"`
			Unit string `json:"unit"`
		} `json:"states"`
		Summary struct {
			Runs, Samples, Gaps, Missing int
		} `json:"summary"`
	}
	if err := json.Unmarshal(stdout.Bytes(), &doc); err != nil {
		t.Fatal(err)
	}
	if len(doc.Runs) != 2 || doc.Runs[0].Run != "a.csv" || doc.Runs[1].Run != "a.csv~1" || doc.Runs[0].Samples != 120 ||
		doc.Runs[1].Start != 1.21 || doc.Runs[0].Gaps != 1 || doc.Runs[0].File != filepath.Join(dir, "a.csv") {
		t.Errorf("runs %+v", doc.Runs)
	}
	if len(doc.States) != 2 || doc.States[0].Name != "theta" || doc.States[0].Unit != "rad" || doc.States[1].Unit != "rad/s" {
		t.Errorf("states %+v", doc.States)
	}
	if doc.Summary.Runs != 2 || doc.Summary.Samples != 199 || doc.Summary.Gaps != 1 || doc.Summary.Missing != 1 {
		t.Errorf("summary %+v", doc.Summary)
	}
	// the table form names the same runs
	stdout.Reset()
	if code := basinMainIn(context.Background(), []string{"inspect", dir}, &stdout, &stderr, nil); code != 0 || !strings.Contains(stdout.String(), "a.csv~1") {
		t.Errorf("table: exit %d\n%s", code, stdout.String())
	}
}

func ftoa(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }
