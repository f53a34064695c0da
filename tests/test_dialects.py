"""Rendering for every dialect: the per-dialect adjustments, and golden SQL for the dialects that
are rendered but not run in the tests (snowflake, bigquery, trino, tsql).

The golden files in tests/fixtures/golden/ are regenerated only on purpose and reviewed as a diff:
``SCOREMON_REGENERATE_GOLDEN=1 python -m pytest tests/test_dialects.py``.
"""
from __future__ import annotations

import os
import re

import duckdb
import pytest
import sqlglot

from scoremon.api import compile_sql, load_spec
from scoremon.cli import build_parser
from scoremon.compiler import compile_model, output_columns
from scoremon.dialects import DIALECTS, dialects_help, render_sql, render_type
from scoremon.trees import table_path
from scoremon.errors import InputError
from tests.conftest import FIXTURES

GOLDEN = FIXTURES / "golden"
RENDERED_ONLY = [name for name, tested in DIALECTS.items() if not tested]


@pytest.fixture(scope="module")
def edge_spec():
    return load_spec(FIXTURES / "edge_deck.yaml")


def rendered(spec, dialect: str) -> str:
    """The compiled SQL without its first line, the stamp naming scoremon's version (tests/test_stamps.py),
    so that the goldens hold the query alone."""
    stamp, sql = compile_sql(spec, dialect, "input", keys=['Row "ID"']).split("\n", 1)
    assert stamp.startswith("/* ") and stamp.endswith(" */")
    return sql


def test_every_dialect_the_issue_names_is_rendered_and_the_run_ones_are_marked():
    assert set(DIALECTS) == {"duckdb", "postgres", "spark", "snowflake", "bigquery", "trino", "tsql"}
    assert [name for name, tested in DIALECTS.items() if tested] == ["duckdb", "postgres", "spark"]
    text = dialects_help()
    assert "snowflake, bigquery, trino, tsql (rendered only, not run in the tests)" in text
    compile_help = build_parser()._subparsers._group_actions[0].choices["compile"].format_help()
    assert "rendered only, not run in the tests" in " ".join(compile_help.split())


@pytest.mark.parametrize("dialect", RENDERED_ONLY)
def test_rendered_only_dialects_match_their_golden_sql(edge_spec, dialect):
    sql = rendered(edge_spec, dialect) + "\n"
    path = GOLDEN / f"edge_deck.{dialect}.sql"
    if os.environ.get("SCOREMON_REGENERATE_GOLDEN") == "1":
        path.parent.mkdir(exist_ok=True)
        path.write_text(sql, encoding="utf-8")
    assert path.exists(), f"{path} is missing; regenerate on purpose (see the module docstring)"
    assert sql == path.read_text(encoding="utf-8")


@pytest.mark.parametrize("dialect", list(DIALECTS))
def test_each_dialect_reads_its_own_rendering_back(edge_spec, dialect):
    # a syntax check by sqlglot's own parser for the dialect (our generated SQL, not user text)
    sql = rendered(edge_spec, dialect)
    tree = sqlglot.parse_one(sql, read=dialect)
    assert tree.find(sqlglot.exp.With) is not None


def test_postgres_fences_every_scoring_step_and_spark_does_not(edge_spec):
    # OFFSET 0 keeps PostgreSQL from pulling a step up into the next and copying its expressions
    steps = len(list(compile_model(edge_spec, table_path(["input"])).find_all(sqlglot.exp.CTE)))
    postgres = rendered(edge_spec, "postgres")
    assert steps >= 4 and len(re.findall(r"\bOFFSET 0\b", postgres)) == steps
    for dialect in ("duckdb", "spark"):
        assert "OFFSET" not in rendered(edge_spec, dialect) and "MATERIALIZED" not in rendered(edge_spec, dialect)


