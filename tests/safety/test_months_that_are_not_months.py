"""Months that are not months: a stray date far from the book is counted and reported as out
of range, never turned into hundreds of empty months; `baseline` and `monitor` read month
values with one parser and one rule, so a value one refuses the other refuses too.

The rule (README, "Months out of range"): a month is in range when it is one of the
MONTHS_IN_RANGE months ending with the as-of month (monitor: --as-of; baseline: the day it
runs); months after it are left out as not yet happened.
"""
from __future__ import annotations

import json

import duckdb
import pytest
import yaml

from scoremon.cli import main
from scoremon.monitor.months import MONTHS_IN_RANGE
from tests.monitor.book import SPEC_PATH
from tests.monitor.test_cli import make_database


@pytest.fixture
def book(tmp_path):
    database = tmp_path / "book.duckdb"
    make_database(database)  # 12 months, 2024-01 to 2024-12, 300 rows each; development = the first 6
    return database


def add_rows(database, table: str, dates: list[str]) -> None:
    connection = duckdb.connect(str(database))
    for day in dates:
        connection.execute(f"INSERT INTO {table} SELECT * REPLACE (DATE '{day}' AS application_month) FROM {table} "
                           "LIMIT 1")
    connection.close()


def baseline(database, tmp_path, table="development", column="application_month") -> tuple[int, str]:
    out = tmp_path / f"{table}_{column}.yaml"
    code = main(["baseline", str(SPEC_PATH), "--db", str(database), "--table", table, "--outcome", "bad",
                 "--month-column", column, "--out", str(out)])
    return code, str(out)


@pytest.mark.parametrize("day", ["1900-01-01", "0001-01-01"])
def test_a_stray_old_date_is_counted_out_of_range_not_expanded_into_months(book, tmp_path, capsys, day):
    add_rows(book, "book", [day])
    code, spec = baseline(book, tmp_path)
    assert code == 0
    capsys.readouterr()
    json_file = tmp_path / "run.json"
    code = main(["monitor", spec, "--db", str(book), "--table", "book", "--month-column", "application_month",
                 "--outcome", "bad", "--as-of", "2024-12-31", "--json", str(json_file)])
    out = capsys.readouterr().out
    assert code in (0, 1)
    data = json.loads(json_file.read_text())
    assert [m["month"] for m in data["months"]] == [f"2024-{k:02d}" for k in range(1, 13)]
    assert data["rows_out_of_range"] == 1
    assert "1 row out of range" in " ".join(out.split())
    connection = duckdb.connect(str(book), read_only=True)
    stored = connection.execute("SELECT value FROM scoremon_monitor_metrics WHERE metric = 'rows_out_of_range'"
                                ).fetchall()
    connection.close()
    assert stored == [(1.0,)]


def test_the_month_list_never_exceeds_the_range(book, tmp_path, capsys):
    # rows 30, 11 and 9 years before the as-of date: the first two are out of range and counted,
    # the third starts the month list
    add_rows(book, "book", ["1994-06-15", "2014-01-01", "2016-03-01"])
    code, spec = baseline(book, tmp_path)
    json_file = tmp_path / "run.json"
    main(["monitor", spec, "--db", str(book), "--table", "book", "--month-column", "application_month",
          "--as-of", "2024-12-31", "--no-history", "--json", str(json_file)])
    data = json.loads(json_file.read_text())
    assert len(data["months"]) <= MONTHS_IN_RANGE
    assert data["months"][0]["month"] == "2016-03"  # the range: the 120 months 2015-01 to 2024-12
    assert data["rows_out_of_range"] == 2


def test_baseline_leaves_out_of_range_rows_out_and_says_so(book, tmp_path, capsys):
    add_rows(book, "development", ["1900-01-01"])
    code, spec = baseline(book, tmp_path)
    out, err = capsys.readouterr()
    assert code == 0
    written = yaml.safe_load(open(spec))["baseline"]
    assert written["rows"] == 1_800 and written["rows_per_month"] == 300  # six months, not 1,500
    assert written["rows_out_of_range"] == 1
    assert "1 row out of range" in " ".join((out + err).split())


@pytest.mark.parametrize("kind, values", [
    ("VARCHAR", ["garbage"]),
    ("VARCHAR", ["2024-01-15"]),
    ("INTEGER", [202513]),
], ids=["garbage", "a text date", "month 13"])
def test_baseline_and_monitor_refuse_the_same_month_values(book, tmp_path, capsys, kind, values):
    connection = duckdb.connect(str(book))
    for table in ("book", "development"):
        month = "strftime(application_month, '%Y-%m')" if kind == "VARCHAR" else \
            "CAST(strftime(application_month, '%Y%m') AS INTEGER)"
        connection.execute(f"CREATE TABLE {table}_m AS SELECT * EXCLUDE (application_month), {month} AS m FROM {table}")
        for value in values:
            literal = f"'{value}'" if kind == "VARCHAR" else str(value)
            connection.execute(f"INSERT INTO {table}_m SELECT * REPLACE ({literal} AS m) FROM {table}_m LIMIT 1")
    connection.close()
    code, _ = baseline(book, tmp_path, "development_m", "m")
    baseline_err = capsys.readouterr().err
    assert code == 2
    code = main(["monitor", str(SPEC_PATH), "--db", str(book), "--table", "book_m", "--month-column", "m",
                 "--as-of", "2024-12-31", "--baseline-table", "development", "--no-history"])
    monitor_err = capsys.readouterr().err
    assert code == 2
    assert baseline_err == monitor_err
    assert str(values[0]) in baseline_err
