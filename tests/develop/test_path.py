"""The λ path, its cross-validation and the folds from the key."""
from __future__ import annotations

import hashlib

import numpy as np
import pytest
from sklearn.metrics import roc_auc_score
from scipy import stats

from scoremon.develop.folds import fold_of
from scoremon.develop.newton import DensePasses, Penalty, fit_one, kkt_violation
from scoremon.develop.path import (
    AUC,
    choose,
    dense_histograms,
    fit_path,
    fold_counts,
    histogram_sums,
    intercept_only,
    lambda_grid,
    lambda_max,
)
from scoremon.errors import InputError
from scoremon.monitor.statistics import discrimination
from tests.develop.test_newton import cancer


def _folds(n: int, k: int) -> np.ndarray:
    return np.array([fold_of(i, k) for i in range(n)])


@pytest.mark.parametrize("alpha", [1.0, 0.5])
def test_kkt_conditions_hold_at_every_lambda_of_the_path(alpha):
    # Friedman, Hastie & Tibshirani (2010), J. Stat. Software 33(1), §2.1: the optimality
    # conditions of the penalised objective, checked for every fold model and the all-rows model
    x, y = cancer()
    folds = _folds(len(y), 5)
    result = fit_path(DensePasses(x, y, folds), x.shape[1], 5, alpha)
    assert len(result.points) == 20
    for point in result.points:
        for fit in (point.fit,) + point.folds:
            assert fit.converged
            assert kkt_violation(fit, Penalty(point.lam, alpha)) < 1e-7


def test_lambda_max_zeroes_everything_and_just_below_it_one_enters():
    # Friedman, Hastie & Tibshirani (2010) §2.5: λ_max = max_j |⟨x_j, y − ȳ⟩| / (Nα) at the
    # intercept-only fit; just below it exactly one coefficient (the largest |G_j|) is non-zero
    x, y = cancer()
    passes = DensePasses(x, y)
    start = intercept_only(fold_counts(passes, x.shape[1], 1), x.shape[1], [1])[1]
    largest = lambda_max(passes, start, 1, 1.0)
    # the formula, written out independently: G_j = (1/N) Σ x_j (ȳ − y)
    assert largest == pytest.approx(np.max(np.abs(x[:, 1:].T @ (y.mean() - y))) / len(y), rel=1e-12)
    at = fit_one(passes, x.shape[1], Penalty(largest, 1.0), start=start)
    assert np.count_nonzero(at.coefficients[1:]) == 0
    below = fit_one(passes, x.shape[1], Penalty(largest * (1 - 1e-3), 1.0), start=start)
    entered = np.flatnonzero(below.coefficients[1:])
    assert list(entered) == [int(np.argmax(np.abs(x[:, 1:].T @ (y.mean() - y))))]


def test_the_path_starts_at_lambda_max_with_nothing_in_and_grows():
    x, y = cancer()
    result = fit_path(DensePasses(x, y, _folds(len(y), 5)), x.shape[1], 5, 1.0)
    assert result.points[0].lam == result.lambda_max and result.points[0].nonzero == 0
    assert result.points[-1].lam == pytest.approx(result.lambda_max * 1e-3, rel=1e-12)
    assert result.points[-1].nonzero > result.points[1].nonzero > 0


def test_grid_is_log_spaced():
    grid = lambda_grid(2.0, 5, 1e-4)
    np.testing.assert_allclose(np.diff(np.log10(grid)), -1.0, rtol=1e-12)
    with pytest.raises(InputError, match="positive λ_max"):
        lambda_grid(0.0)


def test_cross_validated_deviance_is_the_held_out_mean_deviance():
    # the held-out deviance 2·Σloss/n of fold 0's model, recomputed with scipy's logistic
    x, y = cancer()
    folds = _folds(len(y), 5)
    result = fit_path(DensePasses(x, y, folds), x.shape[1], 5, 1.0, lambdas=[0.01])
    model = result.points[0].folds[0].coefficients
    held = folds == 0
    p = stats.logistic.cdf(x[held] @ model)
    deviance = -2.0 * np.mean(y[held] * np.log(p) + (1 - y[held]) * np.log1p(-p))
    assert result.points[0].cv[0] == pytest.approx(deviance, rel=1e-10)


def test_cross_validated_auc_equals_scikit_learn_on_the_held_out_rows():
    # [lib] sklearn.metrics.roc_auc_score on each fold's held-out rows
    x, y = cancer()
    folds = _folds(len(y), 4)
    result = fit_path(DensePasses(x, y, folds), x.shape[1], 4, 0.5, lambdas=[0.05, 0.01], metric=AUC,
                      histograms=dense_histograms(x, y, folds))
    for point in result.points:
        for k, fit in enumerate(point.folds):
            held = folds == k
            assert point.cv[k] == pytest.approx(roc_auc_score(y[held], x[held] @ fit.coefficients), abs=1e-12)


def test_histogram_sums_give_auc_and_ks_like_scikit_learn_and_scipy():
    # [lib] roc_auc_score and scipy.stats.ks_2samp, with ties (η rounded to one decimal)
    rng = np.random.default_rng(3)
    eta = np.round(rng.normal(size=400), 1)
    y = (rng.random(400) < 1 / (1 + np.exp(-eta))).astype(float)
    result = discrimination(histogram_sums(eta, y))
    assert result.auc == pytest.approx(roc_auc_score(y, eta), abs=1e-12)
    assert result.ks == pytest.approx(stats.ks_2samp(eta[y == 1], eta[y == 0]).statistic, abs=1e-12)


