"""Spark SQL through pyspark: a local session or a cluster's master.

URLs (see :func:`spark_master`): ``spark://local`` (one core), ``spark://local[N]`` or
``spark://local[*]`` run Spark inside this process; any other ``spark://HOST:PORT`` is a standalone
master. ``?key=value`` pairs whose key starts with ``spark.`` are passed to the session's
configuration, e.g. ``spark://local[2]?spark.sql.warehouse.dir=/data/warehouse``.

**Writes are best-effort atomic.** Spark's catalogs have no transactions, so a table cannot be
swapped in one step. :meth:`SparkEngine.write_table` therefore builds the whole result under a
scratch name first (a failure there leaves the old table untouched and the scratch table
dropped), then renames the old table aside, renames the new one in, and drops the old one. If
the rename in fails, the old table is renamed back. Only if the process dies between the two
renames is the table briefly missing; the old result is then still there under the name
``__scoremon_old_<hex>`` and the new one under ``__scoremon_new_<hex>`` in the same database.
"""
from __future__ import annotations

import logging
import os
import re
import uuid
from typing import TYPE_CHECKING, Any, Mapping, Sequence
from urllib.parse import parse_qsl

from sqlglot import exp

from ..dialects import render_table
from ..errors import EngineError, InputError
from ..trees import INTERNAL, table_path
from .columns import column_of
from .protocol import Column, ColumnSpec, Engine, Progress, Query, Row, first_line, named_rows
from .rows import arrow_table

if TYPE_CHECKING:  # pandas is imported where a frame is made
    import pandas as pd
_LOCAL = re.compile(r"^local(\[(\d+|\*)\])?$")
# Spark's session catalog accepts only these table and schema names (INVALID_SCHEMA_OR_RELATION_NAME)
_CATALOG_NAME = re.compile(r"^[A-Za-z0-9_]+$")


def spark_master(url: str, threads: int | None = None) -> tuple[str, dict[str, str]]:
    """``spark://…`` → (Spark master, configuration); raises :class:`InputError` for a bad URL.

    >>> spark_master("spark://local[2]")
    ('local[2]', {})
    >>> spark_master("spark://spark-head:7077?spark.executor.memory=4g")
    ('spark://spark-head:7077', {'spark.executor.memory': '4g'})
    """
    if not url.startswith("spark://"):
        raise InputError(f"Spark URL {url!r} must start with spark://")
    target, _, query = url[len("spark://"):].partition("?")
    config = dict(parse_qsl(query, keep_blank_values=True))
    unknown = [key for key in config if not key.startswith("spark.")]
    if unknown:
        raise InputError(f"Spark URL option(s) {', '.join(unknown)} are not Spark settings (spark.…)")
    if not target:
        raise InputError("Spark URL names no master; use spark://local[N] for a local session or spark://HOST:PORT")
    if _LOCAL.match(target):
        if target == "local" and threads:
            target = f"local[{int(threads)}]"
        return target, config
    return f"spark://{target}", config


