"""The benchmark run: generate the rows, time each comparison side by side, measure memory.

Comparisons, each a ratio of two timings taken in turns in this one run (see
:mod:`scoremon.bench.timing`), nine with the goal the project set and some for information.
Two goals are set by other lines of the same run, which measured DuckDB's floor for this work:
finding the bins alone costs about five bare scans ((a0)), and writing the scored rows costs
what copying costs ((d0)).

(a0) for information: the binning step alone (each feature's bin found, nothing more) ÷ bare scan
(a) compiled scoring ÷ a bare scan of the same columns                 goal ≤ 1.35 × (a0)
    (what scoring adds beyond finding the bins stays under a third of it)
(b) compiled scoring ÷ a hand-written CASE chain                       goal ≤ 0.8
(a+) and (a-r), for information: (a) with three reasons, and (a) with the points rounded per bin
(c) fetch into numpy and score there ÷ compiled scoring                goal ≥ 10
(d0) for information: the rows scored beforehand into a table, written to Parquet ÷ copying
(d1) for information: the binning step alone ÷ copying the input to Parquet
(d) scored output to Parquet ÷ copying the input columns to Parquet    goal ≤ (d0) + (d1) + 0.5
(f) monitoring a scored book of 24 months, every family ÷ scoring those rows   goal ≤ 2
(g) ``scoremon --help`` ÷ ``python -c pass``, fresh processes          goal ≤ 4
(h) ``scoremon check`` on the demo spec ÷ ``python -c pass``           goal ≤ 6
(e) peak memory of a fresh process scoring ``memory_rows`` rows to Parquet     goal < 2 GiB
(i) one Newton step of `scoremon fit` (one model) ÷ bare scan of its columns    goal ≤ 4
(i-sql) the same step as one aggregate query (PostgreSQL, Spark) ÷ bare scan   no goal
(j) the export route — the same WoE design fetched into numpy, the same folds and λ grid
    fitted by scikit-learn — ÷ `bin` + `fit` end to end (L2, 5 folds, 20 λ)    goal ≥ 5
    (``fit_repeat`` rounds, 1 by default, without a warm-up round: each side takes minutes)
(k) peak memory of a fresh process fitting ``memory_rows`` rows as `scoremon fit` does  goal < 2 GiB

The run exits 1 (``scoremon bench``) when a goal is missed.
(a)–(c) time an aggregate over the scored rows (rows, mean score and mean PD per grade), so
the comparison is about scoring, not about moving rows to Python. DuckDB drops whatever an
aggregate does not use (labels, reasons); one more line, not a goal, times the reasons too.
"""
from __future__ import annotations

import shutil
import tempfile
import time
from contextlib import AbstractContextManager, nullcontext
from dataclasses import dataclass, field
from datetime import date
from pathlib import Path
from typing import Protocol

import numpy as np
from sqlglot import exp

from .. import api
from ..compiler import compile_model, output_columns
from ..develop.design import Design
from ..develop.outcome import describe_columns, event_expression
from ..develop.records import FitReport
from ..develop.streamed import StreamedPasses
from ..engines import DuckDBEngine, Progress, Row, Statement
from ..errors import InputError
from ..sources import describe_source, float_columns
from ..spec.model import Spec
from ..trees import alias, case, column, integer, table_path, text
from . import development, export_fit, fitting, queries, startup, workload
from .fit_memory import StepMemory, measure_fit_memory
from .memory import measure_peak_memory
from .numpy_scorer import GradeSummary, score_with_numpy
from .timing import PairTiming, time_pair

GIB = 1024 ** 3
TABLE = "input"
BOOK, SCORED_BOOK, SCORED_ROWS = "book", "scored_book", "scored_rows"
# (f): 24 months, 2024-01 … 2025-12; with the bench spec's 12-month window the first 12 are mature
BOOK_AS_OF = date(2025, 12, 31)
A_OVER_BINNING = 1.35  # (a) ≤ this × (a0): scoring adds under a third to finding the bins
D_BEYOND_FLOOR = 0.5  # (d) ≤ (d0) + (d1) + this: labels, points, score and reasons cost under half a copy
SAME_COEFFICIENTS = 1e-6  # (j): the tolerance for L2 against scikit-learn


