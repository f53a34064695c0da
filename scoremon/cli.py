"""The command line: arguments, exit codes, one line per problem.

Exit codes: 0 success; 1 the run found what it looks for (an alert, a difference);
2 invalid input (a spec, a table, a column, an option), with one line per problem;
3 an internal error (a bug in scoremon: one line, the full trace written to a file);
130 interrupted (Ctrl-C), nothing written.

What each command does lives in :mod:`scoremon.commands`, imported once the arguments are read:
``scoremon --help`` and ``scoremon --version`` start without loading it (nor pydantic, rich or any
engine driver).
"""
from __future__ import annotations

import argparse
import sys
import tempfile
import traceback

from . import __version__
from .dialects import DIALECTS, dialects_help
from .engines import ENGINE_URLS
from .develop.settings import TRENDS, Settings as BinSettings
from .errors import InputError, ScoremonError, SpecError, cut

EXIT_OK, EXIT_FOUND, EXIT_INVALID, EXIT_INTERNAL, EXIT_INTERRUPTED = 0, 1, 2, 3, 130
# the numbers are scoremon.monitor.months' (not imported here: it loads sqlglot); a test keeps them equal
MONTHS_IN_RANGE_HELP = ("how many months, ending with the as-of month, are in range; rows of earlier months are "
                        "counted as out of range and left out (default 120, ten years; 1 to 1200)")


