"""Monitoring end to end on DuckDB: the figures against references computed from the scored rows
(pandas, scipy, scikit-learn), the edge cases, one grouped pass per family, and the history.
"""
from __future__ import annotations

from datetime import date

import numpy as np
import pandas as pd
import pytest
from scipy import stats
from sklearn.metrics import brier_score_loss, roc_auc_score
from sqlglot import exp

from scoremon import api
from scoremon.trees import identifier, integer
from scoremon.errors import EngineError, InputError
from scoremon.monitor import history
from scoremon.monitor.months import Month
from tests.conftest import ROOT
from tests.monitor.book import SPEC_PATH, load_book, make_book
from tests.sql import fetched, tree

AS_OF = date(2024, 12, 31)  # window 6 months: 2024-01 … 2024-06 mature, 2024-07 … 2024-12 not


@pytest.fixture
def book():
    return make_book(months=12, rows_per_month=300, seed=11)


@pytest.fixture
def loaded(engine, book):
    """The book as table ``book``, its first six months as ``development``, and a baselined spec."""
    load_book(engine, "book", book)
    engine.execute(tree("CREATE TABLE development AS SELECT * FROM book WHERE application_month < DATE '2024-07-01'"),
                   "making the development table")
    spec = api.load_spec(SPEC_PATH)
    baseline = api.measure_development(spec, engine, api.source_relation(table="development"), "bad",
                                       "application_month", "table development")
    return spec.model_copy(update={"baseline": baseline})


def scored_frame(engine, spec, table: str) -> pd.DataFrame:
    """The table scored by the compiler, as pandas (the reference side of the checks)."""
    api.score(spec, engine, api.source_relation(table=table), keys=("application_month", "bad", "region_code"),
              out_table=f"{table}_scored", replace=True)
    return engine.query_frame(tree(f'SELECT * FROM "{table}_scored"'), "reading the scored rows")


def run(engine, spec, **options):
    settings = dict(outcome="bad", record_history=False)
    settings.update(options)
    return api.monitor(spec, engine, settings.pop("table", "book"), "application_month", AS_OF, **settings)


def test_score_band_and_characteristic_psi_match_scipy_on_the_scored_rows(engine, loaded):
    report = run(engine, loaded)
    frame = scored_frame(engine, loaded, "book")
    development = frame[frame["application_month"] < pd.Timestamp("2024-07-01")]
    month = frame[frame["application_month"] == pd.Timestamp("2024-10-01")]
    result = next(m for m in report.months if m.month == "2024-10")
    edges = [b.lower for b in sorted(loaded.baseline.score_bands, key=lambda b: b.lower)[1:]]

    def shares(values, bins):
        counts = np.array([(values == b).sum() for b in bins], dtype=float)
        return counts / counts.sum()

    bands = list(range(len(edges) + 1))
    expected = shares(np.searchsorted(edges, development["score"], side="right"), bands)
    actual = shares(np.searchsorted(edges, month["score"], side="right"), bands)
    # [lib] PSI = scipy.stats.entropy(a, e) + scipy.stats.entropy(e, a) (no band is empty here)
    assert result.score_psi == pytest.approx(stats.entropy(actual, expected) + stats.entropy(expected, actual), rel=1e-9)

    labels = ["[-inf, 25)", "[25, 40)", "[40, inf)", "missing"]
    expected = shares(development["age_bin"], labels)
    actual = shares(month["age_bin"], labels)
    age = next(c for c in result.characteristics if c.feature == "age")
    assert age.psi == pytest.approx(stats.entropy(actual, expected) + stats.entropy(expected, actual), rel=1e-9)


def test_points_shifts_add_up_to_the_mean_score_shift(engine, loaded):
    # CHECKS.md §4: on an additive scorecard (rounding none) Σ characteristics' points shifts
    # = mean score (actual) − mean score (expected); the means come from the scored rows
    report = run(engine, loaded)
    frame = scored_frame(engine, loaded, "book")
    expected_mean = frame[frame["application_month"] < pd.Timestamp("2024-07-01")]["score"].mean()
    for result in report.months:
        actual_mean = frame[frame["application_month"] == pd.Timestamp(f"{result.month}-01")]["score"].mean()
        total = sum(c.points_shift for c in result.characteristics)
        assert total == pytest.approx(actual_mean - expected_mean, abs=1e-9)
        assert result.mean_score_shift == pytest.approx(actual_mean - expected_mean, abs=1e-9)


