"""The ROC points and KS point that the fit keeps for its report, from the pass that measures
AUC and KS, against scikit-learn's ``roc_curve`` on the numpy WoE design."""
from __future__ import annotations

import numpy as np
import pytest
from sklearn.metrics import roc_curve

from scoremon.develop.design import Design, EnginePasses
from scoremon.trees import column
from tests.develop import fitdata

K = 3
POINTS = 20


@pytest.fixture(scope="module")
def rows():
    return fitdata.table(rows=1500, seed=5)


def test_curve_points_lie_on_the_roc_curve_and_the_ks_point_is_its_widest_gap(each_engine, rows):
    each_engine.write_rows(["dev"], fitdata.COLUMNS, rows, "loading the development rows")
    features, x, y = fitdata.features(rows)
    passes = EnginePasses(each_engine, Design(fitdata.source(), features, column("bad"), "id", K))
    beta = np.array([-2.0, -0.8, -0.6, -0.4])
    sums, (points, ks_point) = passes.histograms_and_curve({K: beta}, POINTS)
    # [lib] sklearn.metrics.roc_curve with the event as positive and −score = η as its score:
    # every vertex (false-positive rate, true-positive rate) of the ROC curve, ties kept together
    fpr, tpr, _ = roc_curve(y, x @ beta, drop_intermediate=False)
    vertices = set(zip(np.round(fpr, 12), np.round(tpr, 12)))
    assert points[0] == (0.0, 0.0) and points[-1] == (1.0, 1.0)
    assert len(points) > POINTS // 2  # the WoE design has few distinct scores, but more than ten
    for x_share, y_share in points:
        assert (round(x_share, 12), round(y_share, 12)) in vertices
    xs = [p[0] for p in points]
    assert xs == sorted(xs)
    # the KS point is the vertex where the two shares differ most: KS itself (sklearn's curve)
    assert ks_point[1] - ks_point[0] == pytest.approx(float(np.max(tpr - fpr)), abs=1e-12)
    assert (round(ks_point[0], 12), round(ks_point[1], 12)) in vertices
    assert sums[K].events == pytest.approx(float(y.sum()))


def test_histograms_alone_keep_no_curve(each_engine, rows):
    each_engine.write_rows(["dev"], fitdata.COLUMNS, rows, "loading the development rows")
    features, _, _ = fitdata.features(rows)
    passes = EnginePasses(each_engine, Design(fitdata.source(), features, column("bad"), "id", K))
    sums, curve = passes.histograms_and_curve({K: np.array([-2.0, -0.8, -0.6, -0.4])}, 0)
    assert curve == ((), None)
    assert sums[K].events > 0
