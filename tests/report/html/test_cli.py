"""`--html` on `monitor` and `diff`, and `scoremon pack`, run in-process: files, exit codes, messages;
and the monitoring report of small runs."""
from __future__ import annotations

import re
from datetime import date

import duckdb
import pytest

from scoremon import api
from scoremon.cli import main
from scoremon.engines import DuckDBEngine
from scoremon.monitor.history import RUNS_TABLE
from scoremon.monitor.months import Month
from scoremon.report.html.monitor import monitor_html
from tests.monitor.book import SPEC_PATH, load_book, make_book
from tests.monitor.test_cli import baseline_spec, make_database, monitor


@pytest.fixture
def book(tmp_path):
    database = tmp_path / "book.duckdb"
    make_database(database)
    return database


def runs_in(database) -> int:
    connection = duckdb.connect(str(database), read_only=True)
    try:
        return connection.execute(f'SELECT count(*) FROM "{RUNS_TABLE}"').fetchone()[0]
    finally:
        connection.close()


def test_monitor_writes_html_and_will_not_overwrite_it(book, tmp_path, capsys):
    spec = baseline_spec(book, tmp_path, capsys)
    report = tmp_path / "monitor.html"
    assert monitor(book, spec, "--html", str(report)) in (0, 1)
    out = capsys.readouterr().out
    assert f"wrote {report} (" in out
    first = report.read_text(encoding="utf-8")
    assert first.startswith("<!DOCTYPE html>") and "Monitoring report" in first
    runs = runs_in(book)

    # refused before any work: the history gains no run
    assert monitor(book, spec, "--html", str(report)) == 2
    out = capsys.readouterr().err
    assert f"--html {report} exists; give --replace to replace it, or choose another name" in out
    assert runs_in(book) == runs and report.read_text(encoding="utf-8") == first

    assert monitor(book, spec, "--html", str(report), "--replace") in (0, 1)
    assert runs_in(book) == runs + 1
    assert report.read_text(encoding="utf-8") != first  # a new run id and time


def test_monitor_without_outcomes_says_so_instead_of_empty_charts(book, tmp_path, capsys):
    spec = baseline_spec(book, tmp_path, capsys)
    report = tmp_path / "monitor.html"
    assert main(["monitor", spec, "--db", str(book), "--table", "book", "--month-column", "application_month",
                 "--as-of", "2024-12-31", "--no-history", "--html", str(report)]) in (0, 1)
    text = report.read_text(encoding="utf-8")
    assert text.count("No month has outcomes to test: no outcome column was given") == 2
    assert 'id="calibration-' not in text and 'id="auc-' not in text


def test_diff_writes_html_without_a_population(tmp_path, capsys):
    report = tmp_path / "diff.html"
    assert main(["diff", str(SPEC_PATH), str(SPEC_PATH), "--html", str(report)]) == 0
    text = report.read_text(encoding="utf-8")
    assert "none given (structural comparison only)" in text
    assert "No change: the two specs are the same model" in text


def test_pack_reads_the_history_back(book, tmp_path, capsys):
    spec = baseline_spec(book, tmp_path, capsys)
    assert monitor(book, spec) in (0, 1)
    capsys.readouterr()
    pack = tmp_path / "pack.html"
    assert main(["pack", spec, "--db", str(book), "--from", "2024-03", "--to", "2024-06", "--html", str(pack)]) == 0
    text = pack.read_text(encoding="utf-8")
    months = sorted(set(re.findall(r"<td>(2024-\d\d)</td>", text)))
    assert months == ["2024-03", "2024-04", "2024-05", "2024-06"]


@pytest.mark.parametrize("arguments, message", [
    (["--runs", "nosuchrun"], "run nosuchrun is not a monitoring run of"),
    (["--from", "2024-06", "--to", "2024-02"], "--from 2024-06 --to 2024-02: the end comes before the start"),
    (["--runs", "x", "--from", "2024-01"], "give --runs, or a range of months with --from and --to, not both"),
    (["--from", "2024-13"], "--from '2024-13' has month 13; months run from 01 to 12"),
    (["--from", "2031-01"], "measured no month in 2031-01 to the last month; widen the range"),
])
def test_pack_says_what_is_wrong(book, tmp_path, capsys, arguments, message):
    spec = baseline_spec(book, tmp_path, capsys)
    assert monitor(book, spec) in (0, 1)
    capsys.readouterr()
    pack = tmp_path / "pack.html"
    assert main(["pack", spec, "--db", str(book), "--html", str(pack), *arguments]) == 2
    assert message in capsys.readouterr().err
    assert not pack.exists()


def test_pack_of_an_unknown_model_or_a_database_without_history(book, tmp_path, capsys):
    pack = tmp_path / "pack.html"
    assert main(["pack", "no_such_model", "--db", str(book), "--html", str(pack)]) == 2
    assert "could not read the monitoring history" in capsys.readouterr().err  # nothing monitored yet: no tables
    spec = baseline_spec(book, tmp_path, capsys)
    assert monitor(book, spec) in (0, 1)
    capsys.readouterr()
    assert main(["pack", "no_such_model", "--db", str(book), "--html", str(pack)]) == 2
    assert "the monitoring history holds no run of model 'no_such_model'" in capsys.readouterr().err


@pytest.mark.parametrize("months, as_of", [(1, "2024-01-31"), (3, "2025-12-31"), (12, "2024-12-31")])
def test_monitoring_report_of_small_runs(tmp_path, months, as_of):
    # one month, every month mature, some immature: the report is whole each time (same parts,
    # the cautions at the end) and every chart it draws is labelled
    engine = DuckDBEngine(":memory:")
    try:
        load_book(engine, "book", make_book(months=months, rows_per_month=150, seed=9))
        report = api.monitor(api.load_spec(SPEC_PATH), engine, "book", "application_month",
                             date.fromisoformat(as_of), "bad", baseline_months=(Month(2024, 1), Month(2024, 1)),
                             record_history=False)
    finally:
        engine.close()
    text = monitor_html(report, "duckdb")
    assert text.rstrip().endswith("</html>") and text.rindex('class="cautions"') > text.rindex("<section")
    assert text.count("<svg") == text.count('role="img"') == text.count("</figcaption>") - 1  # + the grid's caption
