package report

import (
	"strings"
	"testing"

	"basin.example/fit"
)

// TestUnstableRuns: an equilibrium whose Jacobian has an eigenvalue with
// positive real part is never where the runs settle: runs near it leave
// it ([Strogatz1994] §5.2: a saddle (real eigenvalues of both signs), an
// unstable node or focus (positive real parts); a stable node or focus
// has negative real parts and gets no such words). The words say how
// many runs settle and where, or that none does, and the list's heading
// calls the first equilibrium where the runs settle only when it is
// stable and some run settles.
func TestUnstableRuns(t *testing.T) {
	for _, tc := range []struct {
		name    string
		class   string
		eig     [][2]float64
		settled int
		want    string // in UnstableRuns; "" for none
		heading string // FirstEquilibrium
	}{
		{"unstable focus, none settles", fit.ClassUnstableFocus, [][2]float64{{0.2, 2}, {0.2, -2}}, 0,
			"runs near it leave it (an eigenvalue with real part +0.2 1/s); none of the 12 fit runs settles within the data",
			"the first is the one nearest where the runs end; none settles"},
		{"unstable focus, some settle", fit.ClassUnstableFocus, [][2]float64{{0.2, 2}, {0.2, -2}}, 5,
			"runs near it leave it (an eigenvalue with real part +0.2 1/s); 5 of the 12 fit runs settle within the data, the median of their settle points at theta = 1.2 rad, omega = 0 rad/s",
			"the first is the one nearest where the runs settle"},
		{"saddle", fit.ClassSaddle, [][2]float64{{0.7806, 0}, {-1.28, 0}}, 12,
			"runs near it leave it (an eigenvalue with real part +0.781 1/s)",
			"the first is the one nearest where the runs settle"},
		{"unstable node", fit.ClassUnstableNode, [][2]float64{{1, 0}, {0.5, 0}}, 0,
			"runs near it leave it (an eigenvalue with real part +1 1/s)",
			"the first is the one nearest where the runs end; none settles"},
		{"centre, round-off above zero", fit.ClassNonHyperbolic, [][2]float64{{1e-9, 2}, {1e-9, -2}}, 12,
			"its linearisation has an eigenvalue on the imaginary axis (largest real part +1e-9 1/s), so it does not show runs settling there",
			"the first is the one nearest where the runs settle"},
		{"stable focus", fit.ClassStableFocus, [][2]float64{{-0.4, 1.96}, {-0.4, -1.96}}, 12, "", "the first is where the runs settle"},
		{"stable focus, none settles", fit.ClassStableFocus, [][2]float64{{-0.4, 1.96}, {-0.4, -1.96}}, 0, "", "the first is the one nearest where the runs end; none settles"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			m := &fit.Model{States: []string{"theta", "omega"}, Units: []string{"rad", "rad/s"}, Spread: []float64{1, 1},
				Runs: 12, SettledRuns: tc.settled, Settle: []float64{1.2, 0},
				Equilibria: []fit.Equilibrium{{Point: []float64{0, 0}, Eigenvalues: tc.eig, Class: tc.class, InEnvelope: true}}}
			got := UnstableRuns(m, &m.Equilibria[0])
			if tc.want == "" && got != "" || tc.want != "" && !strings.Contains(got, tc.want) {
				t.Errorf("UnstableRuns = %q, want %q", got, tc.want)
			}
			if strings.Contains(got, "settle there") && tc.class != fit.ClassNonHyperbolic {
				t.Errorf("UnstableRuns = %q says the runs settle there", got)
			}
			if h := FirstEquilibrium(m); h != tc.heading {
				t.Errorf("FirstEquilibrium = %q, want %q", h, tc.heading)
			}
		})
	}
}

// TestUnstableRunsTwoWells: runs that settle on the two wells either side
// of a saddle (x” = x - x³ - δx' [GuckenheimerHolmes1983], wells at ±1)
// have a median settle point between the wells that means nothing: the
// words name the model's stable equilibria instead.
func TestUnstableRunsTwoWells(t *testing.T) {
	m := &fit.Model{States: []string{"latch", "latch_rate"}, Units: []string{"mm", "mm/s"}, Spread: []float64{1, 1},
		Runs: 24, SettledRuns: 24, Settle: []float64{0.999, 0},
		Equilibria: []fit.Equilibrium{
			{Point: []float64{0, 0}, Eigenvalues: [][2]float64{{0.7, 0}, {-1.5, 0}}, Class: fit.ClassSaddle, InEnvelope: true},
			{Point: []float64{1, 0}, Eigenvalues: [][2]float64{{-0.4, 1.4}, {-0.4, -1.4}}, Class: fit.ClassStableFocus, InEnvelope: true},
			{Point: []float64{-1, 0}, Eigenvalues: [][2]float64{{-0.4, 1.4}, {-0.4, -1.4}}, Class: fit.ClassStableFocus, InEnvelope: true}}}
	got := UnstableRuns(m, &m.Equilibria[0])
	want := "24 of the 24 fit runs settle within the data, where the model has stable equilibria at latch = 1 mm, latch_rate = 0 mm/s; latch = -1 mm, latch_rate = 0 mm/s"
	if !strings.Contains(got, want) || strings.Contains(got, "median") {
		t.Errorf("UnstableRuns = %q, want %q and no median", got, want)
	}
}

// TestSummaryUnstableEquilibrium: the summary's equilibrium line is
// followed by what the runs do when the fitted equilibrium nearest the
// certificate's is unstable, and by nothing when it is stable.
func TestSummaryUnstableEquilibrium(t *testing.T) {
	for _, unstable := range []bool{false, true} {
		in := fixture(mustCert(fixtureCertJSON), nil)
		if unstable {
			in.Model.Equilibria[0].Class = fit.ClassUnstableFocus
			in.Model.Equilibria[0].Eigenvalues = [][2]float64{{0.2, 2}, {0.2, -2}}
			in.Model.SettledRuns = 0
		} else {
			in.Model.Equilibria[0].Eigenvalues = [][2]float64{{-0.5, 0.866}, {-0.5, -0.866}}
		}
		in.Model.Runs = 6
		var b strings.Builder
		if err := Summary(&b, in); err != nil {
			t.Fatal(err)
		}
		_, after, _ := strings.Cut(b.String(), "\nequilibrium: ")
		_, next, _ := strings.Cut(after, "\n")
		has := strings.HasPrefix(next, "  runs near it leave it (an eigenvalue with real part +0.2 1/s); none of the 6 fit runs settles within the data")
		if has != unstable || strings.Contains(next, "leave") != unstable {
			t.Errorf("unstable %v: after the equilibrium line:\n%s", unstable, next)
		}
	}
}
