package main

import (
	"bytes"
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestInspectInputs: --inputs takes a column out of the states and
// inspect reports it in an inputs list, in the table and in --json; bad
// input roles exit 2 with one line naming the column.
func TestInspectInputs(t *testing.T) {
	dir := t.TempDir()
	in := "t [s],disp [mm],vel [mm/s],drive [N]\n"
	for i := range 50 {
		in += ftoa(float64(i)*0.01) + "," + ftoa(float64(i%7)) + "," + ftoa(float64(i%5)) + "," + ftoa(float64(i%3)) + "\n"
	}
	path := filepath.Join(dir, "shaker.csv")
	if err := os.WriteFile(path, []byte(in), 0o644); err != nil {
		t.Fatal(err)
	}
	var stdout, stderr bytes.Buffer
	if code := basinMainIn(context.Background(), []string{"inspect", "--inputs", "drive", "--json", path}, &stdout, &stderr, nil); code != 0 {
		t.Fatalf("exit %d: %s", code, stderr.String())
	}
	var doc struct {
		States []struct{ Name, Unit string } `json:"states"`
		Inputs []struct {
			Name, Unit string
			Min, Max   float64
		} `json:"inputs"`
	}
	if err := json.Unmarshal(stdout.Bytes(), &doc); err != nil {
		t.Fatal(err)
	}
	if len(doc.States) != 2 || doc.States[1].Name != "vel" || len(doc.Inputs) != 1 || doc.Inputs[0].Name != "drive" ||
		doc.Inputs[0].Unit != "N" || doc.Inputs[0].Min != 0 || doc.Inputs[0].Max != 2 {
		t.Errorf("states %+v inputs %+v", doc.States, doc.Inputs)
	}
	stdout.Reset()
	if code := basinMainIn(context.Background(), []string{"inspect", "--inputs", "drive", path}, &stdout, &stderr, nil); code != 0 ||
		!strings.Contains(stdout.String(), "drive (input)") {
		t.Errorf("table: exit %d\n%s", code, stdout.String())
	}
	for _, tc := range []struct {
		args []string
		want string
	}{
		{[]string{"--inputs", "drive", "--states", "disp,drive"}, `column "drive": named both as a state and as an input`},
		{[]string{"--inputs", "force"}, `column "force": bad input column: no column has this name`},
		{[]string{"--inputs", "drive,"}, `--inputs: empty name`},
	} {
		stdout.Reset()
		stderr.Reset()
		code := basinMainIn(context.Background(), append(append([]string{"inspect"}, tc.args...), path), &stdout, &stderr, nil)
		if msg := stderr.String(); code != 2 || stdout.Len() != 0 || strings.Count(msg, "\n") != 1 || !strings.Contains(msg, tc.want) {
			t.Errorf("%v: exit %d, stderr %q; want 2 and one line with %q", tc.args, code, msg, tc.want)
		}
	}
}