@dataclass(frozen=True)
class BenchSettings:
    """What to run: row counts, rounds per comparison, DuckDB threads, where temporary data goes."""

    rows: int = 10_000_000
    repeat: int = 5
    threads: int | None = None
    memory_rows: int = 50_000_000
    skip_memory: bool = False
    memory_limit: str = "1GB"
    folder: str | None = None
    fit_only: bool = False  # only the fitting lines (i), (i-sql), (j) and (k): no scoring lines, no (e)
    fit_repeat: int = 1  # rounds of line (j), each side minutes long at 10M rows


@dataclass(frozen=True)
class Goal:
    """A bound on a ratio (or on GiB): ``at_most`` true means the value must stay at or below.

    ``basis`` says how a bound taken from other lines of the same run was made, e.g.
    ``1.35 × (a0)``; the bound is then that figure of this run."""

    bound: float
    at_most: bool
    strict: bool = False
    basis: str = ""

    def met(self, value: float) -> bool:
        if self.at_most:
            return value < self.bound if self.strict else value <= self.bound
        return value > self.bound if self.strict else value >= self.bound

    @property
    def text(self) -> str:
        sign = ("<" if self.strict else "≤") if self.at_most else (">" if self.strict else "≥")
        if self.basis:
            return f"{sign} {self.basis} = {self.bound:.2f}"
        return f"{sign} {self.bound:g}"


@dataclass(frozen=True)
class BenchLine:
    """One line of the report: what was compared, both measurements, the ratio and the goal."""

    key: str
    title: str
    first_label: str
    first_value: float
    second_label: str
    second_value: float
    ratio: float
    unit: str  # "s" for timings, "GiB" for memory
    goal: Goal | None
    rounds: int = 0
    detail: str = ""

    @property
    def goal_met(self) -> bool | None:
        return None if self.goal is None else self.goal.met(self.ratio)


@dataclass(frozen=True)
class BenchReport:
    """Everything a benchmark run measured, in the order it was measured."""

    rows: int
    threads: int
    repeat: int
    lines: tuple[BenchLine, ...]
    notes: tuple[str, ...] = field(default_factory=tuple)


class BenchObserver(Protocol):
    """How a run reports as it goes (the CLI draws progress bars and prints lines)."""

    def stage(self, description: str) -> AbstractContextManager[Progress | None]: ...

    def measured(self, line: BenchLine) -> None: ...


class SilentObserver:
    """An observer that shows nothing (library use, tests)."""

    def stage(self, description: str):
        return nullcontext(None)

    def measured(self, line: BenchLine) -> None:
        pass


# ---------------------------------------------------------------- one run

