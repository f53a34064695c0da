"""The library's entry points: load, check, compile, score, diff, baseline and monitor.

The CLI is a thin layer on these.

>>> from scoremon import api
>>> spec = api.load_spec("tests/fixtures/small.yaml")
>>> "CASE" in api.compile_sql(spec, table="applications")
True
"""
from __future__ import annotations

import re
import time
from difflib import get_close_matches
from dataclasses import dataclass, field
from datetime import date
from pathlib import Path
from typing import Sequence

from sqlglot import exp

from . import files, outputs
from .compiler import compile_model, identifier, output_columns
from .dialects import comment_line, render_sql
from .diff import DiffReport, Impact, ModelDiff, diff_models, impact_query, summarise_impact
from .diff.impact import check_outcome_type
from .engines import DuckDBEngine, Engine, Progress, open_engine
from .errors import EngineError, InputError
from .exact import exact_columns
from .version import VERSION
from .monitor import (
    DEFAULT_THRESHOLDS,
    Month,
    MonitoredRows,
    MonitorReport,
    Thresholds,
    load_thresholds,
    measure_baseline,
    measure_book,
    monitored_rows,
    parse_month,
    read_months,
    spec_text_with_baseline,
    write_history,
)
from .monitor.baseline import small_baseline_warning
from .monitor.measure import monitored_relation
from .monitor.queries import fingerprints_pass, is_scored, months_in

from .spec import fingerprint, load_spec, parse_spec
from .spec.checks import suggest
from .spec.model import Baseline, CategoricalFeature, Spec

__all__ = ["DiffReport", "Impact", "ModelDiff", "MonitorReport", "ScoreResult", "Thresholds", "compile_sql",
           "describe_source", "diff_models", "load_spec", "load_thresholds", "measure_development", "measure_impact",
           "monitor", "open_engine", "parse_month", "score", "source_relation", "write_spec_with_baseline"]

# Column types as each engine's describe() spells them: DuckDB (DOUBLE, VARCHAR, …), PostgreSQL
# (FLOAT8, INT4, NUMERIC, VARCHAR, BPCHAR, …) and Spark (DOUBLE, INT, STRING, DECIMAL(p,s), …).
NUMBER_TYPE = re.compile(r"^(TINYINT|SMALLINT|INTEGER|BIGINT|HUGEINT|UTINYINT|USMALLINT|UINTEGER|UBIGINT|UHUGEINT|"
                         r"FLOAT\d?|DOUBLE|REAL|DECIMAL(\(.*\))?|NUMERIC(\(.*\))?|INT\d?|SMALLINT|DOUBLE PRECISION)$", re.I)
INTEGER_TYPE = re.compile(r"^(TINYINT|SMALLINT|INTEGER|BIGINT|HUGEINT|UTINYINT|USMALLINT|UINTEGER|UBIGINT|UHUGEINT|INT\d?)$", re.I)
# Types that can hold NaN or ±infinity: the floats, and PostgreSQL's NUMERIC (NaN, and ±Infinity
# since PostgreSQL 14); DuckDB's and Spark's DECIMAL cannot.
FLOAT_TYPE = re.compile(r"^(FLOAT|DOUBLE|REAL|DOUBLE PRECISION|FLOAT\d|NUMERIC(\(.*\))?)$", re.I)
# Text-like types, categorical features' columns: DuckDB's ENUM, PostgreSQL's CITEXT and NAME too.
TEXT_TYPE = re.compile(r"^(VARCHAR|TEXT|STRING|CHAR|BPCHAR|CHARACTER|CHARACTER VARYING|NVARCHAR|CITEXT|NAME|ENUM)"
                       r"(\(.*\))?$", re.I)


def table_name(name: str) -> list[str]:
    """``"schema.table"`` → ``["schema", "table"]``; each part is quoted when rendered."""
    parts = name.split(".")
    if not 1 <= len(parts) <= 2 or not all(parts):
        raise InputError(f"table name {name!r} is not 'table' or 'schema.table'")
    return parts


