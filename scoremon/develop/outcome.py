"""The development table's own columns, checked before any work: outcome, key, month, features.

:func:`plan_columns` reads only the column list: every column named (outcome, key, month,
``--features``, ``--exclude``) must exist (the nearest name is suggested) and be of a kind that
can serve; the characteristics are the rest of the columns, numbers as numeric and text as
categorical. :func:`check_rows` then runs one aggregate pass (and a second only to show a
duplicated key): the outcome holds only 0 and 1 (or true/false) with both present, the key is
unique and never NULL, the month never NULL. Each failure is one line naming the column and
the counts; `scoremon bin` and `scoremon fit` both call these first.
"""
from __future__ import annotations

from dataclasses import dataclass
from datetime import date, datetime
from typing import Sequence

from sqlglot import exp

from ..engines import Engine
from ..engines.protocol import BOOLEAN, DATE, INTEGER, NUMERIC, TEXT, Column
from ..errors import InputError
from ..sources import describe_source
from ..spec.checks import MAX_NAME_BYTES, suggest
from ..trees import alias, case, column, integer

NUMBER_KINDS = (NUMERIC, INTEGER)


@dataclass(frozen=True)
class ColumnPlan:
    """Which columns play which part, from the table's column list."""

    outcome: Column
    key: str | None
    month_column: str | None
    numeric: tuple[str, ...]
    categorical: tuple[str, ...]
    left_out: tuple[tuple[str, str], ...]  # (column, why) for columns not binned though not excluded
    names: tuple[tuple[str, str], ...] = ()  # (column, feature name) where the two differ

    def feature_name(self, column_name: str) -> str:
        return dict(self.names).get(column_name, column_name)

    @property
    def features(self) -> tuple[str, ...]:
        return self.numeric + self.categorical


@dataclass(frozen=True)
class RowFacts:
    """What the checks counted: rows, events, and the months covered (first, last) when known."""

    rows: int
    events: int
    months: tuple[str, str] | None = None


def describe_columns(engine: Engine, source: exp.Expression) -> dict[str, Column]:
    """Column name → described column of the development table (:func:`scoremon.sources.describe_source`)."""
    return describe_source(engine, source)


def _missing(role: str, name: str, columns: dict[str, Column], table: str) -> InputError:
    return InputError(f"{role} column {name!r} is not in table {table}{suggest(name, list(columns))}")


def plan_columns(columns: dict[str, Column], table: str, outcome: str, key: str | None = None,
                 month_column: str | None = None, features: Sequence[str] | None = None,
                 exclude: Sequence[str] = (), categorical: Sequence[str] = ()) -> ColumnPlan:
    """The part each column plays; raises :class:`InputError` (one line) for a name not in the
    table, an outcome or feature of a kind that cannot serve, or a column given two parts.

    Number columns are numeric characteristics and text columns categorical ones, but for the
    whole-number columns named in ``categorical`` (codes such as a region number)."""
    for role, name in (("outcome", outcome), ("key", key), ("month", month_column)):
        if name is not None and name not in columns:
            raise _missing(role, name, columns, table)
    kind = columns[outcome].kind
    if kind not in NUMBER_KINDS + (BOOLEAN,):
        raise InputError(f"outcome column {outcome!r} is {columns[outcome].type_name} ({kind}); it must hold 1 "
                         "(event) and 0 (no event) as numbers, or true/false")
    if month_column is not None and columns[month_column].kind not in (DATE, TEXT, INTEGER):
        raise InputError(f"month column {month_column!r} is {columns[month_column].type_name}; give a DATE or "
                         "TIMESTAMP column, text YYYY-MM or whole numbers YYYYMM")
    roles = {name: role for role, name in (("outcome", outcome), ("key", key), ("month", month_column)) if name}
    if len(roles) < len([n for n in (outcome, key, month_column) if n]):
        raise InputError("the outcome, key and month must be three different columns")
    for name in exclude:
        if name not in columns:
            raise _missing("--exclude", name, columns, table)
    if features is not None:
        for name in features:
            if name not in columns:
                raise _missing("feature", name, columns, table)
            if name in roles:
                raise InputError(f"feature column {name!r} is the {roles[name]} column; leave it out of --features")
        chosen = [name for name in dict.fromkeys(features) if name not in exclude]
    else:
        chosen = [name for name in columns if name not in roles and name not in exclude]
    for name in categorical:
        if name not in columns:
            raise _missing("--categorical", name, columns, table)
        if columns[name].kind not in (INTEGER, TEXT):
            raise InputError(f"--categorical column {name!r} is {columns[name].type_name}; categories are whole "
                             "numbers or text")
    coded = set(categorical)
    numeric, categorical, left_out, names = [], [], [], []
    taken: set[str] = set()
    for name in chosen:
        column_kind = columns[name].kind
        why = _unusable_name(name)
        if why is None and column_kind not in NUMBER_KINDS + (TEXT,):
            why = f"{columns[name].type_name} is neither a number nor text"
        if why is not None:
            if features is not None:
                raise InputError(f"feature column {name!r} cannot be binned: {why}")
            left_out.append((name, why))
            continue
        (categorical if column_kind == TEXT or name in coded else numeric).append(name)
        # a spec compares feature names ignoring case, as SQL engines do: 'Age' after 'age' is named 'Age_2'
        feature, number = name, 2
        while feature.casefold() in taken:
            feature, number = f"{name}_{number}", number + 1
        taken.add(feature.casefold())
        if feature != name:
            names.append((name, feature))
    if not numeric and not categorical:
        raise InputError(f"table {table} has no column to bin besides the outcome, key and month; "
                         "check --features and --exclude")
    return ColumnPlan(columns[outcome], key, month_column, tuple(numeric), tuple(categorical), tuple(left_out),
                      tuple(names))


