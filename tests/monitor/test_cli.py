"""`scoremon baseline` and `scoremon monitor` run in-process: exit codes, printed lines, JSON."""
from __future__ import annotations

import json
from importlib.metadata import version

import pytest

from scoremon.cli import main
from scoremon.engines import DuckDBEngine
from scoremon.report import terminal
from scoremon.spec import fingerprint, load_spec
from tests.monitor.book import SPEC_PATH, load_book, make_book
from tests.sql import tree


def make_database(path, **shift):
    engine = DuckDBEngine(str(path))
    try:
        load_book(engine, "book", make_book(months=12, rows_per_month=300, seed=31, **shift))
        engine.execute(tree("CREATE TABLE development AS SELECT * FROM book WHERE application_month < DATE '2024-07-01'"),
                       "making the development table")
    finally:
        engine.close()


@pytest.fixture
def quiet(tmp_path):
    database = tmp_path / "quiet.duckdb"
    make_database(database)
    return database


@pytest.fixture
def shifted(tmp_path):
    database = tmp_path / "shifted.duckdb"
    make_database(database, age_shift=15.0, risk_shift=1.0, shifted_from=9)
    return database


def baseline_spec(database, tmp_path, capsys) -> str:
    out = tmp_path / "with_baseline.yaml"
    code = main(["baseline", str(SPEC_PATH), "--db", str(database), "--table", "development", "--outcome", "bad",
                 "--month-column", "application_month", "--out", str(out)])
    assert code == 0
    printed = capsys.readouterr().out
    assert printed.startswith(f"wrote {out}: baseline from table development, 1,800 rows (300 a month); event rate")
    assert f"fingerprint unchanged ({fingerprint(load_spec(SPEC_PATH))})" in printed
    return str(out)


def monitor(database, spec, *extra):
    return main(["monitor", spec, "--db", str(database), "--table", "book", "--month-column", "application_month",
                 "--outcome", "bad", "--as-of", "2024-12-31", *extra])


def test_a_quiet_book_exits_0_and_reads_well_at_80_columns(quiet, tmp_path, capsys):
    spec = baseline_spec(quiet, tmp_path, capsys)
    assert monitor(quiet, spec) == 0
    out, err = capsys.readouterr()
    lines = out.splitlines()
    assert err == ""
    assert lines[0] == f"monitor  monitor_test_model version 1, fingerprint {fingerprint(load_spec(SPEC_PATH))}"
    assert max(len(line) for line in lines) <= 80
    cautions = next(i for i, line in enumerate(lines) if line.startswith("Decision support"))
    assert all(line == line.rstrip() for line in lines[:cautions])
    table = next(i for i, line in enumerate(lines) if line.startswith("  month "))
    month_lines = [line for line in lines[table + 1:] if line.startswith("  2024-")][:12]
    assert [line[2:9] for line in month_lines] == [f"2024-{k:02d}" for k in range(1, 13)]
    assert "immature" in month_lines[-1] and "immature" not in month_lines[0]
    assert any(line.startswith("calibration by grade, 2024-06 (latest mature month)") for line in lines)
    assert "Decision support, not an automatic decision" in out


def test_a_shifted_book_exits_1_names_the_drift_and_writes_every_figure_as_json(shifted, tmp_path, capsys):
    spec = baseline_spec(shifted, tmp_path, capsys)
    json_path = tmp_path / "run.json"
    assert monitor(shifted, spec, "--json", str(json_path)) == 1
    out = capsys.readouterr().out
    assert "characteristics that drift, ranked" in out
    drift_line = next(line for line in out.splitlines() if line.startswith("  age "))
    assert "alert" in drift_line
    data = json.loads(json_path.read_text())
    assert data["status"] == "alert" and data["model_name"] == "monitor_test_model"
    october = next(m for m in data["months"] if m["month"] == "2024-10")
    assert october["score_psi_status"] in ("watch", "alert")
    assert {"score_psi", "score_psi_critical_value", "characteristics", "quality", "calibration",
            "discrimination", "volume_change"} <= set(october)
    assert data["months"][-1]["maturity"] == "immature" and data["months"][-1]["calibration"] is None


def test_each_month_says_why_and_repeated_findings_are_grouped_at_80_columns(shifted, tmp_path, capsys):
    spec = baseline_spec(shifted, tmp_path, capsys)
    assert main(["monitor", spec, "--db", str(shifted), "--table", "book", "--month-column", "application_month",
                 "--outcome", "bad", "--as-of", "2025-02-28"]) == 1
    lines = capsys.readouterr().out.splitlines()
    assert max(len(line) for line in lines) <= 80
    drifts = next(i for i, line in enumerate(lines) if line.startswith("characteristics that drift"))
    table = next(i for i, line in enumerate(lines) if line.startswith("  month "))
    assert drifts < table  # drifting characteristics first
    month = {line[2:9]: line for line in lines[table + 1:] if line[2:4] == "20" and line[9] == " "}
    assert "alert" in month["2024-10"] and "stability: age PSI" in month["2024-10"]
    # the months after the last month with rows, up to the as-of month, are listed and flagged
    assert "data quality: no rows" in month["2025-01"] and "data quality: no rows" in month["2025-02"]
    findings = next(i for i, line in enumerate(lines) if line.startswith("findings by month range"))
    grouped = [line for line in lines[findings:] if line.startswith("  2024-10–2024-12")]
    assert any("age PSI" in line and line.endswith("alert") for line in grouped)
    assert any(line.startswith("  2025-01–2025-02") and "no rows" in line for line in lines[findings:])