def test_calibration_figures_match_references_on_the_scored_rows(engine, loaded):
    report = run(engine, loaded)
    frame = scored_frame(engine, loaded, "book")
    month = frame[frame["application_month"] == pd.Timestamp("2024-03-01")]
    calibration = next(m for m in report.months if m.month == "2024-03").calibration
    y, p = month["bad"].to_numpy(), month["pd"].to_numpy()
    # [lib] Brier against scikit-learn
    assert calibration.brier == pytest.approx(brier_score_loss(y, p), rel=1e-9)
    # Spiegelhalter (1986): z = Σ(y−p)(1−2p) / √Σ(1−2p)²p(1−p), written out over the rows
    z = np.sum((y - p) * (1 - 2 * p)) / np.sqrt(np.sum((1 - 2 * p) ** 2 * p * (1 - p)))
    assert calibration.spiegelhalter_z == pytest.approx(z, rel=1e-9)
    for grade in calibration.grades:
        rows = month[month["grade"] == grade.grade]
        assert grade.rows == len(rows)
        assert grade.events == rows["bad"].sum()
        if len(rows):
            mean_pd = rows["pd"].mean()
            assert grade.mean_pd == pytest.approx(mean_pd, rel=1e-9)
            # [lib] ECB (2019) §2.5 Jeffreys and the one-sided binomial test, with scipy
            events = int(rows["bad"].sum())
            assert grade.jeffreys_p == pytest.approx(stats.beta.cdf(mean_pd, events + 0.5, len(rows) - events + 0.5))
            assert grade.binomial_p == pytest.approx(stats.binom.sf(events - 1, len(rows), mean_pd))
    # grade chi-square, written out over the grades with rows
    by_grade = month.groupby("grade").agg(n=("bad", "size"), d=("bad", "sum"), p=("pd", "mean"))
    chi = float(np.sum((by_grade.d - by_grade.n * by_grade.p) ** 2 / (by_grade.n * by_grade.p * (1 - by_grade.p))))
    assert calibration.chi_square == pytest.approx(chi, rel=1e-9)
    assert calibration.chi_square_df == len(by_grade)


def test_discrimination_per_month_matches_scikit_learn_and_compares_with_the_baseline(engine, loaded):
    report = run(engine, loaded)
    frame = scored_frame(engine, loaded, "book")
    for result in report.months:
        if result.maturity != "mature":
            assert result.discrimination is None
            continue
        month = frame[frame["application_month"] == pd.Timestamp(f"{result.month}-01")]
        # [lib] roc_auc_score on the negated score (a higher score means lower risk)
        auc = roc_auc_score(month["bad"], -month["score"])
        assert result.discrimination.auc == pytest.approx(auc, abs=1e-12)
        assert result.discrimination.auc_change == pytest.approx(auc - loaded.baseline.auc, abs=1e-12)


def test_immature_months_are_shown_as_immature_never_as_zero_events(engine, loaded):
    report = run(engine, loaded)
    maturity = {m.month: m.maturity for m in report.months}
    # window 6, as of 2024-12-31: 2024-06 + 6 = 2024-12 ends on the as-of date; 2024-07 does not
    assert maturity["2024-06"] == "mature"
    assert maturity["2024-07"] == "immature"
    for result in report.months:
        if result.maturity == "immature":
            assert result.calibration is None and result.calibration_status is None
        else:
            assert result.calibration.rows == result.rows


def test_raw_and_scored_tables_give_the_same_figures(engine, loaded):
    raw = run(engine, loaded)
    scored_frame(engine, loaded, "book")
    scored = run(engine, loaded, table="book_scored")
    assert [m.score_psi for m in scored.months] == pytest.approx([m.score_psi for m in raw.months], rel=1e-12)
    assert [m.calibration.brier for m in scored.months if m.calibration] == \
        pytest.approx([m.calibration.brier for m in raw.months if m.calibration], rel=1e-12)
    assert [q.unseen_rate for m in scored.months for q in m.quality] == \
        [q.unseen_rate for m in raw.months for q in m.quality]


def test_a_table_scored_by_another_model_is_refused(engine, loaded):
    scored_frame(engine, loaded, "book")
    engine.execute(tree("UPDATE book_scored SET model_fingerprint = 'feedfacefeedface'"), "tampering")
    with pytest.raises(InputError, match="fingerprint feedfacefeedface"):
        run(engine, loaded, table="book_scored")


