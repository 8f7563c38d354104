package main

import (
	"go/parser"
	"go/token"
	"regexp"
	"strings"
	"testing"
)

// helpFlags returns the flags 'basin help NAME' lists.
func helpFlags(t *testing.T, name string) []string {
	t.Helper()
	var out, errb strings.Builder
	if code := basinMain(t.Context(), []string{"help", name}, &out, &errb); code != 0 {
		t.Fatalf("help %s: exit %d: %s", name, code, errb.String())
	}
	var flags []string
	for _, line := range strings.Split(out.String(), "\n") {
		if strings.HasPrefix(line, "  --") {
			flags = append(flags, strings.Fields(line)[0])
		}
	}
	return flags
}

// TestDocMentionsEveryFlag keeps doc.go, the manual that go doc shows,
// true to the flags: every command has a section, and every flag the
// command accepts is named in its section (or, for the input flags, in
// "Reading logs", which the section refers to).
func TestDocMentionsEveryFlag(t *testing.T) {
	f, err := parser.ParseFile(token.NewFileSet(), "doc.go", nil, parser.ParseComments|parser.PackageClauseOnly)
	if err != nil {
		t.Fatal(err)
	}
	doc := f.Doc.Text()
	sections := map[string]string{}
	for _, s := range strings.Split(doc, "\n# ")[1:] {
		title, body, _ := strings.Cut(s, "\n")
		sections[title] = body
	}
	reading := sections["Reading logs"]
	if reading == "" {
		t.Fatal("doc.go has no Reading logs section")
	}
	inputFlags := map[string]bool{"--inputs": true, "--time-col": true, "--rate": true, "--run-col": true, "--states": true, "--manifest": true,
		"--from": true, "--to": true, "--keep-head": true, "--keep-events": true, "--average": true}
	for _, c := range commands {
		name := c.Name()
		if name == "help" || name == "version" {
			continue
		}
		body, ok := sections["basin "+name]
		if !ok {
			t.Errorf("doc.go has no section %q", "basin "+name)
			continue
		}
		flags := helpFlags(t, name)
		if len(flags) == 0 {
			t.Errorf("%s: help lists no flags", name)
		}
		for _, fl := range flags {
			word := regexp.MustCompile(regexp.QuoteMeta(fl) + `\b`)
			if word.MatchString(body) {
				continue
			}
			if inputFlags[fl] && strings.Contains(body, "Reading logs") && word.MatchString(reading) {
				continue
			}
			t.Errorf("doc.go section %q does not mention %s", "basin "+name, fl)
		}
	}
}

// TestNoIgnoredFlags: a command does not accept a flag it has no use for.
func TestNoIgnoredFlags(t *testing.T) {
	for _, tc := range []struct{ cmd, flag string }{
		{"certify", "--degree"}, {"certify", "--folds"}, {"certify", "--select-folds"}, {"certify", "--bootstrap"},
		{"fit", "--v-degree"}, {"fit", "--folds"}, {"fit", "--growth"},
		{"inspect", "--out"}, {"check", "--out"}, {"screen", "--manifest"}, {"screen", "--out"},
		{"export", "--json"}, {"demo", "--degree"},
	} {
		var out, errb strings.Builder
		code := basinMain(t.Context(), []string{tc.cmd, tc.flag, "1", "x.csv"}, &out, &errb)
		if code != 2 || !strings.Contains(errb.String(), "not defined: "+tc.flag) {
			t.Errorf("%s %s: exit %d, stderr %q; want 2 and the flag refused", tc.cmd, tc.flag, code, errb.String())
		}
	}
}

// TestOneDefaultPerFlag: a flag that several commands share has the same
// default in each.
func TestOneDefaultPerFlag(t *testing.T) {
	defaults := map[string]string{}
	where := map[string]string{}
	re := regexp.MustCompile(`\(default ([^)]*)\)`)
	for _, c := range commands {
		if c.Name() == "demo" { // demo's --out and --seed are the demo's own
			continue
		}
		var out, errb strings.Builder
		basinMain(t.Context(), []string{"help", c.Name()}, &out, &errb)
		lines := strings.Split(out.String(), "\n")
		for i, line := range lines {
			if !strings.HasPrefix(line, "  --") || i+1 >= len(lines) {
				continue
			}
			fl := strings.Fields(line)[0]
			d := ""
			if m := re.FindStringSubmatch(lines[i+1]); m != nil {
				d = m[1]
			}
			if prev, ok := defaults[fl]; ok && prev != d {
				t.Errorf("%s: default %q in %s, %q in %s", fl, prev, where[fl], d, c.Name())
			}
			defaults[fl], where[fl] = d, c.Name()
		}
	}
	if defaults["--growth"] == "" {
		t.Error("no command lists --growth with a default")
	}
}
