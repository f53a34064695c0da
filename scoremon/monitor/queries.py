"""The aggregate queries of monitoring, built as sqlglot trees like the scoring SQL.

Every row-level computation is an aggregation in the engine; only the small tables these
queries return reach Python. The queries read one relation, the *monitored rows*
(:func:`monitored_rows`): one row per input row with the columns

``month``                 the month (a DATE truncated to its first day, or the text / number given)
``outcome``               1 event, 0 non-event, NULL not known, −1 not a valid outcome
``score``, ``pd``, ``grade``
``<feature>_bin``         the bin label, ``<feature>_points`` its points
``<feature>_unseen``      1 when a categorical value is listed in no group (raw column needed)

built over a table that is already scored, or over a raw table scored on the fly by the
compiled scoring SQL (its reason steps left out: monitoring reads no reasons).

Then one grouped pass per kind of grouping, never one query per month:

* :func:`month_pass`           GROUP BY month: volume, score and points sums, unseen values,
                               outcomes present / invalid;
* :func:`bins_pass`            GROUP BY GROUPING SETS (month × score band, month × each
                               feature's bin): the shares PSI and points shifts are made of;
* :func:`calibration_pass`     GROUP BY month × grade on mature months: N, events, Σ PD, and
                               the sums Spiegelhalter and Brier need;
* :func:`discrimination_pass`  GROUP BY month × score value (the histogram, ties together),
                               reduced in the engine with running totals to the sums of
                               :class:`~scoremon.monitor.statistics.HistogramSums`.

Portable constructs only: CASE, SUM, COUNT, MIN, MAX, CAST, GROUP BY, GROUPING SETS, window
SUM with a ROWS frame, IN lists of literals. Division never happens in SQL.
"""
from __future__ import annotations

from dataclasses import dataclass
from datetime import date, datetime
from difflib import get_close_matches
from typing import Any, Mapping, Sequence

from sqlglot import exp

from ..compiler import compile_model
from ..engines.protocol import BOOLEAN, DATE, INTEGER, TEXT, Column
from ..errors import InputError
from ..exact import exact_columns
from ..spec.model import CategoricalFeature, Reasons, Spec
from ..trees import case, category_literal, column, identifier, integer, number, text

MONTH, OUTCOME, SCORE, PD, GRADE, SCORE_BAND, ROWS = "month", "outcome", "score", "pd", "grade", "score_band", "rows"
SCORED_COLUMNS = (SCORE, PD, GRADE)


def bin_column(feature) -> str:
    return f"{feature.name}_bin"


def points_column(feature) -> str:
    return f"{feature.name}_points"


def unseen_column(feature) -> str:
    return f"{feature.name}_unseen"


def points_sum_column(feature) -> str:
    return f"{feature.name}_points_sum"


def unseen_rows_column(name: str) -> str:
    return f"{name}_unseen_rows"


def is_scored(spec: Spec, columns: Mapping[str, Any]) -> bool:
    """True when ``columns`` hold the scored output of ``spec`` (score, pd, grade, bins and points)."""
    wanted = list(SCORED_COLUMNS) + [name for f in spec.features for name in (bin_column(f), points_column(f))]
    return all(name in columns for name in wanted)


@dataclass(frozen=True)
class MonitoredRows:
    """The relation every pass reads, and what it holds."""

    select: exp.Select
    scored_on_the_fly: bool
    has_month: bool
    has_outcome: bool
    unseen_features: tuple[str, ...]  # categorical features whose raw column could be read
    month_column: str | None = None  # the source's month column, named in messages


