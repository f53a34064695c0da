"""The development table in the engine: the WoE design and the row-level passes of a fit.

The design is one query over the development table (:func:`design_query`)::

    fold   (fold_expression of the key, or 0 without folds)
    y      the outcome as a double (0/1)
    x_1 … x_p  each characteristic's WoE, found by the scoring query's own binning CASE
               (:func:`scoremon.compiler.bin_case`), so a row is binned in the fit exactly as
               it will be scored

Every pass reads it and returns only aggregates, GROUP BY fold:

* :meth:`EnginePasses.__call__` — for each model m with coefficients β_m:
  η = β₀ + Σ β_j·x_j, μ = 1/(1 + e^(−η)) (η clamped to ±700: PostgreSQL raises on EXP
  overflow), w = μ(1 − μ); per fold Σ(μ − y)·x_j, Σ w·x_i·x_j (i ≤ j), Σ loss, rows, and rows
  with |η| > 36. loss = ln(1 + e^η) − yη, written as max(η, 0) + ln(1 + e^(−|η|)) so that
  EXP never overflows and LN only meets arguments in [1, 2]. The sums of at most
  :data:`MAX_AGGREGATES` columns go in one query (PostgreSQL allows 1664 per SELECT); more
  models are split over several queries of the same pass.
* :meth:`EnginePasses.histograms` — the held-out rows' log-odds histogram reduced in the engine
  to AUC/KS sums by monitoring's :func:`~scoremon.monitor.queries.discrimination_pass`.
* :func:`moment_query` — Σx_i, Σx_i·x_j and rows, for the WoE correlations (selection, VIF).

Nothing row-level leaves the engine, on any engine.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from datetime import date
from typing import Mapping, Sequence

import numpy as np
from sqlglot import exp

from ..compiler import bin_case, case, column, integer, number
from ..monitor.queries import MONTH, OUTCOME, SCORE, discrimination_pass, read_curve
from ..monitor.statistics import HistogramSums
from ..spec.model import Grade, Identity, Scaling, Spec
from ..spec.terms import feature_terms
from .folds import fold_expression
from .newton import EXTREME_ETA, FoldSums

FOLD, Y = "__scoremon_fold", "__scoremon_y"
MAX_AGGREGATES = 1500
ETA_CLAMP = 700.0


def fetch_rows(engine, tree: exp.Expression, purpose: str) -> list[tuple]:
    """Run one query tree on ``engine`` and return its rows as tuples: the only place fitting
    talks to an engine."""
    return [tuple(row[name] for name in row) for row in engine.query(tree, purpose)]


def x_column(j: int) -> str:
    return f"__scoremon_x_{j}"


def woe_spec(features: Sequence) -> Spec:
    """A spec holding ``features`` (numeric or categorical, WoE per bin) with coefficient 1, so
    that each bin's log-odds is its WoE; only its binning is used."""
    return Spec(
        model=Identity(name="design", version="0", owner="scoremon", effective_date=date(2000, 1, 1),
                       intended_use="fitting", event="event", performance_window_months=1),
        intercept=0.0,
        scaling=Scaling(base_score=600.0, base_odds=50.0, pdo=20.0),
        features=[f.model_copy(update={"coefficient": 1.0}) for f in features],
        grades=[Grade(name="all", lower=-math.inf, upper=math.inf)],
    )


def woe_values(features: Sequence) -> list[list[float]]:
    """Per feature its WoE per bin, in the order :func:`scoremon.compiler.bin_case` numbers bins."""
    spec = woe_spec(features)
    return [[t.log_odds for t in feature_terms(spec, f).bins] for f in spec.features]


@dataclass(frozen=True)
class Design:
    """The WoE design of a development table.

    ``source`` stands in FROM; ``features`` are spec features with a WoE per bin; ``event`` is
    1 for an event and 0 otherwise (:func:`scoremon.develop.outcome.event_expression`); ``key``
    the column the folds come from (needed when ``fold_count`` > 1).
    """

    source: exp.Expression
    features: tuple
    event: exp.Expression
    key: str | None = None
    fold_count: int = 1

    @property
    def columns(self) -> int:
        return 1 + len(self.features)


