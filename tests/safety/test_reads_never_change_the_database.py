"""Commands that only read a DuckDB file open it read-only, so the file is never changed.

A database left with a write-ahead log (a writer that stopped before its checkpoint) is the
witness: DuckDB replays the log into the file and removes it whenever the file is opened for
writing, and reads it without touching either file when opened read-only (DuckDB
documentation, "Connect" — read_only; observed on DuckDB 2.0). A command that writes to the
database (monitor with its history, score into a table) is not a read and is not checked here.
"""
from __future__ import annotations

import hashlib
import subprocess
import sys
from pathlib import Path

import pytest

from scoremon.cli import main
from tests.monitor.book import SPEC_PATH as MONITOR_SPEC
from tests.monitor.test_cli import make_database

SPEC = Path("tests/fixtures/small.yaml").resolve()

# a writer that adds a table and dies before any checkpoint: the change stays in the log
_DIE_BEFORE_CHECKPOINT = """
import os, sys, duckdb
connection = duckdb.connect(sys.argv[1])
connection.execute("PRAGMA disable_checkpoint_on_shutdown")
connection.execute("SET wal_autocheckpoint = '1TB'")
connection.execute("CREATE TABLE apps AS SELECT age, region_code, utilisation FROM (VALUES (30.0, 'N1', 0.5), "
                   "(52.0, 'S1', 0.1)) AS t(age, region_code, utilisation)")
os._exit(0)
"""


@pytest.fixture
def logged(tmp_path) -> Path:
    database = tmp_path / "book.duckdb"
    make_database(database)  # the monitor's book: 12 months of 2024, development = the first 6
    subprocess.run([sys.executable, "-c", _DIE_BEFORE_CHECKPOINT, str(database)], check=True)
    wal = database.with_name(database.name + ".wal")
    assert wal.exists() and wal.stat().st_size > 0, "the writer left no write-ahead log to replay"
    return database


def files_of(database: Path) -> dict[str, str]:
    return {path.name: hashlib.sha256(path.read_bytes()).hexdigest()
            for path in sorted(database.parent.glob(database.name + "*"))}


@pytest.mark.parametrize("command", [
    ["diff", str(SPEC), str(SPEC), "--table", "apps"],
    ["baseline", str(MONITOR_SPEC), "--table", "development", "--outcome", "bad", "--month-column",
     "application_month", "--out", "OUT"],
    ["monitor", str(MONITOR_SPEC), "--table", "book", "--month-column", "application_month", "--outcome", "bad",
     "--baseline-table", "development", "--as-of", "2024-12-31", "--no-history"],
    ["score", str(SPEC), "--table", "apps", "--out", "OUT.parquet"],
    ["bin", "--table", "development", "--outcome", "bad", "--month-column", "application_month", "--out", "OUT"],
], ids=["diff", "baseline", "monitor --no-history", "score --out FILE", "bin"])
def test_a_read_never_changes_the_database_file(logged, tmp_path, command, capsys):
    before = files_of(logged)
    command = [str(tmp_path / f"out{part[3:] or '.yaml'}") if part.startswith("OUT") else part for part in command]
    code = main(command + ["--db", str(logged)])
    assert code in (0, 1), capsys.readouterr().err
    assert files_of(logged) == before  # the log is still there, unreplayed, and the file unchanged


def test_a_read_sees_what_the_log_holds(logged, tmp_path, capsys):
    # read-only still reads the logged change: the table made after the last checkpoint is there
    out = tmp_path / "scores.csv"
    assert main(["score", str(SPEC), "--db", str(logged), "--table", "apps", "--out", str(out)]) == 0
    assert len(out.read_text().splitlines()) == 1 + 2


def test_a_pack_never_changes_the_database_file(tmp_path, capsys):
    database = tmp_path / "book.duckdb"
    make_database(database)
    # a monitoring run writes the history the pack reads back; then a writer leaves a log
    assert main(["monitor", str(MONITOR_SPEC), "--db", str(database), "--table", "book", "--month-column",
                 "application_month", "--outcome", "bad", "--baseline-table", "development", "--as-of",
                 "2024-12-31"]) in (0, 1)
    subprocess.run([sys.executable, "-c", _DIE_BEFORE_CHECKPOINT, str(database)], check=True)
    before = files_of(database)
    assert database.name + ".wal" in before
    capsys.readouterr()
    code = main(["pack", str(MONITOR_SPEC), "--db", str(database), "--html", str(tmp_path / "pack.html")])
    assert code == 0, capsys.readouterr().err
    assert files_of(database) == before


def test_a_fit_never_changes_the_database_file(tmp_path, capsys):
    database = tmp_path / "book.duckdb"
    make_database(database)
    bins = tmp_path / "bins.yaml"  # the binning the fit reads, made before the writer leaves its log
    assert main(["bin", "--db", str(database), "--table", "development", "--outcome", "bad", "--out", str(bins)]) == 0
    subprocess.run([sys.executable, "-c", _DIE_BEFORE_CHECKPOINT, str(database)], check=True)
    before = files_of(database)
    assert database.name + ".wal" in before
    code = main(["fit", str(bins), "--db", str(database), "--out", str(tmp_path / "model.yaml"), "--folds", "1",
                 "--penalty", "none"])
    assert code == 0, capsys.readouterr().err
    assert files_of(database) == before
