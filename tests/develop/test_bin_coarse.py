"""Coarse classes (scoremon.develop.coarse): the dynamic programme against every partition."""
from __future__ import annotations

import itertools
import math
import random

import pytest

from scoremon.develop.binning_file import Settings
from scoremon.develop.coarse import best_partition, categorical_groups, numeric_bins
from scoremon.develop.fine import CategoricalClasses, NumericClasses
from scoremon.develop.woe import bin_evidence


def _all_partitions(n: int):
    for cuts in itertools.product((False, True), repeat=n - 1):
        starts = [0] + [i + 1 for i, cut in enumerate(cuts) if cut] + [n]
        yield list(zip(starts, starts[1:]))


def _brute_force(rows, events, total_rows, total_events, min_rows, min_events, max_bins, trend):
    """The best IV over every partition into adjacent runs that meets the constraints (or None)."""
    best = None
    for bins in _all_partitions(len(rows)):
        if len(bins) > max_bins:
            continue
        counts = [(sum(rows[j:i]), sum(events[j:i])) for j, i in bins]
        if any(r < min_rows or e < min_events for r, e in counts):
            continue
        evidence = [bin_evidence(r, e, total_rows, total_events) for r, e in counts]
        woe = [e.woe for e in evidence]
        if trend == "increasing" and any(b <= a for a, b in zip(woe, woe[1:])):
            continue
        if trend == "decreasing" and any(b >= a for a, b in zip(woe, woe[1:])):
            continue
        iv = math.fsum(e.iv for e in evidence)
        best = iv if best is None else max(best, iv)
    return best


@pytest.mark.parametrize("seed", range(8))
def test_dynamic_programme_finds_the_best_of_all_partitions(seed):
    # External check: exhaustive enumeration of all 2^(n−1) partitions of up to 10 classes.
    generator = random.Random(seed)
    for _ in range(40):
        n = generator.randint(1, 10)
        rows = [generator.randint(1, 80) for _ in range(n)]
        events = [generator.randint(0, r) for r in rows]
        total_events = sum(events) + generator.randint(1, 20)
        total_rows = sum(rows) + (total_events - sum(events)) + generator.randint(1, 60)
        min_rows, min_events, max_bins = generator.randint(0, 60), generator.randint(0, 10), generator.randint(1, 7)
        for trend in ("increasing", "decreasing", "none", "auto"):
            found = best_partition(rows, events, total_rows, total_events, min_rows, min_events, max_bins, trend)
            if trend == "auto":
                expected = max((v for v in (_brute_force(rows, events, total_rows, total_events, min_rows, min_events,
                                                         max_bins, t) for t in ("increasing", "decreasing"))
                                if v is not None), default=None)
            else:
                expected = _brute_force(rows, events, total_rows, total_events, min_rows, min_events, max_bins, trend)
            if expected is None:
                assert not found.feasible and found.bins == ((0, n),)
                continue
            assert found.feasible
            assert found.iv == pytest.approx(expected, rel=1e-12, abs=1e-15)
            counts = [(sum(rows[j:i]), sum(events[j:i])) for j, i in found.bins]
            assert len(found.bins) <= max_bins
            assert all(r >= min_rows and e >= min_events for r, e in counts)


def _numeric(rows, events, edges, **special):
    empty = (0, 0)
    return NumericClasses("x", tuple(edges), tuple(rows), tuple(events), special.get("missing", empty),
                          special.get("nan", empty), special.get("positive_infinity", empty),
                          special.get("negative_infinity", empty), 0.0, 10.0)


