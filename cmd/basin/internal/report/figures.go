package report

import (
	"bytes"
	"fmt"
	"html/template"
	"image/color"
	"math"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"

	"basin.example/fit"
	"basin.example/ingest"
)

// The report's visual language. Colours come in clearly different
// lightness so that a greyscale print keeps them apart, the hues stay
// distinguishable under the common colour-vision deficiencies, and each
// meaning also has its own dash pattern or mark shape.
var (
	inkFit      = color.RGBA{0x9A, 0xA8, 0xB8, 0xFF} // fit runs: light slate, thin solid
	inkHeldout  = color.RGBA{0xE0, 0x9A, 0x1F, 0xFF} // held-out runs: amber, dashed
	inkRegion   = color.RGBA{0x0B, 0x3C, 0x7A, 0xFF} // region boundary: deep ink blue, thick solid
	inkBox      = color.RGBA{0x70, 0x70, 0x70, 0xFF} // box: mid grey, dotted
	inkEquil    = color.RGBA{0xC2, 0x41, 0x0C, 0xFF} // primary equilibrium: rust square
	inkOther    = color.RGBA{0x5B, 0x2A, 0x86, 0xFF} // other equilibria: violet triangle
	inkCalm     = color.RGBA{0x1F, 0x6F, 0xB5, 0xFF} // unflagged held-out V: cobalt, solid
	inkFlagged  = color.RGBA{0xC2, 0x41, 0x0C, 0xFF} // flagged held-out V: rust, dashed
	inkLevel    = color.RGBA{0x0B, 0x3C, 0x7A, 0xFF} // the level: ink blue, long dash
	inkViolMark = color.RGBA{0x00, 0x00, 0x00, 0xFF} // flag marks: black cross
)

const (
	figW        = 16 * vg.Centimeter
	figH        = 12 * vg.Centimeter
	maxDrawn    = 400 // samples drawn per run (every k-th, ends kept)
	contourGrid = 220 // cells per side of the contour grid
	vFloorShare = 1e-6
)

// figure is an inline SVG and what a test needs to read it back.
type figure struct {
	SVG template.HTML
	// Axis ranges in data units and the canvas positions (points, origin
	// bottom left, as in the SVG path data) they map to.
	xr, yr [2]float64
	cx, cy [2]float64
	logY   bool
	// contour holds the region boundary drawn, in the plane's data units.
	contour [][][2]float64
	// Notes for the caption.
	offFigure int  // other equilibria outside the figure
	clipped   bool // runs reach beyond the view
	wide      bool // the data reach beyond viewBoxes box widths (a close-up helps)
	box       bool // the box bounding the region is drawn
	// others lists the classes of the other equilibria drawn, in order
	// of first appearance, for the key.
	others []string
	// restRegions says the regions of other rest points' certificates
	// are drawn.
	restRegions bool
}

func lineStyle(c color.Color, w vg.Length, dash ...vg.Length) draw.LineStyle {
	return draw.LineStyle{Color: c, Width: w, Dashes: dash}
}

// render draws p into an SVG and records its data-to-canvas mapping.
func render(p *plot.Plot, label string, f *figure) error {
	c := vgsvg.New(figW, figH)
	dc := draw.New(c)
	p.Draw(dc)
	da := p.DataCanvas(dc)
	xf, yf := p.Transforms(&da)
	f.xr = [2]float64{p.X.Min, p.X.Max}
	f.yr = [2]float64{p.Y.Min, p.Y.Max}
	f.cx = [2]float64{xf(p.X.Min).Points(), xf(p.X.Max).Points()}
	f.cy = [2]float64{yf(p.Y.Min).Points(), yf(p.Y.Max).Points()}
	var b bytes.Buffer
	if _, err := c.WriteTo(&b); err != nil {
		return err
	}
	s := b.String()
	if i := strings.Index(s, "<svg"); i >= 0 {
		s = s[i:]
	}
	s = strings.Replace(s, "<svg ", `<svg role="img" aria-label="`+template.HTMLEscapeString(label)+`" `, 1)
	f.SVG = template.HTML(s) // text in it was escaped by vgsvg (html.EscapeString)
	return nil
}

