"""A scheduler reads the exit code: an internal error (a bug) has its own code, 3, never the 1
that monitor uses for "alert" and diff for "the specs differ"; Ctrl-C is 130 (128 + SIGINT,
the shell's convention) with "interrupted; nothing was written"."""
from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import duckdb

from scoremon import api, cli
from scoremon.cli import main
from scoremon.files import PARTIAL_MARK

ROOT = Path(__file__).resolve().parents[2]


def test_an_internal_error_exits_3_with_one_line_and_the_trace_in_a_file(monkeypatch, capsys):
    def broken(*_args, **_kwargs):
        raise ZeroDivisionError("float division by zero")

    monkeypatch.setattr(api, "diff_models", broken)
    code = main(["diff", "tests/fixtures/small.yaml", "tests/fixtures/small.yaml"])
    out, err = capsys.readouterr()
    assert code == cli.EXIT_INTERNAL == 3
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert lines[0].startswith("internal error (a bug in scoremon): ZeroDivisionError: float division by zero;")
    trace = Path(lines[0].split("full trace in ")[1].split(";")[0])
    try:
        assert "Traceback" in trace.read_text() and "broken" in trace.read_text()
    finally:
        trace.unlink()


def test_ctrl_c_while_scoring_says_nothing_was_written_and_exits_130(tmp_path):
    database, out = tmp_path / "book.duckdb", tmp_path / "scores.parquet"
    connection = duckdb.connect(str(database))
    connection.execute("CREATE TABLE book AS SELECT (i % 80)::DOUBLE AS age, ['N1', 'S1', 'W1'][1 + i % 3] AS "
                       "region_code, (i % 1000) / 1000.0 AS utilisation FROM range(20000000) t(i)")
    connection.close()
    out.write_bytes(b"the previous output")
    # the child must take SIGINT as Python does (a background shell would leave it ignored)
    child = subprocess.Popen([sys.executable, "-m", "scoremon", "score", "tests/fixtures/small.yaml", "--db",
                              str(database), "--table", "book", "--out", str(out), "--replace"],
                             cwd=ROOT, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                             preexec_fn=lambda: signal.signal(signal.SIGINT, signal.SIG_DFL))
    # wait until the engine is writing (its partial file exists), then press Ctrl-C
    while child.poll() is None and not any(PARTIAL_MARK in p.name for p in tmp_path.iterdir()):
        time.sleep(0.05)
    assert child.poll() is None, "the scoring finished before it could be interrupted"
    child.send_signal(signal.SIGINT)
    _, err = child.communicate(timeout=120)
    assert child.returncode == 130, err
    assert err.strip().splitlines()[-1] == "interrupted; nothing was written"
    assert "Traceback" not in err
    assert out.read_bytes() == b"the previous output"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["book.duckdb", "scores.parquet"]
