"""``scoremon.api.score``: where it reads, where it writes, what it refuses, and that writes are whole.

Scores are checked against the independent reference scorer (``tests/reference_scorer.py``),
written from the spec's documented semantics; the column order against README "Scored
output". A write that fails part-way must leave an earlier output exactly as it was.
"""
from __future__ import annotations

import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from scoremon import api
from scoremon.cli import main
from scoremon.engines import DuckDBEngine
from scoremon.errors import EngineError, InputError
from scoremon.spec import fingerprint, load_spec
from tests.compiler.through_sql import close_pd, create_table, expected_output_names, quoted
from tests.conftest import FIXTURES
from tests.reference_scorer import score_frame

KEYS = ["application_id", "branch"]
# values on and around small.yaml's cut points (age 25 and 40, utilisation clipped to [0, 1.2]),
# NULLs, an unseen and a look-alike region; short decimals so that a CSV round trip is exact
INPUT = {
    "application_id": ("INTEGER", [1, 2, 3, 4, 5, 6, 7, 8, 9, 10]),
    "branch": ("VARCHAR", ["north", "south", "x'y", "north", None, "east", "west", "north", "south", "east"]),
    "age": ("DOUBLE", [18.0, 24.999, 25.0, 39.5, 40.0, 71.0, None, 1e6, -3.0, 33.0]),
    "region_code": ("VARCHAR", ["N1", "N2", "S1", "n1", "Q9", None, "S1 ", "N1", "S1", "N2"]),
    "utilisation": ("DOUBLE", [-0.5, 0.0, 0.3, 1.2, 1.25, None, 0.75, 2.0, 1.0, 0.1]),
    "unused": ("DOUBLE", [0.0] * 10),
}


@pytest.fixture
def spec():
    return load_spec(FIXTURES / "small.yaml")


@pytest.fixture
def sources(tmp_path, engine):
    """The same rows as a DuckDB table, a Parquet file and a CSV file."""
    create_table(engine, "applications", INPUT)
    parquet = tmp_path / "applications.parquet"
    pq.write_table(pa.table({name: pa.array(values) for name, (_, values) in INPUT.items()}), parquet)
    csv = tmp_path / "applications.csv"
    engine.connection.execute(f"COPY applications TO '{csv}' (HEADER)")
    return {"table": {"table": "applications"}, "parquet": {"file": parquet}, "csv": {"file": csv}}


def expected_rows(spec) -> pd.DataFrame:
    frame = pd.DataFrame({name: pd.Series(values, dtype=object) for name, (_, values) in INPUT.items()})
    return score_frame(spec, frame)


def read_output(engine: DuckDBEngine, target: dict) -> tuple[list[str], list[tuple]]:
    relation = quoted(target["table"]) if "table" in target else f"read_parquet('{target['file']}')"
    cursor = engine.connection.execute(f"SELECT * FROM {relation} ORDER BY application_id")
    return [d[0] for d in cursor.description], cursor.fetchall()


def tables(engine: DuckDBEngine) -> list[str]:
    return sorted(r[0] for r in engine.connection.execute("SELECT table_name FROM information_schema.tables").fetchall())


@pytest.mark.parametrize("output", ["table", "parquet"])
@pytest.mark.parametrize("reading", ["table", "parquet", "csv"])
def test_scores_each_source_into_each_target(spec, engine, sources, tmp_path, reading, output):
    target = {"table": "scored"} if output == "table" else {"file": tmp_path / "scored.parquet"}
    out = {"out_table": target["table"]} if output == "table" else {"out_file": target["file"]}
    result = api.score(spec, engine, api.source_relation(**sources[reading]), KEYS, **out)

    names, rows = read_output(engine, target)
    assert names == expected_output_names(spec, KEYS)  # README "Scored output", keys first
    expected = expected_rows(spec)
    assert len(rows) == len(expected) == result.rows
    for row, (position, want) in zip(rows, expected.iterrows()):
        got = dict(zip(names, row))
        assert [got[k] for k in KEYS] == [INPUT[k][1][position] for k in KEYS]  # keys pass through untouched
        for column, value in want.items():
            if column == "pd":
                assert close_pd(got[column], value), (column, got[column], value)
            else:
                assert got[column] == value, (column, got[column], value, position)
        assert (got["model_name"], got["model_version"], got["model_fingerprint"]) == (
            "small_test_model", "3", fingerprint(spec))
    assert result.grade_counts == dict(sorted(expected["grade"].value_counts().items()))
    assert "unused" not in names


