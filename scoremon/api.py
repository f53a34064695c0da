"""The library's entry points: load, check, compile, score, diff, baseline and monitor.

The CLI is a thin layer on these.

>>> from scoremon import api
>>> spec = api.load_spec("tests/fixtures/small.yaml")
>>> "CASE" in api.compile_sql(spec, table="applications")
True
"""
from __future__ import annotations

import math
import time
from dataclasses import dataclass, field
from dataclasses import replace as replace_field
from datetime import date
from pathlib import Path
from typing import Sequence

from sqlglot import exp

from .compiler import compile_model, output_columns
from .develop.binning import BinReport, bin_table, recount_table
from .develop.binning_file import Binning, Settings, read_binning, write_binning
from .develop.fitting import fit_binning, penalty_alpha
from .develop.records import FitReport, FitSettings
from .develop.spec_writer import Naming, build_spec, grades_from_deciles, grades_from_pd, parse_grades, write_spec
from .dialects import render_sql
from .diff import DiffReport, Impact, ModelDiff, diff_models, impact_query, summarise_impact
from .diff.impact import check_outcome_type
from .engines import Engine, Progress, open_engine
from .errors import InputError
from .files import write_whole
from .monitor import (
    DEFAULT_THRESHOLDS,
    Month,
    MonitorReport,
    Thresholds,
    load_thresholds,
    measure_development,
    monitor_table,
    parse_month,
    spec_text_with_baseline,
)

from .spec import fingerprint, load_spec, parse_spec
from .sources import check_columns, describe_source, float_columns, source_relation, table_name
from .spec.model import Baseline, Grade, Scaling, Spec
from .trees import alias, column, table_path

__all__ = ["BinReport", "Binning", "DiffReport", "Impact", "ModelDiff", "MonitorReport", "ScoreResult", "Settings",
           "Thresholds", "bin_development", "compile_sql", "describe_source", "diff_models", "load_spec",
           "load_thresholds", "measure_development", "measure_impact", "monitor", "open_engine", "parse_month",
           "read_binning", "recount_binning", "score", "source_relation", "write_binning", "write_spec_with_baseline"]
__all__ = sorted(__all__ + ["FitReport", "FitSettings", "Naming", "fit_development", "penalty_alpha"])

def compile_sql(spec: Spec, dialect: str = "duckdb", table: str = "input", keys: Sequence[str] = (),
                float_columns: Sequence[str] | None = None, pretty: bool = True) -> str:
    """The scoring SQL for ``spec`` reading ``table``, as text for ``dialect``."""
    tree = compile_model(spec, source_relation(table=table), keys, float_columns)
    return render_sql(tree, dialect, pretty=pretty)


@dataclass(frozen=True)
class ScoreResult:
    """What a scoring run did: rows written, where, how long, and the count per grade."""

    rows: int
    seconds: float
    target: str
    model_name: str
    model_version: str
    model_fingerprint: str
    grade_counts: dict[str, int] = field(default_factory=dict)


def score(
    spec: Spec,
    engine: Engine,
    source: exp.Expression,
    keys: Sequence[str] = (),
    out_table: str | None = None,
    out_file: str | Path | None = None,
    progress: Progress | None = None,
) -> ScoreResult:
    """Score every row of ``source`` inside ``engine`` and write the result atomically.

    Exactly one of ``out_table`` (a table in the engine's database, replaced whole) and
    ``out_file`` (a Parquet file, replaced whole) is given. The input's columns are checked
    against the spec before any work starts; :class:`InputError` lists every misfit.
    """
    if (out_table is None) == (out_file is None):
        raise InputError("give either an output table or an output file, not both and not neither")
    if not isinstance(source, exp.Table) and not engine.reads_files:
        raise InputError(f"reading a Parquet or CSV file needs the DuckDB engine, not {engine.dialect}; "
                         "load the file into a table in that engine and score the table")
    columns = describe_source(engine, source)
    problems = check_columns(spec, columns, keys)
    if problems:
        raise InputError("the input does not fit the spec", problems)
    output_columns(spec, keys)  # a key colliding with an output column is an input error, found now
    scoring = compile_model(spec, source, keys, float_columns(columns))
    started = time.perf_counter()
    if out_table is not None:
        parts = table_name(out_table)
        engine.write_table(scoring, parts, "writing the scored table", progress)
        written = table_path(parts)
        target = out_table
    else:
        if not engine.writes_parquet:
            raise InputError("writing a Parquet file needs the DuckDB engine; write a table instead")
        engine.write_parquet(scoring, out_file, "writing the scored Parquet file", progress)
        written = source_relation(file=out_file)
        target = str(out_file)
    seconds = time.perf_counter() - started
    counts = grade_counts(engine, written)
    return ScoreResult(sum(counts.values()), seconds, target, spec.model.name, spec.model.version,
                       fingerprint(spec), counts)