def test_nan_and_infinity_tests_per_dialect(edge_spec):
    # NaN ≠ NaN on BigQuery and Trino (IEEE comparison): IS_NAN there
    for dialect in ("bigquery", "trino"):
        sql = rendered(edge_spec, dialect)
        assert "'NaN'" not in sql and "IS_NAN(" in sql
    assert "CAST('inf' AS FLOAT64)" in rendered(edge_spec, "bigquery")
    assert "INFINITY()" in rendered(edge_spec, "trino")
    assert "CAST('inf' AS DOUBLE)" in rendered(edge_spec, "snowflake")
    # SQL Server's FLOAT holds neither NaN nor infinity: those tests are false there
    tsql = rendered(edge_spec, "tsql")
    assert "NaN" not in tsql and "Infinity" not in tsql and "WHEN 1 = 0" in tsql and "DOUBLE" not in tsql
    assert "CAST('NaN' AS DOUBLE PRECISION)" in rendered(edge_spec, "postgres")
    assert "CAST('NaN' AS DOUBLE)" in rendered(edge_spec, "spark")


def test_hostile_names_are_quoted_for_every_dialect(edge_spec):
    quoted = {
        "duckdb": '"x""; DROP TABLE t; --"', "postgres": '"x""; DROP TABLE t; --"', "trino": '"x""; DROP TABLE t; --"',
        "snowflake": '"x""; DROP TABLE t; --"', "spark": '`x"; DROP TABLE t; --`', "bigquery": '`x"; DROP TABLE t; --`',
        "tsql": '[x"; DROP TABLE t; --]',
    }
    for dialect, name in quoted.items():
        sql = rendered(edge_spec, dialect)
        assert name in sql, dialect
        # the category value is a literal, its quote doubled or escaped
        assert ("'O''Brien'" in sql) or ("'O\\'Brien'" in sql), dialect


def test_column_kinds_and_unknown_dialects():
    assert render_type("DOUBLE", "postgres") == "DOUBLE PRECISION"
    assert render_type("VARCHAR", "spark") == "STRING"
    with pytest.raises(InputError, match="not one of"):
        render_type("BLOB", "duckdb")
    with pytest.raises(InputError, match="unknown dialect 'mysql'"):
        compile_sql(load_spec(FIXTURES / "small.yaml"), "mysql")


def test_tsql_writes_unicode_text_as_national_literals(edge_spec):
    tsql = rendered(edge_spec, "tsql")
    assert "N'日本'" in tsql and "N'Zürich'" in tsql and "'N1'" in tsql and "N'N1'" not in tsql


def test_text_constants_become_enum_only_when_duckdb_writes_parquet(edge_spec):
    tree = compile_model(edge_spec, sqlglot.exp.to_table("input"))
    plain, parquet = render_sql(tree, "duckdb"), render_sql(tree, "duckdb", for_parquet=True)
    assert "ENUM(" not in plain
    # the grade CASE, every label list, the reason codes and the three identity columns
    assert parquet.count("AS ENUM(") >= 3 + len(edge_spec.features) + 3
    assert re.search(r"CAST\('[^']*' AS ENUM\('[^']*'\)\) AS \"model_fingerprint\"", parquet)
    sqlglot.parse_one(parquet, read="duckdb")  # DuckDB's grammar as sqlglot knows it
    for dialect in ("postgres", "spark"):
        assert render_sql(tree, dialect, for_parquet=True) == render_sql(tree, dialect)


def test_every_text_column_duckdb_writes_to_parquet_is_an_enum(edge_spec):
    # run the SQL on DuckDB over an empty table: the output's column types are what it would write
    # (the edge deck has a numeric feature long enough to be binned in runs of edges)
    kinds = {}
    for feature in edge_spec.features:
        values = getattr(feature, "groups", None)
        numbers = values is not None and isinstance(values[0].values[0], int)
        kinds[feature.column or feature.name] = "VARCHAR" if values is not None and not numbers else "DOUBLE"
    columns = ", ".join(f'"{name.replace(chr(34), 2 * chr(34))}" {kind}' for name, kind in kinds.items())
    tree = compile_model(edge_spec, sqlglot.exp.to_table("input"))
    with duckdb.connect() as connection:
        connection.execute(f"CREATE TABLE input ({columns})")
        described = connection.execute(f"DESCRIBE {render_sql(tree, 'duckdb', for_parquet=True)}").fetchall()
        plain = connection.execute(f"DESCRIBE {render_sql(tree, 'duckdb')}").fetchall()
    text_columns = [name for name, kind, *_ in plain if kind == "VARCHAR"]
    assert len(text_columns) == len(edge_spec.features) + 1 + len(output_columns(edge_spec).reasons) + 3
    types = {name: kind for name, kind, *_ in described}
    assert [name for name in text_columns if not types[name].startswith("ENUM(")] == []
