"""The statistics of monitoring against published values, live library calls and hand-worked cases.

Sources follow ../shared/CHECKS.md; each check names its own beside it.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from scoremon.monitor.statistics import (
    binomial_p,
    brier,
    grade_chi_square,
    jeffreys_interval,
    jeffreys_p,
    points_shift,
    psi,
    psi_critical_value,
    rate_change_critical_value,
    shares_with_empty_bin_rule,
    spiegelhalter,
)

# ---------------------------------------------------------------- PSI


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_psi_is_the_symmetric_kullback_leibler_divergence(seed):
    # [lib] PSI = KL(a‖e) + KL(e‖a): scipy.stats.entropy(a, e) + scipy.stats.entropy(e, a)
    rng = np.random.default_rng(seed)
    actual = rng.dirichlet(np.ones(10))
    expected = rng.dirichlet(np.ones(10))
    reference = stats.entropy(actual, expected) + stats.entropy(expected, actual)
    assert psi(actual, expected) == pytest.approx(reference, rel=1e-12)


def test_psi_synthetic_hand_worked_case():
    # hand-worked (CHECKS.md §3, no publication): e = 0.1 in 10 bins,
    # a = (.08,.09,.10,.11,.12,.10,.10,.10,.10,.10) → 0.0101160
    actual = [0.08, 0.09, 0.10, 0.11, 0.12, 0.10, 0.10, 0.10, 0.10, 0.10]
    assert psi(actual, [0.1] * 10) == pytest.approx(0.0101160, abs=5e-8)


def test_psi_refuses_an_empty_bin_until_the_rule_is_applied():
    with pytest.raises(ValueError, match="empty-bin rule"):
        psi([0.0, 1.0], [0.5, 0.5])


def test_empty_bin_rule_adds_half_a_row_to_every_bin_of_that_side_only():
    # the documented rule, worked by hand: rows (0, 2, 2) → (0.5, 2.5, 2.5) / 5.5
    assert shares_with_empty_bin_rule([0, 2, 2]) == pytest.approx([0.5 / 5.5, 2.5 / 5.5, 2.5 / 5.5])
    # a side without an empty bin is left exactly as it is
    assert shares_with_empty_bin_rule([1, 3]) == pytest.approx([0.25, 0.75])
    assert shares_with_empty_bin_rule([0, 0]) is None
    # the rule keeps PSI finite for a bin that empties
    value = psi(shares_with_empty_bin_rule([0, 50, 50]), shares_with_empty_bin_rule([20, 40, 40]))
    assert math.isfinite(value) and value > 0.25


# ---------------------------------------------------------------- critical value


@pytest.mark.parametrize("baseline_rows, rows, confidence, published", [
    # Yurdakul & Naranjo (2020) / Yurdakul (2018), B = 10 [mem, reproduced by simulation; CHECKS.md §3]
    (10_000, 1_000, 0.95, "0.01861"),
    (10_000, 1_000, 0.99, "0.02383"),
    (10_000, 10_000, 0.95, "0.00338"),
    (1_000, 200, 0.95, "0.1015"),
])
def test_psi_critical_value_matches_the_published_numbers(baseline_rows, rows, confidence, published):
    # within half a unit of the last digit printed
    half_unit = 0.5 * 10 ** -len(published.split(".")[1])
    assert psi_critical_value(10, baseline_rows, rows, confidence) == pytest.approx(float(published), abs=half_unit)


@pytest.mark.parametrize("bins", [2, 5, 10, 20])
def test_psi_critical_value_is_the_formula_with_scipy_chi_square_quantiles(bins):
    # [lib] (1/M + 1/N)·χ²_{B−1, q} with scipy.stats.chi2.ppf
    expected = (1 / 5_000 + 1 / 700) * stats.chi2.ppf(0.99, bins - 1)
    assert psi_critical_value(bins, 5_000, 700, 0.99) == pytest.approx(expected, rel=1e-12)


def test_psi_critical_value_is_undefined_without_rows_or_bins():
    assert psi_critical_value(1, 100, 100, 0.95) is None
    assert psi_critical_value(10, 0, 100, 0.95) is None
    assert psi_critical_value(10, 100, 0, 0.95) is None


def test_rate_change_critical_value_hand_worked():
    # hand-worked: r = 0.5, M = N = 100: 1.959964·√(0.25·0.02) = 0.138590
    assert rate_change_critical_value(0.5, 100, 100, 0.95) == pytest.approx(0.138590, abs=1e-6)
    assert rate_change_critical_value(0.0, 100, 100, 0.95) == 0.0
    assert rate_change_critical_value(0.5, 0, 100, 0.95) is None


# ---------------------------------------------------------------- points shift


def test_points_shift_hand_worked():
    # hand-worked: (0.3 − 0.2)·10 + (0.5 − 0.5)·20 + (0.2 − 0.3)·(−5) = 1.0 + 0 + 0.5 = 1.5
    assert points_shift([0.3, 0.5, 0.2], [0.2, 0.5, 0.3], [10, 20, -5]) == pytest.approx(1.5)


# ---------------------------------------------------------------- calibration


@pytest.mark.parametrize("rows, events, pd, published", [
    # ECB (2019), Instructions for reporting the validation results of internal models, §2.5
    # [mem, reproduced with scipy.stats.beta; CHECKS.md §5]
    (6, 2, 0.0367, 0.00438),
    (1000, 10, 0.005, 0.020796),
    (100, 0, 0.0003, 0.193756),
])
def test_jeffreys_p_values(rows, events, pd, published):
    assert jeffreys_p(rows, events, pd) == pytest.approx(published, abs=5e-6)


@pytest.mark.parametrize("rows, events", [(6, 2), (1000, 10), (2545, 13), (40, 39)])
@pytest.mark.parametrize("confidence", [0.95, 0.99])
def test_jeffreys_interval_matches_statsmodels(rows, events, confidence):
    # [lib] statsmodels.stats.proportion.proportion_confint(method="jeffreys"): the equal-tailed
    # Beta(D+½, N−D+½) quantiles, computed live
    from statsmodels.stats.proportion import proportion_confint

    lower, upper = proportion_confint(events, rows, alpha=1 - confidence, method="jeffreys")
    assert jeffreys_interval(rows, events, confidence) == pytest.approx((lower, upper), rel=1e-9)


def test_jeffreys_interval_at_the_boundaries():
    # Brown, Cai & DasGupta (2001), §4.1.2 (from memory): with no events the lower end is 0, with
    # every row an event the upper end is 1; the other end stays the Beta quantile
    # (statsmodels leaves the Beta quantile at both ends, so only the free end is compared with it).
    from statsmodels.stats.proportion import proportion_confint

    assert jeffreys_interval(50, 0) == pytest.approx((0.0, proportion_confint(0, 50, method="jeffreys")[1]))
    assert jeffreys_interval(50, 50) == pytest.approx((proportion_confint(50, 50, method="jeffreys")[0], 1.0))
    assert jeffreys_interval(0, 0) is None


@pytest.mark.parametrize("rows, events, pd, published", [
    # CHECKS.md §5 [lib: scipy.stats.binom.sf(D-1, N, PD)]
    (6, 2, 0.0367, 0.018306),
    (1000, 10, 0.005, 0.031465),
])
def test_binomial_p_values(rows, events, pd, published):
    assert binomial_p(rows, events, pd) == pytest.approx(published, abs=5e-7)
    assert binomial_p(rows, events, pd) == pytest.approx(stats.binom.sf(events - 1, rows, pd), rel=1e-12)


def test_binomial_p_is_one_without_events():
    # P(X ≥ 0) = 1 (hand-worked)
    assert binomial_p(50, 0, 0.1) == pytest.approx(1.0)


def test_tests_are_undefined_without_rows():
    assert jeffreys_p(0, 0, 0.1) is None
    assert binomial_p(0, 0, 0.1) is None


def test_grade_chi_square_published_example():
    # Basel Committee WP 14 (2005) form [mem, reproduced; CHECKS.md §5]: 12.629, p(df 5) = 0.0271
    result = grade_chi_square([47, 95, 68, 53, 37], [3, 20, 17, 24, 28], [0.0307, 0.1161, 0.2907, 0.5514, 0.7648])
    assert result.statistic == pytest.approx(12.629, abs=1e-3)
    assert result.degrees_of_freedom == 5
    assert result.p_value == pytest.approx(0.0271, abs=1e-3)
    # [lib] the p-value is the chi-square upper tail
    assert result.p_value == pytest.approx(stats.chi2.sf(result.statistic, 5), rel=1e-12)


def test_grade_chi_square_leaves_out_grades_without_rows_or_spread():
    # a grade with no rows and a grade with a PD of exactly 1 are not counted (no division by zero)
    result = grade_chi_square([10, 0, 5], [2, 0, 5], [0.1, None, 1.0])
    assert result.degrees_of_freedom == 1
    # hand-worked: (2 − 1)² / (10·0.1·0.9) = 1.111111
    assert result.statistic == pytest.approx(1.111111, abs=1e-6)
    assert grade_chi_square([0], [0], [None]) is None


def test_spiegelhalter_hand_worked():
    # hand-worked from Spiegelhalter (1986): p = (0.2, 0.5, 0.8), y = (0, 1, 1):
    # Σ(y−p)(1−2p) = −0.12 + 0 − 0.12 = −0.24; Σ(1−2p)²p(1−p) = 2·0.36·0.16 = 0.1152;
    # z = −0.24 / √0.1152 = −1/√2
    result = spiegelhalter(-0.24, 0.1152)
    assert result.z == pytest.approx(-0.707107, abs=1e-6)
    assert result.p_value == pytest.approx(2 * stats.norm.sf(0.707107), abs=1e-6)
    assert spiegelhalter(0.0, 0.0) is None


def test_brier_hand_worked():
    # hand-worked: p = (0.2, 0.5, 0.8), y = (0, 1, 1): (0.04 + 0.25 + 0.04) / 3 = 0.11
    assert brier(0.33, 3) == pytest.approx(0.11)
    assert brier(0.0, 0) is None


# Two-sided calibration tests: the equal-tailed p-value, twice the smaller one-sided tail,
# capped at 1 (common practice for an interval-style two-sided test). The one-sided tails are
# live calls into scipy: the Beta(D+½, N−D+½) distribution at the PD (ECB 2019 §2.5, Jeffreys)
# and the binomial's lower and upper tails.
@pytest.mark.parametrize("rows, events, pd", [(1000, 10, 0.005), (1000, 1, 0.02), (6, 2, 0.0367), (100, 0, 0.0003)])
def test_two_sided_p_values_take_both_tails(rows, events, pd):
    upper = stats.beta.cdf(pd, events + 0.5, rows - events + 0.5)
    assert jeffreys_p(rows, events, pd, two_sided=True) == pytest.approx(min(1.0, 2 * min(upper, 1 - upper)), rel=1e-12)
    above, below = stats.binom.sf(events - 1, rows, pd), stats.binom.cdf(events, rows, pd)
    assert binomial_p(rows, events, pd, two_sided=True) == pytest.approx(min(1.0, 2 * min(above, below)), rel=1e-12)


def test_an_over_estimating_model_reads_ok_one_sided_and_not_two_sided():
    # 1 event in 1,000 rows at a PD of 2 %: far fewer events than predicted
    assert jeffreys_p(1000, 1, 0.02) > 0.99
    assert jeffreys_p(1000, 1, 0.02, two_sided=True) < 0.001
