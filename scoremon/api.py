"""The library's entry points: load, check, compile and score. The CLI is a thin layer on these.

>>> from scoremon import api
>>> spec = api.load_spec("tests/fixtures/small.yaml")
>>> "CASE" in api.compile_sql(spec, table="applications")
True
"""
from __future__ import annotations

import re
import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Sequence

from sqlglot import exp

from .compiler import compile_model, identifier, output_columns
from .dialects import render_sql
from .diff import DiffReport, Impact, ModelDiff, diff_models, impact_query, summarise_impact
from .diff.impact import check_outcome_type
from .engines import DuckDBEngine, Engine, Progress, open_engine
from .errors import InputError

from .spec import fingerprint, load_spec
from .spec.model import CategoricalFeature, Spec

__all__ = ["DiffReport", "Impact", "ModelDiff", "ScoreResult", "compile_sql", "describe_source", "diff_models",
           "load_spec", "measure_impact", "open_engine", "score", "source_relation"]

NUMBER_TYPE = re.compile(r"^(TINYINT|SMALLINT|INTEGER|BIGINT|HUGEINT|UTINYINT|USMALLINT|UINTEGER|UBIGINT|UHUGEINT|"
                         r"FLOAT|DOUBLE|REAL|DECIMAL(\(.*\))?|NUMERIC(\(.*\))?|INT\d?|SMALLINT|DOUBLE PRECISION)$", re.I)
INTEGER_TYPE = re.compile(r"^(TINYINT|SMALLINT|INTEGER|BIGINT|HUGEINT|UTINYINT|USMALLINT|UINTEGER|UBIGINT|UHUGEINT|INT\d?)$", re.I)
FLOAT_TYPE = re.compile(r"^(FLOAT|DOUBLE|REAL|DOUBLE PRECISION|FLOAT\d)$", re.I)
TEXT_TYPE = re.compile(r"^(VARCHAR|TEXT|STRING|CHAR|BPCHAR|CHARACTER VARYING)(\(.*\))?$", re.I)


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


def describe_source(engine: Engine, source: exp.Expression) -> dict[str, str]:
    """Column name → SQL type of a source."""
    query = exp.select(exp.Star()).from_(source.copy())
    return dict(engine.describe(render_sql(query, engine.dialect, pretty=False), "reading the input's columns"))


def check_columns(spec: Spec, columns: dict[str, str], keys: Sequence[str]) -> list[str]:
    """Every way the input's columns do not fit the spec, one message each (empty: all fit)."""
    problems = []
    for key in keys:
        if key not in columns:
            problems.append(f"key column {key!r} is not in the input{_nearest(key, columns)}")
    for feature in spec.features:
        name = feature.column or feature.name
        kind = columns.get(name)
        if kind is None:
            problems.append(f"column {name!r} (feature {feature.name!r}) is not in the input{_nearest(name, columns)}")
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


def _nearest(name: str, columns) -> str:
    from .spec.checks import suggest

    return suggest(name, list(columns))


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
    columns = describe_source(engine, source)
    problems = check_columns(spec, columns, keys)
    if problems:
        raise InputError("the input does not fit the spec:\n" + "\n".join(f"  - {p}" for p in problems))
    output_columns(spec, keys)  # a key colliding with an output column is an input error, found now
    floats = [name for name, kind in columns.items() if FLOAT_TYPE.match(kind)]
    sql = render_sql(compile_model(spec, source, keys, floats), engine.dialect, pretty=False)
    started = time.perf_counter()
    if out_table is not None:
        parts = table_name(out_table)
        engine.write_table(sql, parts, "writing the scored table", progress)
        written = exp.Table(this=identifier(parts[-1]), db=identifier(parts[0]) if len(parts) == 2 else None)
        target = out_table
    else:
        if not isinstance(engine, DuckDBEngine):
            raise InputError("writing a Parquet file needs the DuckDB engine; write a table instead")
        engine.write_parquet(sql, out_file, "writing the scored Parquet file", progress)
        written = source_relation(file=out_file)
        target = str(out_file)
    seconds = time.perf_counter() - started
    counts = grade_counts(engine, written)
    return ScoreResult(sum(counts.values()), seconds, target, spec.model.name, spec.model.version,
                       fingerprint(spec), counts)


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
        raise InputError("the input does not fit the specs:\n" + "\n".join(f"  - {p}" for p in problems))
    cutoffs = None if cutoff is None else (float(cutoff), float(cutoff if new_cutoff is None else new_cutoff))
    floats = [name for name, kind in columns.items() if FLOAT_TYPE.match(kind)]
    query = impact_query(old, new, source, floats, outcome, outcome_is_boolean, cutoffs)
    rows = engine.fetch(render_sql(query.tree, engine.dialect, pretty=False),
                        "scoring the population under both versions")
    return summarise_impact(query.columns, rows, old, new, population, outcome, cutoffs)

