// Package report writes basin's human-readable outputs: report.html, one
// self-contained page with inline SVG figures, and the plain-text summary
// (summary.txt and the summary that basin run prints).
//
// Both are drawn from the same [Input]: the fitted model, the certificate,
// the data set, which runs were held out, and the per-run checks. The
// figures redraw the certificate's own numbers: the region's boundary is
// the contour V(z(x)) = level (clipped to the certificate's box) on the
// plane of two chosen states, with the other states at the equilibrium.
package report

import (
	"errors"
	"fmt"
	"sort"
	"strings"

	"basin.example/cmd/basin/internal/human"
	"basin.example/fit"
	"basin.example/ingest"
	"basin.example/validate"
)

// Input is what a report is made of.
type Input struct {
	// Model is the fitted field; nil when none was fitted (the page says so).
	Model *fit.Model
	// Cert is the certificate; required.
	Cert *fit.Certificate
	// Data holds the runs; nil draws no runs.
	Data *ingest.Dataset
	// Heldout[i] says run i of Data was held out. Nil means none were.
	Heldout []bool
	// Checks are the per-run checks of the held-out runs, matched to the
	// runs of Data by run name.
	Checks []validate.RunScreen
	// Plane names two state indices for the phase plane. Nil means the two
	// states with most variance in the certificate's scaled coordinates
	// (so that units do not decide).
	Plane []int
	// Title heads the page. Empty means "basin report".
	Title string
	// Rests lists every rest point certified, the primary (Cert) first,
	// when there are several; empty means Cert is the only one. The
	// summary gives a section to each and the phase plane draws each
	// region.
	Rests []Rest
	// Skipped lists, one sentence each, rest points the runs settle at
	// that got no certificate.
	Skipped []string
}

// Rest is one certified rest point of a run with several.
type Rest struct {
	File string           // the certificate's file name
	Cert *fit.Certificate // the certificate
	Runs int              // runs that settle there (0: none settle near it)
}

// ErrInput is returned when an Input cannot make a report.
var ErrInput = errors.New("report: bad input")

// check validates in and returns the plane to draw.
func (in *Input) check() ([2]int, error) {
	if in == nil || in.Cert == nil {
		return [2]int{}, fmt.Errorf("%w: no certificate", ErrInput)
	}
	c := in.Cert
	n := len(c.States)
	if n == 0 || len(c.Equilibrium) != n || len(c.Scale) != n || len(c.Units) != n {
		return [2]int{}, fmt.Errorf("%w: certificate states, units, equilibrium and scale differ in length", ErrInput)
	}
	if in.Data != nil {
		if len(in.Data.States) != n {
			return [2]int{}, fmt.Errorf("%w: data has %d states, certificate %d", ErrInput, len(in.Data.States), n)
		}
		if in.Heldout != nil && len(in.Heldout) != len(in.Data.Runs) {
			return [2]int{}, fmt.Errorf("%w: %d held-out marks for %d runs", ErrInput, len(in.Heldout), len(in.Data.Runs))
		}
	}
	if in.Plane != nil {
		if len(in.Plane) != 2 || in.Plane[0] == in.Plane[1] || in.Plane[0] < 0 || in.Plane[1] < 0 ||
			in.Plane[0] >= n || in.Plane[1] >= n {
			return [2]int{}, fmt.Errorf("%w: plane %v: want two different state indices below %d", ErrInput, in.Plane, n)
		}
		return [2]int{in.Plane[0], in.Plane[1]}, nil
	}
	return DefaultPlane(c, in.Data), nil
}

