package export

import (
	"fmt"
	"math"
	"regexp"
	"strings"

	"basin.example/fit"
	"basin.example/validate"
)

// SQL is the language of the screening query [Write] writes (see the
// package doc).
const SQL = "sql"

// DefaultTable is the table the SQL query reads when Options.Table is
// empty.
const DefaultTable = "samples"

// tableName is a table name: up to three identifiers joined by dots
// (catalog.schema.table).
var tableName = regexp.MustCompile(`^[A-Za-z_][A-Za-z0-9_]*(\.[A-Za-z_][A-Za-z0-9_]*){0,2}$`)

// writeSQL writes one query in standard SQL (ISO SQL:2003 window
// functions, no vendor functions) that screens every run of a table by
// the rules of basin screen ([validate.Screener]) with the certificate's
// tolerances, or opts.RiseTolerance for the rise of V as
// [validate.ScreenOptions] Tolerance. The table (opts.Table, default [DefaultTable]) has columns
// run, t and one DOUBLE PRECISION column per state named as in the
// certificate; the query returns one row per run, ordered by run, with
// columns run, flagged, rises, leaves, unsettled and, when the
// certificate records held-out decay rates, slow, and stuck (booleans; 1
// and 0 in engines without a boolean type). Against a certificate of
// strength stable, which claims no settling, unsettled is always false
// and there is no slow column, as screen flags neither. Every identifier is written as a
// quoted (delimited) identifier, so names are matched exactly, case
// included. A row with a missing state (NULL, or NaN where the engine
// has one) splits its run there, as basin's ingest does, and the run's
// row holds the flags of its pieces; a row whose time is missing is left
// out. It returns an error wrapping [ErrNoV] for a certificate
// without V and [ErrName] for a table name that is not one to three
// identifiers joined by dots or a state name holding a control character.
func writeSQL(b *strings.Builder, cert *fit.Certificate, opts *Options) error {
	table := DefaultTable
	if opts != nil && opts.Table != "" {
		table = opts.Table
	}
	if !tableName.MatchString(table) {
		return fmt.Errorf("table %q (want letters, digits and _, parts joined by dots): %w", table, ErrName)
	}
	if len(cert.V.Exponents) == 0 {
		return ErrNoV
	}
	var so validate.ScreenOptions
	if opts != nil {
		if !(opts.RiseTolerance >= 0) || math.IsInf(opts.RiseTolerance, 0) { // NaN fails the first test
			return fmt.Errorf("Options.RiseTolerance %g (want a finite number >= 0): %w", opts.RiseTolerance, ErrOption)
		}
		so.Tolerance = opts.RiseTolerance
	}
	for _, s := range cert.States {
		if strings.ContainsFunc(s, func(r rune) bool { return r < 0x20 || r == 0x7f }) || s == "" {
			return fmt.Errorf("state %q: %w", s, ErrName)
		}
	}
	var parts []string
	for _, p := range strings.Split(table, ".") {
		parts = append(parts, qid(p))
	}
	ru := validate.NewScreener(cert, &so).Rules()
	n := ru.N
	for _, l := range headerLines(cert) {
		b.WriteString(strings.TrimRight("-- "+l, " ") + "\n")
	}
	b.WriteString(`--
-- One row per run: run, flagged, rises, leaves, unsettled` + map[bool]string{true: ", slow", false: ""}[ru.SlowBound > 0] + `, stuck,
-- by the rules of basin screen with the certificate's tolerances. The
-- table has columns "run", "t" (seconds, increasing within a run) and one
-- DOUBLE PRECISION column per state, named as in the certificate. A row
-- with a missing state (NULL or NaN) splits its run there, as basin does,
-- and the run is flagged when a piece is (on settling, its last piece
-- only: the others ended where it was cut); a row without a time is left
-- out. Runs are not split at one-sample jumps (a hammer hit) nor trimmed
-- of a resting start: store those pieces as runs, or compare with
-- basin screen --keep-events --keep-head.
`)
	if ru.NoSettle {
		b.WriteString("-- The certificate's strength is stable: it does not claim that runs settle,\n" +
			"-- so, as in basin screen, no run is checked for it: unsettled is always false.\n")
	}
	if cert.Average >= 2 {
		fmt.Fprintf(b, "-- The certificate was fitted on runs averaged in blocks of %d samples: each piece's\n"+
			"-- rows are averaged so (a last shorter block left out) before the rules apply.\n", cert.Average)
	}
	if so.Tolerance > 0 {
		fmt.Fprintf(b, "-- Except the tolerated rise of V between samples: %s (the certificate's: %s).\n",
			num(so.Tolerance), num(cert.Tolerance))
	}
	fmt.Fprintf(b, "-- States, in order: %d columns, quoted below.\n", n)
	sq := func(x float64) string { return sqlNum(x) }
	z := make([]string, n)
	for j := range z {
		z[j] = fmt.Sprintf("z%d", j)
	}
	// A row whose time is missing (NULL, NaN) is left out; a row with a
	// missing state splits its run there, as basin's ingest splits a run
	// at a missing sample: pc numbers the pieces (the missing rows before
	// a row), and every window and group below is over ("run", pc).
	// BETWEEN the largest finite doubles is false for NULL, for
	// PostgreSQL's NaN (which sorts above every number) and for a
	// non-numeric text cell in SQLite, whose CAST would read it as 0.
	const maxFinite = "1.7976931348623157e308"
	finite := func(col string) string {
		return fmt.Sprintf("%s BETWEEN (-%s) AND %s", col, maxFinite, maxFinite)
	}
	b.WriteString("WITH\nxr AS (\n  SELECT \"run\", CAST(\"t\" AS DOUBLE PRECISION) AS t")
	var ok []string
	for j, s := range cert.States {
		fmt.Fprintf(b, ",\n    CAST(%s AS DOUBLE PRECISION) AS x%d", qid(s), j)
		ok = append(ok, finite(qid(s)))
	}
	fmt.Fprintf(b, ",\n    CASE WHEN %s THEN 0 ELSE 1 END AS gap", strings.Join(ok, " AND "))
	fmt.Fprintf(b, "\n  FROM %s\n  WHERE %s\n),\n", strings.Join(parts, "."), finite(`"t"`))
	b.WriteString("xs AS (\n  SELECT \"run\", t, gap")
	for j := range cert.States {
		fmt.Fprintf(b, ", x%d", j)
	}
	b.WriteString(",\n    SUM(gap) OVER (PARTITION BY \"run\" ORDER BY t ROWS BETWEEN UNBOUNDED PRECEDING AND CURRENT ROW) AS pc\n  FROM xr\n),\n")
	// x holds the valid rows; with the certificate's averaging, the
	// means of each piece's consecutive blocks of Average rows (a last
	// shorter block left out), as basin averages a run's pieces
	xv := "x"
	if cert.Average >= 2 {
		xv = "xv"
	}
	b.WriteString(xv + " AS (\n  SELECT \"run\", pc, t")
	for j := range cert.States {
		fmt.Fprintf(b, ", x%d", j)
	}
	b.WriteString("\n  FROM xs\n  WHERE gap = 0\n),\n")
	if cert.Average >= 2 {
		b.WriteString("xb AS (\n  SELECT \"run\", pc, t")
		for j := range cert.States {
			fmt.Fprintf(b, ", x%d", j)
		}
		fmt.Fprintf(b, ",\n    (ROW_NUMBER() OVER (PARTITION BY \"run\", pc ORDER BY t) - 1) / %d AS blk\n  FROM xv\n),\n", cert.Average)
		b.WriteString("x AS (\n  SELECT \"run\", pc, AVG(t) AS t")
		for j := range cert.States {
			fmt.Fprintf(b, ", AVG(x%d) AS x%d", j, j)
		}
		fmt.Fprintf(b, "\n  FROM xb\n  GROUP BY \"run\", pc, blk\n  HAVING COUNT(*) = %d\n),\n", cert.Average)
	}
	writeSQLNoise(b, &ru)
	b.WriteString("s AS (\n  SELECT \"run\", pc, t")
	for j := range z {
		fmt.Fprintf(b, ", x%d", j)
	}
	for j := range z {
		fmt.Fprintf(b, ",\n    (x%d - %s) * %s AS z%d", j, sq(ru.Eq[j]), sq(ru.Inv[j]), j)
	}
	b.WriteString("\n  FROM x\n),\n")
	// V, |z|^2 in basin's order of operations.
	r2 := make([]string, n)
	for j := range z {
		r2[j] = z[j] + " * " + z[j]
	}
	fmt.Fprintf(b, "v AS (\n  SELECT \"run\", pc, t")
	for j := range z {
		fmt.Fprintf(b, ", x%d", j)
	}
	fmt.Fprintf(b, ",\n    %s AS v,\n    %s AS r2\n  FROM s\n),\n", sqlV(cert, &ru, z), strings.Join(r2, " + "))
	// inside and beyond
	var inBox, outWide []string
	for j := range z {
		x := fmt.Sprintf("x%d", j)
		if !math.IsInf(ru.Lo[j], 0) {
			inBox = append(inBox, fmt.Sprintf("%s >= %s", x, sq(ru.Lo[j])))
		}
		if !math.IsInf(ru.Hi[j], 0) {
			inBox = append(inBox, fmt.Sprintf("%s <= %s", x, sq(ru.Hi[j])))
		}
		if !math.IsInf(ru.LoWide[j], 0) {
			outWide = append(outWide, fmt.Sprintf("%s < %s", x, sq(ru.LoWide[j])))
		}
		if !math.IsInf(ru.HiWide[j], 0) {
			outWide = append(outWide, fmt.Sprintf("%s > %s", x, sq(ru.HiWide[j])))
		}
	}
	inside := "1 = 0" // empty region
	beyond := "1 = 1"
	leaveV := "1 = 1"
	if !math.IsInf(ru.Level, -1) {
		inside = strings.Join(append(inBox, "v <= "+sq(ru.Level)), " AND ")
		beyond = "1 = 0"
		if len(outWide) > 0 {
			beyond = strings.Join(outWide, " OR ")
		}
		// V above the level by more than the run's tolerance
		leaveV = "v > (" + sq(ru.Level) + " + tol)"
	}
	fmt.Fprintf(b, "f AS (\n  SELECT \"run\", pc, t, v, r2,\n    CASE WHEN %s THEN 1 ELSE 0 END AS inside,\n    CASE WHEN %s THEN 1 ELSE 0 END AS beyond\n  FROM v\n),\n", inside, beyond)
	r02 := sq(ru.NoiseR2)
	const win = `PARTITION BY "run", pc ORDER BY t`
	// The decay rate's samples (q = 1): the decay samples (q0 = 1: inside,
	// outside the noise ball, V > 0) of the run's approach, the first
	// stretch between noise-ball samples (seg numbers the stretches: the
	// noise-ball samples up to each row) that holds at least
	// DecayMinSamples of them, as the Screener fits.
	fmt.Fprintf(b, `w AS (
  SELECT "run", pc, t, v, r2, inside, beyond,
    CASE WHEN inside = 1 AND r2 > %[1]s AND v > 0 THEN 1 ELSE 0 END AS q0,
    SUM(CASE WHEN r2 <= %[1]s THEN 1 ELSE 0 END) OVER (%[2]s ROWS BETWEEN UNBOUNDED PRECEDING AND CURRENT ROW) AS seg,
    LAG(v) OVER (%[2]s) AS pv,
    LAG(inside) OVER (%[2]s) AS pin,
    LAG(r2) OVER (%[2]s) AS pr2,
    MAX(inside) OVER (%[2]s ROWS BETWEEN UNBOUNDED PRECEDING AND CURRENT ROW) AS entered,
    ROW_NUMBER() OVER (%[2]s) AS rn,
    COUNT(*) OVER (PARTITION BY "run", pc) AS m
  FROM f
),
ws AS (
  SELECT "run", pc, t, v, r2, inside, beyond, q0, seg, pv, pin, pr2, entered, rn, m,
    SUM(q0) OVER (PARTITION BY "run", pc, seg) AS segq
  FROM w
),
wa AS (
  SELECT "run", pc, t, v, r2, inside, beyond, q0, seg, pv, pin, pr2, entered, rn, m,
    MIN(CASE WHEN segq >= %[4]d THEN seg END) OVER (PARTITION BY "run", pc) AS aseg
  FROM ws
),
wq AS (
  SELECT "run", pc, t, v, r2, inside, beyond, pv, pin, pr2, entered, rn, m,
    CASE WHEN q0 = 1 AND seg = aseg THEN 1 ELSE 0 END AS q
  FROM wa
),
d AS (
  SELECT wq."run", wq.pc, t, v, r2, inside, beyond, q, pv, pin, pr2, entered, rn, m,
    MIN(CASE WHEN q = 1 THEN t END) OVER (PARTITION BY wq."run", wq.pc) AS t0,
    COALESCE(nt.tol, %[3]s) AS tol
  FROM wq LEFT JOIN nt ON wq."run" = nt."run" AND wq.pc = nt.pc
),
`, r02, win, sq(ru.Tolerance), ru.DecayMinSamples)
	// Chunks of TailMax samples from each piece's first (c), their mean V
	// and the least of those that end before the tail window (lowpre);
	// and, per state, the row from which its reading held one value (a
	// change is a row whose value differs from the row before) and V there.
	win2 := `PARTITION BY "run", pc ORDER BY t`
	fmt.Fprintf(b, `ck AS (
  SELECT "run", pc, CAST(FLOOR((rn - 1) / %[1]d.0) AS INTEGER) AS c, COUNT(*) AS cn, AVG(v) AS cv, MAX(m) AS m
  FROM d
  GROUP BY "run", pc, CAST(FLOOR((rn - 1) / %[1]d.0) AS INTEGER)
),
lp AS (
  SELECT "run", pc,
    MIN(CASE WHEN cn = %[1]d AND %[1]d * (c + 1) <= m - (CASE WHEN m >= %[1]d * %[2]d THEN %[1]d WHEN m < %[2]d THEN 1 ELSE CAST(FLOOR(m / %[2]d.0) AS INTEGER) END) THEN cv END) AS lowpre
  FROM ck
  GROUP BY "run", pc
),
sk AS (
  SELECT "run", pc, v, ROW_NUMBER() OVER (%[3]s) AS rn, COUNT(*) OVER (PARTITION BY "run", pc) AS m`, ru.TailMax, ru.TailShare, win2)
	// A state is stuck when its reading held one value over the piece's
	// last TailMax samples or more (b: the row of its last change) and V
	// at the held stretch's first row (sv) lies above the settle level:
	// a reading held at rest is a quantised sensor's.
	var stuck, sb, sv []string
	for j := 0; j < n; j++ {
		fmt.Fprintf(b, ",\n    CASE WHEN x%[1]d = LAG(x%[1]d) OVER (%[2]s) THEN 0 ELSE 1 END AS c%[1]d", j, win2)
		if !ru.Stuck[j] {
			continue
		}
		sb = append(sb, fmt.Sprintf("MAX(CASE WHEN c%[1]d = 1 THEN rn END) OVER (PARTITION BY \"run\", pc) AS b%[1]d", j))
		sv = append(sv, fmt.Sprintf("MAX(CASE WHEN rn = b%[1]d AND b%[1]d <= m - %[2]d THEN v END) AS sv%[1]d", j, ru.TailMax-1))
		stuck = append(stuck, fmt.Sprintf("sv%d > sl", j))
	}
	b.WriteString("\n  FROM v\n),\n")
	if len(stuck) == 0 {
		stuck = []string{"1 = 0"}
		sv = []string{"0 AS sv"}
		sb = []string{"0 AS b"}
	}
	fmt.Fprintf(b, "sb AS (\n  SELECT \"run\", pc, v, rn, m,\n    %s\n  FROM sk\n),\n", strings.Join(sb, ",\n    "))
	var svCols []string
	for _, c := range sv {
		svCols = append(svCols, "su."+c[strings.LastIndex(c, " ")+1:])
	}
	fmt.Fprintf(b, "su AS (\n  SELECT \"run\", pc,\n    %s\n  FROM sb\n  GROUP BY \"run\", pc\n),\n", strings.Join(sv, ",\n    "))
	// w = min(max(m/share, 1), max): sample rn is in the head when
	// rn <= w, in the tail when m - rn + 1 <= w, written without division.
	fmt.Fprintf(b, `r AS (
  SELECT "run", pc,
    MAX(tol) AS tol,
    MAX(CASE WHEN inside = 1 AND pin = 1 AND pr2 > %[1]s AND v - pv - tol > 0 THEN 1 ELSE 0 END) AS rises,
    MAX(CASE WHEN inside = 0 AND entered = 1 AND (beyond = 1 OR %[2]s) THEN 1 ELSE 0 END) AS leaves,
    MAX(CASE WHEN rn = m THEN inside ELSE 0 END) AS last_inside,
    MAX(inside) AS ever_inside,
    AVG(CASE WHEN rn <= %[3]d AND (%[4]d * rn <= m OR rn = 1) THEN v END) AS head,
    AVG(CASE WHEN m - rn < %[3]d AND (%[4]d * (m - rn + 1) <= m OR rn = m) THEN v END) AS tail,
    MAX(CASE WHEN m - rn < %[3]d AND (%[4]d * (m - rn + 1) <= m OR rn = m) THEN v END) AS tailtop,
    SUM(q) AS dn,
    SUM(CASE WHEN q = 1 THEN t - t0 END) AS st,
    SUM(CASE WHEN q = 1 THEN LN(v) END) AS sy,
    SUM(CASE WHEN q = 1 THEN (t - t0) * (t - t0) END) AS stt,
    SUM(CASE WHEN q = 1 THEN (t - t0) * LN(v) END) AS sty
  FROM d
  GROUP BY "run", pc
),
rl AS (
  SELECT r.*, lp.lowpre, %[7]s, %[5]s AS sl
  FROM r JOIN lp ON r."run" = lp."run" AND r.pc = lp.pc JOIN su ON r."run" = su."run" AND r.pc = su.pc
),
k AS (
  SELECT "run", pc,
    CASE WHEN rises = 1 OR (ever_inside = 1 AND tail - lowpre > tol AND tailtop > sl) THEN 1 ELSE 0 END AS rises,
    leaves,
    CASE WHEN %[6]s THEN 1 ELSE 0 END AS stuck,
%[8]s`, r02, leaveV, ru.TailMax, ru.TailShare, settleSQL(&ru), strings.Join(stuck, " OR "), strings.Join(svCols, ", "), unsettledSQL(ru.NoSettle))
	if ru.SlowBound > 0 {
		fmt.Fprintf(b, `    CASE WHEN dn >= %d AND dn * stt - st * st > 0
      AND -(dn * sty - st * sy) / (dn * stt - st * st) < %s THEN 1 ELSE 0 END AS slow
`, ru.DecayMinSamples, sq(ru.SlowBound))
	} else {
		b.WriteString("    0 AS slow\n")
	}
	// one row per run: a run split at missing samples is flagged when
	// any of its pieces is, with each flag any piece has
	// Only a run's last piece is judged on settling (as screen does: see
	// validate.JudgeLastPieces): the others ended where the run was cut.
	b.WriteString("  FROM rl\n),\nkl AS (\n  SELECT k.*, CASE WHEN pc = MAX(pc) OVER (PARTITION BY \"run\") THEN unsettled ELSE 0 END AS lastunsettled\n  FROM k\n)\nSELECT \"run\",\n")
	if ru.SlowBound > 0 {
		b.WriteString("  (MAX(rises) = 1 OR MAX(leaves) = 1 OR MAX(lastunsettled) = 1 OR MAX(slow) = 1 OR MAX(stuck) = 1) AS flagged,\n")
	} else {
		b.WriteString("  (MAX(rises) = 1 OR MAX(leaves) = 1 OR MAX(lastunsettled) = 1 OR MAX(stuck) = 1) AS flagged,\n")
	}
	b.WriteString("  (MAX(rises) = 1) AS rises,\n  (MAX(leaves) = 1) AS leaves,\n  (MAX(lastunsettled) = 1) AS unsettled")
	if ru.SlowBound > 0 {
		b.WriteString(",\n  (MAX(slow) = 1) AS slow")
	}
	b.WriteString(",\n  (MAX(stuck) = 1) AS stuck")
	b.WriteString("\nFROM kl\nGROUP BY \"run\"\nORDER BY \"run\";\n")
	return nil
}