class _Bench:
    """The state of one run: its folder, engine, spec and the SQL it times."""

    def __init__(self, settings: BenchSettings, observer: BenchObserver, folder: Path):
        self.settings, self.observer, self.folder = settings, observer, folder
        self.spec: Spec = workload.bench_spec()
        self.engine = DuckDBEngine(str(folder / "input.duckdb"), threads=settings.threads)
        self.lines: list[BenchLine] = []
        self.notes: list[str] = []

    def sql(self, tree: exp.Expression) -> Statement:
        """``tree`` rendered once, before the timing starts: the lines time queries, not rendering."""
        return self.engine.prepare(tree)

    def add(self, line: BenchLine) -> None:
        self.lines.append(line)
        self.observer.measured(line)

    def timed_line(self, key: str, title: str, first_label: str, first, second_label: str, second,
                   goal: Goal | None) -> PairTiming:
        with self.observer.stage(f"({key}) {title}"):
            timing = time_pair(first, second, self.settings.repeat)
        self.add(BenchLine(key, title, first_label, timing.first_seconds, second_label, timing.second_seconds,
                           timing.ratio, "s", goal, self.settings.repeat))
        return timing

    # -- the steps

    def generate(self) -> None:
        with self.observer.stage(f"generating {self.settings.rows:,} rows") as progress:
            self.engine.write_table(workload.generate_rows(self.settings.rows), [TABLE],
                                    "generating the bench rows", progress)
        columns = describe_source(self.engine, queries.relation(TABLE))
        self.floats = float_columns(columns)
        self.scoring = compile_model(self.spec, queries.relation(TABLE), (), self.floats)
        self.binning_sql = self.sql(queries.binning_only(self.scoring))  # lines (a0) and (d1)

    def compare_scan_and_hand(self) -> None:
        numeric = [name for name in workload.input_columns() if name not in workload.text_columns()]
        compiled = self.sql(queries.grade_summary(self.scoring))
        bare = self.sql(queries.bare_scan(TABLE, numeric, workload.text_columns()))
        hand = self.sql(queries.grade_summary(queries.hand_written_score(self.spec, TABLE)))
        run = self.engine.query
        # (a0) first: finding the bins, DuckDB's floor for this work, sets (a)'s goal in this run
        floor = self.timed_line("a0", "binning step alone ÷ bare scan",
                                "binning", lambda: run(self.binning_sql, "the binning step alone"),
                                "bare scan", lambda: run(bare, "bare scan"), None)
        self.timed_line("a", "compiled scoring ÷ bare scan",
                        "compiled", lambda: run(compiled, "compiled scoring"),
                        "bare scan", lambda: run(bare, "bare scan"),
                        Goal(A_OVER_BINNING * floor.ratio, at_most=True, basis=f"{A_OVER_BINNING:g} × (a0)"))
        self.timed_line("b", "compiled ÷ hand-written CASE chain",
                        "compiled", lambda: run(compiled, "compiled scoring"),
                        "hand-written", lambda: run(hand, "hand-written scoring"), Goal(0.8, at_most=True))
        reasons = self.sql(queries.reason_summary(self.scoring, output_columns(self.spec).reasons))
        self.timed_line("a+", "compiled with 3 reasons ÷ bare scan",
                        "with reasons", lambda: run(reasons, "compiled scoring with reasons"),
                        "bare scan", lambda: run(bare, "bare scan"), None)
        # rounded per bin, the points no longer follow from the log-odds exactly: each bin's two
        # numbers are looked up by bin number (compiler._one_number)
        rounded = workload.bench_spec(rounding="per_bin")
        per_bin = self.sql(queries.grade_summary(compile_model(rounded, queries.relation(TABLE), (), self.floats)))
        self.timed_line("a-r", "the same, points rounded per bin ÷ bare scan",
                        "per bin", lambda: run(per_bin, "compiled scoring rounded per bin"),
                        "bare scan", lambda: run(bare, "bare scan"), None)

    def compare_numpy(self) -> None:
        compiled = self.sql(queries.grade_summary(self.scoring))
        export = self.sql(queries.input_copy(TABLE, workload.input_columns()))
        results: dict[str, object] = {}

        def numpy_route():
            frame = self.engine.query_frame(export, "fetching the input into numpy")
            results["numpy"] = score_with_numpy(self.spec, frame)

        def compiled_route():
            results["compiled"] = self.engine.query(compiled, "compiled scoring")

        self.timed_line("c", "export to numpy, score ÷ compiled",
                        "numpy", numpy_route, "compiled", compiled_route, Goal(10.0, at_most=False))
        self.notes.append(_agreement(results["numpy"], results["compiled"]))

    def compare_parquet(self) -> None:
        scored_sql = self.engine.prepare(self.scoring, for_parquet=True)
        copy_sql = self.sql(queries.input_copy(TABLE, workload.input_columns()))
        scored_file, copy_file = self.folder / "scored.parquet", self.folder / "copy.parquet"
        write = self.engine.write_parquet
        # (d0) and (d1) first: together they are the least (d) can cost, and set its goal in this run
        # (d0) the writer's own share of (d): the same rows scored beforehand, only written
        with self.observer.stage("scoring the rows into a table for (d0)") as progress:
            self.engine.write_table(scored_sql, [SCORED_ROWS], "scoring the bench rows into a table", progress)
        written_sql = self.sql(exp.select(exp.Star()).from_(queries.relation(SCORED_ROWS)))
        written = self.timed_line("d0", "already-scored rows to Parquet ÷ input copy",
                                  "scored rows", lambda: write(written_sql, scored_file, "writing already-scored rows"),
                                  "copy", lambda: write(copy_sql, copy_file, "copying the input to Parquet"), None)
        # (d1) what scoring adds to (d0) at the least: its first step, before labels, points, reasons
        binning = self.timed_line("d1", "binning step alone ÷ input copy",
                                  "binning", lambda: self.engine.query(self.binning_sql, "the binning step alone"),
                                  "copy", lambda: write(copy_sql, copy_file, "copying the input to Parquet"), None)
        self.timed_line("d", "scored to Parquet ÷ input copy",
                        "scored", lambda: write(scored_sql, scored_file, "writing scored Parquet"),
                        "copy", lambda: write(copy_sql, copy_file, "copying the input to Parquet"),
                        Goal(written.ratio + binning.ratio + D_BEYOND_FLOOR, at_most=True,
                             basis=f"(d0) + (d1) + {D_BEYOND_FLOOR:g}"))
        self.engine.execute(exp.Drop(tables=[queries.relation(SCORED_ROWS)], kind="TABLE"), "dropping the scored rows")
        scored_file.unlink(missing_ok=True)
        copy_file.unlink(missing_ok=True)

    def compare_monitor(self) -> None:
        """(f) ``scoremon monitor`` on the scored rows — month pass, bins and score bands, calibration
        and discrimination on the 12 mature months, the history write — ÷ scoring the same rows
        into a table (month and outcome kept as keys)."""
        with self.observer.stage("giving the bench rows months and outcomes") as progress:
            self.engine.write_table(_book(TABLE), [BOOK], "adding months and outcomes", progress)
        columns = describe_source(self.engine, queries.relation(BOOK))
        scoring = self.sql(compile_model(self.spec, queries.relation(BOOK), ("month", "outcome"),
                                         float_columns(columns)))

        def score():
            self.engine.write_table(scoring, [SCORED_BOOK], "scoring the bench book")

        with self.observer.stage("scoring the bench book and measuring its baseline"):
            score()
            baseline = api.measure_development(self.spec, self.engine, queries.relation(SCORED_BOOK), "outcome",
                                               "month", "the bench book")
        spec = self.spec.model_copy(update={"baseline": baseline})

        def monitor():
            api.monitor(spec, self.engine, SCORED_BOOK, "month", BOOK_AS_OF, "outcome")

        self.timed_line("f", "monitor 24 months, every family ÷ scoring", "monitor", monitor, "scoring", score,
                        Goal(2.0, at_most=True))

    def compare_startup(self) -> None:
        """(g) and (h): fresh ``scoremon`` processes ÷ a bare Python start, side by side."""
        bare = startup.bare_start()
        self.timed_line("g", "scoremon --help ÷ python -c pass", "--help", startup.help_start(),
                        "python -c pass", bare, Goal(4.0, at_most=True))
        self.timed_line("h", "scoremon check (demo spec) ÷ python -c pass", "check", startup.check_start(),
                        "python -c pass", bare, Goal(6.0, at_most=True))

    def compare_newton_step(self) -> None:
        """(i) one pass of the fit as `scoremon fit` runs it on DuckDB (numpy over the bin numbers
        held once) ÷ a bare scan of the source columns; (i-sql) the same pass as one aggregate
        query, as on PostgreSQL and Spark, for comparison (no goal)."""
        design = fitting.newton_design(self.spec, TABLE)
        beta = fitting.newton_beta(design)
        step = self.sql(fitting.newton_step(design))
        bare = self.sql(queries.bare_scan(TABLE, *fitting.design_columns(design)))
        run = self.engine.query
        with self.observer.stage("binning the rows once for the fit"):
            started = time.perf_counter()
            passes = StreamedPasses(self.engine, design)
            held = time.perf_counter() - started
        try:
            timing = self.timed_line("i", "one Newton step of the fit ÷ bare scan",
                                     "Newton step", lambda: passes({1: beta}),
                                     "bare scan", lambda: run(bare, "bare scan"), Goal(4.0, at_most=True))
        finally:
            passes.close()
        self.notes.append(f"(i) binning the rows once into the held table of bin numbers took {held:.2f} s "
                          f"({held / timing.second_seconds:.1f} bare scans), paid once per fit, not per step")
        self.timed_line("i-sql", "one Newton step as an aggregate query ÷ bare scan",
                        "aggregate query", lambda: run(step, "one Newton step"),
                        "bare scan", lambda: run(bare, "bare scan"), None)

    def compare_development(self) -> None:
        """(j) the export route ÷ `bin` + `fit` end to end on the bench rows (see
        :mod:`.development` and :mod:`.export_fit`); the export route starts from what `fit`
        chose (characteristics, λ grid), so `bin` + `fit` leads each pair of rounds."""
        if not export_fit.available():
            self.notes.append("(j) not measured: the export route needs scikit-learn (pip install scikit-learn)")
            return
        with self.observer.stage("drawing an outcome for the development rows") as progress:
            development.create_development(self.engine, TABLE, progress)
        binning_file, spec_file = self.folder / "development-binning.yaml", self.folder / "development-spec.yaml"
        made: dict = {}

        def ours():
            started = time.perf_counter()
            made["binning"] = development.bin_step(self.engine, binning_file)
            made["bin_seconds"] = time.perf_counter() - started
            made["report"] = development.fit_step(self.engine, binning_file, spec_file)

        def export():
            report = made["report"]
            started = time.perf_counter()
            data = export_fit.export_design(self.engine, _fitted_design(self.engine, made["binning"], report))
            made["export_seconds"] = time.perf_counter() - started
            made["export"] = export_fit.fit_exported(data, [step.lam for step in report.path],
                                                     development.fit_settings().folds)

        rounds = self.settings.fit_repeat
        title = "export to numpy, scikit-learn ÷ bin + fit"
        try:
            with self.observer.stage(f"(j) {title}"):
                timing = time_pair(export, ours, rounds, warm=False, second_leads=True)
        finally:
            binning_file.unlink(missing_ok=True)
            spec_file.unlink(missing_ok=True)
            development.drop_development(self.engine)
        report, route = made["report"], made["export"]
        difference, same_lambda = _coefficient_agreement(report, route)
        detail = (f"{report.rows:,} rows × {len(report.characteristics)} characteristics, L2, "
                  f"{report.settings.folds} folds, {len(report.path)} λ; {rounds} round{'s' if rounds > 1 else ''}, "
                  f"no warm-up; bin {made['bin_seconds']:.1f} s + fit "
                  f"{timing.second[-1] - made['bin_seconds']:.1f} s ({report.passes} passes) against fetching "
                  f"{route.float_bytes / GIB:.2f} GiB of floats {made['export_seconds']:.1f} s + scikit-learn "
                  f"{timing.first[-1] - made['export_seconds']:.1f} s ({route.fits} fits, {route.iterations} "
                  f"Newton iterations); the same λ chosen: {'yes' if same_lambda else 'NO'}, largest coefficient "
                  f"difference there {difference:.1e}")
        self.add(BenchLine("j", title, "export route", timing.first_seconds, "bin + fit", timing.second_seconds,
                           timing.ratio, "s", Goal(5.0, at_most=False), rounds, detail))
        if not same_lambda or difference > SAME_COEFFICIENTS:
            self.notes.append(f"(j) scikit-learn and scoremon fit DISAGREE: largest coefficient difference "
                              f"{difference:.1e} (bound {SAME_COEFFICIENTS:g}), same λ chosen: {same_lambda}")

    def generate_memory_rows(self) -> Path:
        """The memory lines' rows in a DuckDB file of their own (the bench engine is closed by then)."""
        rows = self.settings.memory_rows
        database = self.folder / "memory.duckdb"
        generator = DuckDBEngine(str(database), threads=self.settings.threads)
        try:
            with self.observer.stage(f"generating {rows:,} rows for the memory tests") as progress:
                generator.write_table(workload.generate_rows(rows), [TABLE], "generating the memory-test rows",
                                      progress)
            with self.observer.stage(f"drawing an outcome for {rows:,} rows") as progress:
                development.create_development(generator, TABLE, progress)
        finally:
            generator.close()
        return database

    def measure_memory(self, database: Path) -> None:
        out_file = self.folder / "memory-scored.parquet"
        rows = self.settings.memory_rows
        with self.observer.stage(f"scoring {rows:,} rows in a child process") as progress:
            result = measure_peak_memory(database, out_file, self.settings.threads, self.settings.memory_limit,
                                         progress)
        out_file.unlink(missing_ok=True)
        peak = result.peak_bytes / GIB
        self.add(BenchLine("e", "peak memory scoring to Parquet", "peak RSS", peak, "", 0.0,
                           peak, "GiB", Goal(2.0, at_most=True, strict=True), 1,
                           f"{result.rows:,} rows in {result.seconds:.1f} s, DuckDB memory_limit "
                           f"{self.settings.memory_limit}"))

    def measure_fit_memory(self, database: Path) -> None:
        """(k) `bin`, then `fit`, each in a fresh child process; the fit's peak is the line's value."""
        rows = self.settings.memory_rows
        with self.observer.stage(f"binning, then fitting, {rows:,} rows in child processes") as progress:
            result = measure_fit_memory(database, self.folder, self.settings.threads, self.settings.memory_limit,
                                        progress)
        fit, binning, limit = result.fit, result.binning, self.settings.memory_limit
        peak = fit.peak_bytes / GIB
        floats = export_fit.float_bytes(fit.rows, fit.characteristics)
        self.add(BenchLine("k", "peak memory fitting (bin, then fit)", "peak RSS", peak, "", 0.0,
                           peak, "GiB", Goal(2.0, at_most=True, strict=True), 1,
                           f"{fit.rows:,} rows × {fit.characteristics} characteristics, L2, 5 folds, 20 λ, DuckDB "
                           f"memory_limit {limit}, spilling into the bench folder: fit {fit.seconds:.1f} s "
                           f"({fit.passes} passes){_stopped(fit, limit)}; bin {binning.seconds:.1f} s, peaking at "
                           f"{binning.peak_bytes / GIB:.2f} GiB in its own process{_stopped(binning, limit)}. The "
                           f"export route holds {fit.rows:,} × ({fit.characteristics} WoE + y) × 8 bytes = "
                           f"{floats / GIB:.2f} GiB ({floats / 1e9:.2f} GB) of floats alone"))

    def threads(self) -> int:
        setting = exp.Anonymous(this="current_setting", expressions=[text("threads")])
        return int(self.engine.query(exp.select(alias(setting, "threads")), "reading the thread count")[0].threads)


