"""The λ path and its K-fold cross-validation.

* λ_max is the smallest λ at which every penalised coefficient is 0: at the intercept-only
  fit β₀ = ln(E / (N − E)), the lasso part's optimality condition |G_j| ≤ λα gives
  λ_max = max_j |G_j| / α, G_j = (1/N)·Σ x_j(μ − y) (Friedman, Hastie & Tibshirani, J. Stat.
  Software 33(1), 2010, §2.5). With α = 0 (ridge) no finite λ zeroes anything; as there, the
  path then starts from the λ_max of α = 0.001.
* The path is ``count`` values (20 by default) spaced evenly in log λ from λ_max down to
  ``ratio``·λ_max (ratio 1e-3 by default); each λ starts from the previous λ's solution and
  the sums measured there (a warm start with no pass of its own).
* Cross-validation: model k (k = 0 … K−1) trains on every fold but k and is measured on fold
  k; model K trains on all rows. All K + 1 models step together, one pass per step. The
  measure per fold is the mean deviance 2·Σloss/n on the held-out rows, or the AUC of the
  held-out rows; per λ the mean and the standard deviation (ddof 1) over the folds.
* λ chosen: the best mean (lowest deviance, highest AUC); with the one-standard-error rule
  the largest λ whose mean is within one standard error (sd/√K) of the best (Hastie,
  Tibshirani & Friedman, *Elements of Statistical Learning*, §7.10, from memory).
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable, Mapping, Sequence

import numpy as np

from ..errors import InputError
from ..monitor.statistics import HistogramSums, discrimination
from .newton import ModelFit, Passes, Penalty, fit_models

DEVIANCE, AUC = "deviance", "auc"
RIDGE_ALPHA_FOR_START = 1e-3
MIN_FOLD_EVENTS = 2

# coefficients per model → the held-out rows' histogram sums (model K: all rows)
Histograms = Callable[[Mapping[int, np.ndarray]], Mapping[int, HistogramSums]]


@dataclass(frozen=True)
class Counts:
    """Rows and events per fold, read from one pass at β = 0."""

    rows: np.ndarray
    events: np.ndarray

    def training(self, model: int) -> tuple[float, float]:
        keep = np.arange(len(self.rows)) != model
        return float(self.rows[keep].sum()), float(self.events[keep].sum())


@dataclass(frozen=True)
class PathPoint:
    """One λ of the path: the all-rows fit, the fold fits and the cross-validated measure."""

    lam: float
    fit: ModelFit
    folds: tuple[ModelFit, ...]
    cv: tuple[float, ...]

    @property
    def cv_mean(self) -> float:
        return float(np.mean(self.cv)) if self.cv else float("nan")

    @property
    def cv_sd(self) -> float:
        return float(np.std(self.cv, ddof=1)) if len(self.cv) > 1 else float("nan")

    @property
    def nonzero(self) -> int:
        return int(np.count_nonzero(self.fit.coefficients[1:]))


@dataclass(frozen=True)
class PathResult:
    """The fitted path, the λ with the best mean and the λ chosen (by the one-SE rule if asked)."""

    points: tuple[PathPoint, ...]
    lambda_max: float
    metric: str
    best: int
    chosen: int
    one_se: bool

    @property
    def chosen_point(self) -> PathPoint:
        return self.points[self.chosen]


def fold_counts(passes: Passes, columns: int, fold_count: int) -> Counts:
    """Rows and events per fold from one pass at β = 0 (where Σ(μ − y) = n/2 − events).

    Raises :class:`InputError` when a fold has fewer than two events or non-events: its
    held-out measure would mean nothing and a fold model could not be fitted.
    """
    sums = passes({fold_count: np.zeros(columns)}, hessian=False)[fold_count]
    rows = np.asarray(sums.rows, dtype=float)
    events = np.rint(rows / 2.0 - sums.gradient[:, 0])
    for f in range(len(rows)):
        if events[f] < MIN_FOLD_EVENTS or rows[f] - events[f] < MIN_FOLD_EVENTS:
            what = "events" if events[f] < MIN_FOLD_EVENTS else "non-events"
            raise InputError(f"fold {f} of {len(rows)} holds {int(rows[f])} rows with "
                             f"{int(min(events[f], rows[f] - events[f]))} {what}; every fold needs at least "
                             f"{MIN_FOLD_EVENTS} events and {MIN_FOLD_EVENTS} non-events: use fewer folds (--folds)")
    return Counts(rows, events)


def intercept_only(counts: Counts, columns: int, models: Sequence[int]) -> dict[int, np.ndarray]:
    """Each model's intercept-only fit: β₀ = ln(E / (N − E)) over its training rows, the rest 0."""
    starts = {}
    for m in models:
        rows, events = counts.training(m)
        beta = np.zeros(columns)
        beta[0] = math.log(events / (rows - events))
        starts[m] = beta
    return starts


def lambda_max(passes: Passes, start: np.ndarray, model: int, alpha: float) -> float:
    """The smallest λ that zeroes every penalised coefficient (see the module docstring)."""
    sums = passes({model: start}, hessian=False)[model].training(model)
    gradient = sums.gradient[1:] / sums.rows
    largest = float(np.max(np.abs(gradient))) if len(gradient) else 0.0
    return largest / max(alpha, RIDGE_ALPHA_FOR_START)


