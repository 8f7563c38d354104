package export_test

import (
	"bytes"
	"database/sql"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"os/user"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	_ "modernc.org/sqlite" // pure-Go SQLite, a second SQL dialect for the query

	"basin.example/fit"
	"basin.example/fit/export"
	"basin.example/fit/poly"
	"basin.example/ingest"
	"basin.example/validate"
)

// The SQL query's outside checks [SQL2003]: the ISO SQL:2003 definition of LAG,
// ROW_NUMBER and framed MAX over an ordered partition (from memory; any
// SQL reference), as implemented by two independent engines of different
// dialects — a real PostgreSQL server [postgresql] and SQLite [sqlite] — which must agree with
// each other and with basin screen (validate.Screener) run by run.

// sqlCerts are hand-made certificates: two states with a cross term, a
// state name holding a double quote and held-out decay rates (so the
// query has a slow column), and three states with a quartic V (the
// term-by-term path) without decay rates; and two's twin of strength
// stable, which claims no settling: screen flags no run unsettled or
// slow against it, so its query has no slow column and unsettled is
// false on runs that two flags unsettled (checkVariety makes sure two
// flags some, so the twin's comparison can fail).
func sqlCerts() map[string]*fit.Certificate {
	two := &fit.Certificate{Format: fit.CertificateFormat, Verdict: fit.Certified,
		States: []string{"pitch", `rate "fast"`}, Units: []string{"rad", "rad/s"},
		Equilibrium: []float64{0.5, -0.2}, Scale: []float64{1, 2},
		V:     poly.Poly{Exponents: [][]int{{2, 0}, {1, 1}, {0, 2}}, Coefficients: []float64{1, 0.2, 0.9}},
		Level: 1, Box: [][2]float64{{-0.6, 1.6}, {-2.4, 2}}, Found: true, NoiseRadius: 0.05, Tolerance: 2e-3,
		Validation: &fit.Validation{Decay: &fit.Decay{Runs: 6, LowerBound: 0.8}},
		// the runs' noise (1 to 3 times 1e-3 in z) exceeds this: their
		// tolerances are widened per run, as screen does
		Noise: []float64{0.8e-3, 1.6e-3}}
	three := &fit.Certificate{Format: fit.CertificateFormat, Verdict: fit.Inconclusive,
		States: []string{"a", "B", "c_2"}, Units: []string{"", "", ""},
		Equilibrium: []float64{0, 0, 1}, Scale: []float64{1, 1, 0.5},
		V: poly.Poly{Exponents: [][]int{{2, 0, 0}, {0, 2, 0}, {0, 0, 2}, {4, 0, 0}, {1, 1, 2}},
			Coefficients: []float64{1, 1, 1, 0.5, 0.1}},
		Level: 0.8, Found: true, NoiseRadius: 0.03, Tolerance: 1e-3}
	stable := *two
	stable.Strength = fit.Stable
	// fitted on runs averaged in blocks of 3 samples: the query averages
	// each piece's rows as basin does before screening
	avg := *two
	avg.Average = 3
	return map[string]*fit.Certificate{"two": two, "three": three, "stable": &stable, "two_averaged": &avg}
}