def _book(table: str) -> exp.Select:
    """The bench rows with a month (round robin over 2024-01 … 2025-12, from DuckDB's rowid) and
    an outcome (about 7 % events, from a hash of the rowid: it only has to be there to be counted)."""
    rowid = column("rowid")
    year = case([(exp.LT(this=exp.Mod(this=rowid.copy(), expression=integer(24)), expression=integer(12)),
                  integer(2024))], integer(2025))
    month_number = exp.Cast(this=exp.Add(this=exp.Mod(this=rowid.copy(), expression=integer(12)), expression=integer(1)),
                            to=exp.DataType.build("INTEGER"))
    month = exp.Anonymous(this="make_date", expressions=[year, month_number, integer(1)])
    drawn = exp.Mod(this=exp.Anonymous(this="hash", expressions=[rowid.copy(), integer(7)]), expression=integer(100))
    outcome = case([(exp.LT(this=drawn, expression=integer(7)), integer(1))], integer(0))
    return exp.select(exp.Star(), exp.alias_(month, "month", quoted=True),
                      exp.alias_(outcome, "outcome", quoted=True)).from_(queries.relation(table))


def _fitted_design(engine, binning, report: FitReport) -> Design:
    """The WoE design `fit` chose (its characteristics, in its order), folds from the same key."""
    source = table_path([development.DEVELOPMENT])
    event = event_expression(describe_columns(engine, source)[workload.OUTCOME])
    features = tuple(binning.feature(c.name).feature for c in report.characteristics)
    return Design(source, features, event, workload.KEY, report.settings.folds)


