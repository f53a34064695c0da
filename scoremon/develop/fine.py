"""Fine classes, counted in the engine: only aggregates leave it.

A **numeric** characteristic gets Q quantile classes. The quantile is the *inverted CDF*: edge
k is the smallest value x with F(x) ≥ k/Q (``numpy.quantile(..., method="inverted_cdf")``),
that is the value of rank t_k = ⌈k·n/Q⌉ among the n finite values. It is found in two passes
and checked in whole numbers, so DuckDB, PostgreSQL and Spark return the same edges to the bit:

1. :func:`candidate_query` asks the engine's own discrete percentile for every rank t_k at once,
   at p = (t_k − ½)/n, so that no engine's rounding of p·n moves it to the next rank;
2. :func:`position_query` counts the rows below and at each candidate (a CASE per column and
   GROUPING SETS, one pass for every column), and a candidate is edge k only if
   (rows below it)·Q < k·n ≤ (rows up to it)·Q.

Where a check fails (an engine's percentile is approximate, e.g. Spark's), the exact running-sum
query :func:`quantile_query` finds every edge: the histogram of distinct values (cast to DOUBLE),
running sums of rows and events in value order (window SUM with a ROWS frame), and for each k
the least value whose running count reaches k/Q, compared in whole numbers. It is exact on
every engine but sorts every distinct value (about 7 times slower on DuckDB, 1M rows).

Equal edges are kept once (tied quantiles), and an edge at the largest value is dropped, so
every class (e_{k−1}, e_k] holds at least one row (``closed: upper``).

NULL, NaN, +inf and −inf are classes of their own, counted for every numeric characteristic in
one pass (:func:`special_query`). A **categorical** characteristic gets its rows and events per
value, NULL apart, every text column in one pass (:func:`category_query`).

"One pass for every column" holds while the query stays within
:data:`~scoremon.develop.width.MAX_COLUMNS` columns (8 a numeric characteristic for the special
values, 3 for the candidates, 1 for the check, 2 a text column): a wider table's columns are
cut into as many passes as it takes (:func:`~scoremon.develop.width.cut`), each counting its
columns exactly as the one pass would.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable, Sequence

from sqlglot import exp

from ..engines import Engine
from ..trees import case, column, double_constant, identifier, integer, number
from .width import cut

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
    """The fine classes of a categorical characteristic: per value (text, or a whole-number code)
    its rows and events."""

    name: str
    values: tuple[tuple[str | int, int, int], ...]  # (value, rows, events), sorted by value
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

    ran = exp.select(column("value"), column("rows"),
                     exp.alias_(running("rows", True), "rows_to", quoted=True),
                     exp.alias_(running("events", True), "events_to", quoted=True),
                     exp.alias_(running("rows", False), "rows_total", quoted=True),
                     exp.alias_(running("events", False), "events_total", quoted=True),
                     exp.alias_(exp.Window(this=exp.Min(this=column("value"))), "minimum", quoted=True),
                     ).from_(_subquery(histogram, "histogram"))
    # Only the values where the running share passes some k/classes can be an edge: at most
    # `classes` of them, kept by comparing ⌊rows_to·Q/total⌋ with ⌊(rows_to − rows)·Q/total⌋. The
    # division is of whole numbers below 2^53 in doubles, so it rounds correctly and the floors
    # are exact (a quotient that is not whole stays at least 1/total from the next whole number);
    # the edges themselves are then chosen in whole numbers below.
    def share_floor(count: exp.Expression) -> exp.Expression:
        scaled = _double(exp.Mul(this=count, expression=integer(classes)))
        return exp.Floor(this=exp.Div(this=scaled, expression=exp.Nullif(this=_double(column("rows_total")),
                                                                       expression=_double(integer(0)))))

    before = exp.paren(exp.Sub(this=column("rows_to"), expression=column("rows")), copy=False)
    crossing = (exp.select(exp.Star()).from_(_subquery(ran, "running"))
                .where(exp.GT(this=share_floor(column("rows_to")), expression=share_floor(before))))
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
                 exp.alias_(exp.Min(this=column("minimum")), "minimum", quoted=True),
                 exp.alias_(exp.Max(this=column("value")), "maximum", quoted=True)]
    return exp.select(*selected).from_(_subquery(crossing, "crossing"))


def special_condition(kind: str, x: exp.Expression) -> exp.Expression:
    if kind == "missing":
        return exp.Is(this=x.copy(), expression=exp.Null())
    constant = {"nan": "NaN", "positive_infinity": "Infinity", "negative_infinity": "-Infinity"}[kind]
    # NaN equals itself on DuckDB, PostgreSQL and Spark (the scoring SQL relies on it too)
    return exp.EQ(this=_double(x.copy()), expression=double_constant(constant))


def special_query(source: exp.Expression, names: Sequence[str], event: exp.Expression) -> exp.Select:
    """One row: the table's ``rows``, then for each numeric column and each of NULL, NaN, +inf,
    −inf its rows and events (columns ``c0, c1, …`` in that order: rows then events)."""
    selected = []
    for name in names:
        for kind in SPECIAL:
            condition = special_condition(kind, column(name))
            selected.append(_sum(case([(condition, integer(1))], integer(0))))
            selected.append(_sum(case([(condition.copy(), event.copy())], integer(0))))
    return exp.select(exp.alias_(exp.Count(this=exp.Star()), "rows", quoted=True),
                      *[exp.alias_(s, f"c{i}", quoted=True) for i, s in enumerate(selected)]).from_(source.copy())


def category_query(source: exp.Expression, names: Sequence[str], event: exp.Expression) -> exp.Select:
    """Per value of each text column (NULL included), in one grouped pass: ``v_i`` the value and
    ``g_i`` = GROUPING(column i) (0 in the rows of column i's own set, which tells its NULL value
    apart from the NULLs of the other sets), ``rows``, ``events``."""
    selected = []
    for i, name in enumerate(names):
        selected += [exp.alias_(column(name), f"v_{i}", quoted=True),
                     exp.alias_(exp.Grouping(expressions=[column(name)]), f"g_{i}", quoted=True)]
    sets = [exp.Tuple(expressions=[column(name)]) for name in names]
    return (exp.select(*selected, exp.alias_(exp.Count(this=exp.Star()), "rows", quoted=True),
                       exp.alias_(_sum(event.copy()), "events", quoted=True))
            .from_(source.copy()).group_by(exp.GroupingSets(expressions=sets)))


def candidate_query(source: exp.Expression, names: Sequence[str], probabilities: Sequence[Sequence[float]]) -> exp.Select:
    """One row: per numeric column i its finite minimum ``min_i``, maximum ``max_i`` and ``q_i``,
    the list of the engine's discrete percentiles of its finite values at ``probabilities[i]``
    (DuckDB QUANTILE_DISC, PostgreSQL PERCENTILE_DISC, Spark PERCENTILE_APPROX, each given the
    whole list at once: DuckDB sorts once for a list but once per percentile otherwise). These are
    candidates only, each checked exactly by :func:`position_query`."""
    selected = []
    for i, name in enumerate(names):
        value = case([(finite(column(name)), _double(column(name)))], exp.Null())
        fractions = exp.Array(expressions=[exp.Literal.number(repr(float(p))) for p in probabilities[i]])
        percentile = exp.WithinGroup(this=exp.PercentileDisc(this=fractions),
                                     expression=exp.Order(expressions=[exp.Ordered(this=value.copy())]))
        selected += [exp.alias_(exp.Min(this=value.copy()), f"min_{i}", quoted=True),
                     exp.alias_(exp.Max(this=value.copy()), f"max_{i}", quoted=True),
                     exp.alias_(percentile, f"q_{i}", quoted=True)]
    return exp.select(*selected).from_(source.copy())


def position(name: str, candidates: Sequence[float]) -> exp.Expression:
    """A finite value's place among the sorted ``candidates`` c_0 < c_1 < …: 2j for
    c_{j−1} < x < c_j, 2j + 1 for x = c_j, 2m above them all; −1 for NULL, NaN and ±inf."""
    value = _double(column(name))

    def tests(first: int, end: int) -> list[tuple[exp.Expression, exp.Expression]]:
        branches = []
        for j in range(first, end):
            branches.append((exp.LT(this=value.copy(), expression=number(candidates[j])), integer(2 * j)))
            branches.append((exp.EQ(this=value.copy(), expression=number(candidates[j])), integer(2 * j + 1)))
        return branches

    # in runs of about √m candidates, the last of each run tested first: a row meets about 2·√m
    # comparisons instead of up to 2·m (DuckDB evaluates a CASE branch by branch)
    size = max(1, math.isqrt(len(candidates)))
    runs = [(first, min(first + size, len(candidates))) for first in range(0, len(candidates), size)]
    placed = case([(exp.LTE(this=value.copy(), expression=number(candidates[end - 1])), case(tests(first, end)))
                   for first, end in runs], integer(2 * len(candidates)))
    return case([(finite(column(name)), placed)], exp.Neg(this=integer(1)))


def position_query(source: exp.Expression, columns: Sequence[tuple[str, Sequence[float]]],
                   event: exp.Expression) -> exp.Select:
    """Rows and events per :func:`position` of each numeric column among its candidates, in one
    grouped pass: result columns ``p_0, p_1, …`` (exactly one set per result row; a position is
    never NULL, so the others being NULL says which), ``rows``, ``events``."""
    places = [exp.alias_(position(name, candidates), f"p_{i}", quoted=True)
              for i, (name, candidates) in enumerate(columns)]
    inner = exp.select(*places, exp.alias_(event.copy(), "event", quoted=True)).from_(source.copy())
    sets = [exp.Tuple(expressions=[column(f"p_{i}")]) for i in range(len(columns))]
    return (exp.select(*[column(f"p_{i}") for i in range(len(columns))],
                       exp.alias_(exp.Count(this=exp.Star()), "rows", quoted=True),
                       exp.alias_(_sum(column("event")), "events", quoted=True))
            .from_(_subquery(inner, "positioned")).group_by(exp.GroupingSets(expressions=sets)))


def _classes(name: str, found: Sequence[tuple[float, int, int]], total: Count, special: dict[str, Count],
             minimum, maximum) -> NumericClasses:
    """Classes from the edge of each k with the rows and events up to it (``found``, in k order)."""
    edges: list[float] = []
    upto: list[Count] = []
    if total[0]:
        for edge, rows_to, events_to in found:
            if edge == float(maximum) or (edges and edge == edges[-1]):
                continue  # a tied quantile, or an edge that would leave the top class empty
            edges.append(edge)
            upto.append((rows_to, events_to))
        upto.append(total)
    rows, events, before = [], [], (0, 0)
    for rows_to, events_to in upto:
        rows.append(rows_to - before[0])
        events.append(events_to - before[1])
        before = (rows_to, events_to)
    return NumericClasses(name, tuple(edges), tuple(rows), tuple(events), special["missing"], special["nan"],
                          special["positive_infinity"], special["negative_infinity"],
                          None if minimum is None else float(minimum), None if maximum is None else float(maximum))


def numeric_classes(engine: Engine, source: exp.Expression, name: str, event: exp.Expression, classes: int,
                    special: dict[str, Count]) -> NumericClasses:
    """The fine classes of numeric column ``name`` by the running-sum query (:func:`quantile_query`)."""
    row = engine.query(quantile_query(source, name, event, classes), f"finding the quantiles of {name!r}")[0]
    if row["rows_total"] is None:
        return _classes(name, [], (0, 0), special, None, None)
    found = [(float(row[f"edge_{k}"]), int(row[f"rows_{k}"]), int(row[f"events_{k}"])) for k in range(1, classes)]
    return _classes(name, found, (int(row["rows_total"]), int(row["events_total"])), special, row["minimum"],
                    row["maximum"])


def checked_classes(engine: Engine, source: exp.Expression, name: str, event: exp.Expression, classes: int,
                    special: dict[str, Count], finite_rows: int, candidates: Sequence[float], minimum,
                    maximum) -> NumericClasses | None:
    """The fine classes of ``name`` from the engine's percentile ``candidates``, each edge checked
    in whole numbers (count below it · Q < k · n ≤ count up to it · Q); None when a check fails
    (then :func:`numeric_classes` finds the edges)."""
    if finite_rows == 0:
        return _classes(name, [], (0, 0), special, None, None)
    values = _candidates(candidates)
    counts = count_positions(engine, source, [(name, values)], event)[0]
    return _checked(name, classes, special, finite_rows, values, counts, minimum, maximum)


def _candidates(candidates: Sequence[float | None]) -> list[float]:
    return sorted(set(float(c) for c in candidates if c is not None))


def count_positions(engine: Engine, source: exp.Expression, columns: Sequence[tuple[str, Sequence[float]]],
                    event: exp.Expression) -> list[dict[int, Count]]:
    """Per column: position → (rows, events) of its finite values (:func:`position_query`)."""
    counts: list[dict[int, Count]] = []
    for run, query in cut(columns, lambda run: position_query(source, run, event)):
        found: list[dict[int, Count]] = [{} for _ in run]
        for row in engine.query(query, "checking the quantiles"):
            for i in range(len(run)):
                place = row[f"p_{i}"]
                if place is not None:
                    if place >= 0:
                        found[i][int(place)] = (int(row["rows"]), int(row["events"] or 0))
                    break
        counts += found
    return counts


def _checked(name: str, classes: int, special: dict[str, Count], finite_rows: int, values: Sequence[float],
             counts: dict[int, Count], minimum, maximum) -> NumericClasses | None:
    below, upto = [], []  # per candidate: rows below it; (rows, events) up to and including it
    running = (0, 0)
    for place in range(2 * len(values) + 1):
        rows_here, events_here = counts.get(place, (0, 0))
        running = (running[0] + rows_here, running[1] + events_here)
        if place % 2 == 0 and place < 2 * len(values):
            below.append(running[0])
        elif place % 2 == 1:
            upto.append(running)
    if running[0] != finite_rows:
        return None
    found = []
    for k in range(1, classes):
        for value, lower, (rows_to, events_to) in zip(values, below, upto):
            if lower * classes < k * finite_rows <= rows_to * classes:
                found.append((value, rows_to, events_to))
                break
        else:
            return None
    return _classes(name, found, running, special, minimum, maximum)


def count_special(engine: Engine, source: exp.Expression, names: Sequence[str],
                  event: exp.Expression) -> tuple[int, dict[str, dict[str, Count]]]:
    """The table's rows and, per numeric column, rows and events of NULL, NaN, +inf and −inf."""
    result: dict[str, dict[str, Count]] = {}
    rows = 0
    for run, query in cut(names, lambda run: special_query(source, run, event)):
        row = engine.query(query, "counting NULL, NaN and infinite values")[0]
        rows = int(row["rows"])
        position = 0
        for name in run:
            result[name] = {}
            for kind in SPECIAL:
                result[name][kind] = (int(row[f"c{position}"] or 0), int(row[f"c{position + 1}"] or 0))
                position += 2
    return rows, result


