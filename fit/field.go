package fit

import (
	"context"
	"errors"

	"github.com/basin-dev/basin/ingest"
)

// FieldOptions controls Field. A nil *FieldOptions means all defaults.
type FieldOptions struct {
	Degree int    // total degree of the monomial library; 0 means 3
	Folds  int    // cross-validation folds over runs; 0 means 5
	Seed   uint64 // random seed for folds and bootstrap; 0 means 1
}

// Field fits a sparse polynomial vector field to the runs of ds.
func Field(ctx context.Context, ds *ingest.Dataset, opts *FieldOptions) (*Model, error) {
	return nil, errors.New("fit: Field not built yet")
}