// sqlRuns makes runs in z coordinates: decaying rotations at healthy and
// slow rates from inside, one that grows and leaves, one that comes in
// from outside, one that stays outside, one with a kick, all with noise.
func sqlRuns(c *fit.Certificate) []ingest.Run {
	n := len(c.States)
	rng := rand.New(rand.NewPCG(11, uint64(n)))
	type shape struct {
		name       string
		r0, k, w   float64
		kick, grow bool
		m          int
		sigma      float64 // noise in z; 0: 1e-3 to 3e-3
	}
	var shapes []shape
	for i := range 8 {
		shapes = append(shapes, shape{name: fmt.Sprintf("healthy-%d", i), r0: 0.4 + 0.05*float64(i), k: 1 + 0.1*float64(i), w: 3})
	}
	// a long run: the noise estimate strides over its fourth differences
	shapes = append(shapes, shape{name: "long", r0: 0.5, k: 0.5, w: 1, m: 9000})
	for i := range 3 {
		shapes = append(shapes, shape{name: fmt.Sprintf("worn-%d", i), r0: 0.6, k: 0.15 + 0.02*float64(i), w: 3})
	}
	shapes = append(shapes,
		shape{name: "grows", r0: 0.3, k: -0.4, w: 2, grow: true},
		shape{name: "from-outside", r0: 1.6, k: 1.2, w: 2},
		shape{name: "outside", r0: 3, k: 0, w: 0},
		shape{name: "kicked", r0: 0.5, k: 1.5, w: 3, kick: true},
		// a lossless oscillation inside the region: |z| stays at 0.5 (the
		// undamped harmonic oscillator conserves its energy [Ogata], from
		// memory), V swinging with the phase: unsettled by screen's rule,
		// not so against a certificate of strength stable
		shape{name: "lossless", r0: 0.5, k: 0, w: 2},
		// healthy decays that rest for a long time in noise reaching just
		// past the noise ball (0.05 against 0.015 per state: about 0.4% of
		// the rest's samples lie outside): the decay rate is fitted over
		// the approach alone, not the rest's excursions; one starts at
		// rest and is kicked, the rest's excursions before the kick
		// dropped as too short
		shape{name: "rests", r0: 0.5, k: 1.2, w: 3, m: 12000, sigma: 0.015},
		shape{name: "rest-kicked", r0: 0, k: 1.2, w: 3, m: 6000, sigma: 0.015, kick: true})
	var runs []ingest.Run
	for k, s := range shapes {
		m := 800
		if s.m > 0 {
			m = s.m
		}
		sigma := 1e-3 * float64(1+k%3)
		if s.sigma > 0 {
			sigma = s.sigma
		}
		r := ingest.Run{Name: s.name, T: make([]float64, m), X: make([][]float64, n)}
		for j := range r.X {
			r.X[j] = make([]float64, m)
		}
		ph := rng.Float64() * 2 * math.Pi
		for i := range m {
			t := float64(i) * 0.01
			a := s.r0 * math.Exp(-s.k*t)
			if s.kick && t >= 3 {
				a += 0.4 * math.Exp(-s.k*(t-3))
			}
			r.T[i] = t
			for j := range n {
				zj := a * math.Cos(s.w*t+ph+float64(j)*math.Pi/2/float64(n-1)) / math.Sqrt(float64(n-1))
				r.X[j][i] = c.Equilibrium[j] + c.Scale[j]*(zj+sigma*rng.NormFloat64())
			}
		}
		runs = append(runs, r)
	}
	// faults the per-pair test misses: a run that rests off the
	// equilibrium (its end is outside the noise ball but as low as its
	// chunks before: unsettled), one whose V grows slowly after it has
	// decayed (rises over the run, not between pairs), and one whose
	// first state's reading sticks at one value mid-approach (stuck: at
	// t = 1 s, |z| = 0.15, V far above the settle level; a reading held
	// at rest is a quantised sensor's and not flagged: held-at-rest, from
	// t = 5 s, |z| = 0.003)
	for _, f := range []string{"off-rest", "grows-late", "stuck", "held-at-rest"} {
		src := runs[0]
		r := ingest.Run{Name: f, T: src.T, X: make([][]float64, n)}
		for j := range r.X {
			r.X[j] = append([]float64(nil), src.X[j]...)
		}
		for i, t := range r.T {
			switch f {
			case "off-rest":
				r.X[0][i] += c.Scale[0] * 0.25 * (1 - math.Exp(-2*t))
			case "grows-late":
				r.X[0][i] += c.Scale[0] * 0.004 * math.Exp(0.5*t) * math.Cos(3*t)
			case "stuck":
				if i >= 100 {
					r.X[0][i] = r.X[0][100]
				}
			case "held-at-rest":
				if i >= 500 {
					r.X[0][i] = r.X[0][500]
				}
			}
		}
		runs = append(runs, r)
	}
	// a healthy underdamped mode (ζ = 0.5, ω = 1.5 rad/s) whose first
	// undershoot reaches the equilibrium, V there below its rest's, then
	// rests at z0 = 0.045 inside the noise ball with small noise: its end
	// lies above its least chunk by more than a quarter of the tolerance,
	// but V over its last samples stays below the settle level, so it has
	// not grown (rises before that rule)
	{
		const zeta, omega, rest = 0.5, 1.5, 0.045
		wd := omega * math.Sqrt(1-zeta*zeta)
		k := zeta / math.Sqrt(1-zeta*zeta)
		x0 := rest + rest/math.Exp(-zeta*math.Pi/math.Sqrt(1-zeta*zeta))
		m := 1000
		r := ingest.Run{Name: "undershoot", T: make([]float64, m), X: make([][]float64, n)}
		for j := range r.X {
			r.X[j] = make([]float64, m)
		}
		for i := range m {
			t := float64(i) * 0.01
			e := math.Exp(-zeta * omega * t)
			z := make([]float64, n)
			z[0] = rest + (x0-rest)*e*(math.Cos(wd*t)+k*math.Sin(wd*t))
			z[1] = -0.2 * (x0 - rest) * e * omega * omega / wd * math.Sin(wd*t)
			r.T[i] = t
			for j := range n {
				r.X[j][i] = c.Equilibrium[j] + c.Scale[j]*(z[j]+2e-4*rng.NormFloat64())
			}
		}
		runs = append(runs, r)
	}
	return runs
}

