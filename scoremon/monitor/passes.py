"""Running the aggregate passes of :mod:`.queries` through an engine, and reading their rows.

Each pass is read here once, by column name, into a small record; measuring a book
(:mod:`.measure`) and measuring a baseline (:mod:`.baseline`) both read the passes through these
functions. A pass grouped by month is keyed by the month column's own value (``None`` when the
pass is not grouped by month, or for rows without a month).
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from sqlglot import exp

from ..engines import Engine
from ..spec.model import Spec
from . import queries
from .queries import MonitoredRows
from .statistics import HistogramSums


@dataclass(frozen=True)
class MonthSums:
    """One row of the month pass: a month's (or all rows') volume and sums."""

    value: Any  # the month column's own value; None for rows without a month or a pass without months
    rows: int
    score_sum: float
    points_sums: tuple[float, ...]  # per feature, in the spec's order
    unseen_rows: dict[str, int]  # per readable categorical feature
    outcome_rows: int
    invalid_outcomes: int


@dataclass
class BinCounts:
    """Rows per score band, and per bin label of each feature (in the spec's order)."""

    bands: list[int]
    bins: list[dict[str, int]] = field(default_factory=list)


@dataclass(frozen=True)
class GradeSums:
    """One grade of one month from the calibration pass."""

    rows: int
    events: int
    pd_sum: float
    spiegelhalter_sum: float
    spiegelhalter_variance: float
    squared_error_sum: float


def month_sums(engine: Engine, spec: Spec, rows: MonitoredRows, relation: exp.Expression,
               where: exp.Expression | None, purpose: str) -> list[MonthSums]:
    """The month pass (:func:`.queries.month_pass`), one record per result row."""
    found = engine.query(queries.month_pass(relation, spec, rows, where), purpose)
    return [MonthSums(
        value=r[queries.MONTH] if rows.has_month else None,
        rows=int(r[queries.ROWS] or 0),
        score_sum=float(r["score_sum"] or 0.0),
        points_sums=tuple(float(r[queries.points_sum_column(f)] or 0.0) for f in spec.features),
        unseen_rows={name: int(r[queries.unseen_rows_column(name)] or 0) for name in rows.unseen_features},
        outcome_rows=int(r["outcome_rows"] or 0),
        invalid_outcomes=int(r["outcome_invalid_rows"] or 0),
    ) for r in found]


def bin_counts(engine: Engine, spec: Spec, relation: exp.Expression, edges: list[float], by_month: bool,
               where: exp.Expression | None, purpose: str) -> dict[Any, BinCounts]:
    """The bins pass (:func:`.queries.bins_pass`): per month value (or ``None``), the rows per
    score band and per feature bin."""
    counts: dict[Any, BinCounts] = {}
    bin_names = [queries.bin_column(f) for f in spec.features]
    for r in engine.query(queries.bins_pass(relation, spec, edges, by_month, where), purpose):
        month = r[queries.MONTH] if by_month else None
        found = counts.setdefault(month, BinCounts([0] * (len(edges) + 1), [{} for _ in spec.features]))
        count = int(r[queries.ROWS])
        # GROUPING SETS: exactly one of the score band and the bin columns is set in a row
        if r[queries.SCORE_BAND] is not None:
            found.bands[int(r[queries.SCORE_BAND])] += count
            continue
        for i, name in enumerate(bin_names):
            if r[name] is not None:
                found.bins[i][str(r[name])] = count
                break
    return counts


def grade_sums(engine: Engine, relation: exp.Expression, where: exp.Expression, purpose: str) -> dict[Any, dict[str, GradeSums]]:
    """The calibration pass (:func:`.queries.calibration_pass`): per month value, per grade name."""
    sums: dict[Any, dict[str, GradeSums]] = {}
    for r in engine.query(queries.calibration_pass(relation, where), purpose):
        sums.setdefault(r[queries.MONTH], {})[str(r[queries.GRADE])] = GradeSums(
            int(r[queries.ROWS]), int(r["events"] or 0), float(r["pd_sum"] or 0.0),
            float(r["spiegelhalter_sum"] or 0.0), float(r["spiegelhalter_variance"] or 0.0),
            float(r["squared_error_sum"] or 0.0))
    return sums


def histogram_sums(engine: Engine, relation: exp.Expression, where: exp.Expression | None, by_month: bool,
                   purpose: str) -> dict[Any, HistogramSums]:
    """The discrimination pass (:func:`.queries.discrimination_pass`): per month value (or
    ``None``); a pass over no row with a known outcome gives no entry."""
    names = HistogramSums.__dataclass_fields__
    sums = {}
    for r in engine.query(queries.discrimination_pass(relation, where, by_month), purpose):
        if r["events"] is None:  # no row with a known outcome: the aggregates are NULL
            continue
        sums[r[queries.MONTH] if by_month else None] = HistogramSums(**{name: float(r[name]) for name in names})
    return sums


def decile_edges(engine: Engine, relation: exp.Expression, where: exp.Expression | None, purpose: str) -> list[float]:
    """The score's decile edges (:func:`.queries.decile_edges_pass`), ties merged, ascending."""
    row = engine.query(queries.decile_edges_pass(relation, where), purpose)[0]
    return sorted({float(row[f"edge_{k}"]) for k in range(1, 10) if row[f"edge_{k}"] is not None})


def fingerprint_rows(engine: Engine, source: exp.Expression) -> dict[str, int]:
    """Rows per model fingerprint of a scored table."""
    found = engine.query(queries.fingerprints_pass(source), "reading the scored table's model fingerprints")
    return {str(r["model_fingerprint"]): int(r[queries.ROWS]) for r in found}
