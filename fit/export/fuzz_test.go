package export

import (
	"bytes"
	"errors"
	"go/ast"
	"go/parser"
	"go/token"
	"slices"
	"strings"
	"testing"

	"basin.example/fit"
)

// topLevel lists the names a generated Go file declares, sorted.
func topLevel(src string) ([]string, error) {
	f, err := parser.ParseFile(token.NewFileSet(), "v.go", src, parser.ParseComments)
	if err != nil {
		return nil, err
	}
	var names []string
	for _, d := range f.Decls {
		switch d := d.(type) {
		case *ast.FuncDecl:
			names = append(names, d.Name.Name)
		case *ast.GenDecl:
			for _, sp := range d.Specs {
				switch sp := sp.(type) {
				case *ast.ValueSpec:
					for _, n := range sp.Names {
						names = append(names, n.Name)
					}
				case *ast.TypeSpec:
					names = append(names, sp.Name.Name)
				}
			}
		}
	}
	slices.Sort(names)
	return names, nil
}

// FuzzWrite: any certificate that fit.ReadCertificate accepts exports to
// Go source that parses and declares the same names as the seed's export
// (state names, units and verdicts are data: a hostile one that escaped a
// string or a comment would add or break a declaration), and to C and
// Python text without a NUL byte; the only error allowed is [ErrNoV].
func FuzzWrite(f *testing.F) {
	seed := []byte(`{"format":"basin.certificate/1","verdict":"certified","strength":"asymptotic","empirical":true,` +
		`"states":["theta","omega"],"units":["rad","rad/s"],"equilibrium":[0,0],"scale":[0.5,2],` +
		`"V":{"exponents":[[2,0],[1,1],[0,2]],"coefficients":[1,0.1,0.3]},"level":0.8}`)
	f.Add(seed)
	f.Add([]byte(`{"format":"basin.certificate/1","verdict":"inconclusive","states":["x\"); panic(1) //"],"units":["*/ u\n\\"],` +
		`"equilibrium":[1e-300],"scale":[1e300],"V":{"exponents":[[4]],"coefficients":[-0]},"level":5e-324,"box":[[-1,1]]}`))
	f.Add([]byte(`{"format":"basin.certificate/1","states":["??=x é中😀"],"units":["` + "\u2028" + `"],"equilibrium":[0],"scale":[1],` +
		`"V":{"exponents":[[2]],"coefficients":[1]},"level":1}`))
	c0, err := fit.ReadCertificate(bytes.NewReader(seed))
	if err != nil {
		f.Fatal(err)
	}
	var b0 strings.Builder
	if err := Write(&b0, c0, Go, nil); err != nil {
		f.Fatal(err)
	}
	want, err := topLevel(b0.String())
	if err != nil {
		f.Fatal(err)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		c, err := fit.ReadCertificate(bytes.NewReader(data))
		if err != nil {
			return
		}
		for _, lang := range []string{Go, C, Python} {
			var b strings.Builder
			err := Write(&b, c, lang, nil)
			if errors.Is(err, ErrNoV) {
				return
			}
			if err != nil {
				t.Fatalf("%s: %v", lang, err)
			}
			src := b.String()
			if strings.IndexByte(src, 0) >= 0 {
				t.Fatalf("%s: NUL byte in the output", lang)
			}
			if lang == Go {
				got, err := topLevel(src)
				if err != nil {
					t.Fatalf("generated Go does not parse: %v\n%s", err, src)
				}
				if !slices.Equal(got, want) {
					t.Fatalf("declares %v, want %v\n%s", got, want, src)
				}
			}
		}
	})
}
