"""Never destroy a user's data: scoremon refuses, before any work, to write over its input, the
DuckDB database file, a spec or the monitoring history, replaces an existing output only with
--replace, writes every file whole or not at all, and refuses an empty input unless asked.

Each test keeps a copy of what must survive and compares it byte for byte (or row for row).
"""
from __future__ import annotations

import errno
import os
import shutil
import socket
import subprocess
import sys
from pathlib import Path

import duckdb
import pandas as pd
import pytest

from scoremon import files
from scoremon.cli import main
from tests.monitor.book import SPEC_PATH as MONITOR_SPEC
from tests.monitor.test_cli import make_database

SPEC = Path("tests/fixtures/small.yaml").resolve()
BOOK_ROWS = [(30.0, "N1", 0.5), (52.0, "S1", 0.1), (19.0, "W1", 1.1)]


@pytest.fixture
def database(tmp_path) -> Path:
    path = tmp_path / "warehouse.duckdb"
    connection = duckdb.connect(str(path))
    connection.execute("CREATE TABLE book (age DOUBLE, region_code VARCHAR, utilisation DOUBLE)")
    connection.executemany("INSERT INTO book VALUES (?, ?, ?)", BOOK_ROWS)
    connection.execute("CREATE TABLE empty_book AS SELECT * FROM book WHERE false")
    connection.execute("CREATE TABLE scoremon_monitor_runs (run_id VARCHAR)")
    connection.execute("INSERT INTO scoremon_monitor_runs VALUES ('an earlier run')")
    connection.close()
    return path


def rows(database: Path, table: str) -> list[tuple]:
    connection = duckdb.connect(str(database), read_only=True)
    try:
        return sorted(connection.execute(f'SELECT * FROM "{table}"').fetchall(), key=repr)
    finally:
        connection.close()


def score(database: Path, *options: str) -> int:
    return main(["score", str(SPEC), "--db", str(database), *options])


# ---------------------------------------------------------------- outputs that are inputs

@pytest.mark.parametrize("name", ["book", "BOOK", "main.book", "Main.Book"])
def test_score_never_writes_over_its_input_table(database, name, capsys):
    assert score(database, "--table", "book", "--out-table", name, "--replace") == 2
    assert f"--out-table {name} is the input table" in capsys.readouterr().err
    assert rows(database, "book") == sorted(BOOK_ROWS, key=repr)


@pytest.mark.parametrize("name", ["scoremon_monitor_runs", "SCOREMON_MONITOR_METRICS", "main.scoremon_monitor_runs"])
def test_score_never_writes_over_the_monitoring_history(database, name, capsys):
    assert score(database, "--table", "book", "--out-table", name, "--replace") == 2
    assert f"--out-table {name} is a monitoring history table" in capsys.readouterr().err
    assert rows(database, "scoremon_monitor_runs") == [("an earlier run",)]


def test_score_never_writes_over_its_input_file(tmp_path, capsys):
    data = tmp_path / "book.parquet"
    pd.DataFrame(BOOK_ROWS, columns=["age", "region_code", "utilisation"]).to_parquet(data)
    before = data.read_bytes()
    assert main(["score", str(SPEC), "--input", str(data), "--out", str(tmp_path / "." / "book.parquet"),
                 "--replace"]) == 2
    assert "is the input file" in capsys.readouterr().err
    assert data.read_bytes() == before


def test_score_never_writes_over_the_database_file(tmp_path, capsys):
    # a database file whose name ends like an output file, so that only the database rule stops it
    database = tmp_path / "warehouse.parquet"
    connection = duckdb.connect(str(database))
    connection.execute("CREATE TABLE book AS SELECT 30.0::DOUBLE AS age, 'N1' AS region_code, 0.5::DOUBLE AS utilisation")
    connection.close()
    before = database.read_bytes()
    assert score(database, "--table", "book", "--out", str(database), "--replace") == 2
    assert "is the DuckDB database file" in capsys.readouterr().err
    assert database.read_bytes() == before


def test_score_never_writes_over_the_spec_even_through_a_link(database, tmp_path, capsys):
    spec = tmp_path / "spec.yaml"
    shutil.copy(SPEC, spec)
    link = tmp_path / "scores.csv"
    link.symlink_to(spec)
    before = spec.read_bytes()
    assert main(["score", str(spec), "--db", str(database), "--table", "book", "--out", str(link), "--replace"]) == 2
    assert "is the spec" in capsys.readouterr().err
    assert spec.read_bytes() == before