// gapped adds to runs a copy of the first with missing samples (NaN) at
// rows 10, 20 and 21, and returns the table's runs and the runs screen
// sees: basin's ingest splits a run at a missing sample into pieces named
// run, run~1, run~2 [common practice: a gap is not interpolated across],
// here the copy's three pieces. The middle piece, nine samples, has not
// settled by its end, so screen flags it; the query, which must split the
// run as ingest does, then flags the run.
func gapped(runs []ingest.Run) (table, pieces []ingest.Run) {
	src := runs[0]
	g := ingest.Run{Name: "gapped", T: append([]float64(nil), src.T...), X: make([][]float64, len(src.X))}
	for j := range src.X {
		g.X[j] = append([]float64(nil), src.X[j]...)
	}
	// The first piece ends in a reading held over its last 80 samples
	// from sample 40 on (a sensor that froze, then the logger dropped a
	// row): split there it is stuck, joined it is not, so a query that
	// ran across the gap would differ from screen. A second gap, in
	// another state, leaves a short middle piece.
	const h0, cut = 40, 120
	for i := h0; i < cut; i++ {
		g.X[0][i] = g.X[0][h0]
	}
	missing := [][2]int{{cut, 0}, {cut + 30, 1 % len(g.X)}}
	for _, m := range missing {
		g.X[m[1]][m[0]] = math.NaN()
	}
	table = append(append([]ingest.Run(nil), runs...), g)
	pieces = append([]ingest.Run(nil), runs...)
	for k, r := range [][2]int{{0, cut}, {cut + 1, cut + 30}, {cut + 31, len(g.T)}} {
		p := ingest.Run{Name: g.Name, T: g.T[r[0]:r[1]], X: make([][]float64, len(g.X))}
		if k > 0 {
			p.Name = fmt.Sprintf("%s~%d", g.Name, k)
		}
		for j := range g.X {
			p.X[j] = g.X[j][r[0]:r[1]]
		}
		pieces = append(pieces, p)
	}
	return table, pieces
}

// byRun folds the flags of a run's pieces (run~N) into the run's: the
// query's one row per run.
func byRun(f map[string]flagRow) map[string]flagRow {
	out := map[string]flagRow{}
	for name, r := range f {
		if i := strings.IndexByte(name, '~'); i >= 0 {
			name = name[:i]
		}
		o := out[name]
		out[name] = flagRow{o.flagged || r.flagged, o.rises || r.rises, o.leaves || r.leaves, o.unsettled || r.unsettled, o.slow || r.slow, o.stuck || r.stuck}
	}
	return out
}

// sqlValue is a sample as a value to insert: nil (NULL) for a missing one.
func sqlValue(x float64) any {
	if x != x {
		return nil
	}
	return x
}