def test_a_wide_terminal_shows_more_columns(quiet, tmp_path, capsys, monkeypatch):
    spec = baseline_spec(quiet, tmp_path, capsys)
    monkeypatch.setattr(terminal.out, "_width", 140)
    assert monitor(quiet, spec) == 0
    header = next(line for line in capsys.readouterr().out.splitlines() if line.startswith("  month"))
    assert "events / PD" in header and "AUC" in header and "Δ score" in header


def test_thresholds_file_changes_the_statuses(shifted, tmp_path, capsys):
    spec = baseline_spec(shifted, tmp_path, capsys)
    lenient = tmp_path / "lenient.yaml"
    lenient.write_text("score_psi: {watch: 5, alert: 9}\ncharacteristic_psi: {watch: 5, alert: 9}\n"
                       "calibration_p_value: {watch: 1.0e-12, alert: 1.0e-13}\nauc_drop: {watch: 0.9, alert: 0.95}\n"
                       "volume_drop: {watch: 5, alert: 9}\nvolume_rise: {watch: 5, alert: 9}\nmissing_rate_change: {watch: 5, alert: 9}\n"
                       "unseen_rate_change: {watch: 5, alert: 9}\ncatch_all_share_change: {watch: 5, alert: 9}\n")
    assert monitor(shifted, spec, "--thresholds", str(lenient)) == 0


def test_baseline_from_a_table_or_months_on_the_command_line(quiet, capsys):
    assert monitor(quiet, str(SPEC_PATH), "--baseline-table", "development") == 0
    assert "  baseline     table development: 1,800 rows" in capsys.readouterr().out
    assert monitor(quiet, str(SPEC_PATH), "--baseline-months", "2024-01:2024-06") == 0
    assert "  baseline     months 2024-01 to 2024-06 of book: 1,800 rows" in capsys.readouterr().out


@pytest.mark.parametrize("arguments, message", [
    (["--expected-rows", "lots"], "--expected-rows 'lots': give trailing, development or a positive monthly count"),
    (["--as-of", "31.12.2024"], "error: --as-of '31.12.2024' is not a date; write it as YYYY-MM-DD"),
    (["--baseline-months", "2024-06:2024-01"], "the end comes before the start"),
    (["--baseline-months", "2024-6"], "is not a month; write it as YYYY-MM"),
    (["--outcome", "bda", "--baseline-table", "development"],
     "outcome column 'bda' is not in the input; did you mean 'bad'?"),
    (["--json", "/no/such/folder/run.json"], "folder /no/such/folder does not exist"),
    (["--baseline-table", "nowhere"], "duckdb: reading the input's columns failed"),
])
def test_invalid_input_exits_2_with_one_line(quiet, capsys, arguments, message):
    code = main(["monitor", str(SPEC_PATH), "--db", str(quiet), "--table", "book", "--month-column",
                 "application_month", "--as-of", "2024-12-31", *arguments])
    assert code == 2
    out, err = capsys.readouterr()
    assert message in err and out == ""


def test_a_spec_without_baseline_is_refused(quiet, capsys):
    assert monitor(quiet, str(SPEC_PATH)) == 2
    assert "has no baseline section; write one with `scoremon baseline" in capsys.readouterr().err


def test_baseline_refuses_to_overwrite_the_spec(quiet, tmp_path, capsys):
    copy = tmp_path / "spec.yaml"
    copy.write_text(SPEC_PATH.read_text())
    code = main(["baseline", str(copy), "--db", str(quiet), "--table", "development", "--out", str(copy)])
    assert code == 2
    assert "is the spec itself; a spec is never overwritten in place" in capsys.readouterr().err
    assert copy.read_text() == SPEC_PATH.read_text()


def test_the_calibration_test_says_its_sides_and_volume_its_rule(quiet, tmp_path, capsys):
    spec = baseline_spec(quiet, tmp_path, capsys)
    monitor(quiet, spec, "--expected-rows", "300")
    out = capsys.readouterr().out
    assert "Jeffreys and binomial tests one-sided" in out and "volume against the expected 300 rows a month" in out
    monitor(quiet, spec, "--two-sided", "--expected-rows", "development")
    out = capsys.readouterr().out
    assert "tests two-sided" in out and "volume against the development rows per month (300)" in out


def test_the_json_carries_scoremon_version_and_the_row_count(quiet, tmp_path, capsys):
    spec = baseline_spec(quiet, tmp_path, capsys)
    json_path = tmp_path / "run.json"
    monitor(quiet, spec, "--json", str(json_path))
    data = json.loads(json_path.read_text())
    assert data["scoremon_version"] == version("scoremon")  # the distribution's own metadata
    assert data["rows"] == 12 * 300  # the book: 12 months of 300 rows