def lambda_grid(largest: float, count: int = 20, ratio: float = 1e-3) -> np.ndarray:
    """``count`` values from ``largest`` down to ``ratio``·``largest``, evenly spaced in log λ."""
    if count < 1 or not 0.0 < ratio < 1.0 or not largest > 0.0:
        raise InputError(f"a λ path needs a count ≥ 1 (got {count}), a ratio in (0, 1) (got {ratio}) "
                         f"and a positive λ_max (got {largest}: no characteristic moves the loss)")
    if count == 1:
        return np.array([largest])
    return largest * ratio ** (np.arange(count) / (count - 1))


def fit_path(passes: Passes, columns: int, fold_count: int, alpha: float, lambdas: Sequence[float] | None = None,
             count: int = 20, ratio: float = 1e-3, metric: str = DEVIANCE, one_se: bool = False,
             histograms: Histograms | None = None, counts: Counts | None = None) -> PathResult:
    """Fit the λ path with K-fold cross-validation; ``lambdas=[0.0]`` is the unpenalised fit.

    ``passes`` returns sums per fold (K = ``fold_count``); ``histograms`` is needed for
    ``metric="auc"``. Raises :class:`InputError` for a fold with too few events.
    """
    if metric not in (DEVIANCE, AUC):
        raise InputError(f"cross-validation measure {metric!r} is not one of {DEVIANCE}, {AUC}")
    if metric == AUC and histograms is None:
        raise ValueError("the AUC measure needs a histograms pass")
    counts = counts or fold_counts(passes, columns, fold_count)
    # with one fold there is nothing to hold out: only the all-rows model is fitted
    models = list(range(fold_count + 1)) if fold_count > 1 else [fold_count]
    starts = intercept_only(counts, columns, models)
    largest = lambda_max(passes, starts[fold_count], fold_count, alpha)
    grid = lambda_grid(largest, count, ratio) if lambdas is None else np.asarray(lambdas, dtype=float)
    points = []
    for lam in grid:
        fits = fit_models(passes, starts, Penalty(float(lam), alpha))
        starts = fits  # the next λ starts here, from these sums
        folds = tuple(fits[m] for m in models[:-1])
        if not folds:
            cv: tuple[float, ...] = ()
        elif metric == DEVIANCE:
            cv = tuple(2.0 * f.heldout_loss / f.heldout_rows for f in folds)
        else:
            sums = histograms({m: fits[m].coefficients for m in models[:-1]})
            cv = tuple(_auc(sums[m]) for m in models[:-1])
        points.append(PathPoint(float(lam), fits[fold_count], folds, cv))
    best, chosen = choose(points, metric, one_se)
    return PathResult(tuple(points), largest, metric, best, chosen, one_se)


def choose(points: Sequence[PathPoint], metric: str, one_se: bool) -> tuple[int, int]:
    """(index of the best mean, index chosen); the path runs from the largest λ down."""
    sign = 1.0 if metric == DEVIANCE else -1.0
    means = [sign * p.cv_mean for p in points]
    if not all(math.isfinite(m) for m in means):
        return len(points) - 1, len(points) - 1  # no cross-validation: the last (smallest) λ
    best = int(np.nanargmin(means))
    if not one_se:
        return best, best
    sd = points[best].cv_sd
    limit = means[best] + (sd / math.sqrt(len(points[best].cv)) if math.isfinite(sd) else 0.0)
    chosen = next(i for i, mean in enumerate(means) if mean <= limit)
    return best, chosen


def _auc(sums: HistogramSums) -> float:
    result = discrimination(sums)
    return float("nan") if result is None else result.auc


def histogram_sums(eta: np.ndarray, y: np.ndarray) -> HistogramSums:
    """:class:`HistogramSums` of rows with log-odds ``eta`` and outcomes ``y`` (0/1), in numpy.

    The score-value convention of monitoring (a higher score is lower risk) is kept by using
    −η as the score; equal η values are one histogram value (ties count ½).
    """
    score = -np.asarray(eta, dtype=float)
    y = np.asarray(y, dtype=float)
    values, index = np.unique(score, return_inverse=True)
    events = np.bincount(index, weights=y, minlength=len(values))
    non_events = np.bincount(index, weights=1.0 - y, minlength=len(values))
    events_to, non_events_to = np.cumsum(events), np.cumsum(non_events)
    b, g = events_to[-1], non_events_to[-1]
    gap = events_to * g - non_events_to * b
    event_placement = g - non_events_to + 0.5 * non_events
    non_event_placement = events_to - 0.5 * events
    return HistogramSums(float(b), float(g), float((events * event_placement).sum()), float(gap.max()),
                         float(gap.min()), float((events * event_placement ** 2).sum()),
                         float((non_events * non_event_placement ** 2).sum()))


def dense_histograms(x: np.ndarray, y: np.ndarray, folds: np.ndarray) -> Histograms:
    """A :data:`Histograms` pass in numpy over a dense design (for tests and small data)."""
    x, y, folds = np.asarray(x, dtype=float), np.asarray(y, dtype=float), np.asarray(folds, dtype=int)
    fold_count = int(folds.max()) + 1

    def run(betas: Mapping[int, np.ndarray]) -> dict[int, HistogramSums]:
        result = {}
        for m, beta in betas.items():
            rows = folds == m if m < fold_count else np.ones(len(y), dtype=bool)
            result[m] = histogram_sums(x[rows] @ beta, y[rows])
        return result

    return run