def test_baseline_never_writes_over_the_database_file(tmp_path, capsys):
    database = tmp_path / "book.yaml"  # a database file named like a spec
    make_database(database)
    before = database.read_bytes()
    assert main(["baseline", str(MONITOR_SPEC), "--db", str(database), "--table", "development", "--out",
                 str(database), "--replace"]) == 2
    assert "is the DuckDB database file" in capsys.readouterr().err
    assert database.read_bytes() == before


@pytest.mark.parametrize("command", [
    ["diff", str(SPEC), str(SPEC), "--json"],
    ["diff", str(SPEC), str(SPEC), "--markdown"],
    ["compile", str(SPEC), "--out"],
], ids=["diff --json", "diff --markdown", "compile --out"])
def test_reports_never_write_over_the_spec(command, capsys):
    before = SPEC.read_bytes()
    assert main(command + [str(SPEC), "--replace"]) == 2
    err = capsys.readouterr().err
    assert f"{SPEC} is the" in err and "spec; scoremon never writes over its input" in err
    assert SPEC.read_bytes() == before


# ---------------------------------------------------------------- the format the name asks for

@pytest.mark.parametrize("name", ["scores.txt", "scores.json", "scores", "scores.parquet.bak"])
def test_score_refuses_an_output_name_it_cannot_write_and_keeps_the_file(database, tmp_path, name, capsys):
    out = tmp_path / name
    out.write_text("a file the user keeps")
    assert score(database, "--table", "book", "--out", str(out), "--replace") == 2
    err = capsys.readouterr().err
    assert "end the name with .parquet or .csv" in err
    assert out.read_text() == "a file the user keeps"


def test_score_writes_csv_for_a_csv_name(database, tmp_path):
    out = tmp_path / "scores.csv"
    assert score(database, "--table", "book", "--out", str(out)) == 0
    written = pd.read_csv(out)
    assert len(written) == len(BOOK_ROWS)
    assert {"score", "pd", "grade", "model_fingerprint"} <= set(written.columns)


# ---------------------------------------------------------------- --replace

def existing(path: Path) -> Path:
    path.write_text("the previous output")
    return path


def test_every_existing_output_needs_replace(database, tmp_path, capsys):
    monitored = tmp_path / "monitored.duckdb"
    make_database(monitored)
    baseline_spec = tmp_path / "with_baseline.yaml"
    assert main(["baseline", str(MONITOR_SPEC), "--db", str(monitored), "--table", "development", "--out",
                 str(baseline_spec)]) == 0
    cases = [
        (["score", str(SPEC), "--db", str(database), "--table", "book", "--out"], "scores.parquet", "--out"),
        (["score", str(SPEC), "--db", str(database), "--table", "book", "--out"], "scores.csv", "--out"),
        (["baseline", str(MONITOR_SPEC), "--db", str(monitored), "--table", "development", "--out"], "new.yaml",
         "--out"),
        (["diff", str(SPEC), str(SPEC), "--json"], "diff.json", "--json"),
        (["diff", str(SPEC), str(SPEC), "--markdown"], "diff.md", "--markdown"),
        (["monitor", str(baseline_spec), "--db", str(monitored), "--table", "book", "--month-column",
          "application_month", "--as-of", "2024-12-31", "--no-history", "--json"], "monitor.json", "--json"),
        (["compile", str(SPEC), "--out"], "score.sql", "--out"),
        (["schema", "--out"], "schema.json", "--out"),
    ]
    for command, name, option in cases:
        out = existing(tmp_path / name)
        capsys.readouterr()
        assert main(command + [str(out)]) == 2, command
        assert f"{option} {out} exists; give --replace to replace it" in capsys.readouterr().err, command
        assert out.read_text() == "the previous output", command
        assert main(command + [str(out), "--replace"]) in (0, 1), command
        assert out.read_bytes() != b"the previous output", command
        assert not [p for p in tmp_path.iterdir() if files.PARTIAL_MARK in p.name]


def test_an_existing_output_table_needs_replace(database, capsys):
    assert score(database, "--table", "book", "--out-table", "scores") == 0
    first = rows(database, "scores")
    connection = duckdb.connect(str(database))
    connection.execute("DELETE FROM book WHERE age > 40")
    connection.close()
    assert score(database, "--table", "book", "--out-table", "Scores") == 2
    assert "--out-table Scores exists; give --replace to replace it" in capsys.readouterr().err
    assert rows(database, "scores") == first
    assert score(database, "--table", "book", "--out-table", "scores", "--replace") == 0
    assert len(rows(database, "scores")) == len(first) - 1


# ---------------------------------------------------------------- empty inputs, small baselines