class SparkEngine(Engine):
    """Spark SQL, e.g. ``SparkEngine("local[2]")`` or ``SparkEngine("spark://head:7077")``.

    A Spark session already running in this process is reused (Spark allows one per process)
    and left running by :meth:`close`; a session this engine started is stopped by it.
    """

    dialect = "spark"
    is_transactional = False  # see execute_atomically and write_table: best effort
    reads_files = False
    writes_parquet = False
    streams_batches = False  # a server: the fit's passes stay aggregate queries
    worker_threads = 1  # nothing is streamed

    def __init__(self, master: str = "local[1]", config: Mapping[str, str] | None = None):
        # pyspark is an optional, heavy extra (``scoremon[engines]``; it starts a JVM): imported
        # only when a Spark URL is opened.
        try:
            from py4j.protocol import Py4JError
            from pyspark.errors import PySparkException
            from pyspark.logger import PySparkLogger
            from pyspark.sql import SparkSession
        except ImportError as error:
            raise InputError("a Spark URL needs pyspark; install it with: pip install 'scoremon[engines]'") from error
        self._driver_errors = (PySparkException, Py4JError)
        # pyspark logs every failed query's error itself; scoremon reports it as an EngineError
        for name in ("SQLQueryContextLogger", "DataFrameQueryContextLogger"):
            PySparkLogger.getLogger(name).setLevel(logging.CRITICAL)
        self.label = f"spark {master}"
        active = SparkSession.getActiveSession()
        if active is not None:
            self.session, self._owns_session = active, False
            return
        settings = {
            "spark.ui.enabled": "false",
            "spark.ui.showConsoleProgress": "false",
            # as many shuffle partitions as cores: the default 200 makes small GROUP BYs crawl
            "spark.sql.shuffle.partitions": str(_cores(master)),
            # ANSI mode is the behaviour the compiled SQL was checked under (errors, not NULLs)
            "spark.sql.ansi.enabled": "true",
            "spark.sql.session.timeZone": "UTC",
            "spark.sql.execution.arrow.pyspark.enabled": "true",
        }
        if _LOCAL.match(master):
            # a session inside this process talks only to itself: keep it on loopback rather than
            # the first network interface Spark would otherwise pick
            settings.update({"spark.driver.host": "127.0.0.1", "spark.driver.bindAddress": "127.0.0.1"})
            # read by the JVM at launch, before any setting: without it Spark resolves the host
            # name, warns, and uses an interface address (only if the user has not chosen one)
            os.environ.setdefault("SPARK_LOCAL_IP", "127.0.0.1")
        settings.update(config or {})
        builder = SparkSession.builder.master(master).appName("scoremon")
        for key, value in settings.items():
            builder = builder.config(key, value)
        try:
            self.session = builder.getOrCreate()
        except self._driver_errors as error:
            raise EngineError("starting a Spark session", self.label, first_line(error)) from error
        self.session.sparkContext.setLogLevel("ERROR")
        self._owns_session = True

    @property
    def ignores_column_case(self) -> bool:
        """Spark resolves column names ignoring case unless ``spark.sql.caseSensitive`` is on."""
        return str(self.session.conf.get("spark.sql.caseSensitive", "false")).lower() != "true"

    # -- the protocol

    def execute(self, statement: Query, purpose: str) -> None:
        sql = self._sql(statement)
        self._run(lambda: self.session.sql(sql).collect(), purpose)

    def query(self, tree: Query, purpose: str, progress: Progress | None = None) -> list[Row]:
        sql = self._sql(tree)

        def work():
            result = self.session.sql(sql)
            return named_rows(result.columns, [tuple(row) for row in result.collect()])

        rows = self._run(work, purpose)
        if progress:
            progress(1.0)
        return rows

    def query_frame(self, tree: Query, purpose: str) -> pd.DataFrame:
        import pandas as pd

        sql = self._sql(tree)

        # built from collected rows: pyspark's toPandas does not yet support pandas 3
        def work():
            result = self.session.sql(sql)
            return pd.DataFrame.from_records([tuple(row) for row in result.collect()], columns=result.columns)

        return self._run(work, purpose)

    def describe(self, tree: Query, purpose: str) -> list[Column]:
        """Each column with its kind, from Spark's type names (``DOUBLE``, ``STRING``, ``INT``, …); runs nothing."""
        sql = self._sql(tree)
        schema = self._run(lambda: self.session.sql(sql).schema, purpose)
        return [column_of(field.name, field.dataType.simpleString().upper(), self.dialect) for field in schema.fields]

    def explain(self, tree: Query, purpose: str) -> str:
        sql = self._sql(tree)
        rows = self._run(lambda: self.session.sql(f"EXPLAIN EXTENDED {sql}").collect(), purpose)
        return "\n".join(str(row[0]) for row in rows)

    def write_parquet(self, tree: Query, path, purpose: str, progress: Progress | None = None) -> None:
        self.write_file(tree, path, purpose, progress)

    def write_file(self, tree: Query, path, purpose: str, progress: Progress | None = None,
                   file_format: str = "parquet") -> None:
        raise InputError("writing a Parquet or CSV file needs the DuckDB engine; write a table instead")

    def write_table(self, tree: Query, table: Sequence[str], purpose: str, progress: Progress | None = None) -> None:
        """Replace ``table`` with the result of a query, best-effort atomic (see the module docstring)."""
        table = list(table)
        _check_catalog_name(table)
        sql = self._sql(tree)
        token = uuid.uuid4().hex
        scratch = table[:-1] + [f"{INTERNAL}new_{token}"]
        aside = table[:-1] + [f"{INTERNAL}old_{token}"]
        target, new, old = (render_table(t, self.dialect) for t in (table, scratch, aside))
        try:
            self._run(lambda: self.session.sql(f"CREATE TABLE {new} USING PARQUET AS {sql}").collect(), purpose)
        except BaseException:
            self._drop_quietly(new)
            raise
        had_table = self._run(lambda: self._exists(table), purpose)
        if had_table:
            self._run(lambda: self.session.sql(f"ALTER TABLE {target} RENAME TO {old}").collect(), purpose)
        try:
            self._run(lambda: self.session.sql(f"ALTER TABLE {new} RENAME TO {target}").collect(), purpose)
        except BaseException:
            if had_table:
                self._run(lambda: self.session.sql(f"ALTER TABLE {old} RENAME TO {target}").collect(), purpose)
            self._drop_quietly(new)
            raise
        if had_table:
            self._run(lambda: self.session.sql(f"DROP TABLE {old}").collect(), purpose)
        if progress:
            progress(1.0)

    def write_rows(self, table: Sequence[str], columns: Sequence[ColumnSpec], rows: Sequence[Sequence[Any]],
                   purpose: str) -> None:
        """Replace ``table`` with ``rows``: a DataFrame with an explicit schema (Arrow's), then
        :meth:`write_table`. Spark's DOUBLE keeps NaN and ±inf apart from NULL."""
        _check_catalog_name(table)
        data = arrow_table(columns, rows)
        view = f"{INTERNAL}rows_{uuid.uuid4().hex}"
        self._run(lambda: self.session.createDataFrame(data).createOrReplaceTempView(view), purpose)
        try:
            self.write_table(exp.select(exp.Star()).from_(table_path([view])), table, purpose)
        finally:
            self.session.catalog.dropTempView(view)

    def execute_atomically(self, statements: Sequence[Query], purpose: str) -> None:
        """Run ``statements`` in order, best effort: Spark's catalogs have no transactions.

        Each statement is atomic on its own (an INSERT commits its files whole or not at all), but
        a failure part-way leaves the statements before it in effect; the error says how many.
        """
        texts = [self._sql(statement) for statement in statements]
        for done, text in enumerate(texts):
            try:
                self._run(lambda: self.session.sql(text).collect(), purpose)
            except EngineError as error:
                if done:
                    raise EngineError(f"{purpose} (Spark has no transactions: the first {done} of "
                                      f"{len(texts)} statements took effect)", self.label,
                                      error.detail) from error.__cause__
                raise

    def close(self) -> None:
        if self._owns_session:
            self.session.stop()

    # -- helpers

    def _exists(self, table: list[str]) -> bool:
        # the catalog parses the name as a (multi-part) identifier: hand it the quoted rendering
        return self.session.catalog.tableExists(render_table(table, self.dialect))

    def _drop_quietly(self, rendered: str) -> None:
        try:
            self.session.sql(f"DROP TABLE IF EXISTS {rendered}").collect()
        except self._driver_errors:  # cleaning up after a failure: the first error is the one reported
            pass



def _check_catalog_name(table: list[str]) -> None:
    bad = [part for part in table if not _CATALOG_NAME.match(part)]
    if bad:
        raise InputError(f"Spark cannot name a table or schema {bad[0]!r}: its catalog accepts letters, digits "
                         "and _ only; choose such a name (column names may hold any character)")


def _cores(master: str) -> int:
    found = _LOCAL.match(master)
    if not found:
        return 8
    count = found.group(2)
    if count is None:
        return 1
    return (os.cpu_count() or 2) if count == "*" else int(count)