def monitored_rows(
    spec: Spec,
    source: exp.Expression,
    columns: Mapping[str, Column],
    month_column: str | None,
    outcome_column: str | None,
    float_columns: Sequence[str] | None = None,
) -> MonitoredRows:
    """The monitored rows over ``source`` (see the module docstring).

    ``columns`` maps the source's column names to their described columns (kinds). Raises :class:`InputError`
    when the month or outcome column is missing or of a type that cannot be read.
    """
    month_kind = _month_kind(month_column, columns) if month_column else None
    outcome_kind = _outcome_kind(outcome_column, columns) if outcome_column else None
    categorical = [f for f in spec.features if isinstance(f, CategoricalFeature)]
    readable = [f for f in categorical if f.source_column in columns]
    scored = is_scored(spec, columns)

    if scored:
        relation = source.copy()
    else:
        keys = []
        for name in [month_column, outcome_column] + [f.source_column for f in readable]:
            if name and name not in keys:
                keys.append(name)
        # monitoring reads no reasons, so the scoring steps that rank them are left out
        scoring_only = spec.model_copy(update={"reasons": Reasons(count=0, statements=[])})
        scoring = compile_model(scoring_only, source, keys, float_columns, exact_columns(columns))
        relation = exp.Subquery(this=scoring, alias=exp.TableAlias(this=identifier("scored")))

    selected: list[exp.Expression] = []
    if month_column:
        selected.append(exp.alias_(_month_expression(column(month_column), month_kind), MONTH, quoted=True))
    if outcome_column:
        selected.append(exp.alias_(_outcome_expression(column(outcome_column), outcome_kind), OUTCOME, quoted=True))
    selected += [column(name) for name in SCORED_COLUMNS]
    for feature in spec.features:
        selected.append(column(bin_column(feature)))
        selected.append(column(points_column(feature)))
    for feature in readable:
        selected.append(exp.alias_(_unseen_expression(feature), unseen_column(feature), quoted=True))
    select = exp.select(*selected).from_(relation)
    return MonitoredRows(select, not scored, month_column is not None, outcome_column is not None,
                         tuple(f.name for f in readable), month_column)


def _month_kind(name: str, columns: Mapping[str, Column]) -> str:
    found = columns.get(name)
    if found is None:
        raise InputError(f"month column {name!r} is not in the input{_nearest(name, columns)}")
    if found.kind == DATE:
        return "date"
    if found.kind in (TEXT, INTEGER):
        return "as_is"
    raise InputError(f"month column {name!r} is {found.type_name}; give a DATE or TIMESTAMP column, text YYYY-MM or "
                     "whole numbers YYYYMM")


def _outcome_kind(name: str, columns: Mapping[str, Column]) -> str:
    found = columns.get(name)
    if found is None:
        raise InputError(f"outcome column {name!r} is not in the input{_nearest(name, columns)}")
    if found.kind == BOOLEAN:
        return "boolean"
    if found.is_number:
        return "number"
    raise InputError(f"outcome column {name!r} is {found.type_name}; it must hold 1 (event) and 0 (no event), or "
                     "true/false, with NULL where the outcome is not known yet")


def _nearest(name: str, columns) -> str:
    close = get_close_matches(name, list(columns), n=1, cutoff=0.6)
    return f"; did you mean {close[0]!r}?" if close else ""


def _month_expression(value: exp.Expression, kind: str) -> exp.Expression:
    if kind == "date":
        truncated = exp.DateTrunc(this=value, unit=exp.var("MONTH"))
        return exp.Cast(this=truncated, to=exp.DataType.build("DATE"))
    return value


def _outcome_expression(value: exp.Expression, kind: str) -> exp.Expression:
    missing = (exp.Is(this=value.copy(), expression=exp.Null()), exp.Null())
    if kind == "boolean":
        return case([missing, (value.copy(), integer(1))], integer(0))
    # NaN or any number but 0 and 1 becomes −1, counted and refused by the month pass
    return case([missing,
                 (exp.EQ(this=value.copy(), expression=integer(1)), integer(1)),
                 (exp.EQ(this=value.copy(), expression=integer(0)), integer(0))], exp.Neg(this=integer(1)))


def _unseen_expression(feature: CategoricalFeature) -> exp.Expression:
    x = column(feature.source_column)
    listed = [category_literal(v) for v in feature.listed_values]
    return case([(exp.Is(this=x.copy(), expression=exp.Null()), integer(0)),
                 (exp.In(this=x.copy(), expressions=listed), integer(0))], integer(1))