def _unusable_name(name: str) -> str | None:
    """Why a column name cannot name a spec feature or column (the spec's own name rules), or None."""
    if not name.strip():
        return "its name is empty"
    if name != name.strip():
        return "its name starts or ends with a space"
    if any(ord(ch) < 32 or ord(ch) == 127 for ch in name):
        return "its name holds a control character"
    if len(name.encode("utf-8")) > MAX_NAME_BYTES:
        return f"its name is longer than {MAX_NAME_BYTES} bytes"
    return None


def event_expression(outcome: Column) -> exp.Expression:
    """1 for an event, 0 otherwise (on rows :func:`check_rows` has passed: 0/1 or true/false)."""
    y = column(outcome.name)
    if outcome.kind == BOOLEAN:
        return case([(y, integer(1))], integer(0))
    return case([(exp.EQ(this=y, expression=integer(1)), integer(1))], integer(0))


def _count_if(condition: exp.Expression) -> exp.Expression:
    return exp.Sum(this=case([(condition, integer(1))], integer(0)))


def _is_null(x: exp.Expression) -> exp.Expression:
    return exp.Is(this=x, expression=exp.Null())


def facts_query(source: exp.Expression, plan: ColumnPlan) -> exp.Select:
    """One row: rows, events, non_events, unknown (NULL outcome), odd (any other value) with
    its lowest and highest as doubles; with a key its non-NULL count; with a month its NULL
    count, first and last value."""
    y = column(plan.outcome.name)
    if plan.outcome.kind == BOOLEAN:
        event, non_event = y.copy(), exp.Not(this=y.copy())
        odd = exp.false()
        odd_value: exp.Expression = exp.Null()
    else:
        event = exp.EQ(this=y.copy(), expression=integer(1))
        non_event = exp.EQ(this=y.copy(), expression=integer(0))
        odd = exp.and_(exp.Not(this=_is_null(y.copy())), exp.Not(this=exp.In(this=y.copy(), expressions=[
            integer(0), integer(1)])), copy=False)
        odd_value = case([(odd.copy(), exp.Cast(this=y.copy(), to=exp.DataType.build("DOUBLE")))], exp.Null())
    selected = [alias(exp.Count(this=exp.Star()), "rows"), alias(_count_if(event), "events"),
                alias(_count_if(non_event), "non_events"), alias(_count_if(_is_null(y.copy())), "unknown"),
                alias(_count_if(odd), "odd"), alias(exp.Min(this=odd_value), "odd_low"),
                alias(exp.Max(this=odd_value.copy()), "odd_high")]
    if plan.key is not None:
        k = column(plan.key)
        selected.append(alias(exp.Count(this=k.copy()), "keys"))
    if plan.month_column is not None:
        m = column(plan.month_column)
        selected += [alias(_count_if(_is_null(m.copy())), "no_month"), alias(exp.Min(this=m.copy()), "first_month"),
                     alias(exp.Max(this=m.copy()), "last_month")]
    return exp.select(*selected).from_(source.copy())


