package lyapunov

import (
	"context"
	"errors"
	"math"
	"math/rand/v2"
	"sort"

	"basin.example/fit/lp"
)

// A Conflict is the certificate LP's proof that no V of the family meets
// its conditions with a margin g >= 0, summarised: a Farkas certificate
// (Farkas' lemma: Schrijver, Theory of Linear and Integer Programming,
// 1986, §7.3), that is weights y >= 0 on the LP's rows and bounds whose
// combination y'G of the rows' left-hand sides vanishes while y'h < 0, so
// that any V meeting every row would give 0 <= y'h < 0.
//
// When the LP itself is infeasible, y is the solver's Farkas ray
// ([lp.Farkas]). When it has an optimum with a negative margin g* (no V
// falls along the rows), y is its optimal multipliers with weight 1 on
// the added row -g <= 0: by LP duality those multipliers combine the rows
// into g <= g* (Schrijver §7.4), so with g >= 0 they prove the same.
// In both cases y is scaled to y'h = -1.
type Conflict struct {
	// Kind is ConflictInfeasible or ConflictNegativeMargin.
	Kind string
	// Margin is the LP's best margin g* (ConflictNegativeMargin), else 0.
	Margin float64
	// LPRows counts the LP's rows; Rows those with weight (a share of
	// the total weight above conflictShare), bounds and the margin row
	// included.
	LPRows, Rows int
	// Samples counts the distinct recorded samples that carry weight
	// (through a row at the sample or a pair starting there).
	Samples int
	// Families gives each family's weight, largest first.
	Families []ConflictFamily
	// Top lists the rows of largest weight, at most conflictTop, largest
	// first.
	Top []ConflictRow
	// Residual is the infinity norm of G'y - yLower + yUpper (0 for an
	// exact certificate), in the units of the rows, y scaled as above.
	Residual float64

	// The certificate itself: y on the LP's rows, then the margin row
	// (ConflictNegativeMargin only), and the bound weights; kept for the
	// checks, not written out.
	y, yl, yu []float64
	rows      lp.Rows
}

// Kinds of [Conflict].
const (
	ConflictInfeasible     = "infeasible"
	ConflictNegativeMargin = "negative_margin"
)

// Families of the certificate LP's rows (see [certRows]) and bounds.
const (
	FamilyPositivity    = "positivity"
	FamilyModelDecrease = "model decrease"
	FamilyTarget        = "target"
	FamilyDataDecrease  = "data decrease"
	FamilyBoxPositivity = "box positivity"
	FamilyExclusion     = "exclusion"
	FamilyCoefBound     = "coefficient bound"
	FamilyMarginBound   = "margin bound"
	FamilyMargin        = "margin"
)

// ConflictFamily is one family's part of a [Conflict].
type ConflictFamily struct {
	Family string
	Rows   int
	Share  float64 // of the total weight
}

// ConflictRow is one weighted row of a [Conflict].
type ConflictRow struct {
	Family string
	Share  float64 // of the total weight
	// Z is the row's point in z (a pair's first point), nil for a bound.
	Z []float64
	// Run and Sample name the recorded sample at Z (Sample is its index
	// in the run, from 0); Sample is -1 when Z is not a recorded sample
	// (a fill or box point) or the row has no point.
	Run    string
	Sample int
}

// Summary sizes (not user-facing): rows below conflictShare of the total
// weight are rounding, not part of the proof; conflictTop rows are listed.
const (
	conflictShare = 1e-9
	conflictTop   = 5
)

