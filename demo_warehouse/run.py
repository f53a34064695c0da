"""``scoremon demo``: build Quillfield Credit's book, develop version 1 of its model (bin, review,
fit), then check, score, monitor and diff the committed versions on the book.

:func:`run_demo` runs :data:`STEPS` in order. A step is a function that takes the shared
:class:`DemoRun`, does its work, leaves what later steps need on the run (the book, the spec,
the scoring result) and returns a :class:`StepOutcome`: the lines shown under its heading and,
if it has more to show (a table), a function that shows it. The heading, the timing and the
wrap-up are the runner's job, so a new step is one function and one line in :data:`STEPS`.

The warehouse is a DuckDB file, ``quillfield.duckdb``, in the folder given with ``--folder``
(created if needed) or in a new temporary folder that is kept and named in the output, so the
user can open it afterwards.
"""
from __future__ import annotations

import tempfile
import time
from dataclasses import dataclass, field
from datetime import datetime, timezone
from pathlib import Path
from typing import Callable

from scoremon import api, files
from scoremon.api import ScoreResult
from scoremon.errors import InputError
from scoremon.monitor.history import METRICS_TABLE, RUNS_TABLE
from scoremon.report import terminal
from scoremon.report.html.diff import diff_html
from scoremon.report.html.fit import fit_html
from scoremon.report.html.monitor import monitor_html
from scoremon.report.html.pack import pack_html
from scoremon.report.json import to_json
from scoremon.report.markdown import diff_markdown
from scoremon.report.terminal import demo as view
from scoremon.report.terminal import diff as diff_view
from scoremon.report.terminal import monitor as monitor_view
from scoremon.spec import Spec, fingerprint

from . import develop, generate
from .develop import SPEC_V1
from .generate import Book

SPEC_V2 = Path(__file__).with_name("spec_v2.yaml")
DATABASE_NAME = "quillfield.duckdb"
SCORED = "scored_applications"
SCORED_KEYS = (generate.KEY_COLUMN, generate.MONTH_COLUMN)
# Accept at 558 and above (grades A to E): spec v1's intended use sends every decline and
# every application in grades F and G (PD 8 % and above: scores below 557.59) to an
# underwriter. Scores are whole points, so 558 is that grade edge.
DIFF_CUTOFF = 558.0
DIFF_AUDIT_FILE = "diff_v1_v2.md"
BASELINE_SPEC_FILE = "spec_v1_with_baseline.yaml"
MONITOR_JSON_FILE = "monitor_v1.json"
MONITOR_HTML_FILE = "monitor_v1.html"
DIFF_HTML_FILE = "diff_v1_v2.html"
PACK_HTML_FILE = "history_pack.html"
FIT_HTML_FILE = "fit_report.html"


@dataclass
class DemoRun:
    """What the steps share: where things are, and what each step has produced so far."""

    folder: Path
    rows: int
    spec_path: Path = SPEC_V1
    book: Book | None = None
    spec: Spec | None = None
    scored: ScoreResult | None = None
    tables: list[str] = field(default_factory=list)

    @property
    def database(self) -> Path:
        return self.folder / DATABASE_NAME


@dataclass(frozen=True)
class StepOutcome:
    """A step's result lines and, optionally, a function that shows more (a table)."""

    lines: tuple[str, ...]
    show_details: Callable[[], None] | None = None


Step = Callable[[DemoRun], StepOutcome]


def build_book(run: DemoRun) -> StepOutcome:
    with terminal.progress_bar("building the book") as progress:
        run.book = generate.build_warehouse(run.database, run.rows, progress=progress)
    run.tables += [generate.APPLICATIONS, generate.DEVELOPMENT]
    book = run.book
    first, last = book.months[0], book.months[-1]
    lines = (
        f"{book.rows:,} applications in {len(book.months)} monthly cohorts, {first:%Y-%m} to {last:%Y-%m}; "
        f"as of {generate.AS_OF} outcomes are known for the {len(book.mature_months)} oldest, not yet for the "
        f"{len(book.immature_months)} youngest. Development sample: {book.development_rows:,} rows.",
    )
    return StepOutcome(lines, lambda: view.print_planted("planted for monitoring to find:", generate.PLANTED))