// decimate returns the indices drawn of a run of n samples.
func decimate(n int) []int {
	k := max(1, (n+maxDrawn-1)/maxDrawn)
	var idx []int
	for i := 0; i < n; i += k {
		idx = append(idx, i)
	}
	if n > 0 && idx[len(idx)-1] != n-1 {
		idx = append(idx, n-1)
	}
	return idx
}

type span struct{ lo, hi float64 }

func (s *span) add(v float64) {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return
	}
	s.lo, s.hi = math.Min(s.lo, v), math.Max(s.hi, v)
}

func newSpan() span { return span{math.Inf(1), math.Inf(-1)} }

// padded widens s by 6% a side (and an empty or flat span to something
// drawable around its centre).
func (s span) padded(ref float64) (float64, float64) {
	if s.lo > s.hi {
		return ref - 1, ref + 1
	}
	w := s.hi - s.lo
	if w == 0 {
		w = math.Max(math.Abs(s.lo), 1)
	}
	return s.lo - 0.06*w, s.hi + 0.06*w
}

// viewBoxes bounds the phase plane's view, in widths of the box around
// its centre.
const viewBoxes = 3

// limitSpan narrows s to viewBoxes box widths around the box's centre and
// reports (or-ed into clip) whether it had to.
func limitSpan(s span, box [2]float64, clip bool) (span, bool) {
	c, w := (box[0]+box[1])/2, (box[1]-box[0])/2*viewBoxes
	if w <= 0 {
		return s, clip
	}
	if s.lo < c-w {
		s.lo, clip = c-w, true
	}
	if s.hi > c+w {
		s.hi, clip = c+w, true
	}
	return s, clip
}