// DefaultPlane returns the two states with most variance over the runs of
// ds in the certificate's scaled coordinates, in state order; with one
// state, or no data, the first two (or the only one twice).
func DefaultPlane(c *fit.Certificate, ds *ingest.Dataset) [2]int {
	n := len(c.States)
	if n == 1 {
		return [2]int{0, 0}
	}
	if ds == nil || len(ds.Runs) == 0 {
		return [2]int{0, 1}
	}
	vars := make([]float64, n)
	for j := range n {
		var s, s2 float64
		m := 0
		for ri := range ds.Runs {
			for _, x := range ds.Runs[ri].X[j] {
				z := (x - c.Equilibrium[j]) / c.Scale[j]
				s += z
				s2 += z * z
				m++
			}
		}
		if m > 0 {
			mu := s / float64(m)
			vars[j] = s2/float64(m) - mu*mu
		}
	}
	idx := make([]int, n)
	for j := range idx {
		idx[j] = j
	}
	sort.SliceStable(idx, func(a, b int) bool { return vars[idx[a]] > vars[idx[b]] })
	a, b := idx[0], idx[1]
	if a > b {
		a, b = b, a
	}
	return [2]int{a, b}
}

// vAt evaluates the certificate's V at x (original units) with scratch z.
func vAt(c *fit.Certificate, z, x []float64) float64 {
	return c.V.Eval(c.Z(z, x))
}

// heldout reports whether run i was held out.
func (in *Input) heldout(i int) bool {
	return in.Heldout != nil && in.Heldout[i]
}

// checkFor returns the check of the run named name, or nil.
func (in *Input) checkFor(name string) *validate.RunScreen {
	for i := range in.Checks {
		if in.Checks[i].Run == name {
			return &in.Checks[i]
		}
	}
	return nil
}

// settings returns the certificate's recorded settings to show, sorted
// by key: each recorded part's options (of a file read, the keys it
// had) and any keys of an older file this version does not know.
func (in *Input) settings() []kv {
	s := in.Cert.Settings
	if s == nil {
		return nil
	}
	var out []kv
	add := func(k string, v any) {
		if s.Recorded(k) {
			out = append(out, kv{k, fmt.Sprint(v)})
		}
	}
	if p := s.Search; p != nil {
		add("v_degree", p.VDegree)
		add("seed", p.Seed)
		add("growth", p.Growth)
		add("lp_samples", p.LPSamples)
		add("fill", p.Fill)
		add("kappa", p.Kappa)
	}
	if p := s.Field; p != nil {
		add("degree", p.Degree)
		add("derivative", p.Derivative)
		add("bootstrap", p.Bootstrap)
		add("select_folds", p.SelectFolds)
		add("field_seed", p.Seed)
	}
	if p := s.Holdout; p != nil {
		add("folds", p.Folds)
		add("split_seed", p.Seed)
		add("min_decrease", p.MinDecrease)
		add("beta", p.Beta)
		add("all_folds", p.AllFolds)
	}
	if p := s.Command; p != nil {
		// the INPUTS as typed (files and folders), not the input columns
		// of --inputs, which get a row of their own below
		if s.Recorded("inputs") {
			out = append(out, kv{"inputs (INPUTS as typed)", fmt.Sprint(p.Inputs)})
		}
		add("model", p.Model)
	}
	if m := in.Model; m != nil && len(m.Inputs) > 0 {
		var cols []string
		for k, u := range m.Inputs {
			col := u.Name
			if u.Unit != "" {
				col += " [" + u.Unit + "]"
			}
			if k < len(m.RestInput) {
				col += fmt.Sprintf(" (at rest %s)", human.Num(m.RestInput[k]))
			}
			cols = append(cols, col)
		}
		out = append(out, kv{"input columns (--inputs)", strings.Join(cols, ", ")})
	}
	for k, v := range s.Other {
		out = append(out, kv{k, string(v)})
	}
	sort.Slice(out, func(i, j int) bool { return out[i].Key < out[j].Key })
	return out
}

type kv struct{ Key, Value string }

// g formats a number for people: 4 significant digits, no float noise.
func g(x float64) string { return human.Num(x) }

// unit returns " [u]" or "" for state j.
func unit(c *fit.Certificate, j int) string {
	if c.Units[j] == "" {
		return ""
	}
	return " [" + c.Units[j] + "]"
}