def test_trend_is_kept_when_asked():
    # event rates 10 %, 30 %, 5 %, 25 %: no monotone order as they stand
    fine = _numeric([100, 100, 100, 100], [10, 30, 5, 25], [1.0, 2.0, 3.0])
    settings = Settings(min_share=0.0, min_events=0, trend="decreasing")
    coarse = numeric_bins(fine, 400, 70, settings)
    woe = [c.woe for c in coarse.binned.counts[:-1]]
    assert all(b < a for a, b in zip(woe, woe[1:]))
    free = numeric_bins(fine, 400, 70, Settings(min_share=0.0, min_events=0, trend="none"))
    assert len(free.binned.counts) == 5 and free.binned.iv >= coarse.binned.iv


def test_special_values_join_the_outer_bins_and_the_missing_bin():
    fine = _numeric([100, 100], [10, 30], [5.0], missing=(7, 1), nan=(3, 2), positive_infinity=(4, 4),
                    negative_infinity=(2, 0))
    coarse = numeric_bins(fine, 216, 47, Settings(min_share=0.0, min_events=0, trend="none"))
    assert [(c.rows, c.events) for c in coarse.binned.counts] == [(102, 10), (104, 34), (10, 3)]
    assert coarse.notes == ("3 NaN with missing, 4 +inf in the top bin, 2 -inf in the bottom bin",)
    bins = coarse.binned.feature.bins
    assert (bins[0].lower, bins[0].upper, bins[1].lower, bins[1].upper) == (-math.inf, 5.0, 5.0, math.inf)


def test_constant_and_all_missing_characteristics():
    constant = NumericClasses("x", (), (100,), (10,), (0, 0), (0, 0), (0, 0), (0, 0), 3.0, 3.0)
    coarse = numeric_bins(constant, 100, 10, Settings())
    assert coarse.notes[0] == "constant in the sample (3): one bin"
    assert coarse.binned.iv == 0.0 and len(coarse.binned.feature.bins) == 1
    missing = NumericClasses("x", (), (), (), (100, 10), (0, 0), (0, 0), (0, 0), None, None)
    assert numeric_bins(missing, 100, 10, Settings()) .binned is None
    assert categorical_groups(CategoricalClasses("c", (), (100, 10)), 100, 10, Settings()).notes == \
        ("all missing in the sample: left out",)


def test_categories_rare_to_other_and_groups_in_woe_order():
    values = (("a", 300, 30), ("b", 300, 90), ("c", 20, 1), ("d", 380, 19))
    coarse = categorical_groups(CategoricalClasses("c", values, (0, 0)), 1000, 140,
                                Settings(min_share=0.05, min_events=0))
    feature = coarse.binned.feature
    assert feature.other.values == ["c"]
    assert [g.values for g in feature.groups] == [["b"], ["a"], ["d"]]  # WoE rising: b riskiest, d safest
    woe = [g.woe for g in feature.groups]
    assert woe == sorted(woe)


def test_many_rare_values_go_to_other_unlisted():
    values = tuple((f"v{i:03d}", 2, 1) for i in range(60)) + (("big", 880, 40),)
    coarse = categorical_groups(CategoricalClasses("c", values, (0, 0)), 1000, 100, Settings(min_events=0))
    assert coarse.binned.feature.other.values == []
    assert (coarse.binned.counts[-2].rows, coarse.binned.counts[-2].events) == (120, 60)
    assert coarse.notes == ("60 rare values in other (not listed)",)


def test_constraints_no_partition_meets_give_one_bin_and_say_so():
    # 40 events in all, 30 asked per bin: two bins cannot both have 30, one bin can
    fine = _numeric([100, 100, 100], [10, 15, 15], [1.0, 2.0])
    coarse = numeric_bins(fine, 300, 40, Settings(min_share=0.0, min_events=30))
    assert len(coarse.binned.feature.bins) == 1
    # 20 events in all: not even one bin of everything holds 30
    short = numeric_bins(_numeric([100, 100], [10, 10], [1.0]), 200, 20, Settings(min_share=0.0, min_events=30))
    assert len(short.binned.feature.bins) == 1
    assert short.notes[0] == "cannot split into bins of 0% of rows (0) and 30 events: one bin"