// unsettledSQL is the unsettled column of CTE k: screen's rule, or 0 for
// a certificate that claims no settling (strength stable), against which
// screen flags no run unsettled.
func unsettledSQL(noSettle bool) string {
	if noSettle {
		return "    0 AS unsettled,\n"
	}
	return `    CASE WHEN last_inside = 1 AND (tail <= sl
      OR (tail < head - tol AND (lowpre IS NULL OR tail < lowpre - sl
        OR (tail < lowpre AND 16 * (lowpre - tail) * (lowpre - tail) > tail * sl)))
      OR (lowpre IS NULL AND head <= tol AND tail <= tol)) THEN 0 ELSE 1 END AS unsettled,
`
}

// writeSQLNoise writes the CTEs n1..n4 and nt: each run's tolerance,
// widened by its own noise as the Screener does (validate's runNoise with
// fit.RunNoise: 1.4826·median|Δ⁴x|/√70 over every stride-th fourth
// difference, at most fit.RunNoiseSamples of them). Without the
// certificate's noise, nt is empty and every run has the certificate's
// tolerance.
func writeSQLNoise(b *strings.Builder, ru *validate.Rules) {
	const win = `PARTITION BY "run", pc ORDER BY t`
	if ru.NoiseRef == nil {
		b.WriteString("nt AS (\n  SELECT \"run\", pc, CAST(NULL AS DOUBLE PRECISION) AS tol FROM x WHERE 1 = 0\n),\n")
		return
	}
	n := ru.N
	b.WriteString("n1 AS (\n  SELECT \"run\", pc, ROW_NUMBER() OVER (" + win + ") - 1 AS i,\n    COUNT(*) OVER (PARTITION BY \"run\", pc) AS m")
	for j := range n {
		x := fmt.Sprintf("x%d", j)
		fmt.Fprintf(b, ",\n    %[1]s - 4 * LEAD(%[1]s, 1) OVER (%[2]s) + 6 * LEAD(%[1]s, 2) OVER (%[2]s)"+
			" - 4 * LEAD(%[1]s, 3) OVER (%[2]s) + LEAD(%[1]s, 4) OVER (%[2]s) AS e%[3]d", x, win, j)
	}
	b.WriteString("\n  FROM x\n),\n")
	// stride = max(1, floor((m - 4)/4096)); every stride-th difference
	// from the first, at most RunNoiseSamples of them.
	cap := fit.RunNoiseSamples - 1
	fmt.Fprintf(b, "n2 AS (\n  SELECT \"run\", pc, i, m,\n    CASE WHEN m - 4 < %d THEN 1 ELSE CAST(FLOOR((m - 4) / %d.0) AS INTEGER) END AS stride", 2*cap, cap)
	for j := range n {
		fmt.Fprintf(b, ",\n    ABS(e%d) AS d%d", j, j)
	}
	fmt.Fprintf(b, "\n  FROM n1\n  WHERE i + 4 < m\n),\n")
	b.WriteString("n3 AS (\n  SELECT \"run\", pc, COUNT(*) OVER (PARTITION BY \"run\", pc) AS c")
	for j := range n {
		fmt.Fprintf(b, ",\n    d%[1]d, ROW_NUMBER() OVER (PARTITION BY \"run\", pc ORDER BY d%[1]d) AS k%[1]d", j)
	}
	fmt.Fprintf(b, "\n  FROM n2\n  WHERE MOD(i, stride) = 0 AND i < %d * stride\n),\n", fit.RunNoiseSamples)
	// the median: the middle row, or the mean of the middle two
	b.WriteString("n4 AS (\n  SELECT \"run\", pc")
	for j := range n {
		fmt.Fprintf(b, ",\n    %s * AVG(CASE WHEN 2 * k%[2]d >= c AND 2 * k%[2]d <= c + 2 THEN d%[2]d END) / %[3]s / %[4]s AS r%[2]d",
			sqlNum(1.4826), j, sqlNum(math.Sqrt(70)), sqlNum(ru.NoiseRef[j]))
	}
	b.WriteString("\n  FROM n3\n  GROUP BY \"run\", pc\n),\n")
	// ratio = max(1, r_0, r_1, ...) (MAX is exact, so the order does not
	// matter); tol = base * ratio
	var u []string
	for j := range n {
		u = append(u, fmt.Sprintf("SELECT \"run\", pc, r%d AS r FROM n4", j))
	}
	u = append(u, "SELECT \"run\", pc, CAST(1 AS DOUBLE PRECISION) AS r FROM n4")
	fmt.Fprintf(b, "nt AS (\n  SELECT \"run\", pc, %s * MAX(r) AS tol\n  FROM (\n    %s\n  ) AS nr\n  GROUP BY \"run\", pc\n),\n",
		sqlNum(ru.Tolerance), strings.Join(u, "\n    UNION ALL "))
}