def repeated_keys_query(source: exp.Expression, key: str) -> exp.Select:
    """One row: how many rows repeat a key value, i.e. equal the previous non-NULL key in key
    order. Through a window over the sorted keys rather than COUNT(DISTINCT) or a GROUP BY:
    DuckDB's hash tables for 50M distinct keys asked for more than a 1GB memory limit allows
    (its sort spills to disk), and the sort took half the time."""
    k = column(key)
    previous = exp.Window(this=exp.Anonymous(this="LAG", expressions=[k.copy()]),
                          order=exp.Order(expressions=[exp.Ordered(this=k.copy())]))
    sorted_keys = (exp.select(alias(exp.EQ(this=k.copy(), expression=previous), "same")).from_(source.copy())
                   .where(exp.Not(this=_is_null(k.copy()))).subquery("sorted_keys"))
    return exp.select(alias(exp.Count(this=exp.Star()), "repeated")).from_(sorted_keys).where(column("same"))


def duplicate_query(source: exp.Expression, key: str) -> exp.Select:
    """The key value given most often (ties: the least value), and how often."""
    k = column(key)
    times = exp.Count(this=exp.Star())
    return (exp.select(alias(k.copy(), "value"), alias(times, "times")).from_(source.copy())
            .where(exp.Not(this=_is_null(k.copy()))).group_by(k.copy())
            .having(exp.GT(this=times.copy(), expression=integer(1)))
            .order_by(exp.Ordered(this=times.copy(), desc=True), exp.Ordered(this=k.copy()))
            .limit(1))


def check_rows(engine: Engine, source: exp.Expression, plan: ColumnPlan, table: str) -> RowFacts:
    """Counts the rows and checks outcome, key and month (see the module docstring); raises
    :class:`InputError` with one line for the first problem found."""
    row = engine.query(facts_query(source, plan), "checking the outcome, key and month columns")[0]
    rows = int(row["rows"])
    name = plan.outcome.name
    odd, unknown = int(row["odd"] or 0), int(row["unknown"] or 0)
    if rows == 0:
        raise InputError(f"table {table} has no rows")
    if odd or unknown:
        parts = []
        if odd:
            low, high = _number(row["odd_low"]), _number(row["odd_high"])
            shown = low if low == high else f"from {low} to {high}"
            parts.append(f"{odd:,} hold{'s' if odd == 1 else ''} other values ({shown})")
        if unknown:
            parts.append(f"{unknown:,} {'is' if unknown == 1 else 'are'} NULL")
        raise InputError(f"outcome column {name!r} must hold only 0 and 1: of {rows:,} rows {' and '.join(parts)}; "
                         "recode it to 0/1 or leave those rows out of the development table")
    events, non_events = int(row["events"] or 0), int(row["non_events"] or 0)
    if events == 0 or non_events == 0:
        raise InputError(f"outcome column {name!r} has {events:,} events and {non_events:,} non-events in {rows:,} "
                         "rows; WoE and a fit need both")
    if plan.key is not None:
        nulls = rows - int(row["keys"])
        if nulls:
            raise InputError(f"key column {plan.key!r} is NULL on {nulls:,} of {rows:,} rows; every row needs a key")
        repeated = int(engine.query(repeated_keys_query(source, plan.key), "counting the repeated keys")[0]["repeated"])
        if repeated:
            example = engine.query(duplicate_query(source, plan.key), "finding a duplicated key")[0]
            raise InputError(f"key column {plan.key!r} is not unique: {repeated:,} of {rows:,} rows repeat a key "
                             f"(e.g. {example['value']!r} on {int(example['times'])} rows); give a unique key or none")
    months = None
    if plan.month_column is not None:
        if int(row["no_month"] or 0):
            raise InputError(f"month column {plan.month_column!r} is NULL on {int(row['no_month']):,} of {rows:,} "
                             "rows; every development row needs its month")
        months = (_month(row["first_month"]), _month(row["last_month"]))
    return RowFacts(rows, events, months)


def _number(value) -> str:
    value = float(value)
    return str(int(value)) if value.is_integer() else repr(value)


def _month(value) -> str:
    if isinstance(value, (date, datetime)):
        return f"{value.year:04d}-{value.month:02d}"
    return str(value)