def temporary_table(name: str, select: exp.Select) -> exp.Create:
    """``CREATE TEMPORARY TABLE name AS select``: session-local, never seen by other connections."""
    return exp.Create(this=exp.Table(this=identifier(name)), kind="TABLE", expression=select.copy(),
                      properties=exp.Properties(expressions=[exp.TemporaryProperty()]))


def drop_table(name: str) -> exp.Drop:
    return exp.Drop(tables=[exp.Table(this=identifier(name))], kind="TABLE", exists=True)


# ---------------------------------------------------------------- filters

def month_literal(value) -> exp.Expression:
    """A literal equal to one value the month column query returned."""
    if isinstance(value, datetime):
        return exp.Cast(this=text(value.isoformat(sep=" ")), to=exp.DataType.build("TIMESTAMP"))
    if isinstance(value, date):
        return exp.Cast(this=text(value.isoformat()), to=exp.DataType.build("DATE"))
    if isinstance(value, int) and not isinstance(value, bool):
        return integer(value)
    return text(str(value))


def months_in(values: Sequence) -> exp.Expression:
    """``month IN (…)`` for month values as the engine returned them."""
    return exp.In(this=column(MONTH), expressions=[month_literal(v) for v in values])


def _rows_of(relation: exp.Expression, where: exp.Expression | None) -> exp.Select:
    return exp.select(exp.Star()).from_(relation.copy()) if where is None else \
        exp.select(exp.Star()).from_(relation.copy()).where(where.copy())


def _subquery(select: exp.Select, alias: str) -> exp.Subquery:
    return exp.Subquery(this=select, alias=exp.TableAlias(this=identifier(alias)))


def _known_outcome() -> exp.Expression:
    return exp.GTE(this=column(OUTCOME), expression=integer(0))


def _one_if(condition: exp.Expression) -> exp.Expression:
    return case([(condition, integer(1))], integer(0))


# ---------------------------------------------------------------- the passes

def month_pass(relation: exp.Expression, spec: Spec, rows: MonitoredRows, where: exp.Expression | None = None) -> exp.Select:
    """Per month (or over all rows without a month): rows, Σ score, Σ points per feature,
    unseen values per readable categorical feature, rows with an outcome, rows with an invalid one.

    Result columns, in order: [month], rows, score_sum, <feature>_points_sum…,
    <feature>_unseen_rows… (for ``rows.unseen_features``), outcome_rows, outcome_invalid_rows.
    """
    selected: list[exp.Expression] = [exp.alias_(exp.Count(this=exp.Star()), ROWS, quoted=True),
                                      exp.alias_(exp.Sum(this=column(SCORE)), "score_sum", quoted=True)]
    for feature in spec.features:
        selected.append(exp.alias_(exp.Sum(this=column(points_column(feature))), points_sum_column(feature), quoted=True))
    for name in rows.unseen_features:
        selected.append(exp.alias_(exp.Sum(this=column(f"{name}_unseen")), unseen_rows_column(name), quoted=True))
    if rows.has_outcome:
        present = exp.Not(this=exp.Is(this=column(OUTCOME), expression=exp.Null()))
        invalid = exp.LT(this=column(OUTCOME), expression=integer(0))
        selected.append(exp.alias_(exp.Sum(this=_one_if(present)), "outcome_rows", quoted=True))
        selected.append(exp.alias_(exp.Sum(this=_one_if(invalid)), "outcome_invalid_rows", quoted=True))
    else:
        selected += [exp.alias_(integer(0), "outcome_rows", quoted=True),
                     exp.alias_(integer(0), "outcome_invalid_rows", quoted=True)]
    source = _subquery(_rows_of(relation, where), "monitored")
    if not rows.has_month:
        return exp.select(*selected).from_(source)
    return exp.select(column(MONTH), *selected).from_(source).group_by(column(MONTH))


def score_band_expression(edges: Sequence[float]) -> exp.Expression:
    """Band number 0…len(edges) of the score: band k is [edges[k−1], edges[k])."""
    if not edges:
        return integer(0)
    return case([(exp.LT(this=column(SCORE), expression=number(edge)), integer(k)) for k, edge in enumerate(edges)],
                integer(len(edges)))