def _coefficient_agreement(report: FitReport, route: export_fit.ExportFit) -> tuple[float, bool]:
    """Largest |difference| between the two routes' coefficients at the chosen λ (intercept
    included), and whether both chose the same λ of the grid."""
    ours = np.r_[report.intercept, [c.coefficient for c in report.characteristics]]
    chosen = [step.lam for step in report.path].index(report.chosen_lambda)
    return float(np.max(np.abs(ours - route.coefficients))), chosen == route.chosen


def _stopped(step: StepMemory, limit: str) -> str:
    """How DuckDB stopped a step under the memory limit, when it did (the step then ran without one)."""
    if not step.out_of_memory:
        return ""
    reason = step.out_of_memory.rsplit("EngineError: ", 1)[-1]
    return f" (under memory_limit {limit} DuckDB stopped it — {reason} — so measured without a limit)"


def _agreement(numpy_summary: GradeSummary, compiled_rows: list[Row]) -> str:
    compiled = {str(r.grade): int(r.rows) for r in compiled_rows}
    route = dict(zip(numpy_summary.grades, numpy_summary.rows))
    if compiled == route:
        return "numpy and compiled scoring agree on the rows in every grade"
    return f"numpy and compiled scoring DISAGREE on rows per grade: numpy {route}, compiled {compiled}"


