"""DuckDB, embedded: a database file or memory, with Parquet/CSV read in place.

Implements the :class:`~scoremon.engines.Engine` protocol, with :meth:`DuckDBEngine.write_file`
(Parquet or CSV, written atomically through :mod:`scoremon.files`), and a progress watcher
(DuckDB reports the running query's progress to a second thread).
"""
from __future__ import annotations

import threading
import uuid
from pathlib import Path
from typing import TYPE_CHECKING, Any, Iterator, Sequence

import duckdb
from sqlglot import exp

from ..dialects import render_table
from ..errors import EngineError, InputError
from ..files import atomic_output
from ..trees import INTERNAL, table_path
from .columns import column_of
from .protocol import Column, ColumnSpec, Engine, Progress, Query, Row, first_line, named_rows
from .rows import arrow_table

if TYPE_CHECKING:  # pandas is imported where a frame is made
    import pandas as pd


class DuckDBEngine(Engine):
    """DuckDB, in memory or in a database file.

    >>> from scoremon.trees import alias, integer
    >>> with DuckDBEngine(":memory:") as engine:
    ...     engine.query(exp.select(alias(integer(1) + integer(1), "two")), "arithmetic")
    [Row(two=2)]
    """

    dialect = "duckdb"
    ignores_column_case = True  # DuckDB matches names ignoring case, quoted or not
    is_transactional = True
    reads_files = True
    writes_parquet = True
    streams_batches = True

    def __init__(self, database: str = ":memory:", threads: int | None = None, memory_limit: str | None = None,
                 read_only: bool = False):
        self._driver_errors = (duckdb.Error,)
        self.label = "duckdb"
        self.database = database
        # read-only: the file must exist (opening a missing one for writing would create it)
        # and is never written, not even by replaying a write-ahead log left by a stopped
        # writer; a database in memory is always new, so the flag means nothing there
        read_only = read_only and database != ":memory:"
        if read_only and not Path(database).is_file():
            raise InputError(f"no such database file: {database}; check the path (--db)")
        try:
            self.connection = duckdb.connect(database, read_only=read_only)
        except duckdb.Error as error:
            raise EngineError("opening the database", f"duckdb {database}", first_line(error)) from error
        # DuckDB draws its own progress bar on standard output for long queries, in the middle of
        # our reports; its progress still reaches scoremon's own bar through query_progress().
        self.connection.execute("SET enable_progress_bar_print = false")
        if threads:
            self.connection.execute(f"SET threads = {int(threads)}")
        if memory_limit:
            self.connection.execute(f"SET memory_limit = '{_plain_size(memory_limit)}'")

    # -- the protocol

    def execute(self, statement: Query, purpose: str) -> None:
        sql = self._sql(statement)
        self._run(lambda: self.connection.execute(sql), purpose)

    def query(self, tree: Query, purpose: str, progress: Progress | None = None) -> list[Row]:
        sql = self._sql(tree)

        def work():
            result = self.connection.execute(sql)
            return named_rows([column[0] for column in result.description], result.fetchall())

        return self._watched(work, purpose, progress)

    def query_frame(self, tree: Query, purpose: str) -> pd.DataFrame:
        sql = self._sql(tree)
        return self._run(lambda: self.connection.execute(sql).df(), purpose)

    def describe(self, tree: Query, purpose: str) -> list[Column]:
        sql = self._sql(tree)
        rows = self._run(lambda: self.connection.execute(f"DESCRIBE {sql}").fetchall(), purpose)
        return [column_of(row[0], row[1], self.dialect) for row in rows]

    def explain(self, tree: Query, purpose: str) -> str:
        sql = self._sql(tree)
        rows = self._run(lambda: self.connection.execute(f"EXPLAIN {sql}").fetchall(), purpose)
        return "\n".join(str(row[-1]) for row in rows)

    def write_table(self, tree: Query, table: Sequence[str], purpose: str, progress: Progress | None = None) -> None:
        """Replace ``table`` with the result of a query in one transaction: all or nothing."""
        statement = f"CREATE OR REPLACE TABLE {render_table(table, self.dialect)} AS {self._sql(tree)}"
        self._watched(lambda: self._in_transaction([statement]), purpose, progress)

    def execute_atomically(self, statements: Sequence[Query], purpose: str) -> None:
        """Run ``statements`` in one transaction: all take effect, or (on any error) none."""
        texts = [self._sql(statement) for statement in statements]
        self._run(lambda: self._in_transaction(texts), purpose)

    def write_rows(self, table: Sequence[str], columns: Sequence[ColumnSpec], rows: Sequence[Sequence[Any]],
                   purpose: str) -> None:
        """Replace ``table`` with ``rows`` in one transaction (an Arrow table keeps NaN apart from NULL)."""
        data = arrow_table(columns, rows)
        view = f"{INTERNAL}rows_{uuid.uuid4().hex}"
        self._run(lambda: self.connection.register(view, data), purpose)
        try:
            self.write_table(exp.select(exp.Star()).from_(table_path([view])), table, purpose)
        finally:
            self.connection.unregister(view)

    def write_parquet(self, tree: Query, path: str | Path, purpose: str, progress: Progress | None = None) -> None:
        """Write the result of a query to a Parquet file; the file appears whole or not at all."""
        self.write_file(tree, path, purpose, progress, "parquet")

    def write_file(self, tree: Query, path: str | Path, purpose: str, progress: Progress | None = None,
                   file_format: str = "parquet") -> None:
        """Write the result of a query to a ``parquet`` or ``csv`` (with a header) file, through
        :func:`scoremon.files.atomic_output`: the file appears whole or not at all. A tree going
        to Parquet is rendered for it (text constants as ENUM, see :mod:`scoremon.dialects`)."""
        options = {"parquet": "FORMAT PARQUET", "csv": "FORMAT CSV, HEADER"}.get(file_format)
        if options is None:
            raise InputError(f"cannot write {file_format!r} files; write parquet or csv")
        parquet = file_format == "parquet" and isinstance(tree, exp.Expression)
        sql = self.prepare(tree, for_parquet=True).sql if parquet else self._sql(tree)
        path = Path(path)
        if not path.parent.exists():
            raise InputError(f"{path}: folder {path.parent} does not exist; create it or choose another path")
        with atomic_output(path) as partial:
            literal = "'" + str(partial).replace("'", "''") + "'"
            self._watched(lambda: self.connection.execute(f"COPY ({sql}) TO {literal} ({options})"), purpose,
                          progress)

    def hold(self, tree: Query, purpose: str) -> list[str]:
        """Keep the rows of a query in a temporary table (gone with the connection at the latest;
        DuckDB spills it to disk beyond its memory limit); returns its path."""
        name = f"{INTERNAL}held_{uuid.uuid4().hex}"
        sql = f"CREATE TEMPORARY TABLE {render_table([name], self.dialect)} AS {self._sql(tree)}"
        self._run(lambda: self.connection.execute(sql), purpose)
        return [name]

    def batches(self, tree: Query, purpose: str, rows: int) -> Iterator[dict[str, Any]]:
        """The rows of a query as numpy arrays per column, at most ``rows`` at a time, read
        through Arrow (no copy for fixed-width columns without NULL)."""
        sql = self._sql(tree)
        reader = self._run(lambda: self.connection.sql(sql).to_arrow_reader(rows), purpose)
        while True:
            batch = self._run(lambda: next(reader, None), purpose)
            if batch is None:
                return
            yield {name: batch.column(i).to_numpy(zero_copy_only=False) for i, name in enumerate(batch.schema.names)}

    @property
    def worker_threads(self) -> int:
        """DuckDB's own thread setting: the cores this connection was given (``--threads``)."""
        setting = self._run(lambda: self.connection.execute("SELECT current_setting('threads')").fetchone(),
                            "reading the thread setting")
        return int(setting[0])

    def release(self, table: Sequence[str]) -> None:
        sql = f"DROP TABLE IF EXISTS {render_table(table, self.dialect)}"
        self._run(lambda: self.connection.execute(sql), "dropping a temporary table")

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
            except duckdb.Error:
                # a COMMIT that failed (a full disk) has already ended the transaction, and the
                # ROLLBACK's "no transaction is active" would hide the first cause: show that one
                pass
            raise

    def _run(self, work, purpose: str):
        try:
            return super()._run(work, purpose)
        except RuntimeError as error:
            # DuckDB swallows the KeyboardInterrupt of a Ctrl-C that stops a running query and
            # raises RuntimeError("Query interrupted") instead: give the interrupt back
            if str(error).strip() == "Query interrupted":
                raise KeyboardInterrupt from error
            raise

    def _watched(self, work, purpose: str, progress: Progress | None):
        if progress is None:
            return self._run(work, purpose)
        watcher = _ProgressWatcher(self.connection, progress)
        watcher.start()
        try:
            return self._run(work, purpose)
        finally:
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