def design_query(design: Design) -> exp.Select:
    """SELECT fold, y, x_1 … x_p FROM the development table (see the module docstring)."""
    spec = woe_spec(design.features)
    fold = integer(0) if design.fold_count == 1 else fold_expression(column(design.key), design.fold_count)
    selected = [exp.alias_(fold, FOLD, quoted=True),
                exp.alias_(exp.Cast(this=design.event.copy(), to=exp.DataType.build("DOUBLE")), Y, quoted=True)]
    for j, feature in enumerate(spec.features, start=1):
        values = [number(t.log_odds) for t in feature_terms(spec, feature).bins]
        selected.append(exp.alias_(bin_case(spec, feature, column(feature.column or feature.name), values),
                                   x_column(j), quoted=True))
    return exp.select(*selected).from_(design.source.copy())


def _x(j: int) -> exp.Expression:
    return number(1.0) if j == 0 else column(x_column(j))


def _eta(beta: np.ndarray) -> exp.Expression:
    terms = [number(beta[0])] + [exp.Mul(this=number(b), expression=_x(j)) for j, b in enumerate(beta) if j > 0]
    result = terms[0]
    for term in terms[1:]:
        result = exp.Add(this=result, expression=term)
    return result


def _clamped(value: exp.Expression) -> exp.Expression:
    return case([(exp.GT(this=value.copy(), expression=number(ETA_CLAMP)), number(ETA_CLAMP)),
                 (exp.LT(this=value.copy(), expression=number(-ETA_CLAMP)), number(-ETA_CLAMP))], value.copy())


def _subquery(select: exp.Select, alias: str) -> exp.Subquery:
    return exp.Subquery(this=select, alias=exp.TableAlias(this=exp.to_identifier(alias, quoted=True)))


def _sum(value: exp.Expression, alias: str) -> exp.Alias:
    return exp.alias_(exp.Sum(this=value), alias, quoted=True)


def pass_query(design: Design, betas: Mapping[int, np.ndarray]) -> exp.Select:
    """One aggregate query giving every model's sums per fold (see the module docstring)."""
    p = design.columns
    fitted = [column(FOLD), column(Y)] + [column(x_column(j)) for j in range(1, p)]
    for m, beta in betas.items():
        fitted.append(exp.alias_(_eta(np.asarray(beta, dtype=float)), f"eta_{m}", quoted=True))
    inner = exp.select(*fitted).from_(_subquery(design_query(design), "design"))

    # mu, then w = mu(1 − mu), the residual mu − y and the loss per row, then w·x_i: each product
    # made once per row, so that an aggregate is one multiplication (DuckDB does not share
    # subexpressions between aggregates)
    xs = [column(x_column(j)) for j in range(1, p)]
    one = number(1.0)
    with_mu = [column(FOLD), column(Y)] + [x.copy() for x in xs]
    for m in betas:
        eta = column(f"eta_{m}")
        mu = exp.Div(this=one.copy(), expression=exp.paren(exp.Add(
            this=one.copy(), expression=exp.Exp(this=exp.Neg(this=exp.paren(_clamped(eta), copy=False)))), copy=False))
        with_mu += [eta.copy(), exp.alias_(mu, f"mu_{m}", quoted=True)]
    middle = exp.select(*with_mu).from_(_subquery(inner, "fitted"))

    weighted = [column(FOLD)] + [x.copy() for x in xs]
    for m in betas:
        eta, mu = column(f"eta_{m}"), column(f"mu_{m}")
        w = exp.Mul(this=mu.copy(), expression=exp.paren(exp.Sub(this=one.copy(), expression=mu.copy()), copy=False))
        size = exp.Abs(this=eta.copy())
        softplus = exp.Add(
            this=case([(exp.GT(this=eta.copy(), expression=number(0.0)), eta.copy())], number(0.0)),
            expression=exp.Ln(this=exp.Add(this=one.copy(), expression=exp.Exp(this=exp.Neg(
                this=case([(exp.GT(this=size.copy(), expression=number(ETA_CLAMP)), number(ETA_CLAMP))], size)))))
        )
        weighted += [exp.alias_(w, f"w_{m}", quoted=True),
                     exp.alias_(exp.Sub(this=mu.copy(), expression=column(Y)), f"r_{m}", quoted=True),
                     exp.alias_(exp.Sub(this=softplus, expression=exp.Mul(this=column(Y), expression=eta.copy())),
                                f"loss_{m}", quoted=True),
                     exp.alias_(case([(exp.GT(this=size.copy(), expression=number(EXTREME_ETA)), number(1.0))],
                                     number(0.0)), f"extreme_{m}", quoted=True)]
    weighted_query = exp.select(*weighted).from_(_subquery(middle, "with_mu"))

    products = [column(FOLD)] + [x.copy() for x in xs]
    for m in betas:
        products += [column(f"w_{m}"), column(f"r_{m}"), column(f"loss_{m}"), column(f"extreme_{m}")]
        products += [exp.alias_(exp.Mul(this=column(f"w_{m}"), expression=_x(i)), f"wx_{m}_{i}", quoted=True)
                     for i in range(1, p)]
    products_query = exp.select(*products).from_(_subquery(weighted_query, "weighted"))

    selected = [column(FOLD), exp.alias_(exp.Count(this=exp.Star()), "rows", quoted=True)]
    for m in betas:
        r = column(f"r_{m}")
        selected += [_sum(r.copy() if j == 0 else exp.Mul(this=r.copy(), expression=_x(j)), f"g_{m}_{j}")
                     for j in range(p)]
        for i in range(p):
            left = column(f"w_{m}") if i == 0 else column(f"wx_{m}_{i}")
            selected += [_sum(left.copy() if j == 0 else exp.Mul(this=left.copy(), expression=_x(j)), f"h_{m}_{i}_{j}")
                         for j in range(i, p)]
        selected += [_sum(column(f"loss_{m}"), f"loss_{m}"), _sum(column(f"extreme_{m}"), f"extreme_{m}")]
    return exp.select(*selected).from_(_subquery(products_query, "products")).group_by(column(FOLD))


