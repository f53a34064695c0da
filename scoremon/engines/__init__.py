"""The only package that talks to a database.

A small connection protocol (:class:`Engine`): run a statement, fetch rows, describe a
query's columns, and write a query's result atomically to a table. Each engine implements it in
its own module; :func:`open_engine` picks one from a URL.
"""
from __future__ import annotations

from ..errors import InputError
from .duckdb_engine import DuckDBEngine
from .protocol import Engine, Progress

__all__ = ["DuckDBEngine", "Engine", "Progress", "open_engine"]


def open_engine(url: str | None = None, threads: int | None = None, memory_limit: str | None = None) -> DuckDBEngine:
    """The engine named by ``url``: a DuckDB file path or ``:memory:`` (the default)."""
    if url is None or url in ("", ":memory:", "duckdb://", "duckdb:///:memory:"):
        return DuckDBEngine(":memory:", threads, memory_limit)
    if url.startswith("duckdb://"):
        url = url[len("duckdb://"):]
    if "://" in url:
        raise InputError(f"engine URL {url!r} is not one scoremon knows; give a DuckDB file path or :memory:")
    return DuckDBEngine(url, threads, memory_limit)
