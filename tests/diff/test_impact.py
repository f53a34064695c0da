"""The impact on a population, checked against an independent computation on the same rows.

The population is scored under both versions by the independent reference scorer
(tests/reference_scorer.py, written from the documented semantics without the compiler); the
migration matrix, swap set, event rates, first-reason changes and score changes are then
computed with pandas, numpy and scipy and compared with what the one SQL query returned.
"""
from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
import scipy.stats

from scoremon import api
from scoremon.diff.impact import UNCHANGED_POINTS
from scoremon.engines import DuckDBEngine
from scoremon.errors import InputError
from tests.reference_scorer import score_frame

from .specs import base, feature, variant

COLUMNS = [("id", "BIGINT"), ("age", "DOUBLE"), ("region_code", "VARCHAR"), ("utilisation", "DOUBLE"),
           ("tenure", "DOUBLE"), ("defaulted", "BIGINT")]
CUTOFF = 580.0


def make_rows(n: int = 1500, seed: int = 20260101) -> list[tuple]:
    """A population with every kind of input: NULL, NaN and ±inf, unseen categories, values
    on the bin edges, clipped linear values, and outcomes that are not yet known (NULL)."""
    rng = np.random.default_rng(seed)
    rows = []
    for i in range(n):
        age = float(rng.choice([25.0, 32.0, 40.0, 60.0])) if rng.random() < 0.1 else float(rng.integers(18, 80))
        odd = rng.random()
        if odd < 0.03:
            age = None
        elif odd < 0.05:
            age = math.nan
        elif odd < 0.06:
            age = math.inf if rng.random() < 0.5 else -math.inf
        region = str(rng.choice(["N1", "N2", "S1", "S2", "Z9", "Q7"]))
        region = None if rng.random() < 0.03 else region
        utilisation = float(rng.uniform(-0.3, 1.8))
        utilisation = None if rng.random() < 0.03 else utilisation
        tenure = float(rng.integers(0, 15)) if rng.random() > 0.04 else None
        risk = 0.08 + 0.1 * (age is not None and not math.isnan(age) and age < 30) + 0.1 * (utilisation or 0)
        defaulted = int(rng.random() < risk) if rng.random() > 0.2 else None
        rows.append((i, age, region, utilisation, tenure, defaulted))
    return rows


def new_version(d: dict) -> None:
    """A realistic set of changes: age re-binned, N2 moved, tenure dropped, intercept recalibrated."""
    feature(d, "age")["bins"] = [
        {"lower": -math.inf, "upper": 25, "woe": -0.6}, {"lower": 25, "upper": 32, "woe": -0.1},
        {"lower": 32, "upper": 40, "woe": 0.2}, {"lower": 40, "upper": 60, "woe": 0.4},
        {"lower": 60, "upper": math.inf, "woe": 0.7}]
    feature(d, "region")["groups"][0]["values"] = ["N1"]
    feature(d, "region")["groups"][1]["values"] = ["S1", "S2", "N2"]
    d["features"] = [f for f in d["features"] if f["name"] != "tenure"]
    d["reasons"]["statements"][2]["features"] = ["utilisation"]
    d["intercept"] = -2.2


@pytest.fixture(scope="module")
def rows():
    return make_rows()


@pytest.fixture(scope="module")
def frame(rows):
    return pd.DataFrame(rows, columns=[name for name, _ in COLUMNS], dtype=object)


@pytest.fixture(scope="module")
def book(rows):
    engine = DuckDBEngine(":memory:")
    engine.write_rows(["book"], COLUMNS, rows, "loading the test book")
    yield engine
    engine.close()


def both(old, new, frame, outcome: str = "defaulted") -> pd.DataFrame:
    """Both versions' reference scores side by side, with the outcome."""
    a, b = score_frame(old, frame), score_frame(new, frame)
    return pd.DataFrame({
        "old_score": a["score"].astype(float), "new_score": b["score"].astype(float),
        "old_pd": a["pd"].astype(float), "new_pd": b["pd"].astype(float),
        "old_grade": a["grade"], "new_grade": b["grade"],
        "old_reason": a["reason_1"], "new_reason": b["reason_1"],
        "outcome": frame[outcome],
    })


def measure(engine, old, new, **options):
    return api.measure_impact(old, new, engine, api.source_relation(table="book"), "table book", **options)


@pytest.fixture(scope="module")
def changed(book, frame):
    old, new = base(), variant(new_version)
    return measure(book, old, new, outcome="defaulted", cutoff=CUTOFF), both(old, new, frame)


def test_totals_equal_the_population(changed, rows):
    impact, _ = changed
    n = len(rows)
    assert impact.rows == n
    assert sum(sum(r) for r in impact.migration.counts) == n
    assert impact.migration.rows_up + impact.migration.rows_same + impact.migration.rows_down == n
    assert sum(c.rows for c in impact.swap_set.cells) == n
    assert sum(b.rows for b in impact.score_change.bands) == n
    assert sum(b.rows for b in impact.pd_change.bands) == n