def _replace_option(parser: argparse.ArgumentParser, outputs: str) -> None:
    """--replace, worded the same on every command that writes files or tables."""
    parser.add_argument("--replace", action="store_true",
                        help=f"replace {outputs} when it exists (without it, an existing output is an error)")


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="scoremon",
        description="Keep a logistic-regression scoring model as a YAML spec, score with SQL, monitor it.",
        epilog="exit codes: 0 ok; 1 something found (alert, difference); 2 invalid input; "
               "3 internal error (a bug; the trace goes to a file); 130 interrupted",
    )
    parser.add_argument("--version", action="version", version=f"scoremon {__version__}")
    commands = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")

    check = commands.add_parser("check", help="validate a spec; every problem with file:line:column")
    check.add_argument("spec", help="the spec file (YAML)")
    check.set_defaults(run="check")

    compile_ = commands.add_parser("compile", help="print the scoring SQL for a spec")
    compile_.add_argument("spec")
    compile_.add_argument("--dialect", default="duckdb", choices=list(DIALECTS), metavar="DIALECT",
                          help=f"SQL dialect (default duckdb): {dialects_help()}")
    compile_.add_argument("--table", default="input", help="table the SQL reads (default: input)")
    compile_.add_argument("--key", action="append", help="a column passed through to the output (repeatable)")
    compile_.add_argument("--out", help="write the SQL to this file instead of printing it")
    _replace_option(compile_, "--out")
    compile_.set_defaults(run="compile_")

    score = commands.add_parser("score", help="score a table (DuckDB, PostgreSQL or Spark) or a Parquet/CSV file (DuckDB)")
    score.add_argument("spec")
    score.add_argument("--db", default=None, help=f"engine URL: {ENGINE_URLS}")
    source = score.add_mutually_exclusive_group(required=True)
    source.add_argument("--table", help="table in --db to score (NAME or SCHEMA.NAME)")
    source.add_argument("--input", help="Parquet or CSV file to score")
    score.add_argument("--key", action="append", help="a column passed through to the output (repeatable)")
    score.add_argument("--out-table", help="write the scores to this table in --db (written whole, atomically)")
    score.add_argument("--out", help="write the scores to this file: FILE.parquet (Parquet) or FILE.csv (CSV)")
    _replace_option(score, "--out-table or --out")
    score.add_argument("--allow-empty", action="store_true",
                       help="write the output even when the input holds no rows (refused without it)")
    score.add_argument("--reason-text", action="store_true",
                       help="put each reason's statement text beside its code (reason_1_text, …), e.g. for letters")
    score.add_argument("--threads", type=int, default=None,
                       help="DuckDB threads, or the cores of a spark://local session (default: all cores for DuckDB)")
    score.set_defaults(run="score")

    schema = commands.add_parser("schema", help="print the spec's JSON Schema (for editors)")
    schema.add_argument("--out", help="write it to this file")
    _replace_option(schema, "--out")
    schema.set_defaults(run="schema")

    diff = commands.add_parser(
        "diff", help="what changed between two versions of a model, and whom it affects",
        description="Compare two specs semantically (never as text) and classify each change by how it can "
                    "affect a score: none, scaling only, one feature, structure. Given a population, score it "
                    "under both versions in one query and show the score and PD change, the grade migration, "
                    "the swap set at a cut-off and how often the first reason changes.",
        epilog="exit codes: 0 the specs are the same model (equal fingerprints); 1 they differ; "
               "2 invalid input (a spec, a table, a column, an option), one line per problem; 3 internal error "
               "(a bug in scoremon, never a difference); 130 interrupted",
    )
    diff.add_argument("old", help="the old version's spec file (YAML)")
    diff.add_argument("new", help="the new version's spec file (YAML)")
    diff.add_argument("--db", default=None, help=f"the database holding --table; engine URL: {ENGINE_URLS}")
    population = diff.add_mutually_exclusive_group()
    population.add_argument("--table", help="population to score: a table in --db (NAME or SCHEMA.NAME)")
    population.add_argument("--input", help="population to score: a Parquet or CSV file")
    diff.add_argument("--outcome", help="0/1 outcome column (NULL: not yet known), for event rates")
    diff.add_argument("--cutoff", type=float, help="accept when score >= SCORE, for the swap set", metavar="SCORE")
    diff.add_argument("--new-cutoff", type=float, metavar="SCORE",
                      help="the new version's cut-off when it differs from --cutoff (e.g. after a rescaling)")
    diff.add_argument("--json", metavar="FILE", help="also write the result as JSON to FILE")
    diff.add_argument("--markdown", metavar="FILE", help="also write an audit document (Markdown) to FILE")
    diff.add_argument("--html", metavar="FILE", help="also write a report with charts, one self-contained HTML "
                                                     "file, to FILE")
    _replace_option(diff, "a --json, --markdown or --html file")
    diff.set_defaults(run="diff")

    bench = commands.add_parser(
        "bench", help="measure scoring speed and memory as ratios against baselines, side by side",
        description="Generate synthetic rows for a scorecard of realistic shape in DuckDB, then time compiled "
                    "scoring against a bare scan, a hand-written CASE chain, an export to numpy and a Parquet "
                    "copy, in alternating rounds of one run, and measure a fresh process's peak memory. The "
                    "fitting lines time one Newton step of `fit` against a bare scan, `bin` + `fit` end to end "
                    "against exporting the same WoE design to scikit-learn (same folds and λ grid), and measure "
                    "the peak memory of `fit` in a fresh process.",
        epilog="exit codes: 0 every goal met; 1 a goal missed; 2 invalid input; 3 internal error; 130 interrupted",
    )
    bench.add_argument("--rows", type=int, default=10_000_000, help="rows of the bench table, scored and fitted (default 10,000,000)")
    bench.add_argument("--repeat", type=int, default=5, help="timed rounds per comparison (default 5)")
    bench.add_argument("--threads", type=int, default=None, help="DuckDB threads (default: all cores)")
    bench.add_argument("--fit-repeat", type=int, default=1,
                       help="timed rounds of line (j), bin + fit end to end ÷ the export route; each side takes "
                            "minutes at 10M rows, so no warm-up round (default 1)")
    bench.add_argument("--memory-rows", type=int, default=50_000_000,
                       help="rows for the peak-memory measurements of scoring (e) and fitting (k) "
                            "(default 50,000,000)")
    bench.add_argument("--memory-limit", default="1GB",
                       help="DuckDB memory_limit of the memory measurements (default 1GB)")
    bench.add_argument("--skip-memory", action="store_true", help="leave out the peak-memory measurements (e), (k)")
    bench.add_argument("--fit-only", action="store_true",
                       help="run only the fitting lines (i), (i-sql), (j) and, unless --skip-memory, (k), after "
                            "generating the rows; no scoring lines")
    bench.add_argument("--folder", default=None,
                       help="where temporary data goes (a fresh subfolder, removed afterwards; default: the system's)")
    bench.add_argument("--engines", nargs="*", metavar="URL", default=None,
                       help="instead: time scoring ÷ each engine's own bare scan on DuckDB and on each engine URL "
                            "given (postgresql://…, spark://local[N], …); the rows are loaded into each engine")
    bench.add_argument("--engine-rows", type=int, default=1_000_000,
                       help="rows for --engines (default 1,000,000)")
    bench.set_defaults(run="bench")

    baseline = commands.add_parser(
        "baseline", help="measure a development table and write a new spec file with its baseline",
        description="Measure the development distribution inside the database: shares per score band (the "
                    "development score's deciles) and per feature bin, volume, mean score and points, "
                    "unseen-category rates, and with an outcome the event rate, AUC and KS. Writes a copy of "
                    "the spec with the baseline section filled; the spec itself is never overwritten.",
        epilog="exit codes: 0 written; 2 invalid input, one line per problem; 3 internal error; 130 interrupted",
    )
    baseline.add_argument("spec", help="the spec file (YAML)")
    baseline.add_argument("--db", required=True, help="engine URL holding --table: a DuckDB file, postgresql://… or spark://…")
    baseline.add_argument("--table", required=True, help="the development table (raw, or scored by this spec)")
    baseline.add_argument("--outcome", help="0/1 outcome column (NULL: not known), for event rate, AUC and KS")
    baseline.add_argument("--month-column", help="month column, for the development rows per month")
    baseline.add_argument("--out", required=True, metavar="NEW_SPEC", help="the new spec file to write")
    baseline.add_argument("--months-in-range", type=int, metavar="N", help=MONTHS_IN_RANGE_HELP)
    _replace_option(baseline, "--out")
    baseline.set_defaults(run="baseline")

    bin_ = commands.add_parser(
        "bin", help="bin every characteristic of a development table (WoE, IV) into a binning file",
        description="Count fine classes of every characteristic inside the database (quantiles of numbers, "
                    "values of text; NULL, NaN and ±inf apart), merge them into the bins with the largest IV "
                    "where every bin holds a minimum share of rows and of events (WoE in one direction when "
                    "asked), and write a binning file in the spec's own bin syntax. Edit that file by hand and "
                    "recount it with --recount.",
        epilog="exit codes: 0 written; 2 invalid input, one line per problem",
    )
    bin_.add_argument("--db", required=True, help=f"engine URL holding --table: {ENGINE_URLS}")
    bin_.add_argument("--table", help="the development table (NAME or SCHEMA.NAME); with --recount, default: the file's")
    bin_.add_argument("--outcome", help="the 0/1 (or true/false) outcome column, 1 = event; with --recount, "
                                        "default: the file's")
    bin_.add_argument("--key", help="a column that identifies each row; checked to be unique")
    bin_.add_argument("--month-column", help="the month of each row, recorded as the months covered")
    chosen = bin_.add_mutually_exclusive_group()
    chosen.add_argument("--features", nargs="+", metavar="COLUMN", help="bin only these columns (default: every "
                                                                          "number and text column but the outcome, key and month)")
    chosen.add_argument("--exclude", nargs="+", metavar="COLUMN", help="bin every column but these")
    bin_.add_argument("--categorical", nargs="+", metavar="COLUMN", default=(),
                      help="whole-number columns to bin as categories (codes), not as numbers")
    bin_.add_argument("--out", required=True, metavar="BINS.yaml", help="the binning file to write")
    _replace_option(bin_, "--out")
    bin_.add_argument("--recount", metavar="BINS.yaml", help="count the bins of this (hand-edited) binning file "
                                                             "again exactly as written, instead of binning anew")
    defaults = BinSettings()
    bin_.add_argument("--fine-classes", type=int, default=defaults.fine_classes,
                      help=f"quantile classes per numeric characteristic, 2 to 100 (default {defaults.fine_classes})")
    bin_.add_argument("--min-share", type=float, default=defaults.min_share,
                      help=f"least share of the table's rows in a bin (default {defaults.min_share})")
    bin_.add_argument("--min-events", type=int, default=defaults.min_events,
                      help=f"least number of events in a bin (default {defaults.min_events})")
    bin_.add_argument("--trend", choices=TRENDS, default=defaults.trend,
                      help="WoE across a numeric characteristic's bins: increasing, decreasing, auto (the one "
                           f"with the larger IV) or none (default {defaults.trend})")
    bin_.add_argument("--max-bins", type=int, default=defaults.max_bins,
                      help=f"most bins per characteristic, missing and catch-all aside (default {defaults.max_bins})")
    bin_.set_defaults(run="bin_")

    fit = commands.add_parser(
        "fit", help="fit a logistic model on a binning file's characteristics and write a new spec",
        description="Transform each characteristic to its WoE inside the database, select characteristics "
                    "(minimum IV, a cap on WoE correlation, --keep/--drop), fit by Newton-Raphson with an optional "
                    "L2, L1 or elastic-net penalty whose weight λ is chosen by K-fold cross-validation over a path "
                    "from λ_max down, and write a new spec with scaling, grades, one reason per characteristic, "
                    "the baseline and a development record. Only sums leave the database.",
        epilog="exit codes: 0 written; 2 invalid input, one line per problem; 3 internal error; 130 interrupted",
    )
    fit.add_argument("binning", metavar="BINS.yaml", help="the binning file (from scoremon bin)")
    fit.add_argument("--db", required=True, help=f"engine URL holding --table: {ENGINE_URLS}")
    fit.add_argument("--table", help="the development table (default: the binning file's)")
    fit.add_argument("--outcome", help="the 0/1 outcome column (default: the binning file's)")
    fit.add_argument("--key", help="the unique key the folds come from (default: the binning file's)")
    fit.add_argument("--month-column", help="the month column, for the baseline volume (default: the file's)")
    fit.add_argument("--penalty", choices=("none", "l2", "l1", "elastic"), default="none",
                     help="none (default), l2 (ridge), l1 (lasso) or elastic (net, with --alpha)")
    fit.add_argument("--alpha", type=float, default=None, help="elastic net: the L1 share α in (0, 1) (default 0.5)")
    fit.add_argument("--folds", type=int, default=5, help="cross-validation folds (default 5; 1: none)")
    fit.add_argument("--lambdas", type=int, default=20, help="λ values on the path (default 20)")
    fit.add_argument("--lambda-ratio", type=float, default=1e-3, help="smallest λ ÷ λ_max (default 0.001)")
    fit.add_argument("--one-se", action="store_true", help="choose the largest λ within one standard error of the best")
    fit.add_argument("--cv-metric", choices=("deviance", "auc"), default="deviance",
                     help="held-out measure that chooses λ (default deviance)")
    fit.add_argument("--min-iv", type=float, default=0.02, help="leave out characteristics under this IV (default 0.02)")
    fit.add_argument("--max-correlation", type=float, default=0.7,
                     help="leave out a characteristic whose WoE correlates beyond this with a stronger one (default 0.7)")
    fit.add_argument("--keep", nargs="+", metavar="NAME", help="characteristics to fit whatever the rules say")
    fit.add_argument("--drop", nargs="+", metavar="NAME", help="characteristics to leave out")
    fit.add_argument("--base-score", type=float, default=600.0, help="score at --base-odds (default 600)")
    fit.add_argument("--base-odds", type=float, default=50.0, help="good:bad odds at --base-score (default 50)")
    fit.add_argument("--pdo", type=float, default=20.0, help="points to double the odds (default 20)")
    fit.add_argument("--rounding", choices=("none", "per_bin", "total"), default="none",
                     help="rounding of points (default none)")
    fit.add_argument("--grades", default="quantiles:10",
                     help="quantiles:N (score deciles, N ≤ 10; default quantiles:10) or pd:P1,P2,… (PD bands)")
    fit.add_argument("--name", help="the model's name (default: the table's)")
    fit.add_argument("--model-version", default="1", help="the model's version (default 1)")
    fit.add_argument("--owner", default="model development", help="the model's owner")
    fit.add_argument("--event", help="what y = 1 means, in words")
    fit.add_argument("--performance-window", type=int, default=12, help="outcome window in months (default 12)")
    fit.add_argument("--out", required=True, metavar="SPEC.yaml", help="the new spec file")
    _replace_option(fit, "--out, a --json or an --html file")
    fit.add_argument("--json", metavar="FILE", help="write the fit report as JSON")
    fit.add_argument("--html", metavar="FILE", help="also write a report with charts, one self-contained HTML file, "
                                                    "to FILE")
    fit.set_defaults(run="fit")

    monitor = commands.add_parser(
        "monitor", help="stability, data quality, calibration and discrimination by month, with history",
        description="Compare every month of a book with the model's baseline: PSI of score bands and of each "
                    "characteristic with points shifts, data quality (volume, missing, unseen, catch-all), and "
                    "on mature months calibration (Jeffreys, binomial, grade chi-square, Spiegelhalter, Brier) "
                    "and discrimination (AUC, Gini, KS). The table may be scored already or raw (scored on the "
                    "fly). Every run is appended to the history tables in the same database.",
        epilog="exit codes: 0 nothing on alert; 1 something on alert; 2 invalid input, one line per problem; "
               "3 internal error (a bug in scoremon, never an alert); 130 interrupted, nothing written",
    )
    monitor.add_argument("spec", help="the spec file (YAML) with a baseline section, unless one is given below")
    monitor.add_argument("--db", required=True, help="engine URL holding --table (the history goes there): a DuckDB file, "
                                                       "postgresql://… or spark://…")
    monitor.add_argument("--table", required=True, help="the book: raw, or scored by this spec with the month "
                                                        "(and outcome) columns kept as keys")
    monitor.add_argument("--month-column", required=True, help="DATE, TIMESTAMP, text YYYY-MM or number YYYYMM")
    monitor.add_argument("--outcome", help="0/1 outcome column (NULL: not known yet), for calibration and "
                                           "discrimination")
    monitor.add_argument("--as-of", help="the date outcomes are known up to, YYYY-MM-DD (default: today); a month "
                                         "is mature when the last day of month + window is on or before it")
    monitor.add_argument("--thresholds", metavar="FILE", help="YAML file overriding thresholds (defaults: "
                                                              "configs/thresholds.yaml)")
    against = monitor.add_mutually_exclusive_group()
    against.add_argument("--baseline-table", metavar="TABLE", help="measure the baseline from this table instead "
                                                                   "of the spec's")
    against.add_argument("--baseline-months", metavar="FROM:TO", help="measure the baseline from these months of "
                                                                      "--table, e.g. 2024-05:2025-04")
    monitor.add_argument("--months-in-range", type=int, metavar="N", help=MONTHS_IN_RANGE_HELP)
    monitor.add_argument("--expected-rows", default="trailing", metavar="RULE",
                         help="what each month's volume is judged against: trailing (default: the median of the "
                              "book's own previous 6 months), a monthly count such as 12000, or development "
                              "(the baseline's rows per month)")
    monitor.add_argument("--two-sided", action="store_true",
                         help="calibration tests both ways (default one-sided: only more events than the PD "
                              "predicts is flagged, so an over-estimating model reads ok)")
    monitor.add_argument("--json", metavar="FILE", help="also write every figure as JSON to FILE")
    monitor.add_argument("--html", metavar="FILE", help="also write a report with charts, one self-contained HTML "
                                                        "file, to FILE")
    _replace_option(monitor, "a --json or --html file")
    monitor.add_argument("--no-history", action="store_true",
                         help="do not append this run to the history tables (e.g. a trial run, or an engine "
                              "without transactions)")
    monitor.set_defaults(run="monitor")

    pack = commands.add_parser(
        "pack", help="a history pack: one model's monitoring over many runs or months, as one HTML file",
        description="Read the monitoring history that `scoremon monitor` appended to the database and draw, "
                    "month by month, score PSI, calibration and AUC across every run in the range, one line per "
                    "model version. Reads only the history tables, never the book.",
        epilog="exit codes: 0 written; 2 invalid input, one line per problem",
    )
    pack.add_argument("model", metavar="SPEC_OR_MODEL", help="a spec file (its model name is used) or a model name")
    pack.add_argument("--db", required=True, help=f"engine URL holding the history tables: {ENGINE_URLS}")
    pack.add_argument("--from", dest="first", metavar="YYYY-MM", help="first month (default: the earliest measured)")
    pack.add_argument("--to", dest="last", metavar="YYYY-MM", help="last month (default: the latest measured)")
    pack.add_argument("--runs", nargs="+", metavar="RUN", help="only these runs (ids from the runs table), "
                                                               "instead of --from/--to")
    pack.add_argument("--html", required=True, metavar="FILE", help="the HTML file to write")
    _replace_option(pack, "FILE")
    pack.set_defaults(run="pack")

    demo = commands.add_parser("demo", help="build the demo warehouse and run the whole job on it")
    demo.add_argument("--rows", type=int, default=None, help="applications in the demo book (default: about 400,000)")
    demo.add_argument("--folder", default=None, help="where the demo warehouse is written (default: a temporary folder)")
    demo.set_defaults(run="demo")
    return parser


