"""``scoremon bench --engines``: scoring on each engine against that engine's own bare scan.

The rows are the benchmark's synthetic workload (:mod:`.workload`), drawn once inside DuckDB and
loaded into every other engine through its own :meth:`~scoremon.engines.Engine.write_rows`, so
each engine scores the same values. Per engine two comparisons, timed side by side in turns
(:mod:`.timing`):

* compiled scoring (rows, mean score and mean PD per grade) ÷ a bare scan of the same columns;
* the same with the three reasons counted too (reasons are the costly part: on PostgreSQL an
  inlined CTE chain copied the scoring expressions into the plan many times).

On PostgreSQL the run also counts the CASE expressions in ``EXPLAIN VERBOSE`` of the scoring
query against those in its SQL text: about 1 means the plan computes each expression once
(each scoring step is fenced with ``OFFSET 0``, see :mod:`scoremon.dialects`); a large number means
the plan copied them.
"""
from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Sequence

from sqlglot import exp

from ..compiler import compile_model, output_columns
from ..engines import DuckDBEngine, Engine, Statement, open_engine
from ..engines.protocol import INTEGER, NUMERIC, TEXT
from ..errors import InputError
from ..trees import alias, column, table_path, text
from . import queries, workload
from .run import BenchLine, BenchObserver, BenchReport, SilentObserver
from .timing import time_pair

TABLE = "scoremon_bench_input"
# the generated columns' kinds → the column kinds write_rows creates
_CREATED = {INTEGER: "BIGINT", NUMERIC: "DOUBLE", TEXT: "VARCHAR"}


@dataclass(frozen=True)
class EngineBenchSettings:
    """Engine URLs to measure besides DuckDB (always measured), rows, timed rounds, DuckDB threads."""

    urls: tuple[str, ...] = ()
    rows: int = 1_000_000
    repeat: int = 3
    threads: int | None = None


def run_engine_bench(settings: EngineBenchSettings, observer: BenchObserver | None = None) -> BenchReport:
    """Measure scoring ÷ bare scan on DuckDB and on each engine in ``settings.urls``.

    >>> report = run_engine_bench(EngineBenchSettings(rows=500, repeat=1))
    >>> [line.key for line in report.lines]
    ['duckdb', 'duckdb+']
    """
    if settings.rows < 1 or settings.repeat < 1:
        raise InputError("rows and repeat must be at least 1")
    observer = observer or SilentObserver()
    spec = workload.bench_spec()
    lines: list[BenchLine] = []
    notes: list[str] = []
    with DuckDBEngine(":memory:", threads=settings.threads) as duckdb:
        with observer.stage(f"generating {settings.rows:,} rows") as progress:
            duckdb.write_table(workload.generate_rows(settings.rows), [TABLE], "generating the bench rows", progress)
        setting = exp.Anonymous(this="current_setting", expressions=[text("threads")])
        threads = int(duckdb.query(exp.select(alias(setting, "threads")), "reading the thread count")[0].threads)
        lines += _measure(duckdb, spec, settings.repeat, observer, notes)
        if settings.urls:
            columns = _columns(duckdb)
            with observer.stage("reading the rows out of DuckDB"):
                found = duckdb.query(_select_all(columns), "reading the bench rows")
                rows = [tuple(row[name] for name, _ in columns) for row in found]
            for url in settings.urls:
                with open_engine(url) as engine:
                    with observer.stage(f"loading {len(rows):,} rows into {engine.dialect}"):
                        engine.write_rows([TABLE], columns, rows, "loading the bench rows")
                    try:
                        lines += _measure(engine, spec, settings.repeat, observer, notes)
                    finally:
                        engine.execute(exp.Drop(tables=[table_path([TABLE])], kind="TABLE", exists=True),
                                       "dropping the bench rows")
    return BenchReport(settings.rows, threads, settings.repeat, tuple(lines), tuple(notes))


def _columns(engine: Engine) -> list[tuple[str, str]]:
    names = workload.input_columns()
    query = exp.select(*[column(n) for n in names]).from_(table_path([TABLE]))
    kinds = {column.name: column.kind for column in engine.describe(query, "reading the bench columns")}
    return [(name, _CREATED[kinds[name]]) for name in names]


def _select_all(columns: Sequence[tuple[str, str]]) -> exp.Select:
    return exp.select(*[column(name) for name, _ in columns]).from_(table_path([TABLE]))


def _measure(engine: Engine, spec, repeat: int, observer: BenchObserver, notes: list[str]) -> list[BenchLine]:
    dialect = engine.dialect
    relation = table_path([TABLE])
    described = engine.describe(exp.select(exp.Star()).from_(relation), "reading the bench columns")
    floats = [column.name for column in described if column.can_hold_nan]
    scoring = compile_model(spec, relation, (), floats)
    numeric = [name for name in workload.input_columns() if name not in workload.text_columns()]
    # rendered once, before the timing starts: the lines time queries, not rendering
    bare = engine.prepare(queries.bare_scan(TABLE, numeric, workload.text_columns()))
    compiled = engine.prepare(queries.grade_summary(scoring))
    reasons = engine.prepare(queries.reason_summary(scoring, output_columns(spec).reasons))
    run = engine.query
    measured = []
    for key, title, sql in ((dialect, f"{dialect}: compiled scoring ÷ bare scan", compiled),
                            (f"{dialect}+", f"{dialect}: scoring with 3 reasons ÷ bare scan", reasons)):
        with observer.stage(f"({key}) {title}"):
            timing = time_pair(lambda: run(sql, "compiled scoring"), lambda: run(bare, "bare scan"), repeat)
        line = BenchLine(key, title, "scoring", timing.first_seconds, "bare scan", timing.second_seconds,
                         timing.ratio, "s", None, repeat)
        observer.measured(line)
        measured.append(line)
    if dialect == "postgres":
        notes.append(_plan_note(engine, reasons))
    return measured


def _plan_note(engine: Engine, query: Statement) -> str:
    """How many CASE expressions PostgreSQL's plan holds for each one in the SQL."""
    plan = engine.explain(query, "explaining the scoring query")
    in_plan, in_sql = len(re.findall(r"\bCASE\b", plan)), len(re.findall(r"\bCASE\b", query.sql))
    return (f"postgres plan: {in_plan:,} CASE expressions in EXPLAIN VERBOSE for {in_sql:,} in the SQL "
            f"(ratio {in_plan / max(in_sql, 1):.2f}; about 1 means no scoring expression is copied)")
