"""Shared fixtures: paths and a fresh in-memory DuckDB engine per test."""
from pathlib import Path

import pytest

from scoremon.engines import DuckDBEngine

ROOT = Path(__file__).resolve().parent.parent
FIXTURES = Path(__file__).resolve().parent / "fixtures"


@pytest.fixture
def engine():
    engine = DuckDBEngine(":memory:")
    yield engine
    engine.close()


@pytest.fixture
def small_spec_path() -> Path:
    return FIXTURES / "small.yaml"
