"""The monitoring passes run unchanged on every engine the suite starts, with the same figures."""
from __future__ import annotations

from datetime import date

import pytest

from scoremon import api
from scoremon.engines import DuckDBEngine
from scoremon.monitor.months import Month
from tests.monitor.book import SPEC_PATH, load_book, make_book
from tests.sql import fetched


def figures(report):
    """Per month: its label, then every figure as one flat list (None where there is none)."""
    rows = []
    for m in report.months:
        values = [m.rows, m.score_psi, m.mean_score_shift]
        values += [v for c in m.characteristics for v in (c.psi, c.points_shift)]
        values += [v for q in m.quality for v in (q.missing_rate, q.unseen_rate, q.catch_all_share)]
        calibration, discrimination = m.calibration, m.discrimination
        values += [None] * 4 if calibration is None else [calibration.events, calibration.brier,
                                                          calibration.chi_square, calibration.spiegelhalter_z]
        values += [None] * 2 if discrimination is None else [discrimination.auc, discrimination.ks]
        rows.append((m.month, values))
    return rows


def run(engine, book):
    load_book(engine, "book", book)
    spec = api.load_spec(SPEC_PATH)
    return api.monitor(spec, engine, "book", "application_month", date(2024, 9, 30), "bad",
                       baseline_months=(Month(2024, 1), Month(2024, 3)), record_history=False)


def test_every_engine_gives_duckdbs_figures(each_engine):
    book = make_book(months=6, rows_per_month=120, seed=8)
    reference = DuckDBEngine(":memory:")
    try:
        expected = figures(run(reference, book))
    finally:
        reference.close()
    found = figures(run(each_engine, book))
    assert [month for month, _ in found] == [month for month, _ in expected]
    assert any(values[-1] is not None for _, values in expected)  # some months are mature
    for (month, got), (_, want) in zip(found, expected):
        assert [v is None for v in got] == [v is None for v in want], month
        assert [v for v in got if v is not None] == pytest.approx([v for v in want if v is not None],
                                                                  rel=1e-9, abs=1e-12), month


def test_history_is_appended_in_one_transaction_on_every_transactional_engine(each_engine):
    if each_engine.dialect == "spark":
        pytest.skip("Spark has no transactions: it writes the history statement by statement, which "
                    "tests/engines/test_monitor_history_on_engines.py checks")
    book = make_book(months=4, rows_per_month=80, seed=6)
    load_book(each_engine, "book", book)
    spec = api.load_spec(SPEC_PATH)
    for _ in range(2):
        report = api.monitor(spec, each_engine, "book", "application_month", date(2024, 9, 30), "bad",
                             baseline_months=(Month(2024, 1), Month(2024, 2)))
    runs = fetched(each_engine, 'SELECT COUNT(*) FROM "scoremon_monitor_runs"', "counting runs")
    psi = fetched(each_engine, f"""SELECT value FROM "scoremon_monitor_metrics" WHERE run_id = '{report.run_id}'
                                AND month = '2024-04' AND metric = 'score_psi'""", "reading a metric")
    assert runs == [(2,)]
    april = next(m for m in report.months if m.month == "2024-04")  # the last month with rows
    assert psi[0][0] == pytest.approx(april.score_psi)
