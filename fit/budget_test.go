package fit

import (
	"errors"
	"fmt"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/stat/combin"

	"basin.example/fit/poly"
	"basin.example/ingest"
)

// TestLibraryTerms: the closed form C(vars+degree, degree) against
// gonum's combin.Binomial (an independent library) and against the
// library itself, and finite for files far wider than any library fits.
func TestLibraryTerms(t *testing.T) {
	for _, tc := range []struct{ vars, degree int }{{1, 0}, {2, 3}, {6, 3}, {20, 4}, {200, 3}, {1000, 2}} {
		got := LibraryTerms(tc.vars, tc.degree)
		if want := float64(combin.Binomial(tc.vars+tc.degree, tc.degree)); got != want {
			t.Errorf("LibraryTerms(%d, %d) = %g, want C(%d, %d) = %g", tc.vars, tc.degree, got, tc.vars+tc.degree, tc.degree, want)
		}
		if tc.vars <= 20 {
			if n := poly.NewLibrary(tc.vars, 0, tc.degree).Len(); float64(n) != got {
				t.Errorf("NewLibrary(%d, 0, %d).Len() = %d, closed form %g", tc.vars, tc.degree, n, got)
			}
		}
	}
	if v := LibraryTerms(4000, 8); !(v > 1e23 && v < 1e25) { // C(4008, 8) = 1.6e24
		t.Errorf("LibraryTerms(4000, 8) = %g", v)
	}
}

// wide returns runs of vars random-walk states, rows samples each.
func wide(vars, runs, rows int) *ingest.Dataset {
	rng := rand.New(rand.NewPCG(3, 0))
	ds := &ingest.Dataset{}
	for j := range vars {
		ds.States = append(ds.States, ingest.Column{Name: fmt.Sprint("x", j)})
	}
	for r := range runs {
		run := ingest.Run{Name: fmt.Sprint("r", r), T: make([]float64, rows), X: make([][]float64, vars)}
		for i := range run.T {
			run.T[i] = 0.01 * float64(i)
		}
		for j := range run.X {
			run.X[j] = make([]float64, rows)
			for i := range run.X[j] {
				run.X[j][i] = rng.NormFloat64()
			}
		}
		ds.Runs = append(ds.Runs, run)
	}
	return ds
}

// TestFieldBudget: a wide file with few rows is refused as too few
// samples, and a library over the memory budget is refused with a
// BudgetError saying the need and the budget, both before the library is
// built (a degree-3 library in 200 variables has 1.4 million terms, whose
// normal matrices would take terabytes).
func TestFieldBudget(t *testing.T) {
	_, err := Field(t.Context(), wide(200, 1, 50), &FieldOptions{Bootstrap: -1})
	if !errors.Is(err, ErrTooFewSamples) {
		t.Errorf("200 states x 50 rows: err = %v, want ErrTooFewSamples", err)
	}
	_, err = Field(t.Context(), wide(5, 6, 400), &FieldOptions{Bootstrap: -1, MaxMemory: 1 << 10})
	var be *BudgetError
	if !errors.As(err, &be) || !errors.Is(err, ErrBudget) {
		t.Fatalf("5 states, 1 KiB budget: err = %v, want a BudgetError", err)
	}
	if be.Terms != 56 || be.Budget != 1<<10 || !(be.Need > 1<<10) {
		t.Errorf("BudgetError %+v, want 56 terms, need over 1 KiB", be)
	}
}
