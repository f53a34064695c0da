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
from typing import TYPE_CHECKING, Any, Sequence

from ..dialects import render_name, render_table, render_type
from ..errors import EngineError, InputError
from ..trees import INTERNAL
from .columns import column_of
from .protocol import Column, ColumnSpec, Engine, Progress, Query, Row, first_line, named_rows
from .urls import redact

if TYPE_CHECKING:  # pandas is imported where a frame is made
    import pandas as pd


class PostgresEngine(Engine):
    """A PostgreSQL database, e.g. ``PostgresEngine("postgresql://scorer@db.example:5432/book")``.

    The connection runs in autocommit mode; :meth:`write_table` and :meth:`write_rows` open
    their own transaction.
    """

    dialect = "postgres"
    ignores_column_case = False  # a quoted name matches only its own spelling
    is_transactional = True
    reads_files = False
    writes_parquet = False
    streams_batches = False  # a server: the fit's passes stay aggregate queries
    worker_threads = 1  # nothing is streamed

    def __init__(self, url: str):
        # psycopg is an optional extra (``scoremon[engines]``): imported only when a PostgreSQL URL
        # is opened, so a DuckDB-only install does not need it.
        try:
            import psycopg
        except ImportError as error:
            raise InputError("a PostgreSQL URL needs psycopg; install it with: pip install 'scoremon[engines]'") from error
        self._driver_errors = (psycopg.Error,)
        self.label = f"postgres {redact(url)}"
        try:
            self.connection = psycopg.connect(url, autocommit=True)
        except psycopg.Error as error:
            raise EngineError("connecting", self.label, first_line(error)) from error

    # -- the protocol

    def execute(self, statement: Query, purpose: str) -> None:
        sql = self._sql(statement)

        def work():
            with self.connection.cursor() as cursor:
                cursor.execute(sql)

        self._run(work, purpose)

    def query(self, tree: Query, purpose: str, progress: Progress | None = None) -> list[Row]:
        rows, names = self._run(lambda: self._query(self._sql(tree)), purpose)
        if progress:
            progress(1.0)
        return named_rows(names, rows)

    def query_frame(self, tree: Query, purpose: str) -> pd.DataFrame:
        import pandas as pd

        rows, names = self._run(lambda: self._query(self._sql(tree)), purpose)
        return pd.DataFrame.from_records(rows, columns=names)

    def describe(self, tree: Query, purpose: str) -> list[Column]:
        sql = self._sql(tree)

        def work():
            with self.connection.cursor() as cursor:
                # LIMIT 0: planned and typed, but no row is read
                cursor.execute(f'SELECT * FROM ({sql}) AS "{INTERNAL}described" LIMIT 0')
                # type names as PostgreSQL spells them (DOUBLE PRECISION, TEXT, NUMERIC, …)
                return [column_of(column.name, column.type_display.upper(), self.dialect)
                        for column in cursor.description]

        return self._run(work, purpose)

    def explain(self, tree: Query, purpose: str) -> str:
        sql = self._sql(tree)
        rows, _ = self._run(lambda: self._query(f"EXPLAIN (VERBOSE, COSTS OFF) {sql}"), purpose)
        return "\n".join(str(row[0]) for row in rows)

    def write_table(self, tree: Query, table: Sequence[str], purpose: str, progress: Progress | None = None) -> None:
        """Replace ``table`` with the result of a query in one transaction (see the module docstring)."""
        table = list(table)
        scratch = table[:-1] + [f"{INTERNAL}new_{uuid.uuid4().hex}"]
        self._swap_in(table, scratch, [f"CREATE TABLE {render_table(scratch, self.dialect)} AS {self._sql(tree)}"],
                      purpose)
        if progress:
            progress(1.0)

    def write_parquet(self, tree: Query, path, purpose: str, progress: Progress | None = None) -> None:
        self.write_file(tree, path, purpose, progress)

    def write_file(self, tree: Query, path, purpose: str, progress: Progress | None = None,
                   file_format: str = "parquet") -> None:
        raise InputError("writing a Parquet or CSV file needs the DuckDB engine; write a table instead")

    def write_rows(self, table: Sequence[str], columns: Sequence[ColumnSpec], rows: Sequence[Sequence[Any]],
                   purpose: str) -> None:
        """Replace ``table`` with ``rows`` through COPY, in one transaction; NaN and ±inf are kept."""
        table = list(table)
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

    def execute_atomically(self, statements: Sequence[Query], purpose: str) -> None:
        """Run ``statements`` in one transaction: all take effect, or (on any error) none."""
        texts = [self._sql(statement) for statement in statements]

        def work():
            with self.connection.transaction(), self.connection.cursor() as cursor:
                for text in texts:
                    cursor.execute(text)

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