def grade_counts(engine: Engine, scored: exp.Expression) -> dict[str, int]:
    """Rows per grade in a scored relation, ordered by grade name."""
    grade = column("grade")
    query = (exp.select(grade, alias(exp.Count(this=exp.Star()), "rows")).from_(scored.copy())
             .group_by(grade.copy()).order_by(grade.copy()))
    return {str(row.grade): int(row.rows) for row in engine.query(query, "counting rows per grade")}


def measure_impact(
    old: Spec,
    new: Spec,
    engine: Engine,
    source: exp.Expression,
    population: str = "",
    outcome: str | None = None,
    cutoff: float | None = None,
    new_cutoff: float | None = None,
    progress: Progress | None = None,
) -> Impact:
    """Score ``source`` under both versions in one query inside ``engine`` and summarise the move.

    ``outcome`` names an optional 0/1 column (NULL: not yet known); ``cutoff`` is the score at
    or above which a row is accepted (``new_cutoff`` for the new version, default the same).
    Only aggregates leave the engine. Raises :class:`InputError` listing every column either
    version needs and the input lacks, and for an empty population or a bad outcome column.

    >>> engine = open_engine()
    >>> spec = load_spec("tests/fixtures/small.yaml")
    >>> from scoremon.trees import alias, number, text
    >>> engine.write_table(exp.select(alias(number(30), "age"), alias(text("N1"), "region_code"),
    ...                               alias(number(0.5), "utilisation")), ["book"], "demo")
    >>> measure_impact(spec, spec, engine, source_relation(table="book")).score_change.rows_unchanged
    1
    """
    if new_cutoff is not None and cutoff is None:
        raise InputError("a cut-off for the new version needs one for the old version too; give --cutoff")
    columns = describe_source(engine, source)
    problems = []
    for side, spec in (("old", old), ("new", new)):
        problems += [f"{side} version: {p}" for p in check_columns(spec, columns, ())]
    outcome_is_boolean = False
    if outcome is not None:
        try:
            outcome_is_boolean = check_outcome_type(outcome, columns)
        except InputError as error:
            problems.append(str(error))
    if problems:
        raise InputError("the input does not fit the specs", problems)
    cutoffs = None if cutoff is None else (float(cutoff), float(cutoff if new_cutoff is None else new_cutoff))
    query = impact_query(old, new, source, float_columns(columns), outcome, outcome_is_boolean, cutoffs)
    rows = engine.query(query, "scoring the population under both versions", progress)
    return summarise_impact(rows, old, new, population, outcome, cutoffs)



# ---------------------------------------------------------------- baseline and monitoring

def write_spec_with_baseline(spec_path: str | Path, baseline: Baseline, out_path: str | Path) -> Path:
    """Write a copy of the spec at ``spec_path`` with ``baseline`` as its baseline section to ``out_path``.

    Every other line is kept as written. The file appears whole or not at all. Raises
    :class:`InputError` when ``out_path`` is the spec itself (a spec is never overwritten in
    place) or its folder does not exist.
    """
    spec_path, out_path = Path(spec_path), Path(out_path)
    if out_path.exists() and out_path.resolve() == spec_path.resolve():
        raise InputError(f"--out {out_path} is the spec itself; a spec is never overwritten in place, "
                         "give a new file name (e.g. one with the version in it)")
    if not out_path.parent.exists():
        raise InputError(f"{out_path}: folder {out_path.parent} does not exist; create it or choose another path")
    original = spec_path.read_text(encoding="utf-8")
    text = spec_text_with_baseline(original, baseline)
    written = parse_spec(text, file=str(out_path))
    if fingerprint(written) != fingerprint(parse_spec(original, file=str(spec_path))):
        raise RuntimeError("writing the baseline changed the model's fingerprint")  # a bug, never an input error
    return write_whole(out_path, text)


