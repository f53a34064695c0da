"""What scoremon reads: a table or a Parquet/CSV file as a relation, its columns as the engine
describes them, and whether they fit a spec.

Scoring, the impact of a change and monitoring all start here: the source becomes a tree
(:func:`source_relation`), its columns portable kinds (:func:`describe_source`), and
:func:`check_columns` lists every way they do not fit before any work starts.
"""
from __future__ import annotations

from difflib import get_close_matches
from pathlib import Path
from typing import Mapping, Sequence

from sqlglot import exp

from .engines.protocol import INTEGER, TEXT, Column, Engine
from .errors import InputError
from .spec.checks import suggest
from .spec.model import CategoricalFeature, Spec
from .trees import table_path


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
        return table_path(table_name(table))
    path = Path(file)
    if not path.exists():
        raise InputError(f"{path}: no such file; check the path")
    suffix = path.suffix.lower()
    reader = {".parquet": "read_parquet", ".csv": "read_csv", ".tsv": "read_csv"}.get(suffix)
    if reader is None:
        raise InputError(f"{path}: cannot read {suffix or 'files without an ending'}; give a .parquet or .csv file")
    return exp.Anonymous(this=reader, expressions=[exp.Literal.string(str(path))])


def describe_source(engine: Engine, source: exp.Expression, wanted: Sequence[str] = ()) -> dict[str, Column]:
    """Column name → :class:`~scoremon.engines.Column` (portable kind, engine's type name) of a source.

    Where the engine matches column names ignoring case (:attr:`Engine.ignores_column_case`:
    DuckDB; Spark unless ``spark.sql.caseSensitive`` is on), a ``wanted`` name that the source
    spells in another case is listed under the wanted spelling, which is how the compiled SQL
    names it.
    """
    query = exp.select(exp.Star()).from_(source.copy())
    columns = {column.name: column for column in engine.describe(query, "reading the input's columns")}
    if getattr(engine, "ignores_column_case", False):
        for name in wanted:
            matches = [actual for actual in columns if actual.casefold() == name.casefold()]
            if name not in columns and len(matches) == 1:
                columns[name] = columns.pop(matches[0])
    return columns


def spec_columns(spec: Spec) -> list[str]:
    """The input columns a spec reads, in feature order."""
    return list(dict.fromkeys(feature.source_column for feature in spec.features))


def float_columns(columns: Mapping[str, Column]) -> list[str]:
    """The columns that can hold NaN or ±infinity, which the scoring SQL then tests for."""
    return [name for name, column in columns.items() if column.can_hold_nan]


def check_columns(spec: Spec, columns: Mapping[str, Column], keys: Sequence[str]) -> list[str]:
    """Every way the input's columns do not fit the spec, one message each (empty: all fit)."""
    problems = []
    for key in keys:
        if key not in columns:
            problems.append(f"key column {key!r} is not in the input{suggest(key, list(columns))}")
    for feature in spec.features:
        name = feature.source_column
        found = columns.get(name)
        if found is None:
            problems.append(_missing_column(feature, list(columns)))
            continue
        if isinstance(feature, CategoricalFeature):
            wants_text = any(isinstance(v, str) for v in feature.listed_values)
            if wants_text and found.kind != TEXT:
                problems.append(f"column {name!r} (feature {feature.name!r}) is {found.type_name} but the spec lists "
                                "text categories; convert the column to text or list the categories as whole numbers")
            elif not wants_text and found.kind != INTEGER:
                problems.append(f"column {name!r} (feature {feature.name!r}) is {found.type_name} but the spec lists "
                                "whole-number categories; quote the categories in the spec to compare as text")
        elif not found.is_number:
            problems.append(f"column {name!r} (feature {feature.name!r}) is {found.type_name}, not a number; "
                            f"a {feature.type} feature needs a numeric column")
    return problems


def _missing_column(feature, columns: Sequence[str]) -> str:
    """A feature's column is not in the input: the nearest input column, and the spec key to edit."""
    name = feature.source_column
    where = "its `column:` in the spec" if feature.column else "read by its name; give it `column:` in the spec"
    problem = f"column {name!r} (feature {feature.name!r}, {where}) is not in the input"
    folded = {c.casefold(): c for c in columns}
    nearest = get_close_matches(name.casefold(), list(folded), n=1, cutoff=0.0)
    if not nearest:
        return problem + "; it has no columns"
    actual = folded[nearest[0]]
    return f"{problem}; the nearest is {actual!r}: rename that column or set `column: {actual}` in the spec"