def test_one_standard_error_rule_takes_the_largest_lambda_within_one_se():
    # ESL §7.10 (from memory): the largest λ whose mean is within sd/√K of the best mean
    x, y = cancer()
    folds = _folds(len(y), 5)
    result = fit_path(DensePasses(x, y, folds), x.shape[1], 5, 1.0, one_se=True)
    means = [p.cv_mean for p in result.points]
    best = int(np.argmin(means))
    limit = means[best] + result.points[best].cv_sd / np.sqrt(5)
    expected = min(i for i, m in enumerate(means) if m <= limit)
    assert (result.best, result.chosen) == (best, expected)
    assert result.chosen <= result.best
    assert choose(result.points, "deviance", False) == (best, best)


def test_a_fold_with_fewer_than_two_events_is_refused_before_fitting():
    x, y = cancer()
    y = np.zeros(len(y))
    y[:5] = 1.0
    folds = np.r_[[0, 0, 1, 1, 0], np.arange(len(y) - 5) % 3]
    with pytest.raises(InputError, match=r"fold 2 of 3 holds \d+ rows with 0 events; every fold needs at least 2 "
                                         r"events and 2 non-events: use fewer folds \(--folds\)"):
        fit_path(DensePasses(x, y, folds), x.shape[1], 3, 1.0)


def test_fold_of_reads_the_first_eight_hex_digits_of_md5():
    # the rule written out with hashlib: md5("12345") = 827ccb0eea8a706c4c34a16891f84e7b
    assert hashlib.md5(b"12345").hexdigest().startswith("827ccb0e")
    assert fold_of(12345, 7) == 0x827CCB0E % 7
    assert fold_of("A-17", 5) == int(hashlib.md5(b"A-17").hexdigest()[:8], 16) % 5


def test_ridge_path_starts_at_the_lambda_max_of_alpha_0_001_and_is_optimal_everywhere():
    # Friedman, Hastie & Tibshirani (2010) §2.5 (from memory): for α = 0 the path starts from the
    # λ_max of α = 0.001; every fit on it has a zero gradient of the penalised objective
    x, y = cancer()
    passes = DensePasses(x, y, _folds(len(y), 3))
    result = fit_path(passes, x.shape[1], 3, 0.0, count=5)
    start = intercept_only(fold_counts(passes, x.shape[1], 3), x.shape[1], [3])[3]
    assert result.lambda_max == pytest.approx(lambda_max(passes, start, 3, 1.0) / 1e-3, rel=1e-12)
    for point in result.points:
        assert kkt_violation(point.fit, Penalty(point.lam, 0.0)) < 1e-7
    assert np.max(np.abs(result.points[0].fit.coefficients[1:])) < 0.01


class _Recording(DensePasses):
    """DensePasses that notes, per pass, whether the Hessian was asked for."""

    def __init__(self, *args):
        super().__init__(*args)
        self.asked: list[bool] = []

    def __call__(self, betas, hessian=True, rough=False):
        self.asked.append(hessian)
        return super().__call__(betas, hessian, rough)


@pytest.mark.parametrize("alpha", [0.0, 1.0])
def test_passes_without_the_hessian_reach_the_same_optimum(alpha, monkeypatch):
    # the rules that save passes (README, Fitting): the last λ's sums start the next λ, and a
    # pass after a step under 1e-3 sums no Hessian. The path must end where one with a fresh
    # Hessian on every pass ends, and still satisfy the optimality conditions
    x, y = cancer()
    folds = _folds(len(y), 5)
    saving = _Recording(x, y, folds, 5)
    path = fit_path(saving, x.shape[1], 5, alpha, count=8)
    monkeypatch.setattr("scoremon.develop.newton.HESSIAN_REFRESH", 0.0)
    fresh = _Recording(x, y, folds, 5)
    reference = fit_path(fresh, x.shape[1], 5, alpha, count=8)
    assert all(fresh.asked[2:]) and not any(fresh.asked[:2]) and sum(saving.asked) < sum(fresh.asked)
    for got, expected in zip(path.points, reference.points):
        for a, b in zip((got.fit,) + got.folds, (expected.fit,) + expected.folds):
            assert a.converged and b.converged
            np.testing.assert_allclose(a.coefficients, b.coefficients, atol=1e-9, rtol=0)
            assert kkt_violation(a, Penalty(got.lam, alpha)) < 1e-7


def test_a_fit_resumed_at_its_own_optimum_makes_no_pass():
    # the convergence test reads only the sums at β: a converged fit handed back as the start
    # (its sums reused) is converged again without a pass
    x, y = cancer()
    passes = DensePasses(x, y)
    fit = fit_one(passes, x.shape[1], Penalty(0.01, 0.0))
    before = passes.count
    again = fit_one(passes, x.shape[1], Penalty(0.01, 0.0), start=fit)
    assert passes.count == before and again.converged and again.iterations == 0
    np.testing.assert_array_equal(again.coefficients, fit.coefficients)


def test_the_unpenalised_fit_sums_its_hessian_on_every_pass():
    # its standard errors read the Hessian, so it must be the one at the coefficients; a start
    # from a penalised fit (whose Hessian may be older) is measured afresh
    x, y = cancer()
    passes = _Recording(x, y)
    ridge = fit_one(passes, x.shape[1], Penalty(0.001, 0.0))
    asked = len(passes.asked)
    plain = fit_one(passes, x.shape[1], Penalty(), start=ridge)
    assert all(passes.asked[asked:]) and plain.hessian_current
    exact = passes.sums(plain.coefficients)
    np.testing.assert_allclose(plain.hessian, exact.hessian.sum(axis=0), rtol=1e-12)
