"""WoE and IV arithmetic (scoremon.develop.woe) against hand work, pandas and an analytic value."""
from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from scoremon.develop.woe import bin_evidence, evidence_of_bins, information_value
from scoremon.errors import InputError


def test_small_table_worked_by_hand():
    # Worked by hand. Three bins: A 10 rows / 2 events, B 10 / 5, C 5 / 0; totals 25 rows,
    # 7 events, 18 non-events.
    # A: WoE = ln((8/18)/(2/7)) = ln(14/9); IV = (8/18 − 2/7)·ln(14/9) = (20/126)·0.441833 = 0.070132
    # B: WoE = ln((5/18)/(5/7)) = ln(7/18); IV = (5/18 − 5/7)·ln(7/18) = (−55/126)·(−0.944462) = 0.412265
    # C: no events, so 0.5 is added to both counts: ln((5.5/18)/(0.5/7)) = ln(77/18) = 1.453434;
    #    IV = (5.5/18 − 0.5/7)·1.453434 = (59/252)·1.453434 = 0.340288
    a, b, c = evidence_of_bins([10, 10, 5], [2, 5, 0], 25, 7)
    assert a.woe == pytest.approx(0.441833, abs=1e-6) and a.iv == pytest.approx(0.070132, abs=1e-6)
    assert b.woe == pytest.approx(-0.944462, abs=1e-6) and b.iv == pytest.approx(0.412265, abs=1e-6)
    assert c.woe == pytest.approx(1.453434, abs=1e-6) and c.iv == pytest.approx(0.340288, abs=1e-6)
    assert information_value([10, 10, 5], [2, 5, 0], 25, 7) == pytest.approx(0.822685, abs=1e-6)


def test_against_an_independent_pandas_computation():
    # Reference: the textbook formula written directly in pandas over row-level data (a groupby of
    # outcomes per bin), with the same 0.5 rule for bins without events or non-events.
    rng = np.random.default_rng(20261203)
    frame = pd.DataFrame({"bin": rng.integers(0, 12, 5000)})
    frame["y"] = (rng.random(5000) < 0.05 + 0.02 * frame["bin"]).astype(int)
    frame.loc[frame["bin"] == 11, "y"] = 0  # one bin without events
    frame.loc[frame["bin"] == 10, "y"] = 1  # one bin without non-events
    table = frame.groupby("bin")["y"].agg(events="sum", rows="count")
    table["non_events"] = table["rows"] - table["events"]
    zero = (table["events"] == 0) | (table["non_events"] == 0)
    bad = table["events"] + 0.5 * zero
    good = table["non_events"] + 0.5 * zero
    good_share, bad_share = good / table["non_events"].sum(), bad / table["events"].sum()
    reference_woe = np.log(good_share / bad_share)
    reference_iv = (good_share - bad_share) * reference_woe

    got = evidence_of_bins(table["rows"].tolist(), table["events"].tolist(), len(frame), int(frame["y"].sum()))
    np.testing.assert_allclose([e.woe for e in got], reference_woe.to_numpy(), rtol=1e-12)
    np.testing.assert_allclose([e.iv for e in got], reference_iv.to_numpy(), rtol=1e-12)
    assert information_value(table["rows"].tolist(), table["events"].tolist(), len(frame),
                             int(frame["y"].sum())) == pytest.approx(reference_iv.sum(), rel=1e-12)


def test_two_normals_one_standard_deviation_apart_have_iv_one():
    # From memory (CHECKS.md §2): for two normal score distributions with equal variance and mean
    # gap D, IV (the Jeffreys divergence) tends to D² as the bins get finer; D = 1 → 1.0.
    edges = np.linspace(-9, 10, 1901)
    goods = np.diff(stats.norm.cdf(edges, loc=1.0))
    bads = np.diff(stats.norm.cdf(edges, loc=0.0))
    scale = 1e12  # counts large enough that rounding them changes nothing visible
    events = np.round(bads * scale).astype(np.int64)
    non_events = np.round(goods * scale).astype(np.int64)
    keep = (events > 0) & (non_events > 0)
    rows = (events + non_events)[keep]
    iv = information_value(rows.tolist(), events[keep].tolist(), int(rows.sum()), int(events[keep].sum()))
    assert iv == pytest.approx(1.0, abs=1e-3)


def test_information_value_is_the_jeffreys_divergence():
    # IV = KL(non-events || events) + KL(events || non-events) over the bins' shares: Rojas,
    # Alvarez & Rojas, arXiv:2309.13183 [pub]; compared live with scipy.stats.entropy [lib].
    # No bin lacks events or non-events, so no half count is added.
    non_events, events = np.array([400, 300, 200, 100]), np.array([10, 20, 30, 40])
    expected = stats.entropy(non_events, events) + stats.entropy(events, non_events)
    rows = (non_events + events).tolist()
    assert information_value(rows, events.tolist(), sum(rows), int(events.sum())) == pytest.approx(expected, rel=1e-12)


def test_empty_bin_has_no_evidence():
    # Stated rule: a bin without rows gets WoE 0 and IV 0.
    empty = bin_evidence(0, 0, 100, 10)
    assert (empty.woe, empty.iv) == (0.0, 0.0)


def test_zero_non_events_uses_the_half_count_rule():
    # 3 rows, all events, of 100 rows / 10 events: ln((0.5/90)/(3.5/10)) = ln(1/63), by hand
    evidence = bin_evidence(3, 3, 100, 10)
    assert evidence.woe == pytest.approx(math.log(1 / 63), rel=1e-12)
    assert evidence.iv > 0


def test_a_sample_without_events_is_refused():
    with pytest.raises(InputError, match="0 events and 100 non-events"):
        bin_evidence(10, 0, 100, 0)