def categorical_classes(engine: Engine, source: exp.Expression, names: Sequence[str],
                        event: exp.Expression) -> list[CategoricalClasses]:
    """The rows and events of every value of each text (or whole-number code) column in ``names``."""
    result = []
    for run, query in cut(names, lambda run: category_query(source, run, event)):
        values: list[list[tuple[str | int, int, int]]] = [[] for _ in run]
        missing: list[Count] = [(0, 0) for _ in run]
        for row in engine.query(query, "counting the values of text columns"):
            i = next(i for i in range(len(run)) if row[f"g_{i}"] == 0)
            value, count, events = row[f"v_{i}"], int(row["rows"]), int(row["events"] or 0)
            if value is None:
                missing[i] = (count, events)
            else:
                values[i].append((value if isinstance(value, int) else str(value), count, events))
        result += [CategoricalClasses(name, tuple(sorted(v)), m) for name, v, m in zip(run, values, missing)]
    return result


def find_candidates(engine: Engine, source: exp.Expression, names: Sequence[str],
                    probabilities: Sequence[Sequence[float]]) -> list[tuple[object, object, list]]:
    """Per numeric column its finite minimum, maximum and percentile candidates
    (:func:`candidate_query`)."""
    found = []
    for run, query in cut(list(range(len(names))), lambda run: candidate_query(
            source, [names[i] for i in run], [probabilities[i] for i in run])):
        row = engine.query(query, "finding candidate quantiles")[0]
        found += [(row[f"min_{i}"], row[f"max_{i}"], row[f"q_{i}"] or []) for i in range(len(run))]
    return found