def test_text_columns_are_plain_text_in_both_targets(spec, engine, sources, tmp_path):
    """DuckDB writes the Parquet file's text columns from ENUM values (scoremon.dialects), but
    readers see plain strings (checked with pyarrow, not DuckDB), and a scored table keeps
    VARCHAR, so a later value outside the model's labels is still accepted."""
    api.score(spec, engine, api.source_relation(table="applications"), KEYS, out_file=tmp_path / "scored.parquet")
    api.score(spec, engine, api.source_relation(table="applications"), KEYS, out_table="scored")
    text = [name for name in expected_output_names(spec, KEYS)
            if name.endswith("_bin") or name in ("grade", "reason_1", "model_name", "model_version", "model_fingerprint")]
    schema = pq.read_schema(tmp_path / "scored.parquet")
    assert {name: str(schema.field(name).type) for name in text} == {name: "string" for name in text}
    kinds = dict(engine.connection.execute("SELECT column_name, data_type FROM information_schema.columns "
                                           "WHERE table_name = 'scored'").fetchall())
    assert {name: kinds[name] for name in text} == {name: "VARCHAR" for name in text}
    engine.connection.execute("UPDATE scored SET grade = 'not a grade', model_fingerprint = 'feedfacefeedface'")


def _with_column(changes: dict) -> dict:
    columns = {name: spec for name, spec in INPUT.items() if name not in changes or changes[name] is not None}
    columns.update({name: spec for name, spec in changes.items() if spec is not None})
    return columns


@pytest.mark.parametrize("output", ["table", "parquet"])
@pytest.mark.parametrize("changes, expected", [
    ({"region_code": None}, "column 'region_code' (feature 'region', its `column:` in the spec) is not in the input"),
    ({"age": ("VARCHAR", ["30"] * 10)}, "column 'age' (feature 'age') is VARCHAR, not a number"),
    ({"region_code": ("BIGINT", list(range(10)))},
     "column 'region_code' (feature 'region') is BIGINT but the spec lists text categories"),
    ({"branch": None}, "key column 'branch' is not in the input"),
], ids=["missing column", "text for a number", "number for text categories", "missing key"])
def test_misfit_columns_are_reported_before_anything_is_written(spec, engine, tmp_path, changes, expected, output):
    create_table(engine, "applications", _with_column(changes))
    target = tmp_path / "scored.parquet"
    out = {"out_table": "scored"} if output == "table" else {"out_file": target}
    with pytest.raises(InputError) as raised:
        api.score(spec, engine, api.source_relation(table="applications"), KEYS, **out)
    assert expected in str(raised.value)
    assert tables(engine) == ["applications"]
    assert list(tmp_path.iterdir()) == []


def test_every_misfit_is_listed_at_once(spec, engine):
    create_table(engine, "applications", _with_column({"age": None, "utilisation": ("VARCHAR", ["x"] * 10)}))
    with pytest.raises(InputError) as raised:
        api.score(spec, engine, api.source_relation(table="applications"), KEYS, out_table="scored")
    message = str(raised.value)
    assert "column 'age' (feature 'age', read by its name; give it `column:` in the spec) is not in the input" in message
    assert "column 'utilisation' (feature 'utilisation') is VARCHAR, not a number" in message
    # the misfits stay a list, one per problem, so nothing has to split the message again
    assert raised.value.message == "the input does not fit the spec"
    assert [p.split(" is ")[0] for p in raised.value.problems] == [
        "column 'age' (feature 'age', read by its name; give it `column:` in the spec)",
        "column 'utilisation' (feature 'utilisation')"]