// averaged returns runs with each replaced by the means of its blocks
// of k samples, a last shorter block left out, as ingest.Options.Average
// averages a run (the sum in time order over k).
func averaged(runs []ingest.Run, k int) []ingest.Run {
	out := make([]ingest.Run, len(runs))
	mean := func(x []float64) []float64 {
		m := make([]float64, len(x)/k)
		for b := range m {
			s := 0.0
			for _, v := range x[b*k : (b+1)*k] {
				s += v
			}
			m[b] = s / float64(k)
		}
		return m
	}
	for i, r := range runs {
		o := r
		o.T = mean(r.T)
		o.X = make([][]float64, len(r.X))
		for j := range r.X {
			o.X[j] = mean(r.X[j])
		}
		out[i] = o
	}
	return out
}

// flagRow is one run's flags, as screen gives them or a query returns.
type flagRow struct {
	flagged, rises, leaves, unsettled, slow, stuck bool
}

func (f flagRow) String() string {
	return fmt.Sprintf("flagged %v rises %v leaves %v unsettled %v slow %v stuck %v", f.flagged, f.rises, f.leaves, f.unsettled, f.slow, f.stuck)
}

// screenFlags screens runs as basin screen --rise-tol tol does (0: the
// certificate's tolerance).
func screenFlags(c *fit.Certificate, runs []ingest.Run, tol float64) map[string]flagRow {
	if c.Average >= 2 {
		runs = averaged(runs, c.Average)
	}
	s := validate.NewScreener(c, &validate.ScreenOptions{Tolerance: tol})
	out := map[string]flagRow{}
	all := make([]validate.RunScreen, len(runs))
	for i := range runs {
		s.Screen(&all[i], "f", &runs[i])
	}
	validate.JudgeLastPieces(all) // as ScreenFile does
	for i := range runs {
		rs := all[i]
		var f flagRow
		f.flagged = rs.Flagged
		for _, fl := range rs.Flags {
			switch fl.Kind {
			case validate.FlagRises:
				f.rises = true
			case validate.FlagLeaves:
				f.leaves = true
			case validate.FlagUnsettled:
				f.unsettled = true
			case validate.FlagSlow:
				f.slow = true
			case validate.FlagStuck:
				f.stuck = true
			}
		}
		out[runs[i].Name] = f
	}
	return out
}

func query(t *testing.T, c *fit.Certificate, table string, tol float64) string {
	t.Helper()
	var b bytes.Buffer
	if err := export.Write(&b, c, export.SQL, &export.Options{Table: table, RiseTolerance: tol}); err != nil {
		t.Fatal(err)
	}
	return b.String()
}

// compare checks got against screen's flags run by run.
func compare(t *testing.T, engine string, want, got map[string]flagRow) {
	t.Helper()
	if len(got) != len(want) {
		t.Errorf("%s: %d runs, screen %d", engine, len(got), len(want))
	}
	for name, w := range want {
		g, ok := got[name]
		if !ok {
			t.Errorf("%s: run %s missing", engine, name)
			continue
		}
		if g != w {
			t.Errorf("%s: run %s: %v; screen: %v", engine, name, g, w)
		}
	}
}

// riseTols are the tolerances each engine is compared with screen at: the
// certificate's (0), and a quarter of it, at which screen flags more runs
// (checked by tolChanges), so a query that ignored the option would
// differ from screen on some run.
func riseTols(c *fit.Certificate) []float64 { return []float64{0, c.Tolerance / 4} }

// tolChanges makes sure the non-default tolerance changes screen's flags
// on at least one run, so the comparison at it can fail.
func tolChanges(t *testing.T, name string, c *fit.Certificate, runs []ingest.Run) {
	t.Helper()
	tols := riseTols(c)
	a, b := screenFlags(c, runs, tols[0]), screenFlags(c, runs, tols[1])
	for k := range a {
		if a[k] != b[k] {
			return
		}
	}
	t.Fatalf("%s: screen gives the same flags at --rise-tol %g as at the certificate's %g: the option is not exercised", name, tols[1], c.Tolerance)
}

