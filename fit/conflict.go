package fit

import "basin.example/fit/lyapunov"

// LPConflict summarises the certificate LP's proof that no V of the
// family falls, with a margin g >= 0, along the rows it was given: a
// Farkas certificate, non-negative weights on the LP's rows whose
// combination cancels every coefficient of V and leaves 0 <= -1 (see
// [lyapunov.Conflict]). It is a finding about the model and the data,
// not a failure of the solver.
type LPConflict struct {
	// Kind is "infeasible" (the LP has no solution: the solver's Farkas
	// ray) or "negative_margin" (its best margin is negative: the
	// optimal multipliers with the row g >= 0 added).
	Kind string `json:"kind"`
	// VDegree is the degree of the family of V the proof is about.
	VDegree int `json:"v_degree"`
	// Margin is the LP's best margin g* (1/s, scaled coordinates) for
	// negative_margin.
	Margin float64 `json:"margin,omitempty"`
	// LPRows counts the LP's rows; Rows those that carry weight (bounds
	// and the margin row included).
	LPRows int `json:"lp_rows"`
	Rows   int `json:"rows"`
	// Samples counts the distinct recorded samples among the weighted
	// rows (a row at the sample, or a recorded pair starting there).
	Samples int `json:"samples"`
	// Families gives each family of rows its rows and share of the
	// weight, largest first: "positivity", "model decrease", "target",
	// "data decrease", "box positivity", "exclusion", "coefficient
	// bound", "margin bound", "margin".
	Families []ConflictFamily `json:"families"`
	// Strongest lists the rows of largest weight (at most 5), largest
	// first.
	Strongest []ConflictRow `json:"strongest"`
	// Residual is how far the weights' combination of the rows is from
	// cancelling (the infinity norm, weights scaled to a sum y'h = -1).
	Residual float64 `json:"residual"`
}

// ConflictFamily is one family's part of an [LPConflict].
type ConflictFamily struct {
	Family string  `json:"family"`
	Rows   int     `json:"rows"`
	Share  float64 `json:"share"` // of the total weight, 0..1
}

// ConflictRow is one weighted row of an [LPConflict].
type ConflictRow struct {
	Family string  `json:"family"`
	Share  float64 `json:"share"` // of the total weight, 0..1
	// Point is the row's point in the states' units (a pair's first
	// point); absent for a bound or the margin row.
	Point []float64 `json:"point,omitempty"`
	// Run and Sample name the recorded sample at Point (Sample counts
	// the run's samples from 1); absent for a fill or box point.
	Run    string `json:"run,omitempty"`
	Sample *int   `json:"sample,omitempty"`
}

// lpConflict converts the search's conflict to the states' units
// (x = xe + scale·z); nil gives nil.
func lpConflict(c *lyapunov.Conflict, xe, scale []float64, degree int) *LPConflict {
	if c == nil {
		return nil
	}
	out := &LPConflict{Kind: c.Kind, VDegree: degree, Margin: c.Margin, LPRows: c.LPRows, Rows: c.Rows,
		Samples: c.Samples, Residual: c.Residual, Families: []ConflictFamily{}, Strongest: []ConflictRow{}}
	for _, f := range c.Families {
		out.Families = append(out.Families, ConflictFamily{Family: f.Family, Rows: f.Rows, Share: f.Share})
	}
	for _, r := range c.Top {
		row := ConflictRow{Family: r.Family, Share: r.Share, Run: r.Run}
		if r.Z != nil {
			row.Point = make([]float64, len(r.Z))
			for j, z := range r.Z {
				row.Point[j] = xe[j] + scale[j]*z
			}
		}
		if r.Sample >= 0 {
			k := r.Sample + 1
			row.Sample = &k
		}
		out.Strongest = append(out.Strongest, row)
	}
	return out
}