def test_unseen_categories_and_missing_rates(engine, loaded, book):
    report = run(engine, loaded)
    for result in report.months:
        rows = book[book["application_month"] == date(int(result.month[:4]), int(result.month[5:]), 1)]
        region = next(q for q in result.quality if q.feature == "region")
        # Z9 is listed nowhere (unseen); W1 is listed in the catch-all and so not unseen
        assert region.unseen_rate == pytest.approx((rows["region_code"] == "Z9").mean())
        assert region.catch_all_share == pytest.approx(rows["region_code"].isin(["Z9", "W1"]).mean())
        assert region.missing_rate == pytest.approx(rows["region_code"].isna().mean())
        age = next(q for q in result.quality if q.feature == "age")
        assert age.missing_rate == pytest.approx(rows["age"].isna().mean())
        assert age.unseen_rate is None


def test_a_planted_shift_is_flagged_and_quiet_months_are_not(engine):
    book = make_book(months=12, rows_per_month=400, seed=3, age_shift=14.0, risk_shift=1.0, shifted_from=9)
    load_book(engine, "book", book)
    engine.execute(tree("CREATE TABLE development AS SELECT * FROM book WHERE application_month < DATE '2024-07-01'"), "x")
    spec = api.load_spec(SPEC_PATH)
    baseline = api.measure_development(spec, engine, api.source_relation(table="development"), "bad",
                                       "application_month", "table development")
    report = api.monitor(spec.model_copy(update={"baseline": baseline}), engine, "book", "application_month",
                         date(2025, 12, 31), "bad", record_history=False)
    flagged = {m.month for m in report.months if m.stability_status in ("watch", "alert")}
    assert flagged == {"2024-10", "2024-11", "2024-12"}
    assert report.drifts[0].feature == "age" and report.drifts[0].status in ("watch", "alert")
    calibration = {m.month: m.calibration_status for m in report.months}
    assert {m for m, s in calibration.items() if s == "alert"} == {"2024-10", "2024-11", "2024-12"}
    assert report.has_alert


# ---------------------------------------------------------------- edge cases


def test_a_month_without_rows_a_feature_always_missing_and_empty_grades(engine):
    book = make_book(months=6, rows_per_month=200, seed=5)
    book = book[book["application_month"] != date(2024, 3, 1)].copy()  # no rows in 2024-03
    book["utilisation"] = None  # always missing
    load_book(engine, "book", book)
    spec = api.load_spec(SPEC_PATH)
    report = api.monitor(spec, engine, "book", "application_month", date(2025, 12, 31), "bad",
                         baseline_months=(Month(2024, 1), Month(2024, 2)), record_history=False)
    months = {m.month: m for m in report.months}
    # every month to the as-of month 2025-12, the empty ones after the last with rows included
    assert list(months)[:6] == ["2024-01", "2024-02", "2024-03", "2024-04", "2024-05", "2024-06"]
    assert len(months) == 24 and months["2025-12"].rows == 0
    empty = months["2024-03"]
    assert empty.rows == 0 and empty.volume_change == pytest.approx(-1.0) and empty.volume_status == "alert"
    assert empty.score_psi is None and empty.calibration is None and empty.discrimination is None
    assert all(c.psi is None for c in empty.characteristics)
    april = months["2024-04"]
    utilisation = next(q for q in april.quality if q.feature == "utilisation")
    assert utilisation.missing_rate == 1.0 and utilisation.missing_rate_change == 0.0
    # a characteristic in one bin on both sides has no PSI (nothing to compare), and no error
    assert next(c for c in april.characteristics if c.feature == "utilisation").psi is None
    # grade E is below 500; with utilisation missing (−14.4 points) the lowest score is 501.6
    grade_e = next(g for g in april.calibration.grades if g.grade == "E")
    assert grade_e.rows == 0 and grade_e.jeffreys_p is None and grade_e.mean_pd is None
    assert april.calibration.chi_square_df == 4


def test_all_event_and_no_event_months(engine):
    book = make_book(months=4, rows_per_month=150, seed=9)
    book.loc[book["application_month"] == date(2024, 2, 1), "bad"] = 1
    book.loc[book["application_month"] == date(2024, 3, 1), "bad"] = 0
    load_book(engine, "book", book)
    spec = api.load_spec(SPEC_PATH)
    report = api.monitor(spec, engine, "book", "application_month", date(2025, 12, 31), "bad",
                         baseline_months=(Month(2024, 1), Month(2024, 1)), record_history=False)
    months = {m.month: m for m in report.months}
    every = months["2024-02"]
    assert every.calibration.events == every.rows and every.calibration.event_rate == 1.0
    assert every.calibration.jeffreys_p is not None and every.discrimination.auc is None
    none = months["2024-03"]
    assert none.calibration.events == 0 and none.calibration.binomial_p == pytest.approx(1.0)
    assert none.discrimination.auc is None and none.discrimination.status is None