def test_migration_matrix_matches_pandas(changed):
    impact, ref = changed
    m = impact.migration
    expected = pd.crosstab(ref["old_grade"], ref["new_grade"]).reindex(index=list(m.old_grades),
                                                                       columns=list(m.new_grades), fill_value=0)
    assert [list(r) for r in m.counts] == expected.to_numpy().tolist()
    order = {g: i for i, g in enumerate(m.old_grades)}  # best grade first; same grades in both versions
    step = ref["new_grade"].map(order) - ref["old_grade"].map(order)
    assert (m.rows_up, m.rows_same, m.rows_down) == (int((step < 0).sum()), int((step == 0).sum()),
                                                     int((step > 0).sum()))


def test_swap_set_counts_and_event_rates_match_pandas(changed):
    impact, ref = changed
    accepted_old, accepted_new = ref["old_score"] >= CUTOFF, ref["new_score"] >= CUTOFF
    cells = {"accepted_by_both": accepted_old & accepted_new, "swap_in": ~accepted_old & accepted_new,
             "swap_out": accepted_old & ~accepted_new, "declined_by_both": ~accepted_old & ~accepted_new}
    got = {c.name: c for c in impact.swap_set.cells}
    assert all(got[name].rows > 0 for name in ("accepted_by_both", "swap_out", "declined_by_both"))
    for name, rows_in in cells.items():
        cell = got[name]
        known = ref.loc[rows_in, "outcome"].dropna().astype(int)
        assert cell.rows == int(rows_in.sum()), name
        assert cell.rows_with_outcome == len(known), name
        assert cell.events == int(known.sum()), name
        if len(known):
            assert cell.event_rate == pytest.approx(known.mean(), abs=1e-12), name
        else:
            assert cell.event_rate is None


def test_outcome_totals_match_pandas(changed):
    impact, ref = changed
    known = ref["outcome"].dropna().astype(int)
    assert (impact.rows_with_outcome, impact.events) == (len(known), int(known.sum()))


def test_score_and_pd_change_match_numpy(changed):
    impact, ref = changed
    change = (ref["new_score"] - ref["old_score"]).to_numpy()
    pd_change = (ref["new_pd"] - ref["old_pd"]).to_numpy()
    for name, q in (("p01", 0.01), ("p05", 0.05), ("p25", 0.25), ("p50", 0.5), ("p75", 0.75), ("p95", 0.95),
                    ("p99", 0.99)):
        # numpy's default "linear" quantile [lib]
        assert impact.score_change.quantiles[name] == pytest.approx(np.quantile(change, q), abs=1e-9), name
        assert impact.pd_change.quantiles[name] == pytest.approx(np.quantile(pd_change, q), abs=1e-12), name
    assert impact.score_change.mean == pytest.approx(change.mean(), abs=1e-9)
    assert impact.score_change.minimum == pytest.approx(change.min(), abs=1e-9)
    assert impact.score_change.maximum == pytest.approx(change.max(), abs=1e-9)
    assert impact.mean_score_old == pytest.approx(ref["old_score"].mean(), abs=1e-9)
    assert impact.mean_pd_new == pytest.approx(ref["new_pd"].mean(), abs=1e-12)
    up, unchanged = int((change > UNCHANGED_POINTS).sum()), int((np.abs(change) <= UNCHANGED_POINTS).sum())
    assert (impact.score_change.rows_up, impact.score_change.rows_unchanged) == (up, unchanged)
    assert impact.score_change.rows_down == len(change) - up - unchanged


def test_spearman_matches_scipy(changed):
    impact, ref = changed
    # scipy.stats.spearmanr ranks ties by their average, as the SQL does [lib]
    expected = scipy.stats.spearmanr(ref["old_score"], ref["new_score"]).statistic
    assert impact.spearman == pytest.approx(expected, abs=1e-9)
    assert impact.spearman < 1


def test_first_reason_changes_match_pandas(changed):
    impact, ref = changed
    old_reason, new_reason = ref["old_reason"].fillna("(none)"), ref["new_reason"].fillna("(none)")
    moved = old_reason != new_reason
    assert impact.first_reason.rows_changed == int(moved.sum())
    assert impact.first_reason.rows_changed > 0
    top = pd.crosstab(old_reason[moved], new_reason[moved]).stack().sort_values(ascending=False)
    first_old, first_new, first_rows = impact.first_reason.top_moves[0]
    assert first_rows == int(top.iloc[0])
    assert (first_old or "(none)", first_new or "(none)") in [k for k, v in top.items() if v == first_rows]


def test_scaling_only_change_moves_every_row_by_the_same_points(book, rows):
    # CHECKS.md §1 (from memory): base score 600 → 620 at the same odds and PDO is +20 points
    # for every score, and no PD moves.
    impact = measure(book, base(), variant(lambda d: d["scaling"].update(base_score=620)), cutoff=CUTOFF)
    assert impact.score_change.minimum == pytest.approx(20.0, abs=1e-9)
    assert impact.score_change.maximum == pytest.approx(20.0, abs=1e-9)
    assert [b.label for b in impact.score_change.bands if b.rows] == ["+20 to +40 points"]
    assert impact.pd_change.rows_unchanged == len(rows)
    assert impact.spearman == pytest.approx(1.0, abs=1e-12)
    swap = {c.name: c.rows for c in impact.swap_set.cells}
    assert swap["swap_out"] == 0