def test_the_cli_prints_each_misfit_on_its_own_line(spec, engine, tmp_path, capsys):
    database = tmp_path / "book.duckdb"
    with DuckDBEngine(str(database)) as book:
        create_table(book, "applications", _with_column({"age": None, "utilisation": ("VARCHAR", ["x"] * 10)}))
    code = main(["score", str(FIXTURES / "small.yaml"), "--db", str(database), "--table", "applications",
                 "--key", "application_id", "--out-table", "scored"])
    assert code == 2
    lines = capsys.readouterr().err.splitlines()
    assert lines[0] == "error: the input does not fit the spec"
    assert lines[1].startswith("  - column 'age' (feature 'age', read by its name; give it `column:` in the spec) is not in "
                               "the input; the nearest is")
    assert lines[2].startswith("  - column 'utilisation' (feature 'utilisation') is VARCHAR, not a number")


# ---------------------------------------------------------------- atomic writes

ROWS = 200_000


def _source_that_fails_late(engine: DuckDBEngine) -> None:
    """A view whose ``age`` is DOUBLE to DESCRIBE but whose last row cannot be cast: the query
    starts, produces rows, and fails with a conversion error while the output is being written."""
    engine.connection.execute(f"""
        CREATE VIEW applications AS
        SELECT CAST(i AS INTEGER) AS application_id, 'b' AS branch,
               CAST(CASE WHEN i = {ROWS - 1} THEN 'not a number' ELSE CAST(i % 90 AS VARCHAR) END AS DOUBLE) AS age,
               'N1' AS region_code, 0.5 AS utilisation
        FROM range({ROWS}) AS t(i)
    """)


def test_failed_table_write_leaves_the_earlier_table_intact(spec, engine):
    _source_that_fails_late(engine)
    engine.connection.execute("CREATE TABLE scored AS SELECT 'earlier run' AS note, 42 AS answer")
    before = tables(engine)
    with pytest.raises(EngineError) as raised:
        api.score(spec, engine, api.source_relation(table="applications"), KEYS, out_table="scored", replace=True)
    assert "writing the scored table" in str(raised.value)
    assert "not a number" in str(raised.value)  # the driver's conversion error is kept
    assert tables(engine) == before
    assert engine.connection.execute("SELECT * FROM scored").fetchall() == [("earlier run", 42)]


def test_failed_parquet_write_leaves_the_earlier_file_intact(spec, engine, tmp_path):
    _source_that_fails_late(engine)
    target = tmp_path / "scored.parquet"
    pq.write_table(pa.table({"note": ["earlier run"]}), target)
    earlier = target.read_bytes()
    with pytest.raises(EngineError) as raised:
        api.score(spec, engine, api.source_relation(table="applications"), KEYS, out_file=target, replace=True)
    assert "writing the scored Parquet file" in str(raised.value)
    assert target.read_bytes() == earlier
    assert sorted(p.name for p in tmp_path.iterdir()) == ["scored.parquet"]  # no partial file left


def test_the_failing_source_is_a_real_runtime_failure(engine):
    # guards the two tests above: the view describes cleanly and only fails when read in full
    _source_that_fails_late(engine)
    described = {row[0]: row[1] for row in engine.connection.execute("DESCRIBE applications").fetchall()}
    assert described["age"] == "DOUBLE"
    first = "SELECT age FROM applications WHERE application_id < 3 ORDER BY application_id"
    assert engine.connection.execute(first).fetchall() == [(0.0,), (1.0,), (2.0,)]
    with pytest.raises(Exception, match="not a number"):
        engine.connection.execute("SELECT sum(age) FROM applications").fetchall()


def test_successful_write_replaces_an_earlier_output_whole(spec, engine, sources, tmp_path):
    target = tmp_path / "scored.parquet"
    pq.write_table(pa.table({"note": ["earlier run"]}), target)
    engine.connection.execute("CREATE TABLE scored AS SELECT 'earlier run' AS note")
    api.score(spec, engine, api.source_relation(table="applications"), KEYS, out_file=target, replace=True)
    api.score(spec, engine, api.source_relation(table="applications"), KEYS, out_table="scored", replace=True)
    for where in ({"file": target}, {"table": "scored"}):
        names, rows = read_output(engine, where)
        assert names == expected_output_names(spec, KEYS)
        assert len(rows) == len(INPUT["age"][1])
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(
        ["applications.parquet", "applications.csv", "scored.parquet"])
