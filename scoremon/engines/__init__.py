"""The only package that talks to a database.

A small connection protocol (:class:`Engine`, in ``protocol``) over sqlglot trees, which each
engine renders itself: run a statement, read named rows or a frame, describe a query's columns
in portable kinds (``columns``), write a query's result or a batch of rows atomically to a table;
capabilities declared on the engine.
Each engine implements it in its own module — ``duckdb_engine``, ``postgres`` (psycopg 3) and
``spark`` (pyspark) — and :func:`open_engine` picks one from a URL.
"""
from __future__ import annotations

from importlib import import_module

from ..errors import InputError

# Each name is imported from its module when first asked for: an engine's module imports its
# driver (duckdb, psycopg, pyspark) and the protocol imports sqlglot, and `scoremon --help` or
# `scoremon check` needs none of them.
_ENGINE_MODULES = {"DuckDBEngine": ".duckdb_engine", "PostgresEngine": ".postgres", "SparkEngine": ".spark",
                   "spark_master": ".spark",
                   **{name: ".protocol" for name in ("KINDS", "Column", "ColumnSpec", "Engine", "Progress", "Query",
                                                     "Row", "Statement")}}


def _load(name: str):
    return getattr(import_module(_ENGINE_MODULES[name], __name__), name)


def __getattr__(name: str):
    if name in _ENGINE_MODULES:
        return _load(name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")

__all__ = ["KINDS", "Column", "ColumnSpec", "DuckDBEngine", "Engine", "PostgresEngine", "Progress", "Query", "Row",
           "SparkEngine", "Statement", "open_engine"]

ENGINE_URLS = (
    "a DuckDB file or :memory: (the default), "
    "postgresql://USER@HOST:PORT/DATABASE (PostgreSQL), "
    "spark://local[N] (a local Spark session with N cores) or spark://HOST:PORT (a Spark master)"
)


def open_engine(url: str | None = None, threads: int | None = None, memory_limit: str | None = None) -> Engine:
    """The engine named by ``url``; see :data:`ENGINE_URLS`.

    ``threads`` sets DuckDB's threads, or the cores of a plain ``spark://local`` session;
    ``memory_limit`` is DuckDB's. Raises :class:`InputError` for a URL scoremon does not know,
    :class:`~scoremon.errors.EngineError` when the engine refuses to start.

    >>> engine = open_engine(":memory:")
    >>> engine.dialect
    'duckdb'
    >>> engine.close()
    """
    if url is None or url in ("", ":memory:", "duckdb://", "duckdb:///:memory:"):
        return _load("DuckDBEngine")(":memory:", threads, memory_limit)
    scheme = url.partition("://")[0].lower() if "://" in url else ""
    if scheme in ("postgresql", "postgres"):
        return _load("PostgresEngine")(url)
    if scheme == "spark":
        master, config = _load("spark_master")(url, threads)
        return _load("SparkEngine")(master, config)
    if scheme == "duckdb":
        url = url[len("duckdb://"):]
    elif scheme:
        raise InputError(f"engine URL scheme {scheme!r} is not one scoremon knows; give {ENGINE_URLS}")
    return _load("DuckDBEngine")(url, threads, memory_limit)
