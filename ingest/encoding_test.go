package ingest

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"path/filepath"
	"strings"
	"testing"
	"unicode/utf8"

	"golang.org/x/text/encoding/charmap"
	"gonum.org/v1/gonum/floats/scalar"
)

// TestCP1252: every byte from 0x80 to 0xFF decodes as the independent
// table of golang.org/x/text/encoding/charmap [xtext] decodes it, and the
// five bytes that table maps to U+FFFD (undefined in the code page) are
// refused; spot values from the Unicode Consortium's CP1252.TXT [CP1252].
func TestCP1252(t *testing.T) {
	undefined := 0
	for b := 0x80; b <= 0xFF; b++ {
		want := charmap.Windows1252.DecodeByte(byte(b))
		s, latin, bad := decodeText([]byte{'a', byte(b), 'z'})
		switch {
		case want == utf8.RuneError:
			undefined++
			if bad != 1 || s != "" || !latin {
				t.Errorf("byte %#x: %q latin %v bad %d, want refused at 1", b, s, latin, bad)
			}
		case bad >= 0 || !latin || s != "a"+string(want)+"z":
			t.Errorf("byte %#x: %q latin %v bad %d, want %q", b, s, latin, bad, "a"+string(want)+"z")
		}
	}
	if undefined != 5 { // 0x81, 0x8D, 0x8F, 0x90, 0x9D [CP1252]
		t.Errorf("%d undefined bytes, want 5", undefined)
	}
	for _, c := range []struct {
		b    byte
		want rune
	}{{0x80, '€'}, {0x9F, 'Ÿ'}, {0xB0, '°'}, {0xB5, '\u00b5'}, {0xB2, '²'}, {0xFC, 'ü'}} { // [CP1252]
		if s, _, _ := decodeText([]byte{c.b}); s != string(c.want) {
			t.Errorf("byte %#x: %q, want %q", c.b, s, c.want)
		}
	}
	// UTF-8 is kept as it is, the bytes of "°" not read as "Â°"
	if s, latin, bad := decodeText([]byte("Temperatur [°C]")); s != "Temperatur [°C]" || latin || bad != -1 {
		t.Errorf("UTF-8: %q latin %v bad %d", s, latin, bad)
	}
}

