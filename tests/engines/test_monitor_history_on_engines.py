"""Monitoring history on every engine: each run appends, none destroys an earlier one.

tests/monitor/test_engines.py checks the monitoring figures on every engine; this checks the
history tables that a run writes through ``execute_atomically`` (one transaction on DuckDB and
PostgreSQL, statement by statement on Spark).
"""
from __future__ import annotations

from datetime import date

import pytest
from sqlglot import exp

from scoremon import api
from scoremon.trees import table_path
from scoremon.monitor.history import METRICS_TABLE, RUNS_TABLE
from scoremon.monitor.months import Month
from tests.monitor.book import SPEC_PATH, load_book, make_book


def count_by_run(engine, table: str) -> dict[str, int]:
    run_id = exp.column(exp.to_identifier("run_id", quoted=True))
    query = (exp.select(run_id, exp.Count(this=exp.Star()).as_("rows", quoted=True)).from_(table_path([table]))
             .group_by(run_id.copy()))
    return {str(r.run_id): int(r.rows) for r in engine.query(query, "counting")}


def test_each_run_appends_to_the_history(each_engine):
    load_book(each_engine, "book", make_book(months=5, rows_per_month=80, seed=3))
    spec = api.load_spec(SPEC_PATH)
    reports = [api.monitor(spec, each_engine, "book", "application_month", date(2024, 9, 30), "bad",
                           baseline_months=(Month(2024, 1), Month(2024, 2)), record_history=True)
               for _ in range(2)]
    runs = count_by_run(each_engine, RUNS_TABLE)
    assert sorted(runs) == sorted(r.run_id for r in reports) and set(runs.values()) == {1}
    metrics = count_by_run(each_engine, METRICS_TABLE)
    assert sorted(metrics) == sorted(runs)
    # the same book, spec and baseline: both runs recorded the same number of figures
    assert len(set(metrics.values())) == 1 and next(iter(metrics.values())) > 0


def test_the_history_reads_back_for_a_pack(each_engine):
    load_book(each_engine, "book", make_book(months=5, rows_per_month=80, seed=4))
    spec = api.load_spec(SPEC_PATH)
    reports = [api.monitor(spec, each_engine, "book", "application_month", as_of, "bad",
                           baseline_months=(Month(2024, 1), Month(2024, 2)), record_history=True)
               for as_of in (date(2024, 9, 30), date(2025, 3, 31))]
    history = api.read_history(each_engine, spec.model.name)
    assert [r.run_id for r in history.runs] == [r.run_id for r in reports]
    assert [r.as_of for r in history.runs] == ["2024-09-30", "2025-03-31"]
    assert history.versions == ((spec.model.version, reports[0].model_fingerprint),)
    # every month's figures come back as the run recorded them, from the latest run
    latest = history.latest(history.versions[0])
    assert sorted(latest) == [m.month for m in reports[1].months]
    for month in reports[1].months:
        run, figures = latest[month.month]
        assert run.run_id == reports[1].run_id
        assert figures[("data_quality", "rows")].value == month.rows
        if not month.rows:  # a month after the book's last, up to the as-of month: listed, on alert
            assert month.status == "alert"
            continue
        assert figures[("stability", "score_psi")].value == pytest.approx(month.score_psi, rel=1e-12)
        assert figures[("stability", "score_psi")].status == month.score_psi_status
        if month.calibration is not None:
            assert figures[("calibration", "event_rate")].value == pytest.approx(month.calibration.event_rate)
    # a range of months, and chosen runs
    ranged = api.read_history(each_engine, spec.model.name, first="2024-02", last="2024-03")
    assert {m for months in ranged.figures.values() for m in months} == {"2024-02", "2024-03"}
    chosen = api.read_history(each_engine, spec.model.name, run_ids=(reports[0].run_id,))
    assert [r.run_id for r in chosen.runs] == [reports[0].run_id] and list(chosen.figures) == [reports[0].run_id]