// checkVariety makes sure the data exercise every flag and a clean run,
// so the comparison cannot pass on all-false columns: slow and stuck
// when slow, unsettled when settle, and when not settle (a certificate
// of strength stable) that no run is unsettled or slow.
func checkVariety(t *testing.T, name string, want map[string]flagRow, slow, settle bool) {
	t.Helper()
	var clean, rises, leaves, unsettled, slows, stucks int
	for _, f := range want {
		if !f.flagged {
			clean++
		}
		if f.rises {
			rises++
		}
		if f.leaves {
			leaves++
		}
		if f.unsettled {
			unsettled++
		}
		if f.slow {
			slows++
		}
		if f.stuck {
			stucks++
		}
	}
	if !settle && (unsettled > 0 || slows > 0) {
		t.Fatalf("%s: claims no settling, yet screen flags %d runs unsettled and %d slow", name, unsettled, slows)
	}
	if clean == 0 || rises == 0 || leaves == 0 || (settle && unsettled == 0) || (slow && slows == 0) || (slow && stucks == 0) {
		t.Fatalf("%s: the data do not exercise every flag: clean %d rises %d leaves %d unsettled %d slow %d stuck %d",
			name, clean, rises, leaves, unsettled, slows, stucks)
	}
}

// TestSQLGapExercised makes sure screen flags a gapped run split into
// pieces otherwise than joined, for some certificate, so a query that ran
// across the gap would differ from screen on it.
func TestSQLGapExercised(t *testing.T) {
	differ := 0
	for _, c := range sqlCerts() {
		table, pieces := gapped(sqlRuns(c))
		g := table[len(table)-1]
		var joined ingest.Run
		joined.Name = g.Name
		joined.X = make([][]float64, len(g.X))
		for _, p := range pieces[len(table)-1:] {
			joined.T = append(joined.T, p.T...)
			for j := range p.X {
				joined.X[j] = append(joined.X[j], p.X[j]...)
			}
		}
		if byRun(screenFlags(c, pieces, 0))[g.Name] != screenFlags(c, []ingest.Run{joined}, 0)[g.Name] {
			differ++
		}
	}
	if differ == 0 {
		t.Fatal("the gapped run has the same flags split and joined under every certificate: the gap is not exercised")
	}
}

func TestSQLSQLite(t *testing.T) {
	heavy(t)
	for name, c := range sqlCerts() {
		runs, pieces := gapped(sqlRuns(c))
		slow := strings.HasPrefix(name, "two") // slow and stuck
		checkVariety(t, name, screenFlags(c, pieces, 0), slow, name != "stable")
		tolChanges(t, name, c, pieces)
		db, err := sql.Open("sqlite", ":memory:")
		if err != nil {
			t.Fatal(err)
		}
		defer db.Close()
		db.SetMaxOpenConns(1) // one connection: one in-memory database
		cols := []string{`"run" TEXT`, `"t" DOUBLE PRECISION`}
		for _, s := range c.States {
			cols = append(cols, `"`+strings.ReplaceAll(s, `"`, `""`)+`" DOUBLE PRECISION`)
		}
		if _, err := db.Exec(`CREATE TABLE "fleet_logs" (` + strings.Join(cols, ", ") + `)`); err != nil {
			t.Fatal(err)
		}
		tx, err := db.Begin()
		if err != nil {
			t.Fatal(err)
		}
		ph := strings.TrimSuffix(strings.Repeat("?, ", len(c.States)+2), ", ")
		st, err := tx.Prepare(`INSERT INTO "fleet_logs" VALUES (` + ph + `)`)
		if err != nil {
			t.Fatal(err)
		}
		for _, r := range runs {
			for i := range r.T {
				args := []any{r.Name, r.T[i]}
				for j := range r.X {
					args = append(args, sqlValue(r.X[j][i]))
				}
				if _, err := st.Exec(args...); err != nil {
					t.Fatal(err)
				}
			}
		}
		if err := tx.Commit(); err != nil {
			t.Fatal(err)
		}
		for _, tol := range riseTols(c) {
			rows, err := db.Query(query(t, c, "fleet_logs", tol))
			if err != nil {
				t.Fatalf("%s: %v", name, err)
			}
			got := map[string]flagRow{}
			for rows.Next() {
				var run string
				var v [6]int64
				dst := []any{&run, &v[0], &v[1], &v[2], &v[3]}
				if slow {
					dst = append(dst, &v[4])
				}
				dst = append(dst, &v[5])
				if err := rows.Scan(dst...); err != nil {
					t.Fatal(err)
				}
				got[run] = flagRow{v[0] == 1, v[1] == 1, v[2] == 1, v[3] == 1, v[4] == 1, v[5] == 1}
			}
			if err := rows.Err(); err != nil {
				t.Fatal(err)
			}
			compare(t, fmt.Sprintf("sqlite %s rise-tol %g", name, tol), byRun(screenFlags(c, pieces, tol)), got)
		}
	}
}