// planeFigure draws the phase plane of states a and b. With closeUp the
// view is at most viewBoxes box widths around the box (runs that go
// further are cut at the edge); without it the view holds every sample.
func planeFigure(in *Input, pl [2]int, closeUp bool) (*figure, error) {
	c := in.Cert
	a, b := pl[0], pl[1]
	p := plot.New()
	p.X.Label.Text = c.States[a] + unit(c, a)
	p.Y.Label.Text = c.States[b] + unit(c, b)
	sx, sy := newSpan(), newSpan()
	sx.add(c.Equilibrium[a])
	sy.add(c.Equilibrium[b])
	if ds := in.Data; ds != nil {
		// fit runs first so that held-out runs are drawn on top
		for pass := 0; pass < 2; pass++ {
			for ri := range ds.Runs {
				r := &ds.Runs[ri]
				if in.heldout(ri) != (pass == 1) {
					continue
				}
				idx := decimate(r.Len())
				xy := make(plotter.XYs, len(idx))
				for k, i := range idx {
					xy[k] = plotter.XY{X: r.X[a][i], Y: r.X[b][i]}
				}
				for _, x := range r.X[a] {
					sx.add(x)
				}
				for _, y := range r.X[b] {
					sy.add(y)
				}
				if len(xy) < 2 {
					continue
				}
				l, err := plotter.NewLine(xy)
				if err != nil {
					return nil, err
				}
				if pass == 0 {
					l.LineStyle = lineStyle(inkFit, 0.7)
				} else {
					l.LineStyle = lineStyle(inkHeldout, 1.3, 4, 2)
				}
				p.Add(l)
			}
		}
	}
	if c.Box != nil {
		sx.add(c.Box[a][0])
		sx.add(c.Box[a][1])
		sy.add(c.Box[b][0])
		sy.add(c.Box[b][1])
	}
	// The view: the data's whole span; or, for the close-up, no wider
	// than viewBoxes times the box around its centre, so that runs flying
	// off do not shrink the region to a dot. Equilibria of the model
	// inside the data's envelope are always in view.
	clip, wide := false, false
	if c.Box != nil {
		_, wide = limitSpan(sx, c.Box[a], false)
		_, wide = limitSpan(sy, c.Box[b], wide)
		if closeUp {
			sx, clip = limitSpan(sx, c.Box[a], clip)
			sy, clip = limitSpan(sy, c.Box[b], clip)
		}
	}
	if m := in.Model; m != nil {
		for _, e := range m.Equilibria {
			if e.InEnvelope && len(e.Point) == len(c.States) {
				sx.add(e.Point[a])
				sy.add(e.Point[b])
			}
		}
	}
	x0, x1 := sx.padded(c.Equilibrium[a])
	y0, y1 := sy.padded(c.Equilibrium[b])
	f := &figure{clipped: clip, wide: wide, box: c.Box != nil}
	if c.Box != nil {
		bx := c.Box
		l, err := plotter.NewLine(plotter.XYs{{X: bx[a][0], Y: bx[b][0]}, {X: bx[a][1], Y: bx[b][0]},
			{X: bx[a][1], Y: bx[b][1]}, {X: bx[a][0], Y: bx[b][1]}, {X: bx[a][0], Y: bx[b][0]}})
		if err != nil {
			return nil, err
		}
		l.LineStyle = lineStyle(inkBox, 0.8, 1, 2.5)
		p.Add(l)
	}
	if len(c.V.Exponents) > 0 && c.Level > 0 {
		f.contour = regionBoundary(c, a, b, x0, x1, y0, y1)
		if err := addLines(p, f.contour, lineStyle(inkRegion, 2.4)); err != nil {
			return nil, err
		}
	}
	// The other rest points' regions, thinner, in the same ink.
	for _, r := range in.Rests {
		o := r.Cert
		if o == c || o == nil || len(o.V.Exponents) == 0 || !(o.Level > 0) || len(o.States) != len(c.States) {
			continue
		}
		lines := regionBoundary(o, a, b, x0, x1, y0, y1)
		if err := addLines(p, lines, lineStyle(inkRegion, 1.6, 5, 2)); err != nil {
			return nil, err
		}
		if len(lines) > 0 {
			f.restRegions = true
		}
	}
	if m := in.Model; m != nil && len(m.Equilibria) > 1 {
		byClass := map[string]plotter.XYs{}
		for _, e := range m.Equilibria[1:] {
			if len(e.Point) != len(c.States) {
				continue
			}
			x, y := e.Point[a], e.Point[b]
			if x < x0 || x > x1 || y < y0 || y > y1 {
				f.offFigure++
				continue
			}
			k := markOf(e.Class)
			if _, seen := byClass[k]; !seen {
				f.others = append(f.others, k)
			}
			byClass[k] = append(byClass[k], plotter.XY{X: x, Y: y})
		}
		for _, k := range f.others {
			s, err := plotter.NewScatter(byClass[k])
			if err != nil {
				return nil, err
			}
			s.GlyphStyle = draw.GlyphStyle{Color: inkOther, Radius: 4.5, Shape: otherMarks[k].glyph}
			p.Add(s)
		}
	}
	s, err := plotter.NewScatter(plotter.XYs{{X: c.Equilibrium[a], Y: c.Equilibrium[b]}})
	if err != nil {
		return nil, err
	}
	s.GlyphStyle = draw.GlyphStyle{Color: inkEquil, Radius: 4, Shape: draw.BoxGlyph{}}
	p.Add(s)
	p.X.Min, p.X.Max, p.Y.Min, p.Y.Max = x0, x1, y0, y1
	p.X.Tick.Marker, p.Y.Tick.Marker = linTicks{}, linTicks{}
	p.Add(plotter.NewGrid())
	label := "phase plane of " + c.States[a] + " and " + c.States[b]
	if closeUp {
		label = "close-up of the phase plane of " + c.States[a] + " and " + c.States[b]
	}
	if err := render(p, label, f); err != nil {
		return nil, err
	}
	return f, nil
}

// addLines adds each polyline of lines (points in the plot's data units)
// to p, drawn in st.
func addLines(p *plot.Plot, lines [][][2]float64, st draw.LineStyle) error {
	for _, line := range lines {
		xy := make(plotter.XYs, len(line))
		for k, q := range line {
			xy[k] = plotter.XY{X: q[0], Y: q[1]}
		}
		l, err := plotter.NewLine(xy)
		if err != nil {
			return err
		}
		l.LineStyle = st
		p.Add(l)
	}
	return nil
}