def monitor(
    spec: Spec,
    engine: Engine,
    table: str,
    month_column: str,
    as_of: date,
    outcome: str | None = None,
    thresholds: Thresholds = DEFAULT_THRESHOLDS,
    baseline_table: str | None = None,
    baseline_months: tuple[Month, Month] | None = None,
    record_history: bool = True,
) -> MonitorReport:
    """Monitor ``table`` month by month against a baseline and append the run to the history;
    :func:`scoremon.monitor.monitor_table` owns the run's sequence and says what each argument does."""
    return monitor_table(spec, engine, table, month_column, as_of, outcome, thresholds, baseline_table,
                         baseline_months, record_history)


def bin_development(engine: Engine, table: str, outcome: str, key: str | None = None, month_column: str | None = None,
                    features: Sequence[str] | None = None, exclude: Sequence[str] = (),
                    settings: Settings | None = None, progress: Progress | None = None) -> BinReport:
    """Fine and coarse classes of every characteristic of a development table (``scoremon bin``);
    see :mod:`scoremon.develop.binning`. Write the result with :func:`write_binning`."""
    return bin_table(engine, source_relation(table=table), table, outcome, key, month_column, features, exclude,
                     settings or Settings(), progress)


def recount_binning(engine: Engine, binning: Binning, table: str | None = None, outcome: str | None = None,
                    key: str | None = None, month_column: str | None = None,
                    progress: Progress | None = None) -> BinReport:
    """The bins of a (hand-edited) binning file counted again exactly as written (``scoremon bin
    --recount``); table, outcome, key and month default to the file's."""
    table = table or binning.table
    return recount_table(engine, source_relation(table=table), table, binning, outcome, key, month_column, progress)


def fit_development(engine: Engine, binning: Binning, settings: FitSettings, naming: Naming, out: str | Path,
                    table: str | None = None, outcome: str | None = None, month_column: str | None = None,
                    replace: bool = False) -> FitReport:
    """Fit a model on the characteristics of ``binning`` and write it as a new spec (``scoremon fit``).

    The fit (:mod:`scoremon.develop.fitting`), then the spec with the baseline measured on the
    same table in the same run, and the grades (by score deciles or PD bands) — see
    :mod:`scoremon.develop.spec_writer`. Raises :class:`InputError` before any work when ``out``
    exists and ``replace`` is not given.
    """
    out = Path(out)
    if out.exists() and not replace:
        raise InputError(f"--out {out} exists; give a new file name, or --replace to write over it")
    kind, values = parse_grades(settings.grades)
    table = table or binning.table
    source = source_relation(table=table)
    fitted = fit_binning(engine, source, table, binning, settings, outcome, month_column)
    scaling = Scaling(base_score=settings.base_score, base_odds=settings.base_odds, pdo=settings.pdo,
                      rounding=settings.rounding)
    whole_line = [Grade(name="all", lower=-math.inf, upper=math.inf)]
    grades = grades_from_pd(values, scaling) if kind == "pd" else whole_line
    baseline = measure_development(build_spec(fitted, naming, scaling, grades), engine, source,
                                   outcome or binning.outcome, month_column or binning.month_column, table)
    if kind == "quantiles":
        grades = grades_from_deciles(baseline, int(values[0]))
    spec = build_spec(fitted, naming, scaling, grades, baseline)
    written = write_spec(spec, out, replace, binning.file or "")
    return replace_field(fitted.report, spec_file=str(written), spec_fingerprint=fingerprint(spec))