// postgres is a PostgreSQL server started for a test on a unix socket in
// a temporary folder (no TCP port), stopped at the end.
type postgres struct {
	bin, sock string
}

// startPostgres finds initdb, pg_ctl and psql (PATH, then Debian's
// /usr/lib/postgresql/*/bin) and starts a server; it skips the test
// when they are absent. The server refuses to run as root, so as root
// it runs as the user nobody.
func startPostgres(t *testing.T) *postgres {
	t.Helper()
	bin := ""
	if p, err := exec.LookPath("pg_ctl"); err == nil {
		bin = filepath.Dir(p)
	} else if m, _ := filepath.Glob("/usr/lib/postgresql/*/bin/pg_ctl"); len(m) > 0 {
		sort.Strings(m)
		bin = filepath.Dir(m[len(m)-1])
	}
	if bin == "" {
		t.Skip("PostgreSQL server binaries (pg_ctl, initdb) not found: install Debian's postgresql package to run this check")
	}
	for _, b := range []string{"initdb", "psql"} {
		if _, err := os.Stat(filepath.Join(bin, b)); err != nil {
			if p, err := exec.LookPath(b); err == nil && b == "psql" {
				_ = p
				continue
			}
			t.Skipf("PostgreSQL %s not found beside %s", b, bin)
		}
	}
	dir, err := os.MkdirTemp("", "basin-pg-")
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { os.RemoveAll(dir) })
	var cred *syscall.Credential
	if os.Geteuid() == 0 {
		u, err := user.Lookup("nobody")
		if err != nil {
			t.Skip("running as root without a user nobody to run PostgreSQL as")
		}
		uid, _ := strconv.Atoi(u.Uid)
		gid, _ := strconv.Atoi(u.Gid)
		cred = &syscall.Credential{Uid: uint32(uid), Gid: uint32(gid)}
		if err := os.Chmod(dir, 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.Chown(dir, uid, gid); err != nil {
			t.Fatal(err)
		}
	}
	run := func(name string, args ...string) {
		t.Helper()
		cmd := exec.Command(filepath.Join(bin, name), args...)
		cmd.Env = append(os.Environ(), "LC_ALL=C")
		if cred != nil {
			cmd.SysProcAttr = &syscall.SysProcAttr{Credential: cred}
		}
		if out, err := cmd.CombinedOutput(); err != nil {
			t.Fatalf("%s %v: %v\n%s", name, args, err, out)
		}
	}
	data := filepath.Join(dir, "data")
	run("initdb", "-D", data, "-U", "basin", "--auth=trust", "-E", "UTF8", "--no-sync")
	run("pg_ctl", "start", "-w", "-t", "60", "-D", data, "-l", filepath.Join(dir, "log"),
		"-o", "-k "+dir+" -c listen_addresses= -c fsync=off -p 5432")
	t.Cleanup(func() {
		cmd := exec.Command(filepath.Join(bin, "pg_ctl"), "stop", "-m", "immediate", "-w", "-D", data)
		if cred != nil {
			cmd.SysProcAttr = &syscall.SysProcAttr{Credential: cred}
		}
		_ = cmd.Run()
	})
	return &postgres{bin: bin, sock: dir}
}