// TestReadCSVEncoding: a file whose text is not UTF-8 is read as
// Windows-1252 with one warning naming the file and the code page; text
// that fits neither, and UTF-16, are errors with a line and column. Each
// case is read whole and streamed, and both must agree. The byte values
// are from [CP1252] (0xB0 the degree sign, 0xB5 the micro sign, 0xFC ü).
func TestReadCSVEncoding(t *testing.T) {
	rows := func(n int) string { // a decaying state, 20 samples
		var sb strings.Builder
		for i := range n {
			sb.WriteString(ftoa(float64(i)/10) + ";" + ftoa(1/(1+float64(i))) + ";" + ftoa(2/(1+float64(i))) + "\n")
		}
		return sb.String()
	}
	for _, c := range []struct {
		name  string
		in    string
		opts  *Options
		names []string // states, then their units
		units []string
		runs  []string // run names
		warn  string   // in the one encoding warning ("" for none)
		err   string   // in the error ("" for none)
		line  int
		col   int
	}{
		{name: "latin-1 header", in: "Zeit [s];Temperatur [\xb0C];Weg [\xb5m]\n" + rows(20), opts: &Options{TimeCol: "Zeit"},
			names: []string{"Temperatur", "Weg"}, units: []string{"°C", "\u00b5m"}, runs: []string{"f.csv"},
			warn: `f.csv:1:2: header cell "Temperatur [°C]" is not UTF-8 text: the file's text is read as Windows-1252 (Latin-1)`},
		{name: "utf-8 header", in: "t [s];Temperatur [°C];Weg [µm]\n" + rows(20),
			names: []string{"Temperatur", "Weg"}, units: []string{"°C", "µm"}, runs: []string{"f.csv"}},
		{name: "utf-8 BOM", in: "\ufefft [s];Temperatur [°C];Weg [µm]\n" + rows(20),
			names: []string{"Temperatur", "Weg"}, units: []string{"°C", "µm"}, runs: []string{"f.csv"}},
		// the time unit parser takes the micro sign that 0xB5 decodes to:
		// 0.1 us steps, 1e-7 s
		{name: "latin-1 time unit", in: "time [\xb5s];a;b\n" + rows(20),
			names: []string{"a", "b"}, units: []string{"", ""}, runs: []string{"f.csv"},
			warn: `f.csv:1:1: header cell "time [µs]"`},
		// cell by cell: the UTF-8 "°" stays "°" (not "Â°"), the Latin-1
		// "µ" is decoded
		{name: "mixed header", in: "t [s];a [°C];b [\xb5m]\n" + rows(20),
			names: []string{"a", "b"}, units: []string{"°C", "\u00b5m"}, runs: []string{"f.csv"},
			warn: `f.csv:1:3: header cell "b [µm]" is not UTF-8 text`},
		{name: "latin-1 units row", in: "t;a;b\ns;\xb0C;\xb5m\n" + rows(20),
			names: []string{"a", "b"}, units: []string{"°C", "µm"}, runs: []string{"f.csv"},
			warn: `f.csv:2:2: unit "°C" is not UTF-8 text`},
		{name: "utf-8 header, latin-1 run name", in: "t;a [°C];b;run\n0;1;2;Pr\xfcfung\n0.1;0.5;1;Pr\xfcfung\n0.2;0.25;0.5;Pr\xfcfung\n0;1;2;B\n0.1;0.5;1;B\n0.2;0.25;0.6;B\n",
			opts: &Options{RunCol: "run"}, names: []string{"a", "b"}, units: []string{"°C", ""}, runs: []string{"f.csv#Prüfung", "f.csv#B"},
			warn: `f.csv:2:4: run name "Prüfung" is not UTF-8 text`},
		{name: "undefined byte in header", in: "t;Temp [\xb0C];Leistung [\x81W]\n" + rows(5),
			err: "header cell \"Leistung [\\x81W]\" is neither UTF-8 nor Windows-1252 (Latin-1) text (byte 0x81 at byte 11 of the cell)", line: 1, col: 3},
		{name: "undefined byte in run name", in: "t;a;b;run\n0;1;2;A\n0.1;0.5;1;A\n0;1;2;B\x9d\n0.1;0.5;1;B\x9d\n",
			opts: &Options{RunCol: "run"}, err: `byte 0x9D at byte 2 of the cell`, line: 4, col: 4},
		// a multibyte sequence cut short is not UTF-8; its bytes are
		// Windows-1252 characters (0xE2 â, 0x82 ‚), so the rule reads them
		{name: "truncated UTF-8", in: "t;a [\xe2\x82];b\n" + rows(20),
			names: []string{"a", "b"}, units: []string{"â‚", ""}, runs: []string{"f.csv"}, warn: `header cell "a [â‚]"`},
		{name: "latin-1 in a number", in: "t;a;b\n0;1;2\n0.1;0.5\xb0;1\n", err: `not a number "0.5°" (text read as Windows-1252)`, line: 3, col: 2},
		{name: "undefined byte in a number", in: "t;a;b\n0;1;2\n0.1;0.5\x8f;1\n", err: `not text`, line: 3, col: 2},
		{name: "utf-16 LE", in: "\xff\xfet\x00;\x00a\x00\n\x00", err: "UTF-16 little-endian text", line: 1, col: 1},
		{name: "utf-16 BE", in: "\xfe\xff\x00t\x00;\x00a\x00\n", err: "UTF-16 big-endian text", line: 1, col: 1},
		{name: "utf-16 without BOM", in: "t\x00;\x00a\x00\n\x000\x00;\x001\x00\n\x00", err: "as in UTF-16 text"},
	} {
		t.Run(c.name, func(t *testing.T) {
			p := writeFile(t, t.TempDir(), "f.csv", c.in)
			ds, err := ReadFile(context.Background(), p, c.opts)
			so := &StreamOptions{Window: -1, CSVWindow: -1}
			sf, serr := NewStreamer(c.opts, so).Open(context.Background(), p)
			if c.err != "" {
				var pe *ParseError
				if !errors.As(err, &pe) || !errors.Is(err, ErrFormat) && !errors.Is(err, ErrNotNumber) ||
					!strings.Contains(err.Error(), c.err) || pe.Line != c.line || pe.Column != c.col || strings.Contains(err.Error(), "\n") {
					t.Fatalf("error %v, want %q at %d:%d", err, c.err, c.line, c.col)
				}
				if serr == nil || strings.ReplaceAll(serr.Error(), p, "") != strings.ReplaceAll(err.Error(), p, "") {
					t.Errorf("streamed: %v, whole: %v", serr, err)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if serr != nil {
				t.Fatalf("streamed: %v", serr)
			}
			defer sf.Close()
			if (c.opts == nil || c.opts.RunCol == "") && sf.Whole != "" {
				t.Errorf("read whole (%s), not streamed", sf.Whole)
			}
			var names, units, runs []string
			for _, s := range ds.States {
				names, units = append(names, s.Name), append(units, s.Unit)
			}
			for _, r := range ds.Runs {
				runs = append(runs, r.Name)
			}
			if strings.Join(names, "|") != strings.Join(c.names, "|") || strings.Join(units, "|") != strings.Join(c.units, "|") ||
				strings.Join(runs, "|") != strings.Join(c.runs, "|") {
				t.Errorf("states %q units %q runs %q, want %q %q %q", names, units, runs, c.names, c.units, c.runs)
			}
			// 0.1 in µs is 1e-7 s, to rounding (a few ulps)
			if r := ds.Runs[0].T; c.name == "latin-1 time unit" && !scalar.EqualWithinRel(r[1]-r[0], 1e-7, 1e-12) {
				t.Errorf("time step %v s, want 1e-7 (0.1 µs)", r[1]-r[0])
			}
			enc := func(ws []string) []string {
				var out []string
				for _, w := range ws {
					if strings.Contains(w, "Windows-1252") {
						out = append(out, strings.ReplaceAll(w, filepath.Dir(p)+string(filepath.Separator), ""))
					}
				}
				return out
			}
			got := enc(ds.Warnings)
			if c.warn == "" && len(got) != 0 || c.warn != "" && (len(got) != 1 || !strings.Contains(got[0], c.warn)) {
				t.Errorf("encoding warnings %q, want one with %q", got, c.warn)
			}
			if s := enc(sf.Warnings); strings.Join(s, "\n") != strings.Join(got, "\n") {
				t.Errorf("streamed warnings %q, whole %q", s, got)
			}
			for k, s := range sf.States {
				if s != ds.States[k] {
					t.Errorf("streamed state %d %+v, whole %+v", k, s, ds.States[k])
				}
			}
			// JSON of the names is UTF-8, the characters themselves
			// (encoding/json would write U+FFFD for a byte that is not)
			b, err := json.Marshal(struct {
				S []Column
				R []string
			}{ds.States, runs})
			if err != nil || !utf8.Valid(b) || bytes.Contains(b, []byte("\ufffd")) {
				t.Errorf("JSON %s: %v", b, err)
			}
		})
	}
}

// TestLoadEncodingOnce: several files read as Windows-1252 give one
// warning, naming the first and counting the others; a UTF-8 file among
// them adds nothing.
func TestLoadEncodingOnce(t *testing.T) {
	dir := t.TempDir()
	var body strings.Builder
	for i := range 20 {
		body.WriteString(ftoa(float64(i)/10) + "," + ftoa(1/(1+float64(i))) + "\n")
	}
	for _, c := range []struct{ name, header string }{
		{"a.csv", "t,x [\xb5m]\n"}, {"b.csv", "t,x [µm]\n"}, {"c.csv", "t,x [\xb5m]\n"}, {"d.csv", "t,x [\xb5m]\n"},
	} {
		writeFile(t, dir, c.name, c.header+body.String())
	}
	ds, err := Load(context.Background(), []string{dir}, &Options{KeepEvents: true}) // 1/(1+t) jumps at its start
	if err != nil {
		t.Fatal(err)
	}
	a := filepath.Join(dir, "a.csv")
	want := a + `:1:2: header cell "x [µm]" is not UTF-8 text: the file's text is read as Windows-1252 (Latin-1), and so are 2 more files`
	if len(ds.Warnings) != 1 || ds.Warnings[0] != want || len(ds.Runs) != 4 || ds.States[0].Unit != "µm" {
		t.Errorf("warnings %q, want [%q]; %d runs, unit %q", ds.Warnings, want, len(ds.Runs), ds.States[0].Unit)
	}
}
