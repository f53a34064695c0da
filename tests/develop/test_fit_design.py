"""The WoE design and the fit's passes in the engine, against numpy, statsmodels and each other.

The numpy design of ``tests/develop/fitdata.py`` bins the rows with numpy's searchsorted and
Python's ``in``, independently of the compiler's binning CASE used in the engine.
"""
from __future__ import annotations

import numpy as np
import pytest
import statsmodels.api as sm

from scoremon.trees import column
from scoremon.develop.design import Design, EnginePasses, measure_moments
from scoremon.develop.folds import fold_of
from scoremon.develop.newton import DensePasses, SEPARATION, fit_one
from scoremon.develop.path import fit_path, histogram_sums
from scoremon.develop.streamed import StreamedPasses, open_passes
from tests.develop import fitdata

K = 4


@pytest.fixture(scope="module")
def rows():
    return fitdata.table(rows=2000)


def _load(engine, rows):
    engine.write_rows(["dev"], fitdata.COLUMNS, rows, "loading the development rows")
    feats, x, y = fitdata.features(rows)
    folds = np.array([fold_of(r[0], K) for r in rows])
    return EnginePasses(engine, Design(fitdata.source(), feats, column("bad"), "id", K)), DensePasses(x, y, folds), x, y, folds


def _assert_same_sums(got, expected, betas):
    for m in betas:
        np.testing.assert_allclose(got[m].gradient, expected[m].gradient, rtol=1e-10, atol=1e-9)
        np.testing.assert_allclose(got[m].hessian, expected[m].hessian, rtol=1e-10, atol=1e-9)
        np.testing.assert_allclose(got[m].loss, expected[m].loss, rtol=1e-11)
        np.testing.assert_array_equal(got[m].rows, expected[m].rows)


def test_pass_sums_equal_numpy_on_the_same_design(each_engine, rows):
    passes, dense, _, _, _ = _load(each_engine, rows)
    betas = {K: np.array([-1.0, 0.5, -0.3, 0.2]), 1: np.array([0.1, 0.9, 0.3, -0.4])}
    _assert_same_sums(passes(betas), dense(betas), betas)


def test_unpenalised_fit_in_the_engine_equals_statsmodels(each_engine, rows):
    # [lib] statsmodels Logit (Newton, tol 1e-14) on the numpy WoE design: coefficients and SE to 1e-8
    passes, _, x, y, _ = _load(each_engine, rows)
    fit = fit_one(passes, x.shape[1])
    reference = sm.Logit(y, x).fit(method="newton", tol=1e-14, maxiter=100, disp=0)
    np.testing.assert_allclose(fit.coefficients, reference.params, rtol=1e-8)
    np.testing.assert_allclose(fit.standard_errors(), reference.bse, rtol=1e-8)


def test_lasso_path_with_cv_is_the_same_on_every_engine(each_engine, rows):
    # every engine against the numpy passes on the independently binned design: within 1e-9
    passes, dense, x, y, folds = _load(each_engine, rows)
    got = fit_path(passes, x.shape[1], K, 1.0, count=3)
    expected = fit_path(dense, x.shape[1], K, 1.0, count=3)
    assert got.lambda_max == pytest.approx(expected.lambda_max, rel=1e-12)
    for a, b in zip(got.points, expected.points):
        np.testing.assert_allclose(a.fit.coefficients, b.fit.coefficients, rtol=0, atol=1e-9)
        for fa, fb in zip(a.folds, b.folds):
            np.testing.assert_allclose(fa.coefficients, fb.coefficients, rtol=0, atol=1e-9)
        np.testing.assert_allclose(a.cv, b.cv, rtol=1e-10)
    assert got.chosen == expected.chosen


def test_histograms_and_moments_in_the_engine_equal_numpy(each_engine, rows):
    passes, _, x, y, folds = _load(each_engine, rows)
    beta = np.array([-0.8, -0.9, -1.1, -0.7])
    sums = passes.histograms({2: beta, K: beta})
    assert sums[2] == histogram_sums(x[folds == 2] @ beta, y[folds == 2])
    assert sums[K] == histogram_sums(x @ beta, y)
    moments = measure_moments(each_engine, passes.design)
    np.testing.assert_allclose(moments.correlation(), np.corrcoef(x[:, 1:].T), atol=1e-12)
    assert (moments.rows, moments.events) == (len(y), y.sum())


def test_perfect_separation_in_the_engine_is_reported(engine):
    rows = fitdata.table(rows=600, separate=True)
    passes, _, x, _, _ = _load(engine, rows)
    fit = fit_one(passes, x.shape[1])
    assert fit.status == SEPARATION


def test_streamed_passes_equal_numpy_and_statsmodels(engine, rows):
    # DuckDB's route (bin numbers held once, sums in numpy) against the independently binned numpy
    # design, and its unpenalised fit against [lib] statsmodels Logit (Newton, tol 1e-14) to 1e-8
    _, dense, x, y, _ = _load(engine, rows)
    design = Design(fitdata.source(), fitdata.features(rows)[0], column("bad"), "id", K)
    with open_passes(engine, design) as passes:
        assert isinstance(passes, StreamedPasses)
        betas = {K: np.array([-1.0, 0.5, -0.3, 0.2]), 1: np.array([0.1, 0.9, 0.3, -0.4])}
        _assert_same_sums(passes(betas), dense(betas), betas)
    plain = Design(fitdata.source(), design.features, column("bad"))
    with open_passes(engine, plain) as passes:
        fit = fit_one(passes, x.shape[1])
    reference = sm.Logit(y, x).fit(method="newton", tol=1e-14, maxiter=100, disp=0)
    np.testing.assert_allclose(fit.coefficients, reference.params, rtol=1e-8)
    np.testing.assert_allclose(fit.standard_errors(), reference.bse, rtol=1e-8)