def _check_settings(settings: BenchSettings) -> None:
    problems = [f"{name} must be at least 1, not {value}" for name, value in
                (("rows", settings.rows), ("repeat", settings.repeat), ("memory rows", settings.memory_rows),
                 ("fit repeat", settings.fit_repeat))
                if value < 1]
    if settings.threads is not None and settings.threads < 1:
        problems.append(f"threads must be at least 1, not {settings.threads}")
    if problems:
        raise InputError("; ".join(problems))


def run_bench(settings: BenchSettings, observer: BenchObserver | None = None) -> BenchReport:
    """Run the benchmark; temporary data lives in a fresh folder that is removed afterwards.

    >>> report = run_bench(BenchSettings(rows=2_000, repeat=1, skip_memory=True))
    >>> [line.key for line in report.lines]
    ['a0', 'a', 'b', 'a+', 'a-r', 'c', 'd0', 'd1', 'd', 'f', 'g', 'h', 'i', 'i-sql', 'j']
    """
    _check_settings(settings)
    observer = observer or SilentObserver()
    parent = Path(settings.folder) if settings.folder else None
    if parent is not None:
        parent.mkdir(parents=True, exist_ok=True)
    folder = Path(tempfile.mkdtemp(prefix="scoremon-bench-", dir=parent))
    try:
        bench = _Bench(settings, observer, folder)
        try:
            bench.generate()
            if not settings.fit_only:
                bench.compare_scan_and_hand()
                bench.compare_numpy()
                bench.compare_parquet()
                bench.compare_monitor()
                bench.compare_startup()
            bench.compare_newton_step()
            bench.compare_development()
            threads = bench.threads()
        finally:
            bench.engine.close()
        if not settings.skip_memory:
            database = bench.generate_memory_rows()
            if not settings.fit_only:
                bench.measure_memory(database)
            bench.measure_fit_memory(database)
        return BenchReport(settings.rows, threads, settings.repeat, tuple(bench.lines), tuple(bench.notes))
    finally:
        shutil.rmtree(folder, ignore_errors=True)
