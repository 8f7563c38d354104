package report

import (
	"fmt"
	"html"
	"math"
	"regexp"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"

	"basin.example/fit"
	"basin.example/ingest"
	"basin.example/validate"
)

// TestVFigurePieces: with an input (a heater held at 0 W, driven to
// 30 W over a stretch of some held-out runs), the V figure draws the
// pieces the held-out check judged, where the input rests, not the whole
// runs: no drawn point falls where the heater is on, and a flagged piece
// is drawn flagged. Before, the whole runs were drawn matched to checks
// by run name, so a trial thermal loop's V climbed while heated in the
// "not flagged" colour and its two flagged pieces showed nowhere.
func TestVFigurePieces(t *testing.T) {
	c := mustCert(fixtureCertJSON)
	in := fixture(c, nil)
	ds := in.Data
	ds.Inputs = []ingest.Column{{Name: "heater", Unit: "W"}}
	// held-out runs are the last three (run03..run05); run03 and run05
	// are heated over samples [200, 350) and [100, 160)
	heat := map[int][2]int{3: {200, 350}, 5: {100, 160}}
	var want []string
	for ri := range ds.Runs {
		r := &ds.Runs[ri]
		u := make([]float64, r.Len())
		h, heated := heat[ri]
		if heated {
			for i := h[0]; i < h[1]; i++ {
				u[i] = 30
			}
		}
		r.U = [][]float64{u}
		if !in.heldout(ri) {
			continue
		}
		if !heated {
			want = append(want, r.Name)
			continue
		}
		want = append(want, fmt.Sprintf("%s@%g", r.Name, r.T[0]), fmt.Sprintf("%s@%g", r.Name, r.T[h[1]]))
	}
	in.Model.Inputs = []fit.Input{{Name: "heater", Unit: "W"}}
	in.Model.RestInput = []float64{0}
	for _, e := range in.Model.Equations {
		for k := range e.Exponents {
			e.Exponents[k] = append(e.Exponents[k], 0)
		}
	}
	in.Checks = nil
	for _, name := range want {
		rs := validate.RunScreen{Run: name, File: "x.csv", Samples: 100, Settled: true}
		if name == want[1] { // run03's piece after the heating
			rs.Flagged = true
			rs.Flags = []validate.Flag{{Kind: validate.FlagRises, Time: 8, Excess: 0.02}}
		}
		in.Checks = append(in.Checks, rs)
	}

	traces := in.heldoutTraces()
	var got []string
	for _, tr := range traces {
		got = append(got, tr.run.Name)
		if tr.t0 != 0 {
			t.Errorf("%s: drawn from %g s, want its run's first sample, 0 s", tr.run.Name, tr.t0)
		}
		for i, v := range tr.run.U[0] {
			if v != 0 {
				t.Errorf("%s: sample at %g s drawn with the heater at %g W", tr.run.Name, tr.run.T[i], v)
				break
			}
		}
	}
	if strings.Join(got, " ") != strings.Join(want, " ") {
		t.Errorf("drawn %v, want the checked pieces %v", got, want)
	}

	vf, err := vFigure(in)
	if err != nil {
		t.Fatal(err)
	}
	flagged := svgPaths(string(vf.SVG), "stroke:"+hex(inkFlagged))
	calm := svgPaths(string(vf.SVG), "stroke:"+hex(inkCalm))
	if len(flagged) != 1 || len(calm) != len(want)-1 {
		t.Errorf("%d flagged and %d calm lines, want 1 and %d", len(flagged), len(calm), len(want)-1)
	}
	// the flagged line starts after the heating: its first point lies at
	// 7 s on the run's clock (sample 350 of 0.02 s), read back from the SVG
	if len(flagged) == 1 {
		kx := (vf.xr[1] - vf.xr[0]) / (vf.cx[1] - vf.cx[0])
		x := vf.xr[0] + (flagged[0][0][0]-vf.cx[0])*kx
		if tol := 2 * svgPrecision(flagged[0][0][0]) * math.Abs(kx); !scalar.EqualWithinAbs(x, 7, tol) {
			t.Errorf("flagged piece drawn from %g s, want 7 s (±%g)", x, tol)
		}
	}
	page := renderPage(t, in)
	if !strings.Contains(page, "Only the stretches where the inputs rest are drawn") {
		t.Error("the caption does not say that only the stretches at rest are drawn")
	}
}

// TestSettingsInputs: the settings table tells the INPUTS as typed (the
// certificate's settings key "inputs", the folder of a trial thermal
// loop's logs: "thermal") from the input columns --inputs named (the
// heater), which it lists with their units and rest values. Before, the
// one row "inputs thermal" read as if "thermal" were the input column.
func TestSettingsInputs(t *testing.T) {
	tests := []struct {
		name      string
		inputs    []fit.Input
		want, not []string
	}{
		{"with an input", []fit.Input{{Name: "heater", Unit: "W"}},
			[]string{"inputs (INPUTS as typed) thermal", "input columns (--inputs) heater [W] (at rest 0)"}, []string{"inputs thermal"}},
		{"without", nil,
			[]string{"inputs (INPUTS as typed) thermal"}, []string{"input columns", "inputs thermal"}},
	}
	tags := regexp.MustCompile(`(?s)<[^>]*>`)
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			c := mustCert(fixtureCertJSON)
			c.Settings.Command = &fit.CommandSettings{Inputs: "thermal"}
			in := fixture(c, nil)
			if tt.inputs != nil {
				in.Model.Inputs, in.Model.RestInput = tt.inputs, []float64{0}
			}
			page := strings.Join(strings.Fields(html.UnescapeString(tags.ReplaceAllString(renderPage(t, in), " "))), " ")
			for _, w := range tt.want {
				if !strings.Contains(page, w) {
					t.Errorf("page lacks %q", w)
				}
			}
			for _, w := range tt.not {
				if strings.Contains(page, w) {
					t.Errorf("page says %q", w)
				}
			}
		})
	}
}
