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

from . import files, outputs
from .compiler import compile_model, output_columns
from .dialects import comment_line, render_sql
from .engines import Engine, Progress
from .errors import EngineError, InputError
from .exact import exact_columns
from .sources import check_columns, describe_source, float_columns, source_relation, spec_columns, table_name
from .spec.canonical import fingerprint
from .spec.model import Spec
from .trees import alias, column, table_path
from .version import VERSION


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
    replace: bool = False,
    allow_empty: bool = False,
    reason_text: bool = False,
) -> ScoreResult:
    """Score every row of ``source`` inside ``engine`` and write the result atomically.

    Exactly one of ``out_table`` (a table in the engine's database, replaced whole) and
    ``out_file`` (a ``.parquet`` or ``.csv`` file, replaced whole) is given. Before any work
    starts, :class:`InputError` refuses: an output that exists unless ``replace``, an output
    that is the input or a monitoring history table (:mod:`scoremon.outputs`), an input
    without rows unless ``allow_empty``, and input columns that do not fit the spec (every
    misfit listed). ``reason_text`` puts each reason's statement text beside its code
    (``reason_k_text``).
    """
    if (out_table is None) == (out_file is None):
        raise InputError("give either an output table or an output file, not both and not neither")
    if not isinstance(source, exp.Table) and not engine.reads_files:
        raise InputError(f"reading a Parquet or CSV file needs the DuckDB engine, not {engine.dialect}; "
                         "load the file into a table in that engine and score the table")
    if out_file is not None:
        if not engine.writes_parquet:
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
        raise InputError("the input does not fit the spec", problems)
    output_columns(spec, keys, reason_text)  # a key colliding with an output column is an input error, found now
    first_row = exp.select(alias(exp.Literal.number(1), "one")).from_(source.copy()).limit(1)
    if not allow_empty and not engine.query(first_row, "looking for a first input row"):
        raise InputError("the input holds no rows; scoring it would write an empty output (replacing any "
                         "previous one); give --allow-empty to write it anyway")
    scoring = compile_model(spec, source, keys, float_columns(columns), exact_columns(columns), reason_text)
    started = time.perf_counter()
    if out_table is not None:
        parts = table_name(out_table)
        engine.write_table(scoring, parts, "writing the scored table", progress)
        written = table_path(parts)
        target = out_table
    else:
        engine.write_file(scoring, out_file,
                          f"writing the scored {'Parquet' if file_format == 'parquet' else 'CSV'} file",
                          progress, file_format)
        written = source_relation(file=out_file)
        target = str(out_file)
    seconds = time.perf_counter() - started
    counts = grade_counts(engine, written)
    return ScoreResult(sum(counts.values()), seconds, target, spec.model.name, spec.model.version,
                       fingerprint(spec), counts, spec.scaling.reported_pd_words)


def _source_file(source: exp.Expression) -> str | None:
    """The file a :func:`~scoremon.sources.source_relation` over a file reads, or None for a table."""
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
    grade = column("grade")
    query = (exp.select(grade, alias(exp.Count(this=exp.Star()), "rows")).from_(scored.copy())
             .group_by(grade.copy()).order_by(grade.copy()))
    return {str(row.grade): int(row.rows) for row in engine.query(query, "counting rows per grade")}