def test_invalid_input_is_refused_with_a_message(engine, loaded):
    with pytest.raises(InputError, match="month column 'application_mnth' is not in the input; did you mean"):
        api.monitor(loaded, engine, "book", "application_mnth", AS_OF, "bad", record_history=False)
    with pytest.raises(InputError, match="outcome column 'region_code' is VARCHAR"):
        run(engine, loaded, outcome="region_code")
    engine.execute(tree("UPDATE book SET bad = 2 WHERE age < 20"), "spoiling the outcome")
    with pytest.raises(InputError, match="neither 1, 0 nor NULL"):
        run(engine, loaded)
    with pytest.raises(InputError, match="no baseline section"):
        run(engine, api.load_spec(SPEC_PATH))
    with pytest.raises(InputError, match="no rows have a month on or before"):
        api.monitor(loaded, engine, "book", "application_month", date(2020, 1, 1), record_history=False)


def test_rows_without_a_month_or_after_the_as_of_date_are_left_out_and_noted(engine, loaded):
    engine.execute(tree("UPDATE book SET application_month = NULL WHERE age < 20"), "blanking months")
    report = api.monitor(loaded, engine, "book", "application_month", date(2024, 10, 15), "bad",
                         record_history=False)
    assert report.months[-1].month == "2024-10"
    assert any("have no month" in note for note in report.notes)
    assert any("after the as-of date" in note for note in report.notes)


# ---------------------------------------------------------------- one pass per family


class CountingEngine:
    """Passes every call through to an engine and counts the queries that fetch rows."""

    def __init__(self, engine):
        self.engine, self.dialect, self.fetches = engine, engine.dialect, 0

    def query(self, tree, purpose, progress=None):
        self.fetches += 1
        return self.engine.query(tree, purpose, progress)

    def __getattr__(self, name):
        return getattr(self.engine, name)


@pytest.mark.parametrize("months", [6, 18])
def test_the_number_of_queries_does_not_grow_with_the_months(engine, months):
    book = make_book(months=months, rows_per_month=60, seed=2)
    load_book(engine, "book", book)
    spec = api.load_spec(SPEC_PATH)
    counting = CountingEngine(engine)
    api.monitor(spec, counting, "book", "application_month", date(2026, 12, 31), "bad",
                baseline_months=(Month(2024, 1), Month(2024, 3)), record_history=False)
    # month pass; baseline: month, deciles, bins, discrimination; then bins, calibration, discrimination
    assert counting.fetches == 8


# ---------------------------------------------------------------- history


def history_counts(engine):
    tables = {r[0] for r in fetched(engine, "SELECT table_name FROM information_schema.tables", "listing tables")}
    if history.RUNS_TABLE not in tables:
        return None
    runs = fetched(engine, f'SELECT COUNT(*) FROM "{history.RUNS_TABLE}"', "counting runs")[0][0]
    metrics = fetched(engine, f'SELECT COUNT(*) FROM "{history.METRICS_TABLE}"', "counting metrics")[0][0]
    return runs, metrics


def test_every_run_is_appended_and_never_replaces_an_earlier_one(engine, loaded):
    first = run(engine, loaded, record_history=True)
    after_first = history_counts(engine)
    second = run(engine, loaded, record_history=True)
    after_second = history_counts(engine)
    assert after_first[0] == 1 and after_second[0] == 2
    assert after_second[1] == 2 * after_first[1]
    runs = fetched(engine, f'SELECT run_id, model_fingerprint, as_of, status FROM "{history.RUNS_TABLE}" ORDER BY run_at',
                        "reading runs")
    assert {r[0] for r in runs} == {first.run_id, second.run_id}
    assert all(r[1] == first.model_fingerprint and r[2] == AS_OF for r in runs)
    psi = fetched(engine, f"""SELECT value, status FROM "{history.METRICS_TABLE}" WHERE run_id = '{first.run_id}'
                           AND month = '2024-10' AND metric = 'score_psi'""", "reading a metric")
    october = next(m for m in first.months if m.month == "2024-10")
    assert psi == [(pytest.approx(october.score_psi), october.score_psi_status)]


