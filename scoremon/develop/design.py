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
  EXP never overflows and LN only meets arguments in [1, 2]. A pass whose queries would be
  wider than :data:`~scoremon.develop.width.MAX_COLUMNS` (PostgreSQL allows 1,664 per SELECT;
  one model of 55 characteristics sums 1,654) is cut into several queries, by models
  and by rows of the Hessian (:func:`pass_blocks`); each sum is the same in whichever query
  holds it.
* :meth:`EnginePasses.histograms` — the held-out rows' log-odds histogram reduced in the engine
  to AUC/KS sums by monitoring's :func:`~scoremon.monitor.queries.discrimination_pass`.
* :func:`moment_queries` — Σx_i, Σx_i·x_j and rows, for the WoE correlations (selection, VIF),
  in as many queries as keep each within the same cap.

A fit takes at most :data:`MAX_CHARACTERISTICS` characteristics, so that the narrowest query of
a pass fits (:func:`check_characteristics`). Nothing row-level leaves the engine, on any engine.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from datetime import date
from typing import Mapping, Sequence

import numpy as np
from sqlglot import exp

from ..compiler import bin_case, case, column, integer, number
from ..errors import InputError
from ..monitor.queries import MONTH, OUTCOME, SCORE, discrimination_pass, read_curve
from ..monitor.statistics import HistogramSums
from ..spec.model import Grade, Identity, Scaling, Spec
from ..spec.terms import feature_terms
from ..trees import INTERNAL, identifier, total
from .folds import fold_expression
from .newton import EXTREME_ETA, FoldSums, held_out_only
from .width import MAX_COLUMNS, runs

FOLD, Y = "__scoremon_fold", "__scoremon_y"
ETA_CLAMP = 700.0
# the narrowest query of a pass (one model, one row of its Hessian) lists fold, x_1 … x_p, the
# model's w, r, loss and extreme, and one w·x_i: p + 6 columns for p characteristics
MAX_CHARACTERISTICS = MAX_COLUMNS - 6


def fetch_rows(engine, tree: exp.Expression, purpose: str) -> list[tuple]:
    """Run one query tree on ``engine`` and return its rows as tuples: the only place fitting
    talks to an engine."""
    return [tuple(row[name] for name in row) for row in engine.query(tree, purpose)]


def x_column(j: int) -> str:
    return f"__scoremon_x_{j}"


def _named(value: exp.Expression, alias: str) -> exp.Alias:
    """``value AS "alias"``, ``value`` taken as it is (not copied: it is always freshly built)."""
    return exp.alias_(value, alias, quoted=True, copy=False)


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
    selected = [_named(fold, FOLD),
                _named(exp.Cast(this=design.event.copy(), to=exp.DataType.build("DOUBLE")), Y)]
    for j, feature in enumerate(spec.features, start=1):
        values = [number(t.log_odds) for t in feature_terms(spec, feature).bins]
        selected.append(_named(bin_case(spec, feature, column(feature.column or feature.name), values),
                                   x_column(j)))
    return exp.select(*selected).from_(design.source.copy(), copy=False)


def _x(j: int) -> exp.Expression:
    return number(1.0) if j == 0 else column(x_column(j))


def _eta(beta: np.ndarray) -> exp.Expression:
    # a balanced sum beyond 64 terms: a chain as long as the model would pass DuckDB's expression
    # depth limit (1000) for a wide model; up to 64 terms it is the plain left-to-right sum
    return total([number(beta[0])] + [exp.Mul(this=number(b), expression=_x(j)) for j, b in enumerate(beta) if j > 0])


def _clamped(value: exp.Expression) -> exp.Expression:
    return case([(exp.GT(this=value.copy(), expression=number(ETA_CLAMP)), number(ETA_CLAMP)),
                 (exp.LT(this=value.copy(), expression=number(-ETA_CLAMP)), number(-ETA_CLAMP))], value.copy())


def _subquery(select: exp.Select, alias: str) -> exp.Subquery:
    return exp.Subquery(this=select, alias=exp.TableAlias(this=exp.to_identifier(alias, quoted=True)))


