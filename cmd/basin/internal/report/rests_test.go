package report

import (
	"fmt"
	"strings"
	"testing"
)

// TestRestHeader: the rest-point header counts what the list below it
// lists (certificates and rest points without one) and states its order:
// the certificates as their files are numbered (falling in the runs
// settling there, certificate.json first when it has fewer), then the
// rest points without one. The entries' counts and order are read back
// from the list itself, so the check does not restate restHeader.
func TestRestHeader(t *testing.T) {
	for _, tc := range []struct {
		name   string
		runs   []int // runs settling at each certificate's rest point
		skips  []string
		header string
	}{
		{"two, falling", []int{8, 6}, nil, "rest points: 2, each with a certificate, in falling order of the runs settling there (as the files are numbered)"},
		{"picked first", []int{6, 8, 3}, nil, "rest points: 3, each with a certificate, certificate.json first, then the others in falling order of the runs settling there (as the files are numbered)"},
		{"one skipped", []int{8, 6}, []string{"the rest point at x = 0 (3 runs settle there): a saddle"},
			"rest points: 3: 2 with a certificate, in falling order of the runs settling there (as the files are numbered); then 1 without one"},
		{"only skips", []int{8}, []string{"the rest point at x = 0 (3 runs): a saddle", "the rest point at x = 2 (1 run): none near"},
			"rest points: 3: 1 with a certificate (certificate.json); then 2 without one, in falling order of the runs settling there"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			c := mustCert(fixtureCertJSON)
			in := fixture(c, nil)
			for i, r := range tc.runs {
				file := "certificate.json"
				if i > 0 {
					file = fmt.Sprintf("certificate-%d.json", i+1)
				}
				in.Rests = append(in.Rests, Rest{File: file, Cert: c, Runs: r})
			}
			in.Skipped = tc.skips
			var b strings.Builder
			if err := Summary(&b, in); err != nil {
				t.Fatal(err)
			}
			_, sec, ok := strings.Cut(b.String(), "\nrest points: ")
			if !ok {
				t.Fatalf("no rest-point header:\n%s", b.String())
			}
			sec, _, _ = strings.Cut(sec, "\ncaveat:")
			lines := strings.Split(sec, "\n")
			if got := "rest points: " + lines[0]; got != tc.header {
				t.Errorf("header\n%s\nwant\n%s", got, tc.header)
			}
			// the list: one "  certificate...json:" line per certificate,
			// then one "  no certificate:" line per skip, in that order
			var files, skips []string
			for _, l := range lines[1:] {
				switch {
				case strings.HasPrefix(l, "  certificate"):
					if len(skips) > 0 {
						t.Errorf("certificate %q listed after a rest point without one", l)
					}
					files = append(files, strings.TrimSuffix(strings.Fields(l)[0], ":"))
				case strings.HasPrefix(l, "  no certificate: "):
					skips = append(skips, strings.TrimPrefix(l, "  no certificate: "))
				}
			}
			if len(files) != len(tc.runs) || len(skips) != len(tc.skips) {
				t.Fatalf("listed %d certificates and %d without, want %d and %d:\n%s", len(files), len(skips), len(tc.runs), len(tc.skips), sec)
			}
			for i, f := range files {
				if f != in.Rests[i].File {
					t.Errorf("entry %d is %s, want %s (the files' order)", i, f, in.Rests[i].File)
				}
			}
			total := fmt.Sprintf("rest points: %d", len(files)+len(skips))
			if !strings.HasPrefix(tc.header, total+",") && !strings.HasPrefix(tc.header, total+":") {
				t.Errorf("the case's header does not count the %d entries", len(files)+len(skips))
			}
		})
	}
}