// psql runs sql through psql (unaligned, comma-separated, tuples only)
// with stdin as the COPY data, and returns its output.
func (pg *postgres) psql(t *testing.T, sql string, stdin []byte) string {
	t.Helper()
	p := filepath.Join(pg.bin, "psql")
	if _, err := os.Stat(p); err != nil {
		p = "psql"
	}
	cmd := exec.Command(p, "-X", "-q", "-v", "ON_ERROR_STOP=1", "-h", pg.sock, "-p", "5432", "-U", "basin",
		"-d", "postgres", "-At", "-F", ",", "-c", sql)
	cmd.Stdin = bytes.NewReader(stdin)
	var out, errb bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &errb
	done := make(chan error, 1)
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	go func() { done <- cmd.Wait() }()
	select {
	case err := <-done:
		if err != nil {
			t.Fatalf("psql: %v\n%s", err, errb.String())
		}
	case <-time.After(5 * time.Minute): // a hang guard, not a speed check
		_ = cmd.Process.Kill()
		t.Fatal("psql did not finish")
	}
	return out.String()
}

func TestSQLPostgreSQL(t *testing.T) {
	heavy(t)
	pg := startPostgres(t)
	for name, c := range sqlCerts() {
		runs, pieces := gapped(sqlRuns(c))
		slow := strings.HasPrefix(name, "two") // slow and stuck
		checkVariety(t, name, screenFlags(c, pieces, 0), slow, name != "stable")
		tolChanges(t, name, c, pieces)
		table := "fleet_" + name
		cols := []string{`"run" TEXT`, `"t" DOUBLE PRECISION`}
		for _, s := range c.States {
			cols = append(cols, `"`+strings.ReplaceAll(s, `"`, `""`)+`" DOUBLE PRECISION`)
		}
		pg.psql(t, `CREATE SCHEMA IF NOT EXISTS logs; CREATE TABLE logs.`+table+` (`+strings.Join(cols, ", ")+`)`, nil)
		var csv bytes.Buffer
		for _, r := range runs {
			for i := range r.T {
				csv.WriteString(r.Name + "," + strconv.FormatFloat(r.T[i], 'g', -1, 64))
				for j := range r.X {
					// a missing sample as PostgreSQL's NaN in the
					// first state, as an empty cell (NULL) in the others
					switch x := r.X[j][i]; {
					case x == x:
						csv.WriteString("," + strconv.FormatFloat(x, 'g', -1, 64))
					case j == 0:
						csv.WriteString(",NaN")
					default:
						csv.WriteString(",")
					}
				}
				csv.WriteByte('\n')
			}
		}
		pg.psql(t, `\copy logs.`+table+` FROM STDIN WITH (FORMAT csv)`, csv.Bytes())
		for _, tol := range riseTols(c) {
			out := pg.psql(t, query(t, c, "logs."+table, tol), nil)
			got := map[string]flagRow{}
			for _, line := range strings.Split(strings.TrimSpace(out), "\n") {
				f := strings.Split(line, ",")
				if len(f) < 5 {
					t.Fatalf("%s: row %q", name, line)
				}
				b := func(k int) bool { return k < len(f) && f[k] == "t" }
				if slow {
					got[f[0]] = flagRow{b(1), b(2), b(3), b(4), b(5), b(6)}
				} else {
					got[f[0]] = flagRow{b(1), b(2), b(3), b(4), false, b(5)}
				}
			}
			compare(t, fmt.Sprintf("postgresql %s rise-tol %g", name, tol), byRun(screenFlags(c, pieces, tol)), got)
		}
	}
}

