"""DuckDB's streamed passes when a pass spans many batches: several threads, the fold order kept
by the held table, and the sort that stands in when a batch's folds come unordered.

The reference is the numpy design of ``tests/develop/fitdata.py``, binned with numpy's
searchsorted and Python's ``in``, independently of the compiler's binning CASE.
"""
from __future__ import annotations

import numpy as np
import pytest
from sqlglot import exp

from scoremon.develop import streamed
from scoremon.develop.design import Design
from scoremon.develop.folds import fold_of
from scoremon.develop.newton import DensePasses
from scoremon.develop.streamed import FOLD, StreamedPasses, _Scratch
from scoremon.trees import column, table_path
from tests.develop import fitdata

K = 4
BETAS = {K: np.array([-1.0, 0.5, -0.3, 0.2]), 0: np.array([0.1, 0.9, 0.3, -0.4]), 3: np.array([-2.0, 0.0, 1.0, 0.7])}


@pytest.fixture
def loaded(engine, monkeypatch):
    """The development rows in DuckDB with small batches (many per pass), and numpy's passes."""
    monkeypatch.setattr(streamed, "BATCH_ROWS", 97)  # 2,000 rows: 21 batches, folds cut mid-batch
    rows = fitdata.table(rows=2000)
    engine.write_rows(["dev"], fitdata.COLUMNS, rows, "loading the development rows")
    features, x, y = fitdata.features(rows)
    folds = np.array([fold_of(r[0], K) for r in rows])
    passes = StreamedPasses(engine, Design(fitdata.source(), features, column("bad"), "id", K))
    yield passes, DensePasses(x, y, folds)
    passes.close()


def _same(got, expected):
    for m in BETAS:
        np.testing.assert_allclose(got[m].gradient, expected[m].gradient, rtol=1e-10, atol=1e-9)
        np.testing.assert_allclose(got[m].hessian, expected[m].hessian, rtol=1e-10, atol=1e-9)
        np.testing.assert_allclose(got[m].loss, expected[m].loss, rtol=1e-11)
        np.testing.assert_array_equal(got[m].rows, expected[m].rows)
        np.testing.assert_array_equal(got[m].extreme, expected[m].extreme)


@pytest.mark.parametrize("threads", [1, 2, 3])
def test_many_batches_on_several_threads_equal_numpy(loaded, threads):
    passes, dense = loaded
    passes.threads = threads
    _same(passes(BETAS), dense(BETAS))


def test_sums_do_not_depend_on_the_threads_timing(loaded):
    # batches are added in their order whatever thread finished first: bit for bit the same
    passes, _ = loaded
    passes.threads = 1
    one = passes(BETAS)
    passes.threads = 3
    for _ in range(3):
        again = passes(BETAS)
        for m in BETAS:
            assert np.array_equal(again[m].hessian, one[m].hessian)
            assert np.array_equal(again[m].gradient, one[m].gradient)
            assert np.array_equal(again[m].loss, one[m].loss)


def test_a_rough_hessian_is_the_exact_one_in_single_precision(loaded):
    # a penalised fit's passes may sum the Hessian in float32 (README, Fitting): only the
    # Hessian changes, by no more than single precision's rounding; gradient and loss are the
    # double-precision sums, bit for bit
    passes, dense = loaded
    exact, rough = passes(BETAS), passes(BETAS, rough=True)
    for m in BETAS:
        assert rough[m].hessian.dtype == np.float64
        np.testing.assert_allclose(rough[m].hessian, dense(BETAS)[m].hessian, rtol=1e-5, atol=1e-4)
        assert not np.array_equal(rough[m].hessian, exact[m].hessian)  # it is the float32 route
        assert np.array_equal(rough[m].gradient, exact[m].gradient) and np.array_equal(rough[m].loss, exact[m].loss)


def test_a_batch_with_folds_out_of_order_is_sorted(loaded):
    # the held table is in fold order; a batch whose rows come shuffled gives the same sums
    passes, _ = loaded
    held = exp.select(exp.Star()).from_(table_path(passes.table))
    batch = next(passes.engine.batches(held, "reading the held rows", 5000))
    assert np.all(np.diff(batch[FOLD]) >= 0)  # held in fold order
    shuffled = np.random.default_rng(5).permutation(len(batch[FOLD]))
    mixed = {name: values[shuffled] for name, values in batch.items()}
    scratch = _Scratch(len(shuffled), passes.design.columns)
    ordered, unordered = passes._batch(batch, BETAS, scratch), passes._batch(mixed, BETAS, scratch)
    for m in BETAS:
        np.testing.assert_allclose(unordered[m].hessian, ordered[m].hessian, rtol=1e-12)
        np.testing.assert_allclose(unordered[m].gradient, ordered[m].gradient, rtol=1e-12, atol=1e-12)
        np.testing.assert_array_equal(unordered[m].rows, ordered[m].rows)


def test_histograms_over_the_held_table_equal_those_over_the_source(loaded):
    # the held-out AUC/KS sums and the ROC curve read the held bin numbers (no binning, no md5
    # per row); they must be exactly those of the design query over the source table, and the
    # AUC equal scikit-learn's on the numpy design ([lib] sklearn.metrics.roc_auc_score)
    from sklearn.metrics import roc_auc_score

    from scoremon.develop.design import EnginePasses
    from scoremon.monitor.statistics import discrimination

    passes, dense = loaded
    source = EnginePasses(passes.engine, passes.design)
    held, held_curve = passes.histograms_and_curve(BETAS, 20)
    direct, direct_curve = source.histograms_and_curve(BETAS, 20)
    assert held == direct and held_curve == direct_curve
    for m in (0, 3):
        rows = dense.folds == m
        eta = dense.x[rows] @ BETAS[m]
        assert discrimination(held[m]).auc == pytest.approx(roc_auc_score(dense.y[rows], eta), abs=1e-12)