// settleSQL is the settle level of a run with tolerance tol: the
// certificate's, scaled by the square of the run's noise ratio
// tol/Tolerance when that exceeds 1, as the Screener's End does.
func settleSQL(ru *validate.Rules) string {
	if !(ru.Settle > 0) {
		return sqlNum(ru.Settle)
	}
	base := sqlNum(ru.Tolerance)
	return fmt.Sprintf("CASE WHEN tol > %[1]s THEN %[2]s * (tol / %[1]s) * (tol / %[1]s) ELSE %[2]s END", base, sqlNum(ru.Settle))
}

// sqlV writes V(z) in the order of operations of the Screener's kernel.
func sqlV(cert *fit.Certificate, ru *validate.Rules, z []string) string {
	n := ru.N
	sq := sqlNum
	if ru.TwoState {
		return fmt.Sprintf("%[1]s * (%[3]s * %[1]s + %[4]s * %[2]s + %[5]s) + %[2]s * (%[6]s * %[2]s + %[7]s) + %[8]s",
			z[0], z[1], sq(ru.P[0]), sq(2*ru.P[1]), sq(ru.Q[0]), sq(ru.P[3]), sq(ru.Q[1]), sq(ru.R))
	}
	if ru.Quad {
		// v = r; for each i: a = q_i + sum_j p_ij z_j; v += a z_i
		v := sq(ru.R)
		for i := 0; i < n; i++ {
			a := sq(ru.Q[i])
			for j := 0; j < n; j++ {
				a += fmt.Sprintf(" + %s * %s", sq(ru.P[i*n+j]), z[j])
			}
			v += fmt.Sprintf(" + (%s) * %s", a, z[i])
		}
		return v
	}
	var t []string
	for k, e := range cert.V.Exponents {
		f := []string{sq(cert.V.Coefficients[k])}
		for j, q := range e {
			if q > 0 {
				f = append(f, "("+pow(z[j], q)+")")
			}
		}
		t = append(t, strings.Join(f, " * "))
	}
	return strings.Join(t, " + ")
}

// qid quotes s as an SQL delimited identifier.
func qid(s string) string { return `"` + strings.ReplaceAll(s, `"`, `""`) + `"` }

// sqlNum writes x as an SQL numeric literal that reads back as x; a
// negative number is parenthesised so that it can follow any operator.
func sqlNum(x float64) string {
	s := num(x)
	if strings.HasPrefix(s, "-") {
		return "(" + s + ")"
	}
	return s
}