def test_same_model_changes_nothing(book, rows):
    impact = measure(book, base(), base(), cutoff=CUTOFF)
    n = len(rows)
    assert impact.score_change.rows_unchanged == n
    assert impact.migration.rows_same == n
    assert impact.first_reason.rows_changed == 0
    assert {c.name: c.rows for c in impact.swap_set.cells}["swap_in"] == 0
    assert impact.spearman == pytest.approx(1.0, abs=1e-12)


def test_different_grades_compare_positions(book, frame):
    def regrade(d):
        d["grades"] = [{"name": "prime", "lower": 620, "upper": math.inf},
                       {"name": "near", "lower": 570, "upper": 620},
                       {"name": "sub", "lower": -math.inf, "upper": 570}]
    old, new = base(), variant(regrade)
    impact = measure(book, old, new)
    ref = both(old, new, frame)
    assert not impact.migration.is_same_grades
    assert impact.migration.new_grades == ("prime", "near", "sub")
    expected = pd.crosstab(ref["old_grade"], ref["new_grade"]).reindex(
        index=list(impact.migration.old_grades), columns=list(impact.migration.new_grades), fill_value=0)
    assert [list(r) for r in impact.migration.counts] == expected.to_numpy().tolist()
    assert impact.swap_set is None


# ---------------------------------------------------------------- inputs a user can get wrong

def test_missing_columns_are_listed_for_each_version(book):
    def rename(d):
        feature(d, "age")["column"] = "age_years"
    with pytest.raises(InputError) as caught:
        measure(book, base(), variant(rename), outcome="no_such_column")
    message = str(caught.value)
    assert "new version: column 'age_years' (feature 'age', its `column:` in the spec) is not in the input" in message
    assert "old version" not in message
    assert "outcome column 'no_such_column' is not in the input" in message


def test_outcome_values_other_than_0_and_1_are_refused():
    engine = DuckDBEngine(":memory:")
    try:
        engine.write_rows(["book"], COLUMNS, [(1, 30.0, "N1", 0.5, 3.0, 1), (2, 50.0, "S1", 0.2, 9.0, 2)], "loading")
        with pytest.raises(InputError, match="outcome column 'defaulted' has 1 values other than 0, 1"):
            measure(engine, base(), base(), outcome="defaulted")
    finally:
        engine.close()


def test_an_empty_population_is_refused():
    engine = DuckDBEngine(":memory:")
    try:
        engine.write_rows(["book"], COLUMNS, [], "loading")
        with pytest.raises(InputError, match="the population has no rows"):
            measure(engine, base(), base())
    finally:
        engine.close()


def test_boolean_outcome_and_awkward_names(frame):
    """A boolean outcome named like an output column, a table named like a scoring step."""
    engine = DuckDBEngine(":memory:")
    try:
        columns = [(n, k) for n, k in COLUMNS if n != "defaulted"] + [("score", "BOOLEAN")]
        rows = [(i, 30.0 + i, "N2", 0.1 * i, 1.0 * i, None if i == 0 else bool(i % 2)) for i in range(6)]
        engine.write_rows(["binned"], columns, rows, "loading")
        old, new = base(), variant(new_version)
        impact = api.measure_impact(old, new, engine, api.source_relation(table="binned"), "table binned",
                                    outcome="score", cutoff=CUTOFF)
        assert (impact.rows, impact.rows_with_outcome, impact.events) == (6, 5, 3)
        reference = both(old, new, pd.DataFrame(rows, columns=[n for n, _ in columns], dtype=object), "score")
        assert impact.score_change.mean == pytest.approx((reference["new_score"] - reference["old_score"]).mean(),
                                                         abs=1e-9)
    finally:
        engine.close()


def test_the_same_numbers_on_every_engine(each_engine, rows, frame):
    """The query is portable: PostgreSQL and Spark give DuckDB's (and the reference's) numbers."""
    each_engine.write_rows(["book"], COLUMNS, rows[:400], "loading the test book")
    old, new = base(), variant(new_version)
    impact = measure(each_engine, old, new, outcome="defaulted", cutoff=CUTOFF)
    ref = both(old, new, frame.iloc[:400])
    accepted_old, accepted_new = ref["old_score"] >= CUTOFF, ref["new_score"] >= CUTOFF
    swap = {c.name: c.rows for c in impact.swap_set.cells}
    assert swap["swap_out"] == int((accepted_old & ~accepted_new).sum())
    assert swap["swap_in"] == int((~accepted_old & accepted_new).sum())
    assert impact.spearman == pytest.approx(scipy.stats.spearmanr(ref["old_score"], ref["new_score"]).statistic,
                                            abs=1e-9)
    change = (ref["new_score"] - ref["old_score"]).to_numpy()
    assert impact.score_change.quantiles["p50"] == pytest.approx(np.quantile(change, 0.5), abs=1e-9)
    assert impact.first_reason.rows_changed == int((ref["old_reason"].fillna("") != ref["new_reason"].fillna("")).sum())