def test_a_failing_run_leaves_the_history_as_it_was(engine, loaded, monkeypatch):
    run(engine, loaded, record_history=True)
    before = history_counts(engine)
    original = history.insert_statements

    def failing(report):
        statements = original(report)
        # the last statement breaks a NOT NULL constraint, after the run row and most metrics went in
        broken = statements[-1].copy()
        broken.expression.expressions[0].expressions[0].replace(exp.Null())
        return statements + [broken]

    monkeypatch.setattr(history, "insert_statements", failing)
    with pytest.raises(EngineError, match="appending the run to the monitoring history"):
        run(engine, loaded, record_history=True)
    assert history_counts(engine) == before


def test_a_first_run_that_fails_creates_no_history_tables(engine, loaded, monkeypatch):
    def failing(report):
        return [exp.Insert(this=exp.Table(this=identifier("no_such_table")),
                           expression=exp.Values(expressions=[exp.Tuple(expressions=[integer(1)])]))]

    monkeypatch.setattr(history, "insert_statements", failing)
    with pytest.raises(EngineError):
        run(engine, loaded, record_history=True)
    assert history_counts(engine) is None


def test_the_readable_copy_of_the_history_tables_is_current():
    # regenerate on purpose with: python -m scoremon.monitor.history > sql/monitor_history.sql
    assert (ROOT / "sql" / "monitor_history.sql").read_text() == history.history_ddl_text()


# ---------------------------------------------------------------- volume, empty months, two-sided tests


def test_volume_is_judged_against_the_books_own_trailing_months(engine, book):
    # a development sample of a third of the book: 100 rows a month against 300 in the book
    load_book(engine, "book", book)
    engine.execute(tree("CREATE TABLE development AS SELECT * FROM book WHERE application_month < DATE '2024-07-01' "
                        "AND hash(age, utilisation, region_code) % 3 = 0"), "sampling a third")
    spec = api.load_spec(SPEC_PATH)
    baseline = api.measure_development(spec, engine, api.source_relation(table="development"), "bad",
                                       "application_month", "table development")
    spec = spec.model_copy(update={"baseline": baseline})
    trailing = run(engine, spec)
    # the first month has no earlier month to compare with; later ones the median of up to six
    # earlier months: 300 rows each (hand-worked from the book's 300 rows a month)
    assert trailing.months[0].expected_rows is None and trailing.months[0].volume_status is None
    assert [m.expected_rows for m in trailing.months[1:]] == [300.0] * 11
    assert {m.volume_status for m in trailing.months[1:]} == {"ok"}
    development = run(engine, spec, expected_rows="development")
    assert {m.volume_status for m in development.months} == {"alert"}
    given = run(engine, spec, expected_rows=400.0)
    assert [m.volume_change for m in given.months] == pytest.approx([-0.25] * 12)
    assert "trailing" in trailing.volume_rule and "400" in given.volume_rule


def test_months_without_rows_up_to_the_as_of_month_are_listed_and_flagged(engine):
    load_book(engine, "book", make_book(months=6, rows_per_month=200, seed=5))
    spec = api.load_spec(SPEC_PATH)
    report = api.monitor(spec, engine, "book", "application_month", date(2024, 9, 30), "bad",
                         baseline_months=(Month(2024, 1), Month(2024, 3)), record_history=False)
    months = {m.month: m for m in report.months}
    assert list(months)[-4:] == ["2024-06", "2024-07", "2024-08", "2024-09"]
    for label in ("2024-07", "2024-08", "2024-09"):
        assert months[label].rows == 0 and months[label].volume_status == "alert" and months[label].status == "alert"


def test_calibration_is_one_sided_by_default_and_two_sided_when_asked(engine, loaded):
    one, two = run(engine, loaded), run(engine, loaded, two_sided=True)
    assert one.calibration_test == "one-sided" and two.calibration_test == "two-sided"
    month = two.latest_mature_month.calibration
    # two-sided Jeffreys: twice the smaller tail of Beta(D+½, N−D+½) at the mean PD (scipy, live)
    upper = stats.beta.cdf(month.mean_pd, month.events + 0.5, month.rows - month.events + 0.5)
    assert month.jeffreys_p == pytest.approx(min(1.0, 2 * min(upper, 1 - upper)), rel=1e-9)
    assert one.latest_mature_month.calibration.jeffreys_p == pytest.approx(upper, rel=1e-9)