def main(argv: list[str] | None = None) -> int:
    """Run one command; return its exit code (see the module docstring)."""
    args = build_parser().parse_args(argv)
    # the commands (and the printing) are imported only once a command runs: see the module docstring
    from . import commands
    from .report import terminal

    try:
        return getattr(commands, args.run)(args)
    except SpecError as error:
        terminal.print_problems([str(p) for p in error.problems])
        return EXIT_INVALID
    except InputError as error:
        terminal.print_problems([f"error: {error.message}"] + [f"  - {p}" for p in error.problems])
        return EXIT_INVALID
    except ScoremonError as error:
        terminal.print_problems([f"error: {error}"])
        return EXIT_INVALID
    except KeyboardInterrupt:
        terminal.print_problems(["interrupted; nothing was written"])
        return EXIT_INTERRUPTED
    except Exception as error:  # noqa: BLE001 - a bug: one line for the user, the trace for the report
        trace = _write_trace()
        terminal.print_problems([f"internal error (a bug in scoremon): {type(error).__name__}: "
                                 f"{cut(str(error).splitlines()[0] if str(error) else '')}; full trace in {trace}; "
                                 "please report it with that file"])
        return EXIT_INTERNAL


def _write_trace() -> str:
    """Write the exception being handled, with its trace, to a new file; return the file's path."""
    with tempfile.NamedTemporaryFile("w", prefix="scoremon-trace-", suffix=".txt", delete=False,
                                     encoding="utf-8") as handle:
        handle.write(traceback.format_exc())
        return handle.name


if __name__ == "__main__":
    sys.exit(main())
