"""PostgreSQL through psycopg 3, given a ``postgresql://`` URL.

Writes are atomic because PostgreSQL's DDL is transactional: the result is built under a scratch
name, then the old table is dropped and the scratch table renamed, all in one transaction. A
failure or an interrupted run rolls the whole transaction back, so the previous table is still
there and no scratch table is left. Building first and swapping last keeps the exclusive lock on
the old table to the moment of the swap, so readers are not blocked while scoring runs.
"""
from __future__ import annotations

import uuid
from decimal import Decimal
from typing import Any, Sequence

import pandas as pd

from ..dialects import render_name, render_table, render_type
from ..errors import EngineError, InputError
from .protocol import ColumnSpec, Progress
from .urls import redact

INTERNAL = "__scoremon_"  # prefix of the names scoremon gives its own scratch tables


class PostgresEngine:
    """A PostgreSQL database, e.g. ``PostgresEngine("postgresql://scorer@db.example:5432/book")``.

    The connection runs in autocommit mode; :meth:`write_table` and :meth:`write_rows` open
    their own transaction.
    """

    dialect = "postgres"
    ignores_column_case = False  # a quoted name matches only its own spelling

    def __init__(self, url: str):
        # psycopg is an optional extra (``scoremon[engines]``): imported only when a PostgreSQL URL
        # is opened, so a DuckDB-only install does not need it.
        try:
            import psycopg
        except ImportError as error:
            raise InputError("a PostgreSQL URL needs psycopg; install it with: pip install 'scoremon[engines]'") from error
        self._driver_error = psycopg.Error
        self.label = f"postgres {redact(url)}"
        try:
            self.connection = psycopg.connect(url, autocommit=True)
        except psycopg.Error as error:
            raise EngineError("connecting", self.label, _first_line(error)) from error

    # -- the protocol

    def execute(self, sql: str, purpose: str) -> None:
        def work():
            with self.connection.cursor() as cursor:
                cursor.execute(sql)

        self._run(work, purpose)

    def fetch(self, sql: str, purpose: str, progress: Progress | None = None) -> list[tuple]:
        rows, _ = self._run(lambda: self._query(sql), purpose)
        if progress:
            progress(1.0)
        return rows

    def fetch_frame(self, sql: str, purpose: str) -> pd.DataFrame:
        rows, names = self._run(lambda: self._query(sql), purpose)
        return pd.DataFrame.from_records(rows, columns=names)

    def describe(self, sql: str, purpose: str) -> list[tuple[str, str]]:
        """Column names and types as PostgreSQL spells them (``DOUBLE PRECISION``, ``TEXT``, …)."""
        def work():
            with self.connection.cursor() as cursor:
                # LIMIT 0: planned and typed, but no row is read
                cursor.execute(f'SELECT * FROM ({sql}) AS "{INTERNAL}described" LIMIT 0')
                return [(column.name, column.type_display.upper()) for column in cursor.description]

        return self._run(work, purpose)

    def write_table(self, sql: str, table: list[str], purpose: str, progress: Progress | None = None) -> None:
        """Replace ``table`` with the result of ``sql`` in one transaction (see the module docstring)."""
        scratch = table[:-1] + [f"{INTERNAL}new_{uuid.uuid4().hex}"]
        self._swap_in(table, scratch, [f"CREATE TABLE {render_table(scratch, self.dialect)} AS {sql}"], purpose)
        if progress:
            progress(1.0)

    def write_rows(self, table: list[str], columns: Sequence[ColumnSpec], rows: Sequence[Sequence[Any]],
                   purpose: str) -> None:
        """Replace ``table`` with ``rows`` through COPY, in one transaction; NaN and ±inf are kept."""
        scratch = table[:-1] + [f"{INTERNAL}new_{uuid.uuid4().hex}"]
        names = ", ".join(render_name(name, self.dialect) for name, _ in columns)
        definition = ", ".join(f"{render_name(name, self.dialect)} {render_type(kind, self.dialect)}"
                               for name, kind in columns)
        width = len(columns)

        def copy_rows(cursor):
            with cursor.copy(f"COPY {render_table(scratch, self.dialect)} ({names}) FROM STDIN") as copy:
                for number, row in enumerate(rows):
                    if len(row) != width:
                        raise InputError(f"row {number} has {len(row)} values for {width} columns")
                    copy.write_row(row)

        self._swap_in(table, scratch, [f"CREATE TABLE {render_table(scratch, self.dialect)} ({definition})", copy_rows],
                      purpose)

    def execute_atomically(self, statements: Sequence[str], purpose: str) -> None:
        """Run ``statements`` in one transaction: all take effect, or (on any error) none."""

        def work():
            with self.connection.transaction(), self.connection.cursor() as cursor:
                for statement in statements:
                    cursor.execute(statement)

        self._run(work, purpose)

    def close(self) -> None:
        self.connection.close()

    # -- helpers

    def _swap_in(self, table: list[str], scratch: list[str], build: list, purpose: str) -> None:
        """Run ``build`` (SQL text or a function of a cursor) to fill ``scratch``, then swap it in for ``table``."""
        steps = build + [
            f"DROP TABLE IF EXISTS {render_table(table, self.dialect)}",
            # the new name of a renamed table is never schema-qualified in PostgreSQL
            f"ALTER TABLE {render_table(scratch, self.dialect)} RENAME TO {render_table(table[-1:], self.dialect)}",
        ]

        def work():
            with self.connection.transaction(), self.connection.cursor() as cursor:
                for step in steps:
                    if callable(step):
                        step(cursor)
                    else:
                        cursor.execute(step)

        self._run(work, purpose)

    def _query(self, sql: str) -> tuple[list[tuple], list[str]]:
        with self.connection.cursor() as cursor:
            cursor.execute(sql)
            names = [column.name for column in cursor.description or ()]
            return [tuple(_plain(value) for value in row) for row in cursor.fetchall()], names

    def _run(self, work, purpose: str):
        try:
            return work()
        except self._driver_error as error:
            raise EngineError(purpose, self.label, _first_line(error)) from error


def _plain(value):
    """PostgreSQL's ``numeric`` arrives as Decimal. A whole number (``SUM`` of integers is numeric
    there, an integer on DuckDB and Spark) becomes an int so that every engine returns the same
    Python value; other decimals stay Decimal, as DuckDB returns DECIMAL."""
    if isinstance(value, Decimal):
        if value.is_nan():
            return float("nan")
        if value.is_infinite():
            return float(value)
        if value.as_tuple().exponent >= 0:
            return int(value)
    return value


def _first_line(error: BaseException) -> str:
    text = str(error).strip()
    return text.splitlines()[0] if text else type(error).__name__
