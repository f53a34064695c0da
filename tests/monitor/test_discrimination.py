"""AUC, Gini, KS and the DeLong interval, computed through the SQL histogram pass.

Each case loads (month, score, outcome) rows into an engine, runs
:func:`scoremon.monitor.queries.discrimination_pass` — the score-value histogram per month,
reduced in the engine — and turns the sums into figures with
:func:`scoremon.monitor.statistics.discrimination`. References: scikit-learn's
``roc_auc_score`` and scipy's ``ks_2samp`` [lib], the normal-scores analytic values [mem],
a direct pairwise DeLong computation, and a hand-worked case.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats
from sklearn.metrics import roc_auc_score
from sqlglot import exp

from scoremon.monitor.passes import histogram_sums
from scoremon.monitor.statistics import discrimination
from scoremon.trees import identifier

COLUMNS = [("month", "VARCHAR"), ("score", "DOUBLE"), ("outcome", "BIGINT")]


def measured(engine, rows, table="histogram_rows"):
    """Month → Discrimination (or None), through the engine."""
    engine.write_rows([table], COLUMNS, rows, "loading score rows")
    return {month: discrimination(sums)
            for month, sums in histogram_sums(engine, exp.Table(this=identifier(table)), None, True,
                                              "measuring discrimination").items()}


def tied_rows(month: str, seed: int, n: int):
    """Integer scores in a narrow range (many ties), events likelier at low scores."""
    rng = np.random.default_rng(seed)
    scores = rng.integers(0, 25, n).astype(float)
    events = (rng.random(n) < 1 / (1 + np.exp((scores - 8) / 4))).astype(int)
    return [(month, float(s), int(y)) for s, y in zip(scores, events)]


def delong_pairwise(scores, events):
    """DeLong, DeLong & Clarke-Pearson (1988) from every event/non-event pair, written out."""
    bad = scores[events == 1]
    good = scores[events == 0]
    psi = (bad[:, None] < good[None, :]).astype(float) + 0.5 * (bad[:, None] == good[None, :])
    auc = psi.mean()
    v10, v01 = psi.mean(axis=1), psi.mean(axis=0)
    variance = v10.var(ddof=1) / len(bad) + v01.var(ddof=1) / len(good)
    return auc, math.sqrt(variance)


def test_auc_and_ks_match_scikit_learn_and_scipy_on_tied_scores_in_one_pass(each_engine):
    rows = tied_rows("2024-01", 1, 600) + tied_rows("2024-02", 2, 450)
    found = measured(each_engine, rows)
    assert sorted(found) == ["2024-01", "2024-02"]
    for month in found:
        scores = np.array([s for m, s, _ in rows if m == month])
        events = np.array([y for m, _, y in rows if m == month])
        # [lib] AUC = P(event scores lower) + ½ P(tie): roc_auc_score on the negated score
        assert found[month].auc == pytest.approx(roc_auc_score(events, -scores), abs=1e-12)
        assert found[month].gini == pytest.approx(2 * roc_auc_score(events, -scores) - 1, abs=1e-12)
        # [lib] KS = max |F_event − F_non-event|: scipy.stats.ks_2samp
        assert found[month].ks == pytest.approx(stats.ks_2samp(scores[events == 1], scores[events == 0]).statistic,
                                                abs=1e-12)


def test_delong_interval_matches_a_pairwise_computation(engine):
    rows = tied_rows("2024-01", 5, 400)
    found = measured(engine, rows)["2024-01"]
    scores = np.array([s for _, s, _ in rows])
    events = np.array([y for _, _, y in rows])
    auc, standard_error = delong_pairwise(scores, events)
    assert found.auc == pytest.approx(auc, abs=1e-12)
    assert found.auc_standard_error == pytest.approx(standard_error, rel=1e-9)
    assert found.auc_lower == pytest.approx(auc - stats.norm.ppf(0.975) * standard_error, rel=1e-9)
    assert found.auc_upper == pytest.approx(auc + stats.norm.ppf(0.975) * standard_error, rel=1e-9)


def test_normal_scores_analytic_values(engine):
    # from memory (CHECKS.md §6): two normal score distributions, mean gap D = 1, equal variance:
    # AUC = Φ(D/√2) = 0.760250, KS = 2Φ(D/2) − 1 = 0.382925. The scores are the normal
    # quantiles at (i − ½)/n, so the sample is the distribution up to O(1/n).
    n = 2000
    quantiles = stats.norm.ppf((np.arange(n) + 0.5) / n)
    rows = [("all", float(q), 1) for q in quantiles] + [("all", float(q + 1.0), 0) for q in quantiles]
    found = measured(engine, rows)["all"]
    assert found.auc == pytest.approx(0.760250, abs=1e-3)
    assert found.ks == pytest.approx(0.382925, abs=1e-3)


def test_hand_worked_case(engine):
    # hand-worked: events at scores 1 and 2, non-events at 2 and 3. Event 1 is below both (2
    # pairs); event 2 ties one (½) and is below one (1): AUC = 3.5/4 = 0.875, Gini 0.75.
    # KS: at score 1, F_event = ½ and F_non-event = 0; at 2, 1 and ½ → 0.5.
    found = measured(engine, [("m", 1.0, 1), ("m", 2.0, 1), ("m", 2.0, 0), ("m", 3.0, 0)])["m"]
    assert found.auc == pytest.approx(0.875)
    assert found.gini == pytest.approx(0.75)
    assert found.ks == pytest.approx(0.5)


def test_all_event_and_no_event_months_give_no_figure_and_no_error(engine):
    rows = [("all_events", 1.0, 1), ("all_events", 2.0, 1), ("no_events", 1.0, 0), ("no_events", 5.0, 0),
            ("one_each", 1.0, 1), ("one_each", 2.0, 0)]
    found = measured(engine, rows)
    assert found["all_events"] is None
    assert found["no_events"] is None
    # one event and one non-event: AUC 1 but no variance to estimate, so no interval
    assert found["one_each"].auc == pytest.approx(1.0)
    assert found["one_each"].auc_lower is None


def test_rows_without_outcome_are_left_out(engine):
    rows = [("m", 1.0, 1), ("m", 2.0, 0), ("m", 0.5, None), ("m", 3.0, -1)]
    # NULL (not known) and −1 (invalid) are not outcomes; what remains is one perfect pair
    found = measured(engine, rows)["m"]
    assert found.auc == pytest.approx(1.0)
