"""The export route the benchmark compares against: fetch the columns, score them in numpy.

This is how a team without in-database scoring works: pull the characteristics out of the
database into arrays and score them with vectorised numpy (``searchsorted`` for intervals, an
index lookup for categories). It reads bins through :mod:`scoremon.spec.terms`, sums in the
compiled SQL's order and so produces the same grade counts as the compiled query; the
benchmark checks that, so both routes provably do the same work.

NULL and NaN both arrive as NaN once fetched, so this scorer follows the bench spec, where
NaN goes to the missing bin and ±infinity to the outer bins (the defaults).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..compiler import ETA_CLAMP
from ..spec.model import CategoricalFeature, LinearFeature, NumericFeature, Spec
from ..spec.terms import base_points, feature_terms, linear_points_slope, linear_slope, numeric_bins_in_order


@dataclass(frozen=True)
class GradeSummary:
    """Rows, mean score and mean PD per grade (grade name order): what both routes compute."""

    grades: tuple[str, ...]
    rows: tuple[int, ...]
    mean_score: tuple[float, ...]
    mean_pd: tuple[float, ...]


def _numbers(series: pd.Series) -> np.ndarray:
    """A column as float64, NULL as NaN (DuckDB hands integers with NULLs over as Int32)."""
    return series.to_numpy(dtype=np.float64, na_value=np.nan)


def _numeric_bins(feature: NumericFeature, x: np.ndarray, missing: int) -> np.ndarray:
    ordered = numeric_bins_in_order(feature)
    uppers = np.array([b.upper for b in ordered[:-1]])
    # [lower, upper): bin = number of inner edges <= x; (lower, upper]: edges < x
    side = "right" if feature.closed == "lower" else "left"
    bins = np.searchsorted(uppers, x, side=side)
    bins[np.isnan(x)] = missing
    return bins


def _categorical_bins(feature: CategoricalFeature, column: pd.Series, missing: int, other: int, labels) -> np.ndarray:
    values, codes = [], []
    for group in feature.groups:
        values += list(group.values)
        codes += [labels.index(group.label)] * len(group.values)
    found = pd.Index(values).get_indexer(column)
    bins = np.where(found >= 0, np.asarray(codes + [0])[found], other)
    bins[column.isna().to_numpy()] = missing
    return bins


def score_frame(spec: Spec, frame: pd.DataFrame) -> tuple[np.ndarray, np.ndarray]:
    """Score and η of every row of ``frame`` (one column per feature)."""
    rows = len(frame)
    score = np.full(rows, base_points(spec))
    eta = np.full(rows, float(spec.intercept))
    for feature in spec.features:
        terms = feature_terms(spec, feature)
        name = feature.source_column
        missing = len(terms.bins) - 1
        if isinstance(feature, LinearFeature):
            x = _numbers(frame[name])
            absent = np.isnan(x)
            clipped = np.clip(x, feature.lower, feature.upper) - feature.center
            score += np.where(absent, terms.bins[0].points, linear_points_slope(spec, feature) * clipped)
            eta += np.where(absent, terms.bins[0].log_odds, linear_slope(feature) * clipped)
            continue
        if isinstance(feature, NumericFeature):
            bins = _numeric_bins(feature, _numbers(frame[name]), missing)
        else:
            labels = [t.label for t in terms.bins]
            bins = _categorical_bins(feature, frame[name], missing, missing - 1, labels)
        score += np.array([t.points for t in terms.bins])[bins]
        eta += np.array([t.log_odds for t in terms.bins])[bins]
    return score, eta


def summarise(spec: Spec, score: np.ndarray, eta: np.ndarray) -> GradeSummary:
    """Rows, mean score and mean PD per grade, as the compiled query's aggregate."""
    pd_ = 1.0 / (1.0 + np.exp(-np.clip(eta, -ETA_CLAMP, ETA_CLAMP)))
    grades = sorted(spec.grades, key=lambda g: g.lower)
    lowers = np.array([g.lower for g in grades[1:]])
    index = np.searchsorted(lowers, score, side="right")
    rows = np.bincount(index, minlength=len(grades))
    sums = np.bincount(index, weights=score, minlength=len(grades))
    pds = np.bincount(index, weights=pd_, minlength=len(grades))
    order = sorted(range(len(grades)), key=lambda k: grades[k].name)
    kept = [k for k in order if rows[k]]
    return GradeSummary(tuple(grades[k].name for k in kept), tuple(int(rows[k]) for k in kept),
                        tuple(float(sums[k] / rows[k]) for k in kept), tuple(float(pds[k] / rows[k]) for k in kept))


def score_with_numpy(spec: Spec, frame: pd.DataFrame) -> GradeSummary:
    """The whole numpy route after the fetch: bins, points, score, η, PD and the summary."""
    score, eta = score_frame(spec, frame)
    return summarise(spec, score, eta)
