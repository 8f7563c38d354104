package validate

import (
	"context"
	"fmt"
	"strings"
	"testing"

	"basin.example/fit"
)

// TestCombineFolds: the rule that makes the verdict independent of which
// runs a seed holds out.
func TestCombineFolds(t *testing.T) {
	C, R, I := fit.Certified, fit.Rejected, fit.Inconclusive
	A := fit.Verdict("abstain") // inconclusive: too few held-out runs entered
	for _, tc := range []struct {
		name  string
		folds []fit.Verdict
		want  fit.Verdict
		agree int
	}{
		{"all certified", []fit.Verdict{C, C, C, C, C}, C, 5},
		{"one inconclusive", []fit.Verdict{C, C, I, C, C}, I, 1},
		{"released rejected, rest certified", []fit.Verdict{R, C, C, C, C}, I, 0},
		{"most rejected", []fit.Verdict{C, R, R, R, I}, R, 3},
		{"half rejected is not most", []fit.Verdict{R, R, C, C}, I, 0},
		{"small folds abstain", []fit.Verdict{C, C, A, A, A}, C, 2},
		{"only abstaining folds", []fit.Verdict{A, A, A}, I, 3},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var certs []*fit.Certificate
			for _, v := range tc.folds {
				c := &fit.Certificate{Verdict: v, Strength: fit.Asymptotic, Reason: "r " + string(v) + ".", Validation: &fit.Validation{}}
				if v == A {
					c.Verdict, c.ReasonKind = I, fit.ReasonFewEntered
				}
				certs = append(certs, c)
			}
			combineFolds(certs[0], certs)
			if got := certs[0].Verdict; got != tc.want || certs[0].Validation.FoldsAgree != tc.agree {
				t.Errorf("verdict %s with %d agreeing (reason %q), want %s with %d", got, certs[0].Validation.FoldsAgree, certs[0].Reason, tc.want, tc.agree)
			}
			if tc.want != C && certs[0].Strength != fit.NoClaim {
				t.Errorf("strength %s on a %s verdict", certs[0].Strength, tc.want)
			}
		})
	}
}

// TestCombineFoldsStable: a fold certified only as stable makes the
// released certificate stable too, and the reason names that fold and
// why (the user finds it nowhere else).
func TestCombineFoldsStable(t *testing.T) {
	var certs []*fit.Certificate
	for i := range 3 {
		c := &fit.Certificate{Verdict: fit.Certified, Strength: fit.Asymptotic, Reason: "settled.", Validation: &fit.Validation{}}
		if i == 1 {
			c.Strength, c.Reason = fit.Stable, "runs stayed inside but 2 did not settle."
		}
		certs = append(certs, c)
	}
	combineFolds(certs[0], certs)
	want := "settled. Fold 2 of 3 claims only stability (runs stayed inside but 2 did not settle), so this one does too. Folds: 3 of 3 agree."
	if certs[0].Strength != fit.Stable || certs[0].Reason != want {
		t.Errorf("strength %s, reason %q; want stable, %q", certs[0].Strength, certs[0].Reason, want)
	}
}

// TestCombineFoldsRejectedReason: rejected by most folds while the
// released one was not, the reason is another fold's, and it says which:
// its eigenvalues are that fold's model's, not the released model's.
func TestCombineFoldsRejectedReason(t *testing.T) {
	var certs []*fit.Certificate
	for i, v := range []fit.Verdict{fit.Certified, fit.Rejected, fit.Rejected, fit.Rejected, fit.Inconclusive} {
		certs = append(certs, &fit.Certificate{Verdict: v, Strength: fit.Asymptotic, Reason: fmt.Sprintf("reason %d.", i), Validation: &fit.Validation{}})
	}
	combineFolds(certs[0], certs)
	if want := "In fold 2 of 5 (a model fitted without that fold's held-out runs): reason 1."; certs[0].Verdict != fit.Rejected || !strings.HasPrefix(certs[0].Reason, want) {
		t.Errorf("%s: %q, want rejected with %q", certs[0].Verdict, certs[0].Reason, want)
	}
}

// TestVerdictSeeds: with every fold held out once (the default) seeds 1
// to 10 give the same verdict on the same data, the damped linear
// oscillator of [Strogatz1994] §5.1 at 1% noise.
func TestVerdictSeeds(t *testing.T) {
	if testing.Short() {
		t.Skip("ten evaluations of five folds each")
	}
	ds := simulate(t, damped, 0.01, 4)
	var first fit.Verdict
	for seed := uint64(1); seed <= 10; seed++ {
		res, err := Evaluate(context.Background(), ds, &Options{Seed: seed, Field: &fit.FieldOptions{Bootstrap: -1, Seed: seed},
			Certify: &fit.CertifyOptions{Seed: seed}})
		if err != nil {
			t.Fatal(err)
		}
		v := res.Certificate.Verdict
		t.Logf("seed %d: %s, folds %v held %v: %s", seed, v, res.Certificate.Validation.FoldVerdicts, res.Heldout, res.Certificate.Reason)
		if seed == 1 {
			first = v
		} else if v != first {
			t.Errorf("seed %d: verdict %s, seed 1 gave %s", seed, v, first)
		}
		if n := len(res.Certificate.Validation.FoldVerdicts); n != 5 {
			t.Errorf("seed %d: %d fold verdicts, want 5", seed, n)
		}
	}
	if first != fit.Certified {
		t.Errorf("the damped oscillator: %s, want certified", first)
	}
}

// TestCombineFoldsStrength: the combined certificate claims the weakest
// strength of the certified folds, and its reason says "only stability"
// exactly once: from the note when the reason kept is an asymptotic
// fold's, not again when the kept reason is a stable fold's own.
func TestCombineFoldsStrength(t *testing.T) {
	const note = "claims only stability"
	C, As, St := fit.Certified, fit.Asymptotic, fit.Stable
	for _, tc := range []struct {
		name      string
		verdicts  []fit.Verdict
		strengths []fit.Strength
		want      fit.Strength
		notes     int
	}{
		{"all asymptotic", []fit.Verdict{C, C, C}, []fit.Strength{As, As, As}, As, 0},
		{"another fold stable", []fit.Verdict{C, C, C}, []fit.Strength{As, St, As}, St, 1},
		{"released stable", []fit.Verdict{C, C, C}, []fit.Strength{St, As, As}, St, 0},
		{"released abstains, first certified stable", []fit.Verdict{fit.Inconclusive, C, C}, []fit.Strength{fit.NoClaim, St, As}, St, 0},
		{"released abstains, a later fold stable", []fit.Verdict{fit.Inconclusive, C, C}, []fit.Strength{fit.NoClaim, As, St}, St, 1},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var certs []*fit.Certificate
			for i, v := range tc.verdicts {
				c := &fit.Certificate{Verdict: v, Strength: tc.strengths[i], Reason: "fold reason.", Validation: &fit.Validation{}}
				if v == fit.Inconclusive {
					c.ReasonKind = fit.ReasonFewEntered
				}
				certs = append(certs, c)
			}
			combineFolds(certs[0], certs)
			got := certs[0]
			if got.Verdict != C || got.Strength != tc.want {
				t.Fatalf("verdict %s strength %s, want certified %s (reason %q)", got.Verdict, got.Strength, tc.want, got.Reason)
			}
			// a stable fold's own reason says so; here "fold reason." does
			// not, so count the note only where the kept reason is an
			// asymptotic fold's
			if n := strings.Count(got.Reason, note); n != tc.notes {
				t.Errorf("reason %q says %q %d times, want %d", got.Reason, note, n, tc.notes)
			}
		})
	}
}