// regionBoundary returns the contour V(z(x)) = level on the plane (a, b),
// the other states at the equilibrium, cut where it leaves the box.
func regionBoundary(c *fit.Certificate, a, b int, x0, x1, y0, y1 float64) [][][2]float64 {
	n := len(c.States)
	x := append([]float64(nil), c.Equilibrium...)
	z := make([]float64, n)
	f := func(u, v float64) float64 {
		x[a], x[b] = u, v
		return vAt(c, z, x) - c.Level
	}
	lines := contour(f, x0, x1, y0, y1, contourGrid, contourGrid)
	if c.Box == nil {
		return lines
	}
	in := func(q [2]float64) bool {
		return q[0] >= c.Box[a][0] && q[0] <= c.Box[a][1] && q[1] >= c.Box[b][0] && q[1] <= c.Box[b][1]
	}
	var out [][][2]float64
	for _, l := range lines {
		var cur [][2]float64
		for _, q := range l {
			if in(q) {
				cur = append(cur, q)
				continue
			}
			if len(cur) > 1 {
				out = append(out, cur)
			}
			cur = nil
		}
		if len(cur) > 1 {
			out = append(out, cur)
		}
	}
	return out
}

// trace is a stretch of samples drawn in the V figure: a held-out run,
// or with inputs one of its pieces where the inputs rest, and t0, the
// time of its run's first sample (the figure's zero).
type trace struct {
	run *ingest.Run
	t0  float64
}

// heldoutTraces returns what the held-out checks were made on: the
// held-out runs, or for a model with inputs the pieces of them where the
// inputs rest (fit.RestSegments over the held-out runs together, as the
// held-out check cuts them), each named as its check. Drawing the whole
// runs instead showed V climbing while a heater drove the rig, in blue
// as "not flagged", and missed the flags of the pieces.
func (in *Input) heldoutTraces() []trace {
	ds := in.Data
	var out []trace
	held := &ingest.Dataset{States: ds.States, Inputs: ds.Inputs}
	for ri := range ds.Runs {
		if in.heldout(ri) {
			held.Runs = append(held.Runs, ds.Runs[ri])
		}
	}
	m := in.Model
	if len(ds.Inputs) == 0 || m == nil || len(m.RestInput) != len(ds.Inputs) {
		for ri := range held.Runs {
			r := &held.Runs[ri]
			if r.Len() > 0 {
				out = append(out, trace{r, r.T[0]})
			}
		}
		return out
	}
	pieces := fit.RestSegments(held, m.RestInput)
	k := 0
	for ri := range held.Runs {
		r := &held.Runs[ri]
		// RestSegments keeps the runs' order and names a piece "run@t"
		for ; k < len(pieces.Runs); k++ {
			p := &pieces.Runs[k]
			if p.Name != r.Name && !strings.HasPrefix(p.Name, r.Name+"@") {
				break
			}
			if r.Len() > 0 {
				out = append(out, trace{p, r.T[0]})
			}
		}
	}
	return out
}