def _steps(steps: Sequence[tuple[str, exp.Select]], last: exp.Select) -> exp.Select:
    """``last`` over ``steps`` as CTEs, each named by its step and read by the next by name.

    Steps, not nested subqueries: PostgreSQL pulls a subquery up into the query above it, so
    each of ~1,600 sums would copy the expressions of every step below it (a pass of 60
    characteristics took minutes on 400 rows); each CTE is fenced into a step of its own that
    computes its columns once per row (``OFFSET 0``, see :mod:`scoremon.dialects.render`).
    """
    for name, body in steps:
        last = last.with_(identifier(name), as_=body, copy=False)
    return last


def _step(name: str) -> exp.Table:
    return exp.Table(this=identifier(name))


def _sum(value: exp.Expression, alias: str) -> exp.Alias:
    return _named(exp.Sum(this=value), alias)


GRADIENT, LOSS = -1, -2  # a model's blocks of sums besides the Hessian's rows (0 … p−1)
Block = tuple[int, int]  # (model, part): part i ≥ 0 is row i of its Hessian (Σ w·x_i·x_j, j ≥ i),
                         # GRADIENT its Σ(μ − y)·x_j, LOSS its loss and extreme rows


def _block_size(p: int, part: int) -> int:
    return p if part == GRADIENT else 2 if part == LOSS else p - part


def all_blocks(p: int, models: Sequence[int], hessian: bool = True) -> list[Block]:
    """Every block of sums of a pass over ``models`` (without the Hessian's rows if not
    ``hessian``), in the order a query lists them."""
    return [(m, part) for m in models for part in (GRADIENT, *(range(p) if hessian else ()), LOSS)]


def pass_width(p: int, blocks: Sequence[Block]) -> int:
    """The widest SELECT of :func:`pass_query` for ``blocks``: its products (fold, x_1 … x_{p−1},
    per model w, r, loss and extreme, and w·x_i for each Hessian row i ≥ 1) or its sums (fold,
    rows and each block's); the design and the steps before the products are narrower."""
    models = {m for m, _ in blocks}
    rows = sum(1 for _, part in blocks if part >= 1)
    return max(p + 1, p + 4 * len(models) + rows, 2 + sum(_block_size(p, part) for _, part in blocks))


def pass_blocks(p: int, models: Sequence[int], hessian: bool = True) -> list[list[Block]]:
    """A pass's blocks over ``models`` cut, in order, into queries each within
    :data:`~scoremon.develop.width.MAX_COLUMNS` (:func:`pass_width`): one query while it fits,
    else as many as it takes, a wide model's Hessian rows spread over several."""
    cuts: list[list[Block]] = [[]]
    for block in all_blocks(p, models, hessian):
        if cuts[-1] and pass_width(p, cuts[-1] + [block]) > MAX_COLUMNS:
            cuts.append([])
        cuts[-1].append(block)
    return [c for c in cuts if c]


