"""Scoring: the SQL for a spec, and a source scored inside an engine into a table or a file.

:func:`score` checks the source's columns against the spec before any work starts, compiles
the scoring query, has the engine write its result whole (a table replaced in one transaction,
or a Parquet file that appears whole), and counts the rows per grade of what was written.

>>> from scoremon.spec import load_spec
>>> "CASE" in compile_sql(load_spec("tests/fixtures/small.yaml"), table="applications")
True
"""
from __future__ import annotations

import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Sequence

from sqlglot import exp

from .compiler import compile_model, output_columns
from .dialects import render_sql
from .engines import Engine, Progress
from .errors import InputError
from .sources import check_columns, describe_source, float_columns, source_relation, table_name
from .spec.canonical import fingerprint
from .spec.model import Spec
from .trees import alias, column, table_path


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