def source_relation(table: str | None = None, file: str | Path | None = None) -> exp.Expression:
    """What to read rows from: a table (``schema.table`` allowed) or a Parquet/CSV file."""
    if (table is None) == (file is None):
        raise InputError("give either a table or a file to read, not both and not neither")
    if table is not None:
        parts = table_name(table)
        return exp.Table(this=identifier(parts[-1]), db=identifier(parts[0]) if len(parts) == 2 else None)
    path = Path(file)
    if not path.exists():
        raise InputError(f"{path}: no such file; check the path")
    suffix = path.suffix.lower()
    reader = {".parquet": "read_parquet", ".csv": "read_csv", ".tsv": "read_csv"}.get(suffix)
    if reader is None:
        raise InputError(f"{path}: cannot read {suffix or 'files without an ending'}; give a .parquet or .csv file")
    return exp.Anonymous(this=reader, expressions=[exp.Literal.string(str(path))])


def describe_source(engine: Engine, source: exp.Expression, wanted: Sequence[str] = ()) -> dict[str, str]:
    """Column name → SQL type of a source.

    Where the engine matches column names ignoring case (DuckDB; Spark unless
    ``spark.sql.caseSensitive`` is on), a ``wanted`` name that the source spells in another
    case is listed under the wanted spelling, which is how the compiled SQL names it.
    """
    query = exp.select(exp.Star()).from_(source.copy())
    columns = dict(engine.describe(render_sql(query, engine.dialect, pretty=False), "reading the input's columns"))
    if getattr(engine, "ignores_column_case", False):
        for name in wanted:
            if name in columns:
                continue
            matches = [actual for actual in columns if actual.casefold() == name.casefold()]
            if len(matches) == 1:
                columns[name] = columns.pop(matches[0])
    return columns


def spec_columns(spec: Spec) -> list[str]:
    """The input columns a spec reads, in feature order."""
    return list(dict.fromkeys(feature.column or feature.name for feature in spec.features))


def check_columns(spec: Spec, columns: dict[str, str], keys: Sequence[str]) -> list[str]:
    """Every way the input's columns do not fit the spec, one message each (empty: all fit)."""
    problems = []
    for key in keys:
        if key not in columns:
            problems.append(f"key column {key!r} is not in the input{suggest(key, list(columns))}")
    for feature in spec.features:
        name = feature.column or feature.name
        kind = columns.get(name)
        if kind is None:
            problems.append(_missing_column(feature, list(columns)))
            continue
        if isinstance(feature, CategoricalFeature):
            values = [v for g in feature.groups for v in g.values] + list(feature.other.values)
            wants_text = any(isinstance(v, str) for v in values)
            if wants_text and not TEXT_TYPE.match(kind):
                problems.append(f"column {name!r} (feature {feature.name!r}) is {kind} but the spec lists text "
                                "categories; convert the column to text or list the categories as whole numbers")
            elif not wants_text and not INTEGER_TYPE.match(kind):
                problems.append(f"column {name!r} (feature {feature.name!r}) is {kind} but the spec lists whole-number "
                                "categories; quote the categories in the spec to compare as text")
        elif not NUMBER_TYPE.match(kind):
            problems.append(f"column {name!r} (feature {feature.name!r}) is {kind}, not a number; "
                            f"a {feature.type} feature needs a numeric column")
    return problems


def _missing_column(feature, columns: Sequence[str]) -> str:
    """A feature's column is not in the input: the nearest input column, and the spec key to edit."""
    name = feature.column or feature.name
    where = "its `column:` in the spec" if feature.column else "read by its name; give it `column:` in the spec"
    problem = f"column {name!r} (feature {feature.name!r}, {where}) is not in the input"
    nearest = get_close_matches(name.casefold(), {c.casefold(): c for c in columns}, n=1, cutoff=0.0)
    if not nearest:
        return problem + "; it has no columns"
    actual = {c.casefold(): c for c in columns}[nearest[0]]
    return f"{problem}; the nearest is {actual!r}: rename that column or set `column: {actual}` in the spec"


def compile_sql(spec: Spec, dialect: str = "duckdb", table: str = "input", keys: Sequence[str] = (),
                float_columns: Sequence[str] | None = None, pretty: bool = True) -> str:
    """The scoring SQL for ``spec`` reading ``table``, as text for ``dialect``, beginning with a
    comment naming the model, its version and fingerprint, and scoremon's version."""
    tree = compile_model(spec, source_relation(table=table), keys, float_columns)
    stamp = comment_line(f"{spec.model.name} version {spec.model.version}, fingerprint {fingerprint(spec)}; "
                         f"compiled by scoremon {VERSION}")
    return stamp + "\n" + render_sql(tree, dialect, pretty=pretty)


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
    pd_source: str = ""  # which PD the rows report, in words (the spec's scaling.pd_from)