// vFigure draws V against time along each held-out run (with inputs,
// its pieces where the inputs rest), log scale, with the level and a
// cross at the first time of each flag.
func vFigure(in *Input) (*figure, error) {
	c, ds := in.Cert, in.Data
	if ds == nil || len(c.V.Exponents) == 0 {
		return nil, nil
	}
	floor := vFloorShare * math.Max(c.Level, 1e-300)
	p := plot.New()
	p.X.Label.Text = "time since the run's first sample [s]"
	p.Y.Label.Text = "V (log scale)"
	p.Y.Scale = plot.LogScale{}
	p.Y.Tick.Marker = logTicks{}
	p.X.Tick.Marker = linTicks{}
	z := make([]float64, len(c.States))
	x := make([]float64, len(c.States))
	sy := newSpan()
	tmax := 0.0
	var marks plotter.XYs
	drawn := 0
	for _, hr := range in.heldoutTraces() {
		r := hr.run
		if r.Len() < 2 {
			continue
		}
		vAtI := func(i int) float64 {
			for j := range x {
				x[j] = r.X[j][i]
			}
			return math.Max(vAt(c, z, x), floor)
		}
		idx := decimate(r.Len())
		xy := make(plotter.XYs, len(idx))
		for k, i := range idx {
			xy[k] = plotter.XY{X: r.T[i] - hr.t0, Y: vAtI(i)}
			sy.add(xy[k].Y)
		}
		tmax = math.Max(tmax, r.T[r.Len()-1]-hr.t0)
		l, err := plotter.NewLine(xy)
		if err != nil {
			return nil, err
		}
		chk := in.checkFor(r.Name)
		if chk != nil && chk.Flagged {
			l.LineStyle = lineStyle(inkFlagged, 1.4, 5, 2)
			for _, fl := range chk.Flags {
				i := nearest(r.T, r.T[0]+fl.Time)
				if fl.Time >= r.T[0] && fl.Time <= r.T[r.Len()-1] {
					i = nearest(r.T, fl.Time) // flag times given in the run's own clock
				}
				marks = append(marks, plotter.XY{X: r.T[i] - hr.t0, Y: vAtI(i)})
			}
		} else {
			l.LineStyle = lineStyle(inkCalm, 0.9)
		}
		p.Add(l)
		drawn++
	}
	if drawn == 0 {
		return nil, nil
	}
	sy.add(c.Level)
	if c.Level > 0 {
		l, err := plotter.NewLine(plotter.XYs{{X: 0, Y: c.Level}, {X: tmax, Y: c.Level}})
		if err != nil {
			return nil, err
		}
		l.LineStyle = lineStyle(inkLevel, 1.6, 8, 3)
		p.Add(l)
	}
	if len(marks) > 0 {
		s, err := plotter.NewScatter(marks)
		if err != nil {
			return nil, err
		}
		s.GlyphStyle = draw.GlyphStyle{Color: inkViolMark, Radius: 6, Shape: draw.CrossGlyph{}}
		p.Add(s)
	}
	// a little room on the right so that the last tick's label is not cut
	p.X.Min, p.X.Max = 0, 1.03*math.Max(tmax, 1e-9)
	p.Y.Min, p.Y.Max = math.Max(sy.lo/2, floor), sy.hi*2
	f := &figure{logY: true}
	if err := render(p, "V along held-out runs", f); err != nil {
		return nil, err
	}
	return f, nil
}

// nearest returns the index of the sample time closest to t.
func nearest(ts []float64, t float64) int {
	lo, hi := 0, len(ts)-1
	for lo < hi {
		m := (lo + hi) / 2
		if ts[m] < t {
			lo = m + 1
		} else {
			hi = m
		}
	}
	if lo > 0 && math.Abs(ts[lo-1]-t) < math.Abs(ts[lo]-t) {
		lo--
	}
	return lo
}

// The other equilibria's marks, one shape per kind, so that a saddle and
// a second stable point never look alike.
type otherMark struct {
	glyph  draw.GlyphDrawer
	swatch string // the key's swatch shape (see page.html.tmpl)
	label  string
}

var otherMarks = map[string]otherMark{
	"saddle":         {draw.TriangleGlyph{}, "triangle", "saddle of the fitted model"},
	"stable":         {draw.RingGlyph{}, "ring", "other stable equilibrium of the fitted model"},
	"unstable":       {draw.SquareGlyph{}, "square-outline", "unstable equilibrium of the fitted model"},
	"non-hyperbolic": {draw.PlusGlyph{}, "plus", "equilibrium of the fitted model with an eigenvalue on the imaginary axis"},
	"outside":        {draw.CrossGlyph{}, "cross", "equilibrium of the fitted model outside the data's envelope"},
}

// markOf maps an equilibrium class to its mark.
func markOf(class string) string {
	switch {
	case class == "saddle":
		return "saddle"
	case strings.HasPrefix(class, "stable"):
		return "stable"
	case strings.HasPrefix(class, "unstable"):
		return "unstable"
	case class == "outside envelope":
		return "outside"
	}
	return "non-hyperbolic"
}

// hex formats a colour as #RRGGBB for the page's key.
func hex(c color.RGBA) string { return fmt.Sprintf("#%02X%02X%02X", c.R, c.G, c.B) }