def pass_query(design: Design, betas: Mapping[int, np.ndarray], blocks: Sequence[Block] | None = None) -> exp.Select:
    """One aggregate query giving ``blocks`` of sums per fold (every block of every model in
    ``betas`` by default), see the module docstring. Columns: fold, rows, then each block's
    sums in order (``g_m_j``; ``h_m_i_j`` for j ≥ i; ``loss_m``, ``extreme_m``)."""
    p = design.columns
    blocks = all_blocks(p, list(betas)) if blocks is None else list(blocks)
    models = list(dict.fromkeys(m for m, _ in blocks))
    rows = {(m, part) for m, part in blocks if part >= 1}
    fitted = [column(FOLD), column(Y)] + [column(x_column(j)) for j in range(1, p)]
    for m in models:
        fitted.append(_named(_eta(np.asarray(betas[m], dtype=float)), f"eta_{m}"))
    design_step, fitted_step, mu_step, weighted_step, products_step = (
        f"{INTERNAL}{name}" for name in ("design", "fitted", "with_mu", "weighted", "products"))
    inner = exp.select(*fitted).from_(_step(design_step), copy=False)

    # mu, then w = mu(1 − mu), the residual mu − y and the loss per row, then w·x_i: each product
    # made once per row, so that an aggregate is one multiplication (DuckDB does not share
    # subexpressions between aggregates)
    xs = [column(x_column(j)) for j in range(1, p)]
    one = number(1.0)
    with_mu = [column(FOLD), column(Y)] + [x.copy() for x in xs]
    for m in models:
        eta = column(f"eta_{m}")
        mu = exp.Div(this=one.copy(), expression=exp.paren(exp.Add(
            this=one.copy(), expression=exp.Exp(this=exp.Neg(this=exp.paren(_clamped(eta), copy=False)))), copy=False))
        with_mu += [eta.copy(), _named(mu, f"mu_{m}")]
    middle = exp.select(*with_mu).from_(_step(fitted_step), copy=False)

    weighted = [column(FOLD)] + [x.copy() for x in xs]
    for m in models:
        eta, mu = column(f"eta_{m}"), column(f"mu_{m}")
        w = exp.Mul(this=mu.copy(), expression=exp.paren(exp.Sub(this=one.copy(), expression=mu.copy()), copy=False))
        size = exp.Abs(this=eta.copy())
        softplus = exp.Add(
            this=case([(exp.GT(this=eta.copy(), expression=number(0.0)), eta.copy())], number(0.0)),
            expression=exp.Ln(this=exp.Add(this=one.copy(), expression=exp.Exp(this=exp.Neg(
                this=case([(exp.GT(this=size.copy(), expression=number(ETA_CLAMP)), number(ETA_CLAMP))], size)))))
        )
        weighted += [_named(w, f"w_{m}"),
                     _named(exp.Sub(this=mu.copy(), expression=column(Y)), f"r_{m}"),
                     _named(exp.Sub(this=softplus, expression=exp.Mul(this=column(Y), expression=eta.copy())),
                                f"loss_{m}"),
                     _named(case([(exp.GT(this=size.copy(), expression=number(EXTREME_ETA)), number(1.0))],
                                     number(0.0)), f"extreme_{m}")]
    weighted_query = exp.select(*weighted).from_(_step(mu_step), copy=False)

    products = [column(FOLD)] + [x.copy() for x in xs]
    for m in models:
        products += [column(f"w_{m}"), column(f"r_{m}"), column(f"loss_{m}"), column(f"extreme_{m}")]
        products += [_named(exp.Mul(this=column(f"w_{m}"), expression=_x(i)), f"wx_{m}_{i}")
                     for i in range(1, p) if (m, i) in rows]
    products_query = exp.select(*products).from_(_step(weighted_step), copy=False)

    selected = [column(FOLD), _named(exp.Count(this=exp.Star()), "rows")]
    for m, part in blocks:
        if part == GRADIENT:
            r = column(f"r_{m}")
            selected += [_sum(r.copy() if j == 0 else exp.Mul(this=r.copy(), expression=_x(j)), f"g_{m}_{j}")
                         for j in range(p)]
        elif part == LOSS:
            selected += [_sum(column(f"loss_{m}"), f"loss_{m}"), _sum(column(f"extreme_{m}"), f"extreme_{m}")]
        else:
            left = column(f"w_{m}") if part == 0 else column(f"wx_{m}_{part}")
            selected += [_sum(left.copy() if j == 0 else exp.Mul(this=left.copy(), expression=_x(j)),
                              f"h_{m}_{part}_{j}") for j in range(part, p)]
    return _steps([(design_step, design_query(design)), (fitted_step, inner), (mu_step, middle),
                   (weighted_step, weighted_query), (products_step, products_query)],
                  exp.select(*selected).from_(_step(products_step), copy=False).group_by(
                      column(FOLD), copy=False))


