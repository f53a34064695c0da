"""What scoremon needs from a SQL engine: the :class:`Engine` protocol.

Kept in its own module so every implementation can import it without importing the package
facade (and so without importing each other).

Every method takes a ``purpose`` — a few words such as "writing the scored table" — that an
:class:`~scoremon.errors.EngineError` names when the database refuses, together with the engine,
keeping the driver's error as its cause.
"""
from __future__ import annotations

from typing import Any, Callable, Protocol, Sequence

import pandas as pd

Progress = Callable[[float], None]  # called with the share done, 0.0 to 1.0

# (column name, kind) with kind one of scoremon.dialects.COLUMN_KINDS
ColumnSpec = tuple[str, str]


class Engine(Protocol):
    """What scoremon needs from a SQL engine.

    ``dialect`` names the :mod:`scoremon.dialects` rendering the engine runs.
    """

    dialect: str
    ignores_column_case: bool  # a query's column names match the table's ignoring case (DuckDB, Spark by default)

    def execute(self, sql: str, purpose: str) -> None:
        """Run one statement; nothing is returned."""

    def fetch(self, sql: str, purpose: str, progress: Progress | None = None) -> list[tuple]:
        """All rows of a query as tuples of Python values (float, int, str, None, …)."""

    def fetch_frame(self, sql: str, purpose: str) -> pd.DataFrame:
        """All rows of a query as a DataFrame."""

    def describe(self, sql: str, purpose: str) -> list[tuple[str, str]]:
        """(column name, engine's type name upper-cased) for each column of a query, without running it."""

    def write_table(self, sql: str, table: list[str], purpose: str, progress: Progress | None = None) -> None:
        """Replace ``table`` (``[name]`` or ``[schema, name]``) with the result of ``sql``, all or nothing."""

    def write_rows(self, table: list[str], columns: Sequence[ColumnSpec], rows: Sequence[Sequence[Any]],
                   purpose: str) -> None:
        """Replace ``table`` with ``rows`` (None is NULL; float NaN and ±inf are kept), all or nothing."""

    def execute_atomically(self, statements: Sequence[str], purpose: str) -> None:
        """Run ``statements`` in order in one transaction: all take effect, or (on any error) none."""

    def close(self) -> None:
        """Release the connection (a shared Spark session is left running)."""