def bins_pass(relation: exp.Expression, spec: Spec, band_edges: Sequence[float], by_month: bool,
              where: exp.Expression | None = None) -> exp.Select:
    """Rows per month × score band and per month × bin of each feature, in one grouped pass.

    Result columns: [month], score_band, <feature>_bin…, rows. In each result row exactly one
    of score_band and the bin columns is set (GROUPING SETS leaves the others NULL; a bin
    label is never NULL, the missing bin has a label too).
    """
    month = [column(MONTH)] if by_month else []
    banded = [c.copy() for c in month] + [exp.alias_(score_band_expression(band_edges), SCORE_BAND, quoted=True)]
    banded += [column(bin_column(f)) for f in spec.features]
    inner = exp.select(*banded).from_(relation.copy())
    conditions = [where.copy()] if where is not None else []
    if by_month:
        conditions.append(exp.Not(this=exp.Is(this=column(MONTH), expression=exp.Null())))
    if conditions:
        inner = inner.where(exp.and_(*conditions, copy=False))
    groups = [exp.Tuple(expressions=[c.copy() for c in month] + [column(SCORE_BAND)])]
    groups += [exp.Tuple(expressions=[c.copy() for c in month] + [column(bin_column(f))]) for f in spec.features]
    selected = [c.copy() for c in month] + [column(SCORE_BAND)] + [column(bin_column(f)) for f in spec.features]
    selected.append(exp.alias_(exp.Count(this=exp.Star()), ROWS, quoted=True))
    return (exp.select(*selected).from_(_subquery(inner, "banded"))
            .group_by(exp.GroupingSets(expressions=groups)))


def calibration_pass(relation: exp.Expression, where: exp.Expression) -> exp.Select:
    """Per month × grade, rows with a known outcome: rows, events, Σ PD, Σ (y−p)(1−2p),
    Σ (1−2p)²p(1−p) and Σ (p−y)²."""
    y, p = column(OUTCOME), column(PD)
    one, two = number(1.0), number(2.0)

    def spread() -> exp.Expression:  # (1 − 2p)
        return exp.paren(exp.Sub(this=one.copy(), expression=exp.Mul(this=two.copy(), expression=p.copy())), copy=False)

    residual = exp.paren(exp.Sub(this=y.copy(), expression=p.copy()), copy=False)
    variance = exp.Mul(this=exp.Mul(this=exp.Mul(this=spread(), expression=spread()), expression=p.copy()),
                       expression=exp.paren(exp.Sub(this=one.copy(), expression=p.copy()), copy=False))
    squared_error = exp.Mul(this=residual.copy(), expression=residual.copy())
    selected = [
        column(MONTH), column(GRADE),
        exp.alias_(exp.Count(this=exp.Star()), ROWS, quoted=True),
        exp.alias_(exp.Sum(this=y.copy()), "events", quoted=True),
        exp.alias_(exp.Sum(this=p.copy()), "pd_sum", quoted=True),
        exp.alias_(exp.Sum(this=exp.Mul(this=residual.copy(), expression=spread())), "spiegelhalter_sum", quoted=True),
        exp.alias_(exp.Sum(this=variance), "spiegelhalter_variance", quoted=True),
        exp.alias_(exp.Sum(this=squared_error), "squared_error_sum", quoted=True),
    ]
    condition = exp.and_(where.copy(), _known_outcome(), copy=False)
    return (exp.select(*selected).from_(relation.copy()).where(condition)
            .group_by(column(MONTH), column(GRADE)))


def _running(value: exp.Expression, partition: list[exp.Expression], through_current: bool) -> exp.Window:
    spec = None
    order = None
    if through_current:
        order = exp.Order(expressions=[exp.Ordered(this=column(SCORE))])
        spec = exp.WindowSpec(kind="ROWS", start="UNBOUNDED", start_side="PRECEDING", end="CURRENT ROW")
    return exp.Window(this=exp.Sum(this=value), partition_by=[p.copy() for p in partition] or None,
                      order=order, spec=spec)