// conflict summarises the LP outcome out on rows, or returns nil when it
// proves nothing (an error other than infeasibility, a margin >= 0, or
// no multipliers).
func (ck *checker) conflict(rows *certRows, out lpOutcome) *Conflict {
	res := out.res
	if res == nil {
		return nil
	}
	m := rows.Len()
	p := rows.p
	c := &Conflict{LPRows: m, rows: rows}
	switch {
	case errors.Is(out.err, lp.ErrInfeasible) && res.Farkas != nil:
		f := res.Farkas
		if len(f.Y) != m {
			return nil
		}
		c.Kind = ConflictInfeasible
		c.y = append(append([]float64(nil), f.Y...), 0)
		c.yl = append([]float64(nil), f.YLower...)
		c.yu = append([]float64(nil), f.YUpper...)
	case out.err == nil && out.g < 0 && len(res.Z) == m:
		c.Kind, c.Margin = ConflictNegativeMargin, out.g
		s := -1 / out.g
		c.y = make([]float64, m+1)
		for i, z := range res.Z {
			c.y[i] = s * z
		}
		c.y[m] = s
		c.yl, c.yu = make([]float64, p+1), make([]float64, p+1)
		for k := range c.yl {
			c.yl[k], c.yu[k] = s*res.ZLower[k], s*res.ZUpper[k]
		}
	default:
		return nil
	}
	for _, w := range [][]float64{c.y, c.yl, c.yu} {
		for i, v := range w {
			w[i] = math.Max(v, 0) // a multiplier a rounding error below 0
		}
	}
	c.Residual = c.residual()
	c.summarise(ck, rows)
	return c
}

// residual returns the infinity norm of G'y - yl + yu over the rows
// (the margin row's left-hand side is -g).
func (c *Conflict) residual() float64 {
	m := c.rows.Len()
	w := len(c.yl)
	r := make([]float64, w)
	g := make([]float64, w)
	for i := 0; i < m; i++ {
		if c.y[i] == 0 {
			continue
		}
		c.rows.RowTo(g, i)
		for k, v := range g {
			r[k] += c.y[i] * v
		}
	}
	r[w-1] -= c.y[m]
	norm := 0.0
	for k := range r {
		norm = math.Max(norm, math.Abs(r[k]-c.yl[k]+c.yu[k]))
	}
	return norm
}

// weighted is one weighted row: index i (rows, then m for the margin
// row, then m+1+k for lower bound k, m+1+w+k for upper bound k).
type weighted struct {
	i int
	w float64
}

// summarise fills the families, the counts and the top rows.
func (c *Conflict) summarise(ck *checker, rows *certRows) {
	m, w := rows.Len(), len(c.yl)
	var all []weighted
	total := 0.0
	for i, v := range c.y {
		all, total = append(all, weighted{i, v}), total+v
	}
	for k, v := range c.yl {
		all, total = append(all, weighted{m + 1 + k, v}), total+v
	}
	for k, v := range c.yu {
		all, total = append(all, weighted{m + 1 + w + k, v}), total+v
	}
	if !(total > 0) {
		return
	}
	fam := map[string]*ConflictFamily{}
	var kept []weighted
	for _, x := range all {
		if x.w <= conflictShare*total {
			continue
		}
		kept = append(kept, x)
		name := c.family(rows, x.i)
		f := fam[name]
		if f == nil {
			f = &ConflictFamily{Family: name}
			fam[name] = f
		}
		f.Rows++
		f.Share += x.w / total
	}
	c.Rows = len(kept)
	for _, f := range fam {
		c.Families = append(c.Families, *f)
	}
	sort.Slice(c.Families, func(a, b int) bool {
		if c.Families[a].Share != c.Families[b].Share {
			return c.Families[a].Share > c.Families[b].Share
		}
		return c.Families[a].Family < c.Families[b].Family
	})
	sort.SliceStable(kept, func(a, b int) bool { return kept[a].w > kept[b].w })

	// Which weighted rows sit at recorded samples: one pass over the
	// samples, looking each up among the rows' points by its bits.
	n := rows.n
	type src struct {
		run string
		k   int
	}
	at := map[[2]uint64][]int{} // hash of a point -> kept indices
	points := make([][]float64, len(kept))
	for j, x := range kept {
		if z := c.point(rows, x.i); z != nil {
			points[j] = z
			h := hashPoint(z)
			at[h] = append(at[h], j)
		}
	}
	found := make([]*src, len(kept))
	seen := map[int]bool{}
	for ri := range ck.runs {
		r := &ck.runs[ri]
		for k := 0; k+1 <= len(r.t); k++ {
			z := r.z[k*n : (k+1)*n]
			for _, j := range at[hashPoint(z)] {
				if found[j] == nil && equalPoint(points[j], z) {
					found[j] = &src{r.name, k}
					seen[r.off+k] = true
				}
			}
		}
	}
	c.Samples = len(seen)
	for j, x := range kept {
		if j == conflictTop {
			break
		}
		row := ConflictRow{Family: c.family(rows, x.i), Share: x.w / total, Sample: -1}
		if points[j] != nil {
			row.Z = append([]float64(nil), points[j]...)
		}
		if s := found[j]; s != nil {
			row.Run, row.Sample = s.run, s.k
		}
		c.Top = append(c.Top, row)
	}
}