def fine_classes(engine: Engine, source: exp.Expression, numeric: Sequence[str], categorical: Sequence[str],
                 event: exp.Expression, classes: int,
                 progress: Callable[[float], None] | None = None) -> list[NumericClasses | CategoricalClasses]:
    """The fine classes of every characteristic, numeric first; ``progress`` gets the share done.

    Four grouped passes whatever the number of characteristics (special values, percentile
    candidates, the check of every candidate, the text values; more for a table too wide for
    one query, see the module docstring), plus the running-sum query for each numeric
    characteristic whose candidates fail the check."""
    done, steps = 0, 4

    def step() -> None:
        nonlocal done
        done += 1
        if progress:
            progress(min(done / steps, 1.0))

    result: list[NumericClasses | CategoricalClasses] = []
    if numeric:
        total, special = count_special(engine, source, numeric, event)
        finite_rows = {name: total - sum(rows for rows, _ in special[name].values()) for name in numeric}
        # the percentile of rank t is asked for at (t − ½)/n, so that no engine's rounding of p·n
        # can move it to the next rank (numpy shows the trap: 100 · 0.55 = 55.000000000000007)
        probabilities = [[(-(-k * finite_rows[name] // classes) - 0.5) / finite_rows[name] if finite_rows[name]
                          else 0.5 for k in range(1, classes)] for name in numeric]
        step()
        asked = find_candidates(engine, source, numeric, probabilities)
        step()
        candidates = {name: _candidates(q) for name, (_, _, q) in zip(numeric, asked)}
        checked = [name for name in numeric if finite_rows[name] and candidates[name]]
        counts = dict(zip(checked, count_positions(engine, source, [(n, candidates[n]) for n in checked], event)
                          if checked else []))
        step()
        for i, name in enumerate(numeric):
            found = _classes(name, [], (0, 0), special[name], None, None) if not finite_rows[name] else None
            if name in counts:
                found = _checked(name, classes, special[name], finite_rows[name], candidates[name], counts[name],
                                 asked[i][0], asked[i][1])
            if found is None:
                steps += 1
                found = numeric_classes(engine, source, name, event, classes, special[name])
                step()
            result.append(found)
    if categorical:
        result += categorical_classes(engine, source, categorical, event)
    step()
    return result
