"""Shared fixtures: paths, a fresh in-memory DuckDB engine per test, and ``each_engine``.

``each_engine`` runs a test once per engine the suite runs for real (ids = dialect names:
duckdb, postgres, spark). PostgreSQL and Spark start once per session, only when a test asks
for them (see ``tests/engines/servers.py``). Each test gets its own PostgreSQL schema or Spark
database, dropped afterwards. An engine that cannot start is skipped with the reason locally;
in CI (``CI`` set to true) it fails the run.
"""
from __future__ import annotations

import os
import uuid
from contextlib import contextmanager
from pathlib import Path

import pytest

from scoremon.dialects import DIALECTS, render_name
from scoremon.engines import DuckDBEngine, open_engine
from tests.engines.servers import EngineStartError, PostgresServer, start_spark
from tests.sql import tree

ROOT = Path(__file__).resolve().parent.parent
FIXTURES = Path(__file__).resolve().parent / "fixtures"
ENGINES_RUN = [name for name, tested in DIALECTS.items() if tested]


def in_ci() -> bool:
    return os.environ.get("CI", "").strip().lower() in ("1", "true", "yes")


def engine_unavailable(reason: str):
    """Fail in CI, skip with the reason elsewhere: never a silent pass."""
    if in_ci():
        pytest.fail(f"CI needs every engine: {reason}", pytrace=False)
    pytest.skip(reason)


@pytest.fixture
def engine():
    engine = DuckDBEngine(":memory:")
    yield engine
    engine.close()


@pytest.fixture
def small_spec_path() -> Path:
    return FIXTURES / "small.yaml"


@pytest.fixture(scope="session")
def postgres_server():
    try:
        server = PostgresServer.start()
    except EngineStartError as error:
        engine_unavailable(f"PostgreSQL could not start: {error}")
    yield server
    server.stop()


@pytest.fixture(scope="session")
def spark_engine(tmp_path_factory):
    try:
        engine = start_spark(tmp_path_factory.mktemp("spark-warehouse"))
    except EngineStartError as error:
        engine_unavailable(str(error))
    yield engine
    engine.close()


@contextmanager
def open_test_engine(request, name: str):
    """Engine ``name`` for one test; what the test made is dropped afterwards.

    ``engine.test_url`` is a URL that opens the same database again (for CLI tests).
    """
    scratch = f"test_{uuid.uuid4().hex[:12]}"
    if name == "duckdb":
        url = str(request.getfixturevalue("tmp_path") / "test.duckdb")
        engine = open_engine(url)
        engine.test_url = url
        try:
            yield engine
        finally:
            engine.close()
    elif name == "postgres":
        server = request.getfixturevalue("postgres_server")
        admin = open_engine(server.url)
        admin.execute(tree(f"CREATE SCHEMA {render_name(scratch, 'postgres')}", "postgres"), "making a test schema")
        separator = "&" if "?" in server.url else "?"
        url = f"{server.url}{separator}options=-csearch_path%3D{scratch}"
        engine = open_engine(url)
        engine.test_url = url
        try:
            yield engine
        finally:
            engine.close()
            admin.execute(tree(f"DROP SCHEMA {render_name(scratch, 'postgres')} CASCADE", "postgres"),
                          "dropping a test schema")
            admin.close()
    elif name == "spark":
        shared = request.getfixturevalue("spark_engine")
        database = render_name(scratch, "spark")
        shared.execute(tree(f"CREATE DATABASE {database}", "spark"), "making a test database")
        shared.execute(tree(f"USE {database}", "spark"), "using the test database")
        engine = open_engine("spark://local[1]")  # reuses the running session, as a library user's would
        engine.test_url = "spark://local[1]"
        try:
            yield engine
        finally:
            engine.close()
            shared.execute(tree("USE default", "spark"), "leaving the test database")
            shared.execute(tree(f"DROP DATABASE {database} CASCADE", "spark"), "dropping a test database")
    else:
        raise ValueError(f"no test engine {name!r}")


@pytest.fixture(params=ENGINES_RUN, ids=ENGINES_RUN)
def each_engine(request):
    """The test runs once on each engine; the engine's ``dialect`` says which."""
    with open_test_engine(request, request.param) as engine:
        yield engine