def test_an_empty_input_never_replaces_an_output_unless_asked(database, tmp_path, capsys):
    out = existing(tmp_path / "scores.parquet")
    assert score(database, "--table", "empty_book", "--out", str(out), "--replace") == 2
    err = capsys.readouterr().err
    assert "the input holds no rows" in err and "give --allow-empty to write it anyway" in err
    assert out.read_text() == "the previous output"
    assert score(database, "--table", "empty_book", "--out", str(out), "--replace", "--allow-empty") == 0
    assert len(pd.read_parquet(out)) == 0


def test_a_baseline_on_few_rows_warns(tmp_path, capsys):
    database = tmp_path / "few.duckdb"
    make_database(database)
    connection = duckdb.connect(str(database))
    connection.execute("CREATE TABLE tiny AS SELECT * FROM development LIMIT 40")
    connection.close()
    code = main(["baseline", str(MONITOR_SPEC), "--db", str(database), "--table", "tiny", "--out",
                 str(tmp_path / "tiny.yaml")])
    out, err = capsys.readouterr()
    assert code == 0
    assert "warning: the baseline rests on 40 rows, fewer than 1,000" in out + err


# ---------------------------------------------------------------- no database file made by mistake

@pytest.mark.parametrize("command", [
    ["score", str(SPEC), "--table", "book", "--out-table", "scores", "--db"],
    ["diff", str(SPEC), str(SPEC), "--table", "book", "--db"],
    ["baseline", str(SPEC), "--table", "book", "--out", "OUT", "--db"],
    ["monitor", str(SPEC), "--table", "book", "--month-column", "m", "--db"],
], ids=["score", "diff", "baseline", "monitor"])
def test_a_mistyped_database_path_is_never_created(command, tmp_path, capsys):
    missing = tmp_path / "warehuose.duckdb"
    command = [str(tmp_path / "out.yaml") if part == "OUT" else part for part in command]
    assert main(command + [str(missing)]) == 2
    assert f"no such database file: {missing}" in capsys.readouterr().err
    assert not missing.exists()
    assert list(tmp_path.iterdir()) == []


# ---------------------------------------------------------------- whole or nothing

def test_a_full_disk_keeps_the_previous_file_and_leaves_no_partial(tmp_path, monkeypatch, capsys):
    out = existing(tmp_path / "diff.json")
    real_open = open

    class FullDisk:
        def __init__(self, handle):
            self.handle = handle

        def __enter__(self):
            return self

        def __exit__(self, *exc):
            self.handle.close()

        def write(self, text):
            self.handle.write(text[: len(text) // 2])
            raise OSError(errno.ENOSPC, "No space left on device")

    def opening(path, mode="r", *args, **kwargs):
        handle = real_open(path, mode, *args, **kwargs)
        return FullDisk(handle) if files.PARTIAL_MARK in str(path) and "w" in mode else handle

    monkeypatch.setattr("builtins.open", opening)
    code = main(["diff", str(SPEC), str(SPEC), "--json", str(out), "--replace"])
    err = capsys.readouterr().err
    assert code == 2, err
    assert f"cannot write {out}: No space left on device" in err
    assert out.read_text() == "the previous output"
    assert [p.name for p in tmp_path.iterdir()] == ["diff.json"]


def test_partial_files_of_dead_runs_are_removed_by_the_next_write(database, tmp_path):
    dead = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True, text=True)
    dead_pid = int(dead.stdout)  # that process has exited
    host = socket.gethostname()
    stale = tmp_path / f".scores.parquet{files.PARTIAL_MARK}{host}-{dead_pid}-0123456789ab"
    stale.write_bytes(b"half a file from a run killed with -9")
    alive = tmp_path / f".other.parquet{files.PARTIAL_MARK}{host}-{os.getppid()}-0123456789ab"
    alive.write_bytes(b"a write still running")
    # a folder shared between machines: a process id means nothing on another host, so leave it
    elsewhere = tmp_path / f".other.parquet{files.PARTIAL_MARK}other-host.example-{dead_pid}-0123456789ab"
    elsewhere.write_bytes(b"a write running on another machine")
    assert score(database, "--table", "book", "--out", str(tmp_path / "scores.parquet")) == 0
    assert not stale.exists()
    assert alive.exists() and elsewhere.exists()


def test_scoring_a_file_into_a_table_may_start_a_new_database(tmp_path):
    # writing a table is not a read: --input FILE --out-table T may create the database file
    data = tmp_path / "book.csv"
    pd.DataFrame(BOOK_ROWS, columns=["age", "region_code", "utilisation"]).to_csv(data, index=False)
    database = tmp_path / "new.duckdb"
    assert main(["score", str(SPEC), "--db", str(database), "--input", str(data), "--out-table", "scores"]) == 0
    assert len(rows(database, "scores")) == len(BOOK_ROWS)
