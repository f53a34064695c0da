"""Refusing an output that would destroy data, before any work starts.

scoremon never writes over what it reads or keeps: the input table or file, the DuckDB
database file, a spec file, or the monitoring history tables. Files are compared by their
resolved paths (and as the same file on disk, which catches links); table names by their parts,
case-folded where the engine folds case (DuckDB and Spark; PostgreSQL keeps quoted names'
case) and with the engine's default schema filled in (``main``, ``public``, ``default``).
Which file formats ``score --out`` writes is decided here too, from the name's ending.
"""
from __future__ import annotations

from pathlib import Path
from typing import Sequence

from .engines.urls import duckdb_file
from .errors import InputError
from .files import is_same_file

FILE_FORMATS = {".parquet": "parquet", ".csv": "csv"}  # the ending of --out → the format written
_FOLDS_CASE = {"duckdb": True, "spark": True, "postgres": False}
_DEFAULT_SCHEMA = {"duckdb": "main", "spark": "default", "postgres": "public"}


def file_format(path: str | Path, option: str = "--out") -> str:
    """``parquet`` or ``csv`` from ``path``'s ending; :class:`InputError` for any other ending."""
    suffix = Path(path).suffix.lower()
    if suffix not in FILE_FORMATS:
        raise InputError(f"{option} {path}: cannot tell the format from {suffix or 'a name without an ending'}; "
                         f"end the name with {' or '.join(FILE_FORMATS)}")
    return FILE_FORMATS[suffix]


def refuse_file(out: str | Path, option: str, kept: Sequence[tuple[str, str | Path | None]]) -> None:
    """Raise :class:`InputError` when ``out`` is one of the ``kept`` files, named (what, path)."""
    for what, path in kept:
        if path is not None and is_same_file(out, path):
            raise InputError(f"{option} {out} is {what}; scoremon never writes over its input, the database, a spec "
                             "or the history; choose another name")


def kept_database(url: str | None) -> list[tuple[str, Path | None]]:
    """The DuckDB database file of ``url`` as a kept file (none for other engines)."""
    return [("the DuckDB database file", duckdb_file(url))]


def require_database_file(url: str | None) -> None:
    """Raise :class:`InputError` when ``url`` names a DuckDB file that does not exist.

    Opening a missing file would create an empty database, and a mistyped ``--db`` would leave
    one behind.
    """
    path = duckdb_file(url)
    if path is not None and not path.exists():
        raise InputError(f"no such database file: {path}; check --db")


def _parts(name: str, dialect: str) -> tuple[str, str]:
    parts = name.split(".")
    schema, table = (parts[0], parts[-1]) if len(parts) == 2 else (_DEFAULT_SCHEMA.get(dialect, ""), parts[-1])
    if _FOLDS_CASE.get(dialect, True):
        schema, table = schema.casefold(), table.casefold()
    return schema, table


def is_same_table(a: str, b: str, dialect: str) -> bool:
    """True when table names ``a`` and ``b`` name one table on ``dialect``'s engine."""
    return _parts(a, dialect) == _parts(b, dialect)


def refuse_table(out: str, option: str, dialect: str, input_table: str | None) -> None:
    """Raise :class:`InputError` when ``out`` is the input table or a monitoring history table."""
    # imported here: the monitor's modules load sqlglot, which `scoremon check` never needs
    from .monitor.history import METRICS_TABLE, RUNS_TABLE

    kept = [("the input table", input_table), ("a monitoring history table", RUNS_TABLE),
            ("a monitoring history table", METRICS_TABLE)]
    for what, name in kept:
        if name is not None and is_same_table(out, name, dialect):
            raise InputError(f"{option} {out} is {what}; scoremon never writes over its input or the history; "
                             "choose another table name")