def aggregates_per_model(columns: int) -> int:
    return columns + columns * (columns + 1) // 2 + 2


Curve = tuple[tuple[tuple[float, float], ...], "tuple[float, float] | None"]  # ROC points, KS point


class EnginePasses:
    """The passes of a fit run as aggregate queries in ``engine`` (see the module docstring).

    Callable as a :data:`scoremon.develop.newton.Passes`; ``count`` counts the passes run.
    """

    def __init__(self, engine, design: Design):
        self.engine = engine
        self.design = design
        self.fold_count = design.fold_count
        self.count = 0

    def __call__(self, betas: Mapping[int, np.ndarray]) -> dict[int, FoldSums]:
        self.count += 1
        p, k = self.design.columns, self.fold_count
        chunk = max(1, MAX_AGGREGATES // aggregates_per_model(p))
        models = list(betas)
        result = {}
        for start in range(0, len(models), chunk):
            part = {m: betas[m] for m in models[start:start + chunk]}
            rows = fetch_rows(self.engine, pass_query(self.design, part), "a Newton step's sums over the development rows")
            result.update(self._read(rows, part, p, k))
        return result

    @staticmethod
    def _read(rows: Sequence[tuple], betas: Mapping[int, np.ndarray], p: int, k: int) -> dict[int, FoldSums]:
        sums = {m: FoldSums(np.zeros((k, p)), np.zeros((k, p, p)), np.zeros(k), np.zeros(k), np.zeros(k)) for m in betas}
        for row in rows:
            f, count = int(row[0]), float(row[1])
            at = 2
            for m in betas:
                s = sums[m]
                s.rows[f] = count
                s.gradient[f] = [float(v) for v in row[at:at + p]]
                at += p
                for i in range(p):
                    for j in range(i, p):
                        s.hessian[f, i, j] = s.hessian[f, j, i] = float(row[at])
                        at += 1
                s.loss[f] = float(row[at])
                s.extreme[f] = float(row[at + 1])
                at += 2
        return sums

    def histograms(self, betas: Mapping[int, np.ndarray]) -> dict[int, HistogramSums]:
        """Per model its held-out rows' AUC/KS sums (model K: all rows), reduced in the engine."""
        return self.histograms_and_curve(betas, 0)[0]

    def histograms_and_curve(self, betas: Mapping[int, np.ndarray], points: int) -> tuple[dict[int, HistogramSums], Curve]:
        """:meth:`histograms`, and from the same pass over all rows (model K) ``points`` points of
        its ROC curve and its KS point (see :func:`~scoremon.monitor.queries.read_curve`)."""
        k = self.fold_count
        folded = {m: b for m, b in betas.items() if m < k}
        result = {}
        curve: Curve = ((), None)
        design = _subquery(design_query(self.design), "design")
        if folded:
            eta = case([(exp.EQ(this=column(FOLD), expression=integer(m)), _eta(np.asarray(b, dtype=float)))
                        for m, b in folded.items()])
            relation = _subquery(exp.select(
                exp.alias_(column(FOLD), MONTH, quoted=True), exp.alias_(exp.Neg(this=exp.paren(eta, copy=False)), SCORE,
                                                                          quoted=True),
                exp.alias_(column(Y), OUTCOME, quoted=True)).from_(design.copy()).where(
                exp.In(this=column(FOLD), expressions=[integer(m) for m in folded])), "heldout")
            for row in fetch_rows(self.engine, discrimination_pass(relation, None, True),
                                  "the held-out rows' AUC and KS per fold"):
                result[int(row[0])] = HistogramSums(*[float(v) for v in row[1:]])
        if k in betas:
            relation = _subquery(exp.select(
                exp.alias_(exp.Neg(this=exp.paren(_eta(np.asarray(betas[k], dtype=float)), copy=False)), SCORE,
                           quoted=True),
                exp.alias_(column(Y), OUTCOME, quoted=True)).from_(design.copy()), "all_rows")
            row = fetch_rows(self.engine, discrimination_pass(relation, None, False, points),
                             "the development rows' AUC and KS")[0]
            result[k] = HistogramSums(*[float(v) for v in row[:7]])
            if points:
                curve = read_curve(row[7:], result[k].events, result[k].non_events)
        return result, curve


def moment_query(design: Design) -> exp.Select:
    """Rows, Σx_j and Σx_i·x_j (i ≤ j) over the design: the WoE means and correlations."""
    p = design.columns
    selected = [exp.alias_(exp.Count(this=exp.Star()), "rows", quoted=True),
                _sum(column(Y), "events")]
    selected += [_sum(_x(j), f"s_{j}") for j in range(1, p)]
    selected += [_sum(exp.Mul(this=_x(i), expression=_x(j)), f"s_{i}_{j}") for i in range(1, p) for j in range(i, p)]
    return exp.select(*selected).from_(_subquery(design_query(design), "design"))


@dataclass(frozen=True)
class Moments:
    """Rows, events, and the WoE columns' means and covariance (population, ddof 0)."""

    rows: float
    events: float
    means: np.ndarray
    covariance: np.ndarray

    def correlation(self) -> np.ndarray:
        """Pearson correlations; a constant column correlates 0 with the others (1 with itself)."""
        sd = np.sqrt(np.maximum(np.diag(self.covariance), 0.0))
        safe = np.where(sd > 0, sd, 1.0)
        result = self.covariance / np.outer(safe, safe)
        result[sd == 0, :] = 0.0
        result[:, sd == 0] = 0.0
        np.fill_diagonal(result, 1.0)
        return result


def measure_moments(engine, design: Design) -> Moments:
    """One pass: rows, events and the WoE means and covariance of the design."""
    row = fetch_rows(engine, moment_query(design), "the WoE columns' means and correlations")[0]
    p = design.columns - 1
    rows, events = float(row[0]), float(row[1] or 0.0)
    sums = np.array([float(v) for v in row[2:2 + p]])
    products = np.zeros((p, p))
    at = 2 + p
    for i in range(p):
        for j in range(i, p):
            products[i, j] = products[j, i] = float(row[at])
            at += 1
    means = sums / rows
    return Moments(rows, events, means, products / rows - np.outer(means, means))