def score(
    spec: Spec,
    engine: Engine,
    source: exp.Expression,
    keys: Sequence[str] = (),
    out_table: str | None = None,
    out_file: str | Path | None = None,
    progress: Progress | None = None,
    reason_text: bool = False,
    replace: bool = False,
    allow_empty: bool = False,
) -> ScoreResult:
    """Score every row of ``source`` inside ``engine`` and write the result atomically.

    Exactly one of ``out_table`` (a table in the engine's database, replaced whole) and
    ``out_file`` (a ``.parquet`` or ``.csv`` file, replaced whole) is given. Before any work
    starts, :class:`InputError` refuses: an output that exists unless ``replace``, an output
    that is the input or a monitoring history table (:mod:`scoremon.outputs`), an input
    without rows unless ``allow_empty``, and input columns that do not fit the spec (every
    misfit listed).
    ``reason_text`` puts each reason's statement text beside its code (``reason_k_text``).
    """
    if (out_table is None) == (out_file is None):
        raise InputError("give either an output table or an output file, not both and not neither")
    if not isinstance(source, exp.Table) and not isinstance(engine, DuckDBEngine):
        raise InputError(f"reading a Parquet or CSV file needs the DuckDB engine, not {engine.dialect}; "
                         "load the file into a table in that engine and score the table")
    if out_file is not None:
        if not isinstance(engine, DuckDBEngine):
            raise InputError("writing a Parquet or CSV file needs the DuckDB engine; write a table instead")
        file_format = outputs.file_format(out_file)
        outputs.refuse_file(out_file, "--out", [("the input file", _source_file(source))])
        files.check_output(out_file, "--out", replace)
    else:
        input_table = None
        if isinstance(source, exp.Table):
            input_table = ".".join(part.name for part in (source.args.get("db"), source.this) if part)
        outputs.refuse_table(out_table, "--out-table", engine.dialect, input_table)
        if not replace and _table_exists(engine, out_table):
            raise InputError(f"--out-table {out_table} exists; give --replace to replace it, or choose another name")
    columns = describe_source(engine, source, spec_columns(spec) + list(keys))
    problems = check_columns(spec, columns, keys)
    if problems:
        raise InputError("the input does not fit the spec:\n" + "\n".join(f"  - {p}" for p in problems))
    output_columns(spec, keys, reason_text)  # a key colliding with an output column is an input error, found now
    if not allow_empty and not engine.fetch(render_sql(exp.select(exp.Literal.number(1)).from_(source.copy()).limit(1),
                                                       engine.dialect, pretty=False), "looking for a first input row"):
        raise InputError("the input holds no rows; scoring it would write an empty output (replacing any "
                         "previous one); give --allow-empty to write it anyway")
    floats = [name for name, kind in columns.items() if FLOAT_TYPE.match(kind)]
    scoring = compile_model(spec, source, keys, floats, exact_columns(columns), reason_text)
    started = time.perf_counter()
    if out_table is not None:
        sql = render_sql(scoring, engine.dialect, pretty=False)
        parts = table_name(out_table)
        engine.write_table(sql, parts, "writing the scored table", progress)
        written = exp.Table(this=identifier(parts[-1]), db=identifier(parts[0]) if len(parts) == 2 else None)
        target = out_table
    else:
        engine.write_file(render_sql(scoring, engine.dialect, pretty=False, for_parquet=file_format == "parquet"),
                          out_file, f"writing the scored {'Parquet' if file_format == 'parquet' else 'CSV'} file",
                          progress, file_format)
        written = source_relation(file=out_file)
        target = str(out_file)
    seconds = time.perf_counter() - started
    counts = grade_counts(engine, written)
    return ScoreResult(sum(counts.values()), seconds, target, spec.model.name, spec.model.version,
                       fingerprint(spec), counts, spec.scaling.reported_pd_words)