def check_characteristics(count: int) -> None:
    """Raises :class:`InputError` when a fit of ``count`` characteristics would need a query wider
    than :data:`~scoremon.develop.width.MAX_COLUMNS` (more than :data:`MAX_CHARACTERISTICS`)."""
    if count > MAX_CHARACTERISTICS:
        raise InputError(f"the binning file holds {count:,} characteristics; a fit takes at most "
                         f"{MAX_CHARACTERISTICS:,} (each of its queries is kept within {MAX_COLUMNS:,} columns, "
                         "PostgreSQL's limit); remove some from the binning file, or bin fewer columns "
                         "(scoremon bin --features or --exclude)")


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

    def __call__(self, betas: Mapping[int, np.ndarray], hessian: bool = True, rough: bool = False) -> dict[int, FoldSums]:
        self.count += 1  # the engine sums in double precision: ``rough`` allows, it does not ask
        p, k = self.design.columns, self.fold_count
        sums = {m: FoldSums(np.zeros((k, p)), np.zeros((k, p, p)) if hessian else None, np.zeros(k), np.zeros(k),
                            np.zeros(k)) for m in betas}
        for blocks in pass_blocks(p, list(betas), hessian):
            rows = fetch_rows(self.engine, pass_query(self.design, betas, blocks),
                              "a Newton step's sums over the development rows")
            self._read(rows, blocks, p, sums)
        return {m: held_out_only(s, m) for m, s in sums.items()}

    @staticmethod
    def _read(rows: Sequence[tuple], blocks: Sequence[Block], p: int, sums: Mapping[int, FoldSums]) -> None:
        """Adds one query's sums (columns as :func:`pass_query` lists them) into ``sums``."""
        models = list(dict.fromkeys(m for m, _ in blocks))
        for row in rows:
            f, count = int(row[0]), float(row[1])
            for m in models:
                sums[m].rows[f] = count
            at = 2
            for m, part in blocks:
                s = sums[m]
                if part == GRADIENT:
                    s.gradient[f] = [float(v) for v in row[at:at + p]]
                elif part == LOSS:
                    s.loss[f] = float(row[at])
                    s.extreme[f] = float(row[at + 1])
                else:
                    for j in range(part, p):
                        s.hessian[f, part, j] = s.hessian[f, j, part] = float(row[at + j - part])
                at += _block_size(p, part)

    def design_rows(self) -> exp.Select:
        """The design's rows (fold, y, x_1 … x_p) as the histograms read them."""
        return design_query(self.design)

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
        design = _subquery(self.design_rows(), "design")
        if folded:
            eta = case([(exp.EQ(this=column(FOLD), expression=integer(m)), _eta(np.asarray(b, dtype=float)))
                        for m, b in folded.items()])
            relation = _subquery(exp.select(
                _named(column(FOLD), MONTH), _named(exp.Neg(this=exp.paren(eta, copy=False)), SCORE),
                _named(column(Y), OUTCOME)).from_(design.copy(), copy=False).where(
                exp.In(this=column(FOLD), expressions=[integer(m) for m in folded])), "heldout")
            for row in fetch_rows(self.engine, discrimination_pass(relation, None, True),
                                  "the held-out rows' AUC and KS per fold"):
                result[int(row[0])] = HistogramSums(*[float(v) for v in row[1:]])
        if k in betas:
            relation = _subquery(exp.select(
                _named(exp.Neg(this=exp.paren(_eta(np.asarray(betas[k], dtype=float)), copy=False)), SCORE),
                _named(column(Y), OUTCOME)).from_(design.copy(), copy=False), "all_rows")
            row = fetch_rows(self.engine, discrimination_pass(relation, None, False, points),
                             "the development rows' AUC and KS")[0]
            result[k] = HistogramSums(*[float(v) for v in row[:7]])
            if points:
                curve = read_curve(row[7:], result[k].events, result[k].non_events)
        return result, curve


def moment_queries(design: Design) -> list[exp.Select]:
    """Rows, events, Σx_j and Σx_i·x_j (i ≤ j) over the design: the WoE means and correlations,
    the sums in that order cut into queries of at most
    :data:`~scoremon.develop.width.MAX_COLUMNS` columns (rows and events in each)."""
    p = design.columns
    sums = [_sum(_x(j), f"s_{j}") for j in range(1, p)]
    sums += [_sum(exp.Mul(this=_x(i), expression=_x(j)), f"s_{i}_{j}") for i in range(1, p) for j in range(i, p)]
    step = f"{INTERNAL}design"
    return [_steps([(step, design_query(design))],
                   exp.select(_named(exp.Count(this=exp.Star()), "rows"), _sum(column(Y), "events"),
                              *run).from_(_step(step), copy=False))
            for run in runs(sums, MAX_COLUMNS - 2) or [[]]]


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
    """Rows, events and the WoE means and covariance of the design: one pass, or as many as
    :func:`moment_queries` cuts it into."""
    found: list = []
    for query in moment_queries(design):
        row = fetch_rows(engine, query, "the WoE columns' means and correlations")[0]
        rows, events = float(row[0]), float(row[1] or 0.0)
        found += row[2:]
    p = design.columns - 1
    sums = np.array([float(v) for v in found[:p]])
    products = np.zeros((p, p))
    at = p
    for i in range(p):
        for j in range(i, p):
            products[i, j] = products[j, i] = float(found[at])
            at += 1
    means = sums / rows
    return Moments(rows, events, means, products / rows - np.outer(means, means))