def discrimination_pass(relation: exp.Expression, where: exp.Expression | None, by_month: bool,
                        curve: int = 0) -> exp.Select:
    """The score-value histogram of rows with a known outcome per month, reduced to
    :class:`~scoremon.monitor.statistics.HistogramSums` in the engine.

    Result columns: [month], events, non_events, pairs, gap_high, gap_low,
    event_placement_squares, non_event_placement_squares. With ``curve`` = n > 1 (and no
    months), the same pass also keeps points of the ROC curve (see :func:`read_curve`): for
    k = 1…n−1 the events and non-events at or below the last score value that holds at most
    k/n of the rows, then the events and non-events at or below the score value of ``gap_high``
    (the KS point).
    """
    month = [column(MONTH)] if by_month else []
    double = exp.DataType.build("DOUBLE")
    condition = _known_outcome() if where is None else exp.and_(where.copy(), _known_outcome(), copy=False)
    events = exp.Sum(this=column(OUTCOME))
    histogram = (exp.select(*[c.copy() for c in month], column(SCORE),
                            exp.alias_(exp.Cast(this=events, to=double), "events", quoted=True),
                            exp.alias_(exp.Cast(this=exp.Sub(this=exp.Count(this=exp.Star()), expression=events.copy()),
                                                to=double), "non_events", quoted=True))
                 .from_(relation.copy()).where(condition).group_by(*[c.copy() for c in month], column(SCORE)))

    running = exp.select(
        *[c.copy() for c in month], column("events"), column("non_events"),
        exp.alias_(_running(column("events"), month, True), "events_to", quoted=True),
        exp.alias_(_running(column("non_events"), month, True), "non_events_to", quoted=True),
        exp.alias_(_running(column("events"), month, False), "events_total", quoted=True),
        exp.alias_(_running(column("non_events"), month, False), "non_events_total", quoted=True),
    ).from_(_subquery(histogram, "histogram"))

    half = number(0.5)
    gap = exp.Sub(this=exp.Mul(this=column("events_to"), expression=column("non_events_total")),
                  expression=exp.Mul(this=column("non_events_to"), expression=column("events_total")))
    # an event at this score ranks below the non-events above it, and half of those tied with it
    event_placement = exp.Add(
        this=exp.Sub(this=column("non_events_total"), expression=column("non_events_to")),
        expression=exp.Mul(this=half.copy(), expression=column("non_events")))
    # a non-event at this score ranks above the events below it, and half of those tied with it
    non_event_placement = exp.Sub(this=column("events_to"), expression=exp.Mul(this=half.copy(), expression=column("events")))
    placed = exp.select(
        *[c.copy() for c in month], column("events"), column("non_events"), column("events_total"),
        column("non_events_total"), *([column("events_to"), column("non_events_to")] if curve else []),
        exp.alias_(gap, "gap", quoted=True),
        exp.alias_(event_placement, "event_placement", quoted=True),
        exp.alias_(non_event_placement, "non_event_placement", quoted=True),
    ).from_(_subquery(running, "running"))

    def weighted(weight: str, value: str, squared: bool) -> exp.Expression:
        term = exp.Mul(this=column(weight), expression=column(value))
        if squared:
            term = exp.Mul(this=term, expression=column(value))
        return exp.Sum(this=term)

    selected = [c.copy() for c in month] + [
        exp.alias_(exp.Max(this=column("events_total")), "events", quoted=True),
        exp.alias_(exp.Max(this=column("non_events_total")), "non_events", quoted=True),
        exp.alias_(weighted("events", "event_placement", False), "pairs", quoted=True),
        exp.alias_(exp.Max(this=column("gap")), "gap_high", quoted=True),
        exp.alias_(exp.Min(this=column("gap")), "gap_low", quoted=True),
        exp.alias_(weighted("events", "event_placement", True), "event_placement_squares", quoted=True),
        exp.alias_(weighted("non_events", "non_event_placement", True), "non_event_placement_squares", quoted=True),
    ]
    if curve and not month:
        selected += _curve_points(curve)
        placed = exp.select(exp.Star(), exp.alias_(exp.Window(this=exp.Max(this=column("gap"))), "gap_top", quoted=True)
                            ).from_(_subquery(placed, "placed"))
    query = exp.select(*selected).from_(_subquery(placed, "placed"))
    return query.group_by(*[c.copy() for c in month]) if month else query


