/*
Basin reads logged runs of a physical system, fits a sparse polynomial
model of its dynamics, and looks for a Lyapunov function that shows, from
the data alone, that the system settles to its operating point and from how
far away. Its certificates are empirical evidence, not proofs:
safety-relevant decisions defer to the applicable codes and to licensed
engineering judgement.

Usage:

	basin COMMAND [flags] INPUTS...

INPUTS are .csv, .tsv, .txt or .parquet files, directories of them (their
such files, sorted by name), or - for CSV on standard input. Flags may come
before or after INPUTS; -x and --x are the same; -- ends the flags. 'basin
help COMMAND' and 'basin COMMAND -h' print a command's flags with their
defaults; this page is the same text in one place.

Exit codes: 0 done; 1 screen flagged at least one run; 2 usage or input
error (one line on stderr naming the file, line and column where there is
one; nothing written); 3 internal failure. Human text goes to stdout,
progress and warnings to stderr (progress only on a terminal: the stage,
and on long work a bar with the share done and the time left); --quiet
silences both (fit, certify and run then print nothing at all: their
results are the files they write, run's summary in summary.txt) and --json
prints the machine-readable result on stdout.

# Reading logs

Every command that reads logs takes:

	--time-col NAME     the time column (default: the first named t, time,
	                    timestamp or time_s, any case, without its unit)
	--rate HZ           no time column: the rows are evenly sampled at HZ
	                    (a file with a time column and --rate: exit 2)
	--run-col NAME      split each file into runs by the value of NAME
	--states a,b,c      the state columns (default: every numeric column
	                    other than time, run and inputs)
	--inputs a,b        measured columns that are not states (a drive, a
	                    setpoint): fit x' = f(x, u), certify at the rest
	                    input, and fit the input gain (certificate's
	                    input_gain)
	--manifest FILE.csv columns path,run,split (fit, holdout or empty):
	                    which runs are held out (not screen)
	--from S, --to S    keep the samples from S to S seconds after each
	                    run's first sample (default: all of it)
	--keep-head         keep a run's resting start (default: trimmed)
	--keep-events       keep runs whole across one-sample jumps (default:
	                    split there)
	--average K         replace each run by the means of its blocks of K
	                    samples, for logs sampled far faster than their
	                    noise changes (a sensor behind a filter: fit's
	                    correlated_noise says so and suggests K); the
	                    model and certificate record it, and check, screen and
	                    the SQL export average new logs the same way

A header cell "name [unit]" or "name (unit)" carries a unit, reported back
wherever the column appears. A CSV file may give its units in a row of
their own under the header ("s,rad,rad/s", as data loggers write): the
first line after the header is one when the file has a time column, some
header cell has no unit, the time cell and every other filled cell are
units (at most 20 characters of letters, digits, / * ^ . % ° · : _ - and
spaces, with a letter, % or °, or a lone -; no number, not the column's
name again) and the next line's time cell is a time. A unit in the header wins over the row's; error line
numbers stay the file's. Empty cells and NaN (in any case, or as C's
printf writes it: -nan, nan(ind)) are missing samples: a run is split at a
gap, not interpolated across it.

CSV text that is not UTF-8 (header cells, a units row, --run-col values)
is read as Windows-1252 (Latin-1: ° as the byte 0xB0, µ as 0xB5), with one
warning naming the first such file; a byte that fits neither, or a UTF-16 file, is
an input error (exit 2) naming line and column. An input that holds one
value throughout cannot be told from a constant term: one warning names
it with its value and unit, and fit and run hold it at that value, folded
into the states' equations (held_inputs in model.json and
certificate.json).

A one-sample jump far beyond the noise (a hammer hit, a relay, a dropped
packet) splits a run there like a gap; a spike, one sample that departs
and comes back, is dropped. Far means more than 8 times the robust noise
scale of the jump statistic, taken from the run's own samples (1.2e-15 of
Gaussian noise goes that far). A run's resting start, the samples before
the first motion beyond 6 times the noise, is trimmed when it holds at
least 20 samples and does not drift. Both are reported by inspect and in
a warning.

# basin run

	basin run [flags] INPUTS...

The whole job: holds out about one run in --folds (or the runs a manifest
marks holdout), fits the vector field and the certificate on the other
runs, checks the certificate on the held-out runs, and gives the verdict
(certified, rejected or inconclusive) with its strength. Writes model.json,
certificate.json, report.html and summary.txt into --out as one set, and
prints the summary. The same input and --seed give byte-identical outputs.

When the runs settle at several rest points, certificate.json is about the
one most runs settle at (or the one --equilibrium names), and each other
stable rest point runs settle at gets its own complete certificate in the
same set, certificate-2.json, certificate-3.json, ..., in falling order of
the runs settling there; the summary has a section per rest point (file,
verdict, runs settling there, region) and says which got none and why
(after the certificates, in falling order of their runs; the first line
counts both and gives the order), and the report's phase plane draws
every region. A certificate-N.json an
earlier run with more rest points left in --out is removed.

	--out DIR           the output folder (default basin-out)
	--degree N          highest degree of the field's polynomial terms, 1..8
	                    (default 3)
	--input-degree K    highest degree of the --inputs in a term, 1..N
	                    (default 1: the field is affine in the inputs,
	                    f(x) + g(x)·u; a drive logged at a few levels
	                    cannot tell u from u²)
	--select-folds K    folds over the fit runs that choose the sparsity
	                    threshold (default 5)
	--deriv METHOD      auto (default: each method tried, the least held-out
	                    error kept), savitzky-golay, fornberg or integral
	--bootstrap N       bootstrap refits over runs, 0 for none (default 100)
	--max-memory SIZE   memory budget of the field fit and of the
	                    certificate's LP, as 512MiB or 8GiB, checked in
	                    closed form before either is built; over it, basin
	                    stops at once with one line (default 2GiB)
	--v-degree N        certificate degree, even, 2..8 (default 2)
	--growth N          region growth rounds, 1..100 (default 8)
	--folds K           held-out folds by run, 2..100 (default 5)
	--min-decrease F    share of held-out pairs on which V must fall for
	                    certified (default 0.99)
	--beta B            the scenario bound holds with confidence 1-B
	                    (default 1e-6)
	--all-folds         hold every fold out once and certify only when all
	                    folds certify (default true; --all-folds=false fits
	                    only the released split: faster, seed-dependent)
	--workers N         folds fitted and checked at once, 0..1024 (default
	                    0: the CPUs); the outputs do not depend on it
	--equilibrium name=value,...
	                    certify the fitted equilibrium nearest this point
	                    (every state named) for certificate.json instead of
	                    the one most runs settle on; none within half a
	                    spread: exit 2
	--plane a,b         the states of the report's phase plane
	--seed N            random seed (default 1)
	--quiet, --json     as above; --json prints certificate.json

plus the flags of Reading logs.

# basin inspect

	basin inspect [flags] INPUTS...

Says what the logs hold: per run and in total, samples, start, duration,
median sampling rate and its jitter, gaps, ranges and units, the inputs,
the one-sample jumps runs were split at and the resting starts trimmed, and
the rest points the runs settle on, each with its count of runs, most first
(settle points within a tenth of each state's range are one rest point; the
settle column and --json's settle are the first). A run settles when,
over its last tenth, it neither trends nor spreads beyond its noise (runs
of fewer than 81 samples are not judged); its settle point is the median
of its last 5%. A state whose noise is correlated over many samples
(logged faster than it changes, as behind a sensor's filter) gets a
noise line with the --average block to fit with (--json: the state's
correlated_noise, samples and ratio). Flags: those of Reading logs,
--quiet and --json.

# basin fit

	basin fit [flags] INPUTS...

Fits the vector field only, on the runs a manifest does not hold out, and
writes DIR/model.json. It prints the equations and the equilibria, the
first the one nearest where the runs settle (or end, when none settles);
an equilibrium with an eigenvalue of positive real part is never called
where the runs settle: the output says runs near it leave it, and how
many runs settle within the data, or that none does (run's summary says
the same under its equilibrium). Flags: --out, --degree, --input-degree, --select-folds, --deriv,
--bootstrap, --max-memory, --seed, --quiet and --json as for run, and those of
Reading logs.

# basin certify

	basin certify --model model.json [flags] INPUTS...

Fits a Lyapunov function V for the model's primary equilibrium and the
largest level set on which it falls, and writes DIR/certificate.json; the
verdict stays inconclusive until the certificate is checked on held-out
runs. Flags: --model FILE (required), --out, --v-degree, --growth,
--max-memory, --seed, --quiet and --json as for run, and those of
Reading logs.

# basin check

	basin check --cert certificate.json [flags] INPUTS...

Validates a certificate on runs it has not seen: per run, whether it starts
inside, stays inside, settles, and on how many pairs V did not rise beyond
the noise tolerance; overall the decrease and invariance fractions and the
scenario bound. The exit status is 0 whatever the verdict, rejected
included (status 1 belongs to screen); the verdict is in the output.
Without --states the certificate's states are read by name, in any column
order, other columns left out; a state missing, or a state column in other
units than the certificate's, is an input error (exit 2). With --inputs
and a certificate at rest input the runs are checked in pieces where the
inputs rest, and a piece that ends where an input comes on is not judged
on settling (settled reads "cut: drive on at T s"; --json gives its cut).
Neither is a piece that ends where a one-sample jump (a hit) or a gap
split its recording, every piece but the recording's last: settled reads
"cut: jump in v at T s" or "cut: gap from T1 s to T2 s", and --json's cut
has reason jump (time, state) or gap (time, until); the last piece must
settle as any run.
A run that came to rest outside the region settled at another rest point,
named from the certificates and model.json beside --cert when they know it.

	--cert FILE         the certificate (required)
	--min-decrease F    as for run (default 0.99)
	--beta B            as for run (default 1e-6)
	--rise-tol DV       tolerated rise of V between samples (default: the
	                    certificate's)

plus --quiet, --json and the flags of Reading logs.

# basin screen

	basin screen --cert certificate.json [flags] INPUTS...

Flags runs whose V rises (rises), that leave the region after entering it
by more than the noise (leaves), that do not settle (unsettled), or whose
V decays below half the slowest held-out run's rate (slow; only with a
certificate that records the held-out decay rates); exit status 1 when any
run is flagged. A certificate of strength stable does not claim that runs
settle, so against it no run is flagged unsettled or slow (one warning says
so). Rises and leaves say how far past the boundary, per state
in the states' units; every run reports its decay rate. Each piece of a
recording split at a gap or a one-sample jump (a hit) is screened as a
run, but only the recording's last piece is judged on settling: the
others ended where the log was cut (as in check). Files are read one
at a time per worker, so memory stays bounded however many are given.
Folders are read with their key=value subfolders (logs/vehicle=17/
day=2026-11-30/run.parquet), and each run reports its partition values.

	--cert FILE         the certificate (required)
	--rise-tol DV       tolerated rise of V between samples (default: the
	                    certificate's); --tolerance is a deprecated alias
	--workers N         files screened at once (default: the CPUs)
	--recursive         descend into every subfolder, not only key=value
	                    partition folders
	--format FORMAT     table (default), or csv: one row per run with
	                    the partition columns, the flags and decay_rate

plus --quiet, --json and the flags of Reading logs except --manifest.

# basin export

	basin export --cert certificate.json --lang go|c|python|sql [--table NAME] [--rise-tol DV]

Prints a dependency-free function that evaluates V in the logs' units and
tests membership of the region, for a monitor on the rig; with --lang sql,
one standard-SQL query that screens the runs of a table (columns run, t and
one per state) by the rules and tolerances of basin screen, one row per
run.

	--cert FILE         the certificate (required)
	--lang LANG         go, c, python or sql (required)
	--package NAME      the Go package (default basinv)
	--prefix PREFIX     the C identifier prefix (default basin_)
	--table NAME        the SQL table (default samples; one to three
	                    identifiers joined by dots)
	--rise-tol DV       SQL: tolerated rise of V between samples, as for
	                    screen (default: the certificate's)
	--quiet             no warnings

# basin demo

	basin demo [--out DIR]

Writes the invented demo data set (a pitch-stabilised camera mount on a
vibration rig) into DIR/data and runs 'basin run --out DIR DIR/data'.

	--out DIR           the folder (default basin-demo)
	--seed N            the demo data's seed (default 1)
	--data-only         write the data only
	--quiet             print only where the outputs are

# basin help, basin version

	basin help [COMMAND]
	basin version
*/
package main
