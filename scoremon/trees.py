"""Building sqlglot nodes safely: the small builders every tree-making module shares.

Owns the one way each kind of node is made, so that the compiler, monitoring, the diff's impact
query and the benchmark build the same SQL for the same idea. Names only ever become quoted
identifiers (:func:`identifier`) and values only literals (:func:`number`, :func:`integer`,
:func:`text`): no text from a spec or a table reaches SQL as code, and nothing here parses SQL.

>>> from scoremon.dialects import render_sql
>>> render_sql(case([(exp.GT(this=column("age"), expression=number(30)), text("older"))], text("younger")), "duckdb", pretty=False)
'CASE WHEN "age" > CAST(30.0 AS DOUBLE) THEN \\'older\\' ELSE \\'younger\\' END'
"""
from __future__ import annotations

from typing import Iterable, Sequence

from sqlglot import exp

from .errors import InputError

INTERNAL = "__scoremon_"  # prefix of the names scoremon gives its own steps, scratch tables and columns


def identifier(name: str) -> exp.Identifier:
    """``name`` as a quoted identifier: quoting and escaping are right for every dialect."""
    return exp.to_identifier(name, quoted=True)


def column(name: str, table: str | None = None) -> exp.Column:
    return exp.Column(this=identifier(name), table=identifier(table) if table else None)


def table_path(parts: Sequence[str]) -> exp.Table:
    """``["schema", "table"]`` or ``["table"]`` as a table node with quoted names."""
    if not 1 <= len(parts) <= 2:
        raise InputError(f"table name {'.'.join(parts)!r} is not 'table' or 'schema.table'")
    return exp.Table(this=identifier(parts[-1]), db=identifier(parts[0]) if len(parts) == 2 else None)


def number(value: float) -> exp.Expression:
    """A double literal: ``CAST(<repr> AS DOUBLE)``. A bare ``0.1`` is DECIMAL on DuckDB and Spark,
    and sums of DECIMALs would not give the same bits as double arithmetic."""
    spelled = repr(float(value))
    literal = exp.Literal.number(spelled.lstrip("-"))
    if spelled.startswith("-"):
        literal = exp.Neg(this=literal)
    return exp.Cast(this=literal, to=exp.DataType.build("DOUBLE"))


def double_constant(name: str) -> exp.Expression:
    """``CAST('NaN' AS DOUBLE)`` and friends."""
    return exp.Cast(this=exp.Literal.string(name), to=exp.DataType.build("DOUBLE"))


def as_double(expression: exp.Expression) -> exp.Expression:
    """``CAST(expression AS DOUBLE)``."""
    return exp.Cast(this=expression, to=exp.DataType.build("DOUBLE"))


def integer(value: int) -> exp.Literal:
    return exp.Literal.number(str(int(value)))


def text(value: str) -> exp.Literal:
    return exp.Literal.string(value)


def category_literal(value) -> exp.Expression:
    """A category as the spec lists it: a whole number or a text."""
    return integer(value) if isinstance(value, int) else text(value)


def alias(expression: exp.Expression, name: str) -> exp.Alias:
    """``expression AS "name"``."""
    return exp.alias_(expression, name, quoted=True)


def case(branches: Iterable[tuple[exp.Expression, exp.Expression]], default: exp.Expression | None = None) -> exp.Expression:
    """``CASE WHEN c1 THEN v1 … ELSE default END``; just ``default`` when there is no branch
    (``CASE ELSE x END`` is a syntax error, e.g. for a single grade)."""
    ifs = [exp.If(this=cond, true=value) for cond, value in branches]
    if not ifs and default is not None:
        return default
    return exp.Case(ifs=ifs, default=default)


def by_bin(bin_column: exp.Expression, values: Sequence[exp.Expression]) -> exp.Case:
    """``CASE bin WHEN 0 THEN v0 WHEN 1 THEN v1 … END`` as a searched CASE (portable everywhere)."""
    return case(((exp.EQ(this=bin_column.copy(), expression=integer(i)), v) for i, v in enumerate(values[:-1])), values[-1])


SUM_RUN = 64  # terms a sum adds in one left-to-right run


def total(terms: Sequence[exp.Expression]) -> exp.Expression:
    """a + b + c, evaluated left to right (the order fixes the floating-point result).

    A sum of more than :data:`SUM_RUN` terms adds runs of that many left to right, then the
    runs' totals pairwise, as a balanced tree. A left-to-right chain is as deep as it is long,
    and engines cap expression depth (DuckDB at 1000 by default): with runs the depth is
    :data:`SUM_RUN` + log2 of the number of runs, about 70 for 1,200 features. Up to
    :data:`SUM_RUN` terms, the order (and so the result, to the last bit) is the plain one.
    """
    runs = [_chain(terms[start:start + SUM_RUN]) for start in range(0, len(terms), SUM_RUN)]
    while len(runs) > 1:
        # parentheses on both sides: without them `(a + b) + (c + d)` renders as a + b + c + d,
        # which every engine parses back into one long chain
        paired = [exp.Add(this=exp.paren(a, copy=False), expression=exp.paren(b, copy=False))
                  for a, b in zip(runs[0::2], runs[1::2])]
        runs = paired + ([runs[-1]] if len(runs) % 2 else [])
    return runs[0]


def _chain(terms: Sequence[exp.Expression]) -> exp.Expression:
    result = terms[0]
    for term in terms[1:]:
        result = exp.Add(this=result, expression=term)
    return result


def window(function: exp.Expression, order: str | None = None, partition: str | None = None) -> exp.Window:
    """``function OVER (PARTITION BY partition ORDER BY order)``, either part optional."""
    return exp.Window(this=function,
                      partition_by=[column(partition)] if partition else None,
                      order=exp.Order(expressions=[exp.Ordered(this=column(order))]) if order else None)