def _source_file(source: exp.Expression) -> str | None:
    """The file a :func:`source_relation` over a file reads, or None for a table."""
    if isinstance(source, exp.Anonymous) and source.expressions and isinstance(source.expressions[0], exp.Literal):
        return source.expressions[0].this
    return None


def _table_exists(engine: Engine, name: str) -> bool:
    # describing a missing table is the one portable question every engine answers (with an error)
    try:
        describe_source(engine, source_relation(table=name))
    except EngineError:
        return False
    return True


def grade_counts(engine: Engine, scored: exp.Expression) -> dict[str, int]:
    """Rows per grade in a scored relation, ordered by grade name."""
    grade = exp.column(identifier("grade"))
    query = exp.select(grade, exp.Count(this=exp.Star())).from_(scored.copy()).group_by(grade).order_by(grade)
    rows = engine.fetch(render_sql(query, engine.dialect, pretty=False), "counting rows per grade")
    return {str(g): int(n) for g, n in rows}


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
    >>> engine.execute("CREATE TABLE book AS SELECT 30.0 AS age, 'N1' AS region_code, 0.5 AS utilisation", "demo")
    >>> measure_impact(spec, spec, engine, source_relation(table="book")).score_change.rows_unchanged
    1
    """
    if new_cutoff is not None and cutoff is None:
        raise InputError("a cut-off for the new version needs one for the old version too; give --cutoff")
    columns = describe_source(engine, source, spec_columns(old) + spec_columns(new) + ([outcome] if outcome else []))
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
        raise InputError("the input does not fit the specs:\n" + "\n".join(f"  - {p}" for p in problems))
    cutoffs = None if cutoff is None else (float(cutoff), float(cutoff if new_cutoff is None else new_cutoff))
    floats = [name for name, kind in columns.items() if FLOAT_TYPE.match(kind)]
    query = impact_query(old, new, source, floats, outcome, outcome_is_boolean, cutoffs, exact_columns(columns))
    rows = engine.fetch(render_sql(query.tree, engine.dialect, pretty=False),
                        "scoring the population under both versions", progress)
    return summarise_impact(query.columns, rows, old, new, population, outcome, cutoffs)



# ---------------------------------------------------------------- baseline and monitoring

def _monitored(spec: Spec, engine: Engine, source: exp.Expression, month_column: str | None,
               outcome: str | None) -> tuple[MonitoredRows, list[str]]:
    """The monitored rows over ``source`` (scored already, or scored on the fly), and notes."""
    columns = describe_source(engine, source, spec_columns(spec) + [name for name in (month_column, outcome) if name])
    notes = []
    if is_scored(spec, columns):
        if "model_fingerprint" in columns:
            found = engine.fetch(render_sql(fingerprints_pass(source), engine.dialect, pretty=False),
                                 "reading the scored table's model fingerprints")
            expected = fingerprint(spec)
            others = sorted(str(fp) for fp, _ in found if fp != expected)
            if others:
                raise InputError(f"the table was scored by a model with fingerprint {', '.join(others)}, not by "
                                 f"{spec.model.name} version {spec.model.version} ({expected}); score it with this "
                                 "spec or monitor it with the spec that scored it")
        else:
            notes.append("the scored table has no model_fingerprint column; it is taken to be scored by this spec")
    else:
        problems = check_columns(spec, columns, ())
        if problems:
            raise InputError("the table is neither scored by this spec nor has the columns to score it:\n"
                             + "\n".join(f"  - {p}" for p in problems))
        notes.append("the table is scored on the fly by the compiled scoring SQL")
    floats = [name for name, kind in columns.items() if FLOAT_TYPE.match(kind)]
    return monitored_rows(spec, source, columns, month_column, outcome, floats), notes


def measure_development(spec: Spec, engine: Engine, source: exp.Expression, outcome: str | None = None,
                        month_column: str | None = None, computed_from: str = "") -> Baseline:
    """The baseline of a development table (raw or scored), measured inside ``engine``.

    Development shares per score band (deciles) and per feature bin, volume (per month when
    ``month_column`` is given), mean score and points, unseen-category rates, and with an
    ``outcome`` column the event rate, AUC and KS. Raises :class:`InputError` when the table
    does not fit the spec or holds no rows.
    """
    rows, _ = _monitored(spec, engine, source, month_column, outcome)
    with monitored_relation(engine, rows) as relation:
        return measure_baseline(engine, spec, rows, relation, None, computed_from)


def write_spec_with_baseline(spec_path: str | Path, baseline: Baseline, out_path: str | Path,
                             replace: bool = False) -> Path:
    """Write a copy of the spec at ``spec_path`` with ``baseline`` as its baseline section to ``out_path``.

    Every other line is kept as written. The file appears whole or not at all
    (:mod:`scoremon.files`). Raises :class:`InputError` when ``out_path`` is the spec itself
    (a spec is never overwritten in place), when its folder does not exist, or when it exists
    and ``replace`` is false.
    """
    spec_path, out_path = Path(spec_path), Path(out_path)
    if outputs.is_same_file(out_path, spec_path):
        raise InputError(f"--out {out_path} is the spec itself; a spec is never overwritten in place, "
                         "give a new file name (e.g. one with the version in it)")
    files.check_output(out_path, "--out", replace)
    original = spec_path.read_text(encoding="utf-8")
    text = spec_text_with_baseline(original, baseline)
    written = parse_spec(text, file=str(out_path))
    if fingerprint(written) != fingerprint(parse_spec(original, file=str(spec_path))):
        raise RuntimeError("writing the baseline changed the model's fingerprint")  # a bug, never an input error
    return files.write_text(out_path, text)


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
    expected_rows: str | float = "trailing",
    two_sided: bool = False,
) -> MonitorReport:
    """Monitor ``table`` month by month against a baseline; append the run to the history.

    The baseline is the spec's own, or one measured now from ``baseline_table`` or from the
    months ``baseline_months`` (first, last) of ``table``. ``table`` may be scored already (it
    has the scored columns, and ``month_column`` / ``outcome`` kept as keys) or raw (it is
    scored on the fly). ``expected_rows`` is what each month's volume is judged against:
    ``"trailing"`` (default: the median of the book's own previous six months), a monthly
    count, or ``"development"`` (the baseline's rows per month). ``two_sided`` makes the
    calibration tests two-sided (default one-sided: only more events than the PD predicts is
    flagged). Raises :class:`InputError` for anything the user can fix; the history
    is written last, in one transaction, so a failing run leaves it unchanged.
    """
    if baseline_table is not None and baseline_months is not None:
        raise InputError("give a baseline table or a range of baseline months, not both")
    if baseline_table is None and baseline_months is None and spec.baseline is None:
        raise InputError(f"{spec.model.name} version {spec.model.version} has no baseline section; write one "
                         "with `scoremon baseline SPEC --table DEVELOPMENT --out NEW.yaml`, or give "
                         "--baseline-table or --baseline-months")
    source = source_relation(table=table)
    rows, notes = _monitored(spec, engine, source, month_column, outcome)
    with monitored_relation(engine, rows) as relation:
        book = read_months(engine, spec, rows, relation, as_of, month_column)
        if baseline_table is not None:
            base_rows, _ = _monitored(spec, engine, source_relation(table=baseline_table), None, outcome)
            with monitored_relation(engine, base_rows) as base_relation:
                baseline = measure_baseline(engine, spec, base_rows, base_relation, None, f"table {baseline_table}")
            baseline_source = f"table {baseline_table}"
        elif baseline_months is not None:
            first, last = baseline_months
            values = book.values_between(first, last)
            if not values:
                raise InputError(f"no rows of {table} are in the baseline months {first} to {last}")
            baseline_source = f"months {first} to {last} of {table}"
            baseline = measure_baseline(engine, spec, rows, relation, months_in(values), baseline_source)
        else:
            baseline = spec.baseline
            baseline_source = f"the spec's baseline ({baseline.computed_from or 'source not recorded'})"
        warning = small_baseline_warning(baseline.rows)
        if warning:
            notes.append(warning.removeprefix("warning: "))
        report = measure_book(engine, spec, rows, relation, book, as_of=as_of, month_column=month_column,
                              baseline=baseline, baseline_source=baseline_source, thresholds=thresholds,
                              source=f"table {table}", notes=notes, fingerprint=fingerprint(spec),
                              expected_rows=expected_rows, two_sided=two_sided)
    if record_history:
        write_history(engine, report)
    return report