def develop_model(run: DemoRun) -> StepOutcome:
    """`scoremon bin`, the reviewed bins recounted (`bin --recount`) and `scoremon fit` on the
    development table: version 1 of the model, developed as :mod:`demo_warehouse.develop` says."""
    developed = develop.develop(run.database, run.folder)
    report, proposed = developed.fit, developed.proposed.binning
    files.write_text(run.folder / FIT_HTML_FILE, fit_html(report, report.engine))
    d = report.discrimination
    first, last = proposed.months or ("?", "?")
    if not develop.same_as_committed(developed.spec_file):
        verdict = f"the same model as demo_warehouse/{SPEC_V1.name}, which the demo goes on with"
    else:
        verdict = (f"on {report.rows:,} rows it differs from demo_warehouse/{SPEC_V1.name}, fitted on the default "
                   f"{generate.DEFAULT_ROWS:,}-row book, which the demo goes on with")
    return StepOutcome((
        f"bin: {proposed.rows:,} rows, {proposed.events:,} events ({proposed.events / proposed.rows:.2%}), {first} to "
        f"{last}; {len(proposed.features)} characteristics binned ({developed.proposed_file.name}), then the "
        f"modeller's reviewed bins, demo_warehouse/{develop.REVIEWED_BINS.name}, recounted on the same rows.",
        f"fit: {len(report.characteristics)} characteristics kept ({_left_out(report)}); no penalty (λ = {report.chosen_lambda:g}); Gini {d.gini:.3f} on the development rows, "
        f"{d.cv_gini_mean:.3f} ± {d.cv_gini_sd:.3f} over {report.settings.folds} held-out folds.",
        f"wrote {developed.spec_file.name} and {FIT_HTML_FILE}: {verdict}.",
    ))


def _left_out(report: api.FitReport) -> str:
    """Who the fit left out and why, in words: policy, review, then the fit's own rules."""
    decided = {**develop.LEFT_OUT_BY_POLICY, **develop.LEFT_OUT_BY_REVIEW}
    weak = [e.name for e in report.left_out if e.name not in decided and e.iv is not None
            and e.iv < report.settings.min_iv]
    other = [e.name for e in report.left_out if e.name not in decided and e.name not in weak]
    words = [f"{_names(develop.LEFT_OUT_BY_POLICY)} out by policy", f"{_names(develop.LEFT_OUT_BY_REVIEW)} by review"]
    if weak:
        words.append(f"{_names(weak)} for IV under {report.settings.min_iv:g}")
    if other:
        words.append(f"{_names(other)} by the selection rules")
    return ", ".join(words)


def _names(names) -> str:
    names = list(names)
    return " and ".join([", ".join(names[:-1]), names[-1]]) if len(names) > 1 else (names[0] if names else "none")


def check_spec(run: DemoRun) -> StepOutcome:
    run.spec = api.load_spec(run.spec_path)
    model = run.spec.model
    return StepOutcome((
        f"{model.name} version {model.version}: {len(run.spec.features)} features, {len(run.spec.grades)} grades, "
        f"fingerprint {fingerprint(run.spec)}",
    ))


def score_book(run: DemoRun) -> StepOutcome:
    engine = api.open_engine(str(run.database))
    try:
        with terminal.progress_bar("scoring the book") as progress:
            run.scored = api.score(run.spec, engine, api.source_relation(table=generate.APPLICATIONS),
                                   keys=SCORED_KEYS, out_table=SCORED, progress=progress, replace=True)
    finally:
        engine.close()
    run.tables.append(SCORED)
    scored = run.scored
    return StepOutcome(
        (f"{scored.rows:,} rows into table {SCORED}, keyed by {' and '.join(SCORED_KEYS)}",),
        lambda: view.print_grades(scored.grade_counts),
    )


def monitor_book(run: DemoRun) -> StepOutcome:
    """Freeze the baseline from the development table into a copy of spec v1, then monitor every
    month of the book against it (the raw applications, scored on the fly, with their outcomes)."""
    engine = api.open_engine(str(run.database))
    try:
        baseline = api.measure_development(run.spec, engine, api.source_relation(table=generate.DEVELOPMENT),
                                           generate.OUTCOME_COLUMN, generate.MONTH_COLUMN,
                                           f"table {generate.DEVELOPMENT}")
        spec_path = api.write_spec_with_baseline(run.spec_path, baseline, run.folder / BASELINE_SPEC_FILE,
                                                replace=True)
        report = api.monitor(api.load_spec(spec_path), engine, generate.APPLICATIONS, generate.MONTH_COLUMN,
                             generate.AS_OF, generate.OUTCOME_COLUMN)
        dialect = engine.dialect
    finally:
        engine.close()
    figures = run.folder / MONITOR_JSON_FILE
    files.write_text(figures, to_json(report) + "\n")
    # the demo's folder is its own: a second run replaces the reports of the first
    charts = files.write_text(run.folder / MONITOR_HTML_FILE, monitor_html(report, dialect))
    run.tables += [RUNS_TABLE, METRICS_TABLE]
    mature = sum(1 for m in report.months if m.maturity == "mature")
    flagged = "; ".join(f"{words} {_month_ranges(report, family)}" for words, family in (
        ("stability", "stability_status"), ("data quality", "data_quality_status"),
        ("calibration", "calibration_status"), ("discrimination", "discrimination_status")))
    return StepOutcome((
        f"baseline of the {baseline.rows:,} development rows frozen into {spec_path}; the {len(report.months)} "
        f"months monitored against it as of {generate.AS_OF} ({mature} with mature outcomes), the run appended "
        f"to the history tables. Every figure: {figures}; with charts: {charts}",
        f"months flagged (watch or alert): {flagged}.",
    ), lambda: monitor_view.print_monitor_report(report, indent=view.DETAIL_INDENT))


