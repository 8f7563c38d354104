package validate

import (
	"cmp"
	"context"
	"errors"
	"fmt"
	"slices"
	"strings"

	"basin.example/fit"
	"basin.example/ingest"
)

// RestResult is the evaluation of one rest point (see [EvaluateAll]).
type RestResult struct {
	*Result
	// Rest is the cluster of settle points this certificate is about;
	// Rest.Runs is 0 when no cluster lies near the certified equilibrium
	// (Options.Equilibrium named a point no run settles at, or no run
	// settles).
	Rest ingest.RestPoint
}

// RestSkip is a rest point the runs settle at that gets no certificate,
// and why.
type RestSkip struct {
	Rest ingest.RestPoint
	Why  string
	// Unstable says the fitted equilibrium there has an eigenvalue with
	// positive real part: runs near it leave it, so the runs that end near
	// it are not said to settle there.
	Unstable bool
}

// EvaluateAll evaluates every stable rest point the runs of ds settle at
// (clusters of [ingest.RestPoints]), one [Evaluate] each with
// Options.Equilibrium at the cluster. The first result is the primary:
// the fitted equilibrium nearest opts.Equilibrium when it is set, else
// the one nearest the rest point most runs settle at (falling back to
// Evaluate's own choice when no fitted equilibrium lies near it). The
// others follow in falling order of the runs that settle there, and so
// do the skipped clusters. A cluster is skipped, with the reason, when the primary's model has no
// equilibrium within farEquilibrium spreads of it, when that equilibrium
// is not a stable one, or when it is one already evaluated. Errors are
// those of Evaluate.
func EvaluateAll(ctx context.Context, ds *ingest.Dataset, opts *Options) ([]RestResult, []RestSkip, error) {
	rps := ingest.RestPoints(ds)
	o := opts.get()
	if o.Field == nil || o.Field.Derivatives == nil { // every Evaluate below fits the same runs
		var fo fit.FieldOptions
		if o.Field != nil {
			fo = *o.Field
		}
		fo.Derivatives = &fit.DerivativeCache{}
		o.Field = &fo
	}
	first := o
	if first.Equilibrium == nil && len(rps) > 0 {
		first.Equilibrium = rps[0].Point
	}
	res, err := Evaluate(ctx, ds, &first)
	if err != nil && opts.getEquilibrium() == nil && first.Equilibrium != nil && errors.Is(err, ErrOptions) {
		// No fitted equilibrium near the largest cluster: certify the
		// one Evaluate picks.
		res, err = Evaluate(ctx, ds, &o)
	}
	if err != nil {
		return nil, nil, err
	}
	primary, rest, skips := placeRests(res.Model, rps)
	out := []RestResult{{Result: res}}
	if primary >= 0 {
		out[0].Rest = rps[primary]
	}
	for _, i := range rest {
		oi := o
		oi.Equilibrium = rps[i].Point
		r, err := Evaluate(ctx, ds, &oi)
		if errors.Is(err, ErrOptions) {
			// A fold's model has no equilibrium there.
			skips = append(skips, RestSkip{Rest: rps[i], Why: "some fold's fitted model has no equilibrium near it"})
			continue
		}
		if err != nil {
			return nil, nil, err
		}
		out = append(out, RestResult{Result: r, Rest: rps[i]})
	}
	// The skips in falling order of their runs, as the certificates: a
	// fold's skip comes after placeRests's, whatever its count.
	slices.SortStableFunc(skips, func(a, b RestSkip) int { return cmp.Compare(b.Rest.Runs, a.Rest.Runs) })
	return out, skips, nil
}

func (o *Options) getEquilibrium() []float64 {
	if o == nil {
		return nil
	}
	return o.Equilibrium
}

// placeRests maps each rest point of rps to the nearest equilibrium of m
// (whose first equilibrium is the one already certified): it returns
// the index in rps of the first rest point at m's first equilibrium (-1
// when none), the indices of the rest points to certify (one per other
// stable equilibrium, in rps's order), and the rest points skipped with
// why.
func placeRests(m *fit.Model, rps []ingest.RestPoint) (primary int, rest []int, skips []RestSkip) {
	primary = -1
	done := map[int]bool{0: true}
	for i, rp := range rps {
		k, d := m.Nearest(rp.Point)
		switch {
		case k < 0:
			skips = append(skips, RestSkip{Rest: rp, Why: "the fitted model has no equilibrium in the data's box"})
		case d > farEquilibrium:
			skips = append(skips, RestSkip{Rest: rp, Why: fmt.Sprintf("no equilibrium of the fitted model near it (the nearest is %.3g spreads away)", d)})
		case k == 0 && primary < 0:
			primary = i
		case done[k]:
			skips = append(skips, RestSkip{Rest: rp, Why: "the same fitted equilibrium as an earlier rest point"})
		case !strings.HasPrefix(m.Equilibria[k].Class, "stable"):
			sk := RestSkip{Rest: rp, Why: fmt.Sprintf("the fitted equilibrium there is a %s", m.Equilibria[k].Class)}
			for _, l := range m.Equilibria[k].Eigenvalues {
				sk.Unstable = sk.Unstable || l[0] > 0
			}
			if sk.Unstable {
				sk.Why += ", which runs near it leave"
			}
			skips = append(skips, sk)
		default:
			done[k] = true
			rest = append(rest, i)
		}
	}
	return primary, rest, skips
}
