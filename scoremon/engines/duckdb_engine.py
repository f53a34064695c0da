"""DuckDB, embedded: a database file or memory, with Parquet/CSV read in place.

Implements the :class:`~scoremon.engines.Engine` protocol, plus :meth:`DuckDBEngine.write_file`
(Parquet or CSV, written atomically through :mod:`scoremon.files`) and a progress watcher (DuckDB reports the running query's progress to a second thread).
"""
from __future__ import annotations

import threading
import uuid
from pathlib import Path
from typing import Any, Sequence

import duckdb
import pandas as pd

from ..dialects import render_table
from ..errors import EngineError, InputError
from ..files import atomic_output
from .protocol import ColumnSpec, Progress
from .rows import arrow_table

INTERNAL = "__scoremon_"  # prefix of the names scoremon gives its own scratch tables and views


class DuckDBEngine:
    """DuckDB, in memory or in a database file.

    >>> engine = DuckDBEngine(":memory:")
    >>> engine.fetch("SELECT 1 + 1", "arithmetic")
    [(2,)]
    """

    dialect = "duckdb"
    ignores_column_case = True  # DuckDB matches names ignoring case, quoted or not

    def __init__(self, database: str = ":memory:", threads: int | None = None, memory_limit: str | None = None):
        self._duckdb = duckdb
        self.database = database
        try:
            self.connection = duckdb.connect(database)
        except duckdb.Error as error:
            raise EngineError("opening the database", f"duckdb {database}", str(error)) from error
        # DuckDB draws its own progress bar on standard output for long queries, in the middle of
        # our reports; its progress still reaches scoremon's own bar through query_progress().
        self.connection.execute("SET enable_progress_bar_print = false")
        if threads:
            self.connection.execute(f"SET threads = {int(threads)}")
        if memory_limit:
            self.connection.execute(f"SET memory_limit = '{_plain_size(memory_limit)}'")

    # -- the protocol

    def execute(self, sql: str, purpose: str) -> None:
        self._run(lambda: self.connection.execute(sql), purpose)

    def fetch(self, sql: str, purpose: str, progress: Progress | None = None) -> list[tuple]:
        return self._run(lambda: self.connection.execute(sql).fetchall(), purpose, progress)

    def fetch_frame(self, sql: str, purpose: str) -> pd.DataFrame:
        return self._run(lambda: self.connection.execute(sql).df(), purpose)

    def describe(self, sql: str, purpose: str) -> list[tuple[str, str]]:
        rows = self._run(lambda: self.connection.execute(f"DESCRIBE {sql}").fetchall(), purpose)
        return [(row[0], row[1]) for row in rows]

    def write_table(self, sql: str, table: list[str], purpose: str, progress: Progress | None = None) -> None:
        """Replace ``table`` with the result of ``sql`` in one transaction: all or nothing."""
        statement = f"CREATE OR REPLACE TABLE {render_table(table, self.dialect)} AS {sql}"

        self._run(lambda: self._in_transaction([statement]), purpose, progress)

    def execute_atomically(self, statements: Sequence[str], purpose: str) -> None:
        """Run ``statements`` in one transaction: all take effect, or (on any error) none."""

        self._run(lambda: self._in_transaction(statements), purpose)

    def write_rows(self, table: list[str], columns: Sequence[ColumnSpec], rows: Sequence[Sequence[Any]],
                   purpose: str) -> None:
        """Replace ``table`` with ``rows`` in one transaction (an Arrow table keeps NaN apart from NULL)."""
        data = arrow_table(columns, rows)
        view = f"{INTERNAL}rows_{uuid.uuid4().hex}"
        self._run(lambda: self.connection.register(view, data), purpose)
        try:
            self.write_table(f"SELECT * FROM {render_table([view], self.dialect)}", table, purpose)
        finally:
            self.connection.unregister(view)

    def write_parquet(self, sql: str, path: str | Path, purpose: str, progress: Progress | None = None) -> None:
        """Write the result of ``sql`` to a Parquet file; the file appears whole or not at all."""
        self.write_file(sql, path, purpose, progress, "parquet")

    def write_file(self, sql: str, path: str | Path, purpose: str, progress: Progress | None = None,
                   file_format: str = "parquet") -> None:
        """Write the result of ``sql`` to a ``parquet`` or ``csv`` (with a header) file, through
        :func:`scoremon.files.atomic_output`: the file appears whole or not at all."""
        options = {"parquet": "FORMAT PARQUET", "csv": "FORMAT CSV, HEADER"}.get(file_format)
        if options is None:
            raise InputError(f"cannot write {file_format!r} files; write parquet or csv")
        path = Path(path)
        if not path.parent.exists():
            raise InputError(f"{path}: folder {path.parent} does not exist; create it or choose another path")
        with atomic_output(path) as partial:
            literal = "'" + str(partial).replace("'", "''") + "'"
            self._run(lambda: self.connection.execute(f"COPY ({sql}) TO {literal} ({options})"), purpose, progress)

    def close(self) -> None:
        self.connection.close()

    # -- helpers

    def _in_transaction(self, statements: Sequence[str]) -> None:
        self.connection.execute("BEGIN TRANSACTION")
        try:
            for statement in statements:
                self.connection.execute(statement)
            self.connection.execute("COMMIT")
        except BaseException:
            try:
                self.connection.execute("ROLLBACK")
            except self._duckdb.Error:
                # a COMMIT that failed (a full disk) has already ended the transaction, and the
                # ROLLBACK's "no transaction is active" would hide the first cause: show that one
                pass
            raise

    def _run(self, work, purpose: str, progress: Progress | None = None):
        watcher = _ProgressWatcher(self.connection, progress) if progress else None
        try:
            if watcher:
                watcher.start()
            return work()
        except self._duckdb.Error as error:
            raise EngineError(purpose, "duckdb", str(error).splitlines()[0]) from error
        except RuntimeError as error:
            # DuckDB swallows the KeyboardInterrupt of a Ctrl-C that stops a running query and
            # raises RuntimeError("Query interrupted") instead: give the interrupt back
            if str(error).strip() == "Query interrupted":
                raise KeyboardInterrupt from error
            raise
        finally:
            if watcher:
                watcher.stop()


def _plain_size(text: str) -> str:
    if not text.replace(" ", "").replace(".", "").isalnum():
        raise InputError(f"memory limit {text!r} is not a size such as '2GB'")
    return text


class _ProgressWatcher:
    """Polls DuckDB's progress of the running query from a second thread."""

    def __init__(self, connection, report: Progress, every: float = 0.2):
        self.connection, self.report, self.every = connection, report, every
        self._done = threading.Event()
        self._thread = threading.Thread(target=self._poll, daemon=True)

    def start(self) -> None:
        self._thread.start()

    def stop(self) -> None:
        self._done.set()
        self._thread.join()
        self.report(1.0)

    def _poll(self) -> None:
        while not self._done.wait(self.every):
            try:
                share = self.connection.query_progress()
            except Exception:  # noqa: BLE001 - progress is best effort, never fails the query
                return
            if share is not None and share >= 0:
                self.report(min(share / 100.0, 1.0))