// TestSQLRiseTolerance: a tolerance screen would refuse is refused, with
// nothing written; a valid one is named in the query's header.
func TestSQLRiseTolerance(t *testing.T) {
	c := sqlCerts()["two"]
	for _, tc := range []struct {
		tol float64
		ok  bool
	}{{0, true}, {1e-3, true}, {-1e-3, false}, {math.NaN(), false}, {math.Inf(1), false}} {
		var b bytes.Buffer
		err := export.Write(&b, c, export.SQL, &export.Options{RiseTolerance: tc.tol})
		if tc.ok != (err == nil) || (!tc.ok && !errors.Is(err, export.ErrOption)) {
			t.Errorf("RiseTolerance %g: error %v, want ok %v", tc.tol, err, tc.ok)
		}
		if !tc.ok && b.Len() != 0 {
			t.Errorf("RiseTolerance %g: wrote %d bytes on error", tc.tol, b.Len())
		}
		if named := strings.Contains(b.String(), "tolerated rise of V between samples: 0.001 (the certificate's: 0.002)"); named != (tc.tol == 1e-3) {
			t.Errorf("RiseTolerance %g: header names the tolerance: %v", tc.tol, named)
		}
	}
}

// TestSQLTableNames: a table name that is not one to three identifiers
// joined by dots is refused, never spliced into the query.
func TestSQLTableNames(t *testing.T) {
	c := sqlCerts()["two"]
	for _, tc := range []struct {
		table string
		ok    bool
	}{
		{"", true}, {"samples", true}, {"lake.logs.samples", true}, {"_x1", true},
		{"samples; DROP TABLE x", false}, {`"samples"`, false}, {"a.b.c.d", false}, {"1abc", false},
		{"sam ples", false}, {"samples--", false}, {"é", false}, {"a..b", false},
	} {
		var b bytes.Buffer
		err := export.Write(&b, c, export.SQL, &export.Options{Table: tc.table})
		if (err == nil) != tc.ok {
			t.Errorf("table %q: error %v, want ok %v", tc.table, err, tc.ok)
		}
		if !tc.ok && b.Len() != 0 {
			t.Errorf("table %q: wrote %d bytes on error", tc.table, b.Len())
		}
	}
}

// TestSQLStableClaim: the lossless run is unsettled by screen's rule
// under two (asymptotic) and neither unsettled nor slow under its stable
// twin (its rises, V's ellipse against the circle, stay), and the
// twin's query says why its unsettled column is always false and has no
// slow column, though the twin records the same decay bound.
func TestSQLStableClaim(t *testing.T) {
	cs := sqlCerts()
	two, stable := cs["two"], cs["stable"]
	runs := sqlRuns(two)
	if f := screenFlags(two, runs, 0)["lossless"]; !f.unsettled {
		t.Fatalf("lossless under two: %v; want unsettled", f)
	}
	if f := screenFlags(stable, runs, 0)["lossless"]; f.unsettled || f.slow {
		t.Errorf("lossless under the stable twin: %v; want neither unsettled nor slow", f)
	}
	q := query(t, stable, "samples", 0)
	for _, want := range []string{"unsettled is always false", "    0 AS unsettled,\n"} {
		if !strings.Contains(q, want) {
			t.Errorf("stable query lacks %q", want)
		}
	}
	if strings.Contains(q, "AS slow") && !strings.Contains(q, "0 AS slow") || strings.Contains(q, "(MAX(slow) = 1) AS slow") {
		t.Errorf("stable query has a slow column:\n%s", q)
	}
}

// TestSQLAveragingExercised: the averaged certificate's runs get other
// flags than the same certificate's without averaging on some runs, so
// that a query that skipped the averaging would differ from screen in
// the engines' comparisons.
func TestSQLAveragingExercised(t *testing.T) {
	cs := sqlCerts()
	_, pieces := gapped(sqlRuns(cs["two"]))
	a, b := screenFlags(cs["two"], pieces, 0), screenFlags(cs["two_averaged"], pieces, 0)
	differ := 0
	for name := range a {
		if a[name] != b[name] {
			differ++
		}
	}
	if differ == 0 {
		t.Fatalf("averaging in blocks of %d changes no run's flags: the SQL comparison cannot tell", cs["two_averaged"].Average)
	}
	if q := query(t, cs["two_averaged"], "samples", 0); !strings.Contains(q, "GROUP BY \"run\", pc, blk") || !strings.Contains(q, "HAVING COUNT(*) = 3") {
		t.Errorf("the query does not average in blocks of 3:\n%s", q)
	}
}
