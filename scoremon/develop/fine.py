"""Fine classes, counted in the engine: only aggregates leave it.

A **numeric** characteristic gets quantile edges and the rows and events of each class in one
grouped query (:func:`quantile_query`): the histogram of its finite values (one row per
distinct value, cast to DOUBLE), running sums of rows and events in value order (window SUM
with a ROWS frame), and for k = 1 … Q−1 the lowest value whose running share of rows reaches
k/Q, with the running rows and events there. That is the *inverted CDF* quantile (the
smallest x with F(x) ≥ k/Q; ``numpy.quantile(..., method="inverted_cdf")``), computed in
whole numbers (``rows_to · Q ≥ rows_total · k``), so DuckDB, PostgreSQL and Spark give the same
edges to the bit: it needs only GROUP BY, a window SUM over distinct values (no ties in the
order) and MIN. Equal edges are kept once (tied quantiles), and an edge at the largest value is
dropped, so every class (e_{k−1}, e_k] holds at least one row (``closed: upper``).

NULL, NaN, +inf and −inf are classes of their own, counted for every numeric characteristic in
one pass (:func:`special_query`). A **categorical** characteristic gets its rows and events per
value, NULL apart (:func:`category_query`).
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Sequence

from sqlglot import exp

from ..engines import Engine
from ..trees import case, column, double_constant, identifier, integer

SPECIAL = ("missing", "nan", "positive_infinity", "negative_infinity")
Count = tuple[int, int]  # (rows, events)


@dataclass(frozen=True)
class NumericClasses:
    """The fine classes of a numeric characteristic.

    Finite class k is (edges[k−1], edges[k]] with edges[−1] = −inf and edges[len] = +inf;
    ``rows`` and ``events`` have one entry per finite class (none when no value is finite).
    """

    name: str
    edges: tuple[float, ...]
    rows: tuple[int, ...]
    events: tuple[int, ...]
    missing: Count
    nan: Count
    positive_infinity: Count
    negative_infinity: Count
    minimum: float | None
    maximum: float | None


@dataclass(frozen=True)
class CategoricalClasses:
    """The fine classes of a categorical characteristic: per value (text) its rows and events."""

    name: str
    values: tuple[tuple[str, int, int], ...]  # (value, rows, events), sorted by value
    missing: Count


def _double(x: exp.Expression) -> exp.Expression:
    return exp.Cast(this=x, to=exp.DataType.build("DOUBLE"))


def _sum(value: exp.Expression) -> exp.Expression:
    return exp.Sum(this=value)


def _subquery(select: exp.Select, alias: str) -> exp.Subquery:
    return exp.Subquery(this=select, alias=exp.TableAlias(this=identifier(alias)))


def finite(x: exp.Expression) -> exp.Expression:
    """``x > -inf AND x < +inf`` on the DOUBLE value: false for NULL, NaN (larger than every
    number on DuckDB, PostgreSQL and Spark) and both infinities."""
    value = _double(x.copy())
    return exp.and_(exp.GT(this=value, expression=double_constant("-Infinity")),
                    exp.LT(this=value.copy(), expression=double_constant("Infinity")), copy=False)


def quantile_query(source: exp.Expression, name: str, event: exp.Expression, classes: int) -> exp.Select:
    """One row: for k = 1 … classes−1 the columns ``edge_k``, ``rows_k``, ``events_k`` (the
    inverted-CDF quantile k/classes and the rows and events up to and including it), then
    ``rows_total``, ``events_total``, ``minimum``, ``maximum`` over the finite values."""
    values = (exp.select(exp.alias_(_double(column(name)), "value", quoted=True),
                         exp.alias_(event.copy(), "event", quoted=True))
              .from_(source.copy()).where(finite(column(name))))
    histogram = (exp.select(column("value"), exp.alias_(exp.Count(this=exp.Star()), "rows", quoted=True),
                            exp.alias_(_sum(column("event")), "events", quoted=True))
                 .from_(_subquery(values, "finite_values")).group_by(column("value")))

    def running(what: str, through_current: bool) -> exp.Window:
        if not through_current:
            return exp.Window(this=_sum(column(what)))
        return exp.Window(this=_sum(column(what)), order=exp.Order(expressions=[exp.Ordered(this=column("value"))]),
                          spec=exp.WindowSpec(kind="ROWS", start="UNBOUNDED", start_side="PRECEDING", end="CURRENT ROW"))

    ran = exp.select(column("value"),
                     exp.alias_(running("rows", True), "rows_to", quoted=True),
                     exp.alias_(running("events", True), "events_to", quoted=True),
                     exp.alias_(running("rows", False), "rows_total", quoted=True),
                     exp.alias_(running("events", False), "events_total", quoted=True),
                     ).from_(_subquery(histogram, "histogram"))
    selected = []
    for k in range(1, classes):
        reached = exp.GTE(this=exp.Mul(this=column("rows_to"), expression=integer(classes)),
                          expression=exp.Mul(this=column("rows_total"), expression=integer(k)))
        # rows_to and events_to never fall as the value rises, so the least of them over the
        # values that reach k/classes is the one at the edge itself
        for what, alias in (("value", "edge"), ("rows_to", "rows"), ("events_to", "events")):
            selected.append(exp.alias_(exp.Min(this=case([(reached.copy(), column(what))], exp.Null())),
                                       f"{alias}_{k}", quoted=True))
    selected += [exp.alias_(exp.Max(this=column("rows_total")), "rows_total", quoted=True),
                 exp.alias_(exp.Max(this=column("events_total")), "events_total", quoted=True),
                 exp.alias_(exp.Min(this=column("value")), "minimum", quoted=True),
                 exp.alias_(exp.Max(this=column("value")), "maximum", quoted=True)]
    return exp.select(*selected).from_(_subquery(ran, "running"))


def special_condition(kind: str, x: exp.Expression) -> exp.Expression:
    if kind == "missing":
        return exp.Is(this=x.copy(), expression=exp.Null())
    constant = {"nan": "NaN", "positive_infinity": "Infinity", "negative_infinity": "-Infinity"}[kind]
    # NaN equals itself on DuckDB, PostgreSQL and Spark (the scoring SQL relies on it too)
    return exp.EQ(this=_double(x.copy()), expression=double_constant(constant))


def special_query(source: exp.Expression, names: Sequence[str], event: exp.Expression) -> exp.Select:
    """One row: for each numeric column and each of NULL, NaN, +inf, −inf its rows and events
    (columns ``c0, c1, …`` in that order: rows then events)."""
    selected = []
    for name in names:
        for kind in SPECIAL:
            condition = special_condition(kind, column(name))
            selected.append(_sum(case([(condition, integer(1))], integer(0))))
            selected.append(_sum(case([(condition.copy(), event.copy())], integer(0))))
    return exp.select(*[exp.alias_(s, f"c{i}", quoted=True) for i, s in enumerate(selected)]).from_(source.copy())


def category_query(source: exp.Expression, name: str, event: exp.Expression) -> exp.Select:
    """Per value of column ``name`` (NULL included): value, rows, events."""
    return (exp.select(exp.alias_(column(name), "value", quoted=True), exp.alias_(exp.Count(this=exp.Star()), "rows", quoted=True),
                       exp.alias_(_sum(event.copy()), "events", quoted=True))
            .from_(source.copy()).group_by(column(name)))


def numeric_classes(engine: Engine, source: exp.Expression, name: str, event: exp.Expression, classes: int,
                    special: dict[str, Count]) -> NumericClasses:
    """The fine classes of numeric column ``name`` (``special`` from :func:`count_special`)."""
    row = engine.query(quantile_query(source, name, event, classes), f"finding the quantiles of {name!r}")[0]
    rows_total, events_total, minimum, maximum = (row[n] for n in ("rows_total", "events_total", "minimum", "maximum"))
    edges: list[float] = []
    upto: list[Count] = []
    if rows_total is not None:
        for k in range(1, classes):
            edge, rows_to, events_to = float(row[f"edge_{k}"]), int(row[f"rows_{k}"]), int(row[f"events_{k}"])
            if edge == float(maximum) or (edges and edge == edges[-1]):
                continue  # a tied quantile, or an edge that would leave the top class empty
            edges.append(edge)
            upto.append((rows_to, events_to))
        upto.append((int(rows_total), int(events_total)))
    rows, events, before = [], [], (0, 0)
    for rows_to, events_to in upto:
        rows.append(rows_to - before[0])
        events.append(events_to - before[1])
        before = (rows_to, events_to)
    return NumericClasses(name, tuple(edges), tuple(rows), tuple(events), special["missing"], special["nan"],
                          special["positive_infinity"], special["negative_infinity"],
                          None if minimum is None else float(minimum), None if maximum is None else float(maximum))


def count_special(engine: Engine, source: exp.Expression, names: Sequence[str],
                  event: exp.Expression) -> dict[str, dict[str, Count]]:
    """Per numeric column: rows and events of NULL, NaN, +inf and −inf."""
    if not names:
        return {}
    row = engine.query(special_query(source, names, event), "counting NULL, NaN and infinite values")[0]
    result: dict[str, dict[str, Count]] = {}
    position = 0
    for name in names:
        result[name] = {}
        for kind in SPECIAL:
            result[name][kind] = (int(row[f"c{position}"] or 0), int(row[f"c{position + 1}"] or 0))
            position += 2
    return result


def categorical_classes(engine: Engine, source: exp.Expression, name: str, event: exp.Expression) -> CategoricalClasses:
    """The rows and events of every value of text column ``name``."""
    rows = engine.query(category_query(source, name, event), f"counting the values of {name!r}")
    missing = (0, 0)
    values = []
    for row in rows:
        value, count, events = row["value"], row["rows"], row["events"]
        if value is None:
            missing = (int(count), int(events))
        else:
            values.append((str(value), int(count), int(events)))
    return CategoricalClasses(name, tuple(sorted(values)), missing)


def fine_classes(engine: Engine, source: exp.Expression, numeric: Sequence[str], categorical: Sequence[str],
                 event: exp.Expression, classes: int,
                 progress: Callable[[float], None] | None = None) -> list[NumericClasses | CategoricalClasses]:
    """The fine classes of every characteristic, numeric first; ``progress`` gets the share done."""
    steps = len(numeric) + len(categorical) + 1
    special = count_special(engine, source, numeric, event)
    done = 1
    result: list[NumericClasses | CategoricalClasses] = []
    for name in numeric:
        result.append(numeric_classes(engine, source, name, event, classes, special[name]))
        done += 1
        if progress:
            progress(done / steps)
    for name in categorical:
        result.append(categorical_classes(engine, source, name, event))
        done += 1
        if progress:
            progress(done / steps)
    return result
