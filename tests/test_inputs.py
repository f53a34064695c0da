"""Inputs as people have them: column names in another case, ENUM categories, reason texts.

The scores are checked against the independent reference scorer (tests/reference_scorer.py).
"""
from __future__ import annotations

import math

import pytest

from scoremon import api
from scoremon.cli import main
from scoremon.engines import DuckDBEngine
from scoremon.errors import InputError
from tests.conftest import FIXTURES
from tests.reference_scorer import ReferenceScorer
from tests.sql import fetched, tree

SMALL = FIXTURES / "small.yaml"
ROWS = [(1, 30.0, "N1", 0.5), (2, math.nan, "S1", 1.5), (3, None, "Z9", None), (4, 22.0, None, math.nan)]


@pytest.fixture
def engine():
    engine = DuckDBEngine(":memory:")
    yield engine
    engine.close()


def reference(spec, rows) -> list[dict]:
    scorer = ReferenceScorer(spec)
    return [scorer.score_row({"age": a, "region_code": r, "utilisation": u}) for _, a, r, u in rows]


def scored(engine, table: str, columns: str) -> list[tuple]:
    spec = api.load_spec(SMALL)
    api.score(spec, engine, api.source_relation(table=table), keys=["id"], out_table="out")
    return fetched(engine, f'SELECT {columns} FROM out ORDER BY id', "reading the scores")


def test_columns_match_ignoring_case_where_the_engine_does(engine):
    # DuckDB matches names ignoring case; NaN in "AGE" must still reach the NaN test
    engine.write_rows(["book"], [("id", "BIGINT"), ("AGE", "DOUBLE"), ("Region_Code", "VARCHAR"),
                                 ("UTILISATION", "DOUBLE")], ROWS, "loading")
    spec = api.load_spec(SMALL)
    want = [(r["age_bin"], r["region_bin"], r["score"]) for r in reference(spec, ROWS)]
    assert scored(engine, "book", "age_bin, region_bin, score") == want


def test_a_missing_column_names_the_nearest_one_and_the_column_key(engine):
    engine.write_rows(["book"], [("id", "BIGINT"), ("age", "DOUBLE"), ("region", "VARCHAR"),
                                 ("utilisation", "DOUBLE")], ROWS, "loading")
    with pytest.raises(InputError) as caught:
        scored(engine, "book", "score")
    assert ("column 'region_code' (feature 'region', its `column:` in the spec) is not in the input; the nearest "
            "is 'region': rename that column or set `column: region` in the spec") in str(caught.value)


def test_enum_columns_are_categorical_text(engine):
    engine.connection.execute("CREATE TYPE code AS ENUM ('N1', 'S1', 'Z9')")  # DuckDB's own statement
    engine.write_rows(["raw"], [("id", "BIGINT"), ("age", "DOUBLE"), ("region_code", "VARCHAR"),
                                ("utilisation", "DOUBLE")], ROWS, "loading")
    engine.connection.execute("CREATE TABLE book AS SELECT id, age, CAST(region_code AS code) AS region_code, "
                              "utilisation FROM raw")
    spec = api.load_spec(SMALL)
    assert scored(engine, "book", "region_bin") == [(r["region_bin"],) for r in reference(spec, ROWS)]


def test_score_reason_text_puts_each_statement_beside_its_code(tmp_path, capsys):
    database = tmp_path / "book.duckdb"
    engine = DuckDBEngine(str(database))
    engine.write_rows(["book"], [("id", "BIGINT"), ("age", "DOUBLE"), ("region_code", "VARCHAR"),
                                 ("utilisation", "DOUBLE")], ROWS, "loading")
    engine.close()
    assert main(["score", str(SMALL), "--db", str(database), "--table", "book", "--key", "id",
                 "--out-table", "scored", "--reason-text"]) == 0
    engine = DuckDBEngine(str(database))
    rows = fetched(engine, "SELECT reason_1, reason_1_text, reason_2, reason_2_text FROM scored ORDER BY id")
    engine.close()
    texts = {"R1": "Young applicant", "R2": "Region risk", "R3": "High utilisation", None: None}
    assert rows and all(text == texts[code] for code, text, _, _ in rows)
    assert all(text == texts[code] for _, _, code, text in rows)
    assert any(code is not None for code, _, _, _ in rows)