// family names the family of weighted index i (see weighted).
func (c *Conflict) family(r *certRows, i int) string {
	m, w := r.Len(), len(c.yl)
	nt, npair := len(r.targets), len(r.dt)
	switch {
	case i < r.np:
		return FamilyPositivity
	case i < 2*r.np:
		return FamilyModelDecrease
	case i < 2*r.np+nt:
		return FamilyTarget
	case i < 2*r.np+nt+npair:
		return FamilyDataDecrease
	case i < 2*r.np+nt+npair+r.npp:
		return FamilyBoxPositivity
	case i < m:
		return FamilyExclusion
	case i == m:
		return FamilyMargin
	}
	k := (i - m - 1) % w
	if k == w-1 {
		return FamilyMarginBound
	}
	return FamilyCoefBound
}

// point returns the point of weighted index i (a pair's first point), or
// nil for the margin row and the bounds.
func (c *Conflict) point(r *certRows, i int) []float64 {
	n := r.n
	nt, npair := len(r.targets), len(r.dt)
	switch {
	case i < r.np:
		return r.pz[i*n : (i+1)*n]
	case i < 2*r.np:
		i -= r.np
		return r.pz[i*n : (i+1)*n]
	case i < 2*r.np+nt:
		i = int(r.targets[i-2*r.np])
		return r.pz[i*n : (i+1)*n]
	case i < 2*r.np+nt+npair:
		i -= 2*r.np + nt
		return r.a0[i*n : (i+1)*n]
	case i < 2*r.np+nt+npair+r.npp:
		i -= 2*r.np + nt + npair
		return r.pp[i*n : (i+1)*n]
	case i < r.Len():
		i -= 2*r.np + nt + npair + r.npp
		return r.xp[i*n : (i+1)*n]
	}
	return nil
}

func hashPoint(z []float64) [2]uint64 {
	var h [2]uint64
	for _, v := range z {
		b := math.Float64bits(v)
		h[0] = h[0]*1099511628211 ^ b
		h[1] = h[1]*6364136223846793005 + b
	}
	return h
}

func equalPoint(a, b []float64) bool {
	for j := range a {
		if math.Float64bits(a[j]) != math.Float64bits(b[j]) {
			return false
		}
	}
	return true
}

// unstableShare: for an unstable linearisation, the LP of the conflict
// is posed on the level set of |z|² holding this share of the samples
// outside the noise ball.
const unstableShare = 0.5

// unstableConflict poses one certificate LP for an unstable linearisation
// (which the search does not try to certify): V must fall, with a margin,
// along the model and the recorded pairs in the level set of |z|² that
// holds the inner half of the samples. It returns that LP's proof that
// no V of the family does, or nil when the LP cannot be posed or finds a
// V after all (with a margin >= 0). Errors are ctx's.
func unstableConflict(ctx context.Context, d *Data, sys *System, o Options) (*Conflict, error) {
	ck, err := newChecker(ctx, d, sys, o, false)
	if errors.Is(err, ErrDegenerate) {
		return nil, nil
	}
	if err != nil {
		return nil, err
	}
	fam := ck.fam
	n := fam.n
	c0 := fam.quadratic(eye(n))
	tr := fam.trace(c0)
	for k := range c0 {
		c0[k] /= tr
	}
	target := ck.quantile(c0, unstableShare, 6*fam.Len())
	if !(target > 0) {
		return nil, nil
	}
	rows := ck.lpRows(c0, target, target, 0, o, rand.New(rand.NewPCG(o.Seed, 5)))
	if len(rows.targets) < 3*fam.Len() {
		return nil, nil
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	return ck.conflict(rows, solveCertLP(fam, rows, false)), nil
}