def _month_ranges(report, family: str) -> str:
    """The months whose ``family`` status is watch or alert, as runs: "2025-08…2025-11, 2026-07"."""
    runs: list[list[str]] = []
    previous_flagged = False
    for month in report.months:
        flagged = getattr(month, family) in ("watch", "alert")
        if flagged and previous_flagged:
            runs[-1][1] = month.month
        elif flagged:
            runs.append([month.month, month.month])
        previous_flagged = flagged
    return ", ".join(first if first == last else f"{first}…{last}" for first, last in runs) or "none"


def diff_versions(run: DemoRun) -> StepOutcome:
    """Version 1 against version 2: the changes, then their impact on the whole book."""
    new = api.load_spec(SPEC_V2)
    diff = api.diff_models(run.spec, new, str(run.spec_path), str(SPEC_V2))
    engine = api.open_engine(str(run.database))
    try:
        with terminal.progress_bar("scoring the book under both versions") as progress:
            impact = api.measure_impact(
                run.spec, new, engine, api.source_relation(table=generate.APPLICATIONS),
                f"table {generate.APPLICATIONS} in {run.database}", generate.OUTCOME_COLUMN, DIFF_CUTOFF,
                progress=progress)
        dialect = engine.dialect
    finally:
        engine.close()
    report = api.DiffReport(diff, impact, datetime.now(timezone.utc).isoformat(timespec="seconds"))
    audit = run.folder / DIFF_AUDIT_FILE
    files.write_text(audit, diff_markdown(report) + "\n")
    charts = files.write_text(run.folder / DIFF_HTML_FILE, diff_html(report, run.spec, new, dialect))
    cells = {cell.name: cell for cell in impact.swap_set.cells}
    return StepOutcome((
        f"version {diff.old.version} → {diff.new.version}: {len(diff.changes)} changes, class "
        f"{diff.effect.words}; both versions scored the {impact.rows:,} applications in one query. At the "
        f"cut-off {DIFF_CUTOFF:g}, {cells['swap_in'].rows:,} applications swap in and {cells['swap_out'].rows:,} "
        f"swap out. Audit file: {audit}; with charts: {charts}",
    ), lambda: diff_view.print_diff_details(report, indent=view.DETAIL_INDENT, brief=True))


def pack_history(run: DemoRun) -> StepOutcome:
    """Read the monitoring history back from the warehouse and draw the history pack."""
    engine = api.open_engine(str(run.database))
    try:
        history = api.read_history(engine, run.spec.model.name)
        dialect = engine.dialect
    finally:
        engine.close()
    pack = files.write_text(run.folder / PACK_HTML_FILE, pack_html(history, dialect))
    return StepOutcome((f"{len(history.runs)} monitoring run{'s' if len(history.runs) != 1 else ''} of "
                        f"{history.model_name} read back from the history tables into {pack}",))


# The demo, in order: the development step first, on the book just built; the steps after it
# work with the committed version 1 (run.spec_path) and read run.book, run.spec and the
# scored table, and may add their tables to run.tables.
STEPS: tuple[tuple[str, Step], ...] = (
    ("build the book", build_book),
    ("develop version 1: bin, review, fit", develop_model),
    ("check the spec", check_spec),
    ("score the book", score_book),
    ("monitor the book month by month", monitor_book),
    ("diff version 1 against version 2", diff_versions),
    ("pack the monitoring history", pack_history),
)


def demo_folder(requested: str | None) -> Path:
    """The folder to build in: the one asked for (created if missing) or a new temporary one."""
    if requested is None:
        return Path(tempfile.mkdtemp(prefix="scoremon-demo-"))
    folder = Path(requested)
    if folder.exists() and not folder.is_dir():
        raise InputError(f"{folder} is a file, not a folder; give a folder for the demo warehouse")
    folder.mkdir(parents=True, exist_ok=True)
    return folder


def run_demo(args) -> int:
    """Run :data:`STEPS` with ``args.rows`` applications in ``args.folder``; return the exit code.

    Raises :class:`~scoremon.errors.ScoremonError` subclasses for anything the user can fix
    (a row count out of range, a folder that is a file); the CLI prints them.
    """
    rows = generate.DEFAULT_ROWS if args.rows is None else args.rows
    if not generate.MIN_ROWS <= rows <= generate.MAX_ROWS:
        raise InputError(f"--rows {rows:,} is out of range; give {generate.MIN_ROWS:,} to {generate.MAX_ROWS:,}")
    run = DemoRun(folder=demo_folder(args.folder), rows=rows)
    view.print_title(f"{generate.LENDER}, an invented consumer lender")
    timings = []
    for number, (name, step) in enumerate(STEPS, start=1):
        started = time.perf_counter()
        outcome = step(run)
        seconds = time.perf_counter() - started
        timings.append((name.split()[0], seconds))
        view.print_step(number, name, seconds, outcome.lines)
        if outcome.show_details:
            outcome.show_details()
    view.print_wrap_up(
        [("warehouse", str(run.database)), ("tables", ", ".join(run.tables)), ("spec", str(run.spec_path))],
        timings,
    )
    return 0
