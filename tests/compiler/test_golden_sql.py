"""Golden SQL: the DuckDB rendering of ``tests/fixtures/small.yaml``, kept as a reviewed file.

A change to the compiler or to the DuckDB rendering shows up here as a text diff to review.
The file is regenerated only on purpose, then the diff is read before committing it:

    SCOREMON_REGENERATE_GOLDEN=1 python -m pytest tests/compiler/test_golden_sql.py

The stored text is also run as it stands in DuckDB and must score like the reference scorer,
so a reviewer approves SQL that is known to work.
"""
from __future__ import annotations

import os
from pathlib import Path

import pandas as pd
import pytest

from scoremon.api import compile_sql
from scoremon.spec import load_spec
from tests.compiler.through_sql import close_pd, create_table, expected_output_names
from tests.conftest import FIXTURES
from tests.reference_scorer import score_frame

GOLDEN = Path(__file__).resolve().parent / "golden" / "small.duckdb.sql"
KEYS = ["application_id"]


@pytest.fixture(scope="module")
def spec():
    return load_spec(FIXTURES / "small.yaml")


def rendered(spec) -> str:
    """The compiled SQL without its first line, the stamp naming scoremon's version (tests/test_stamps.py)."""
    stamp, sql = compile_sql(spec, "duckdb", "input", keys=KEYS).split("\n", 1)
    assert stamp.startswith("/* ") and stamp.endswith(" */")
    return sql + "\n"


def test_duckdb_sql_for_small_spec_matches_golden_file(spec):
    sql = rendered(spec)
    if os.environ.get("SCOREMON_REGENERATE_GOLDEN") == "1":
        GOLDEN.parent.mkdir(exist_ok=True)
        GOLDEN.write_text(sql, encoding="utf-8")
    assert GOLDEN.exists(), f"{GOLDEN} is missing; regenerate on purpose (see the module docstring)"
    assert sql == GOLDEN.read_text(encoding="utf-8"), (
        "the DuckDB SQL for small.yaml changed; if on purpose, regenerate (see the module docstring) "
        "and review the diff")


def test_golden_sql_runs_and_scores_like_the_reference(spec, engine):
    columns = {
        "application_id": ("INTEGER", [1, 2, 3, 4, 5, 6, 7]),
        "age": ("DOUBLE", [24.0, 25.0, 40.0, None, float("nan"), float("inf"), -float("inf")]),
        "region_code": ("VARCHAR", ["N1", "S1", "n1", None, "N2", "S1 ", "Q"]),
        "utilisation": ("DOUBLE", [-1.0, 0.0, 0.6, 1.2, None, float("nan"), float("inf")]),
    }
    create_table(engine, "input", columns)
    cursor = engine.connection.execute(GOLDEN.read_text(encoding="utf-8"))
    names, rows = [d[0] for d in cursor.description], cursor.fetchall()
    assert names == expected_output_names(spec, KEYS)
    frame = pd.DataFrame({name: pd.Series(values, dtype=object) for name, (_, values) in columns.items()})
    expected = score_frame(spec, frame)
    rows = sorted(rows)
    for row, (_, want) in zip(rows, expected.iterrows()):
        got = dict(zip(names, row))
        for column, value in want.items():
            if column == "pd":
                assert close_pd(got[column], value)
            else:
                assert got[column] == value, (column, got[column], value)