def _curve_points(points: int) -> list[exp.Expression]:
    # running totals rise with the score, so the largest one under a condition on the running
    # row count is the one at the last score value meeting it
    rows_to = exp.paren(exp.Add(this=column("events_to"), expression=column("non_events_to")), copy=False)
    rows_total = exp.paren(exp.Add(this=column("events_total"), expression=column("non_events_total")), copy=False)
    selected = []
    for k in range(1, points):
        within = exp.LTE(this=exp.Mul(this=rows_to.copy(), expression=integer(points)),
                         expression=exp.Mul(this=rows_total.copy(), expression=integer(k)))
        for name in ("events_to", "non_events_to"):
            selected.append(exp.alias_(exp.Max(this=case([(within.copy(), column(name))], exp.Null())),
                                       f"curve_{name}_{k}", quoted=True))
    at_top = exp.EQ(this=column("gap"), expression=column("gap_top"))
    for name in ("events_to", "non_events_to"):
        selected.append(exp.alias_(exp.Min(this=case([(at_top.copy(), column(name))], exp.Null())), f"ks_{name}",
                                   quoted=True))
    return selected


def read_curve(values: Sequence, events: float, non_events: float
               ) -> tuple[tuple[tuple[float, float], ...], tuple[float, float] | None]:
    """The ROC points and the KS point from the curve columns of :func:`discrimination_pass`.

    Each point is (share of non-events, share of events) at or below a score value — rows
    below a cut-off are the ones a lender would decline — from (0, 0) to (1, 1)."""
    if not events or not non_events:
        return (), None
    values = [0.0 if v is None else float(v) for v in values]
    pairs = [(values[i + 1] / non_events, values[i] / events) for i in range(0, len(values) - 2, 2)]
    points = tuple(sorted({(0.0, 0.0), *pairs, (1.0, 1.0)}))
    ks = (values[-1] / non_events, values[-2] / events)
    return points, ks


def decile_edges_pass(relation: exp.Expression, where: exp.Expression | None = None) -> exp.Select:
    """The score's decile edges: for k = 1…9, the lowest score value with at least k/10 of
    the rows strictly below it (NULL when there is none). One row, nine columns."""
    histogram = (exp.select(column(SCORE), exp.alias_(exp.Count(this=exp.Star()), ROWS, quoted=True))
                 .from_(relation.copy()).group_by(column(SCORE)))
    if where is not None:
        histogram = histogram.where(where.copy())
    running = exp.select(
        column(SCORE), column(ROWS),
        exp.alias_(_running(column(ROWS), [], True), "rows_to", quoted=True),
        exp.alias_(_running(column(ROWS), [], False), "rows_total", quoted=True),
    ).from_(_subquery(histogram, "histogram"))
    below = exp.Sub(this=column("rows_to"), expression=column(ROWS))
    selected = []
    for k in range(1, 10):
        reached = exp.GTE(this=exp.Mul(this=exp.paren(below.copy(), copy=False), expression=integer(10)),
                          expression=exp.Mul(this=column("rows_total"), expression=integer(k)))
        selected.append(exp.alias_(exp.Min(this=case([(reached, column(SCORE))], exp.Null())), f"edge_{k}", quoted=True))
    return exp.select(*selected).from_(_subquery(running, "running"))


def fingerprints_pass(source: exp.Expression) -> exp.Select:
    """Rows per model_fingerprint of an already scored table."""
    fp = column("model_fingerprint")
    return (exp.select(fp, exp.alias_(exp.Count(this=exp.Star()), ROWS, quoted=True))
            .from_(source.copy()).group_by(fp.copy()))
