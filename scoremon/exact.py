"""Exact comparisons of a fixed-point column (whole numbers, DECIMAL) with a bin edge.

A comparison ``x < edge`` between a BIGINT or DECIMAL column and a DOUBLE edge converts ``x``
to DOUBLE first on every engine; above 2**53 (or with 16 or more significant digits) that
conversion rounds, and a value just past an edge lands in the bin below it. So a column whose
type is exact is compared with a literal of its own kind, worked out here with Python's
:class:`~decimal.Decimal` (never through a float):

* the edge's exact value is the shortest decimal that reads back as its double (``repr``),
  which is the edge as the spec writes it (:mod:`scoremon.spec.checks` refuses an edge written
  with more digits than a double holds);
* on a column with ``scale`` digits after the point every value is a multiple of
  10^−scale, so ``x < e`` is ``x < ⌈e⌉`` and ``x <= e`` is ``x <= ⌊e⌋`` with the edge
  rounded to that step (``x < 540.5`` on a whole-number column is ``x < 541``; ``x <= 540.5``
  is ``x <= 540``): the literal then fits the column's own type;
* an edge beyond every value the type holds makes the comparison always true or always false.

This module is pure arithmetic: the compiler turns its answers into a tree.
"""
from __future__ import annotations

import re
from dataclasses import dataclass
from typing import TYPE_CHECKING, Mapping

if TYPE_CHECKING:  # only a type: this module is arithmetic and imports no engine code
    from .engines.protocol import Column
from decimal import ROUND_CEILING, ROUND_FLOOR, Decimal, localcontext

# Whole-number types by the engines' spellings (DuckDB, PostgreSQL, Spark): the smallest and
# largest value each holds.
_WHOLE_RANGES = {
    "TINYINT": (-(2 ** 7), 2 ** 7 - 1), "INT1": (-(2 ** 7), 2 ** 7 - 1),
    "SMALLINT": (-(2 ** 15), 2 ** 15 - 1), "INT2": (-(2 ** 15), 2 ** 15 - 1),
    "INTEGER": (-(2 ** 31), 2 ** 31 - 1), "INT": (-(2 ** 31), 2 ** 31 - 1), "INT4": (-(2 ** 31), 2 ** 31 - 1),
    "BIGINT": (-(2 ** 63), 2 ** 63 - 1), "INT8": (-(2 ** 63), 2 ** 63 - 1), "LONG": (-(2 ** 63), 2 ** 63 - 1),
    "HUGEINT": (-(2 ** 127), 2 ** 127 - 1),
    "UTINYINT": (0, 2 ** 8 - 1), "USMALLINT": (0, 2 ** 16 - 1), "UINTEGER": (0, 2 ** 32 - 1),
    "UBIGINT": (0, 2 ** 64 - 1), "UHUGEINT": (0, 2 ** 128 - 1),
}
_DECIMAL = re.compile(r"^(?:DECIMAL|NUMERIC)\s*(?:\(\s*(\d+)\s*(?:,\s*(\d+)\s*)?\))?$", re.I)


@dataclass(frozen=True)
class FixedPoint:
    """An exact number type: values are multiples of 10^−``scale`` between ``low`` and ``high``.

    ``scale`` None (with no bounds) is PostgreSQL's unconstrained NUMERIC, which holds any
    decimal exactly.
    """

    scale: int | None
    low: Decimal | None
    high: Decimal | None


def fixed_point(type_name: str) -> FixedPoint | None:
    """The :class:`FixedPoint` of an engine's type name, or None for any other type.

    >>> fixed_point("DECIMAL(18,6)").scale, fixed_point("BIGINT").high
    (6, Decimal('9223372036854775807'))
    >>> fixed_point("DOUBLE") is None
    True
    """
    name = type_name.strip().upper()
    if name in _WHOLE_RANGES:
        low, high = _WHOLE_RANGES[name]
        return FixedPoint(0, Decimal(low), Decimal(high))
    found = _DECIMAL.match(name)
    if found is None:
        return None
    if found.group(1) is None:
        # unconstrained NUMERIC (PostgreSQL); DuckDB and Spark always spell out (p, s)
        return FixedPoint(None, None, None)
    precision, scale = int(found.group(1)), int(found.group(2) or 0)
    largest = Decimal(10) ** (precision - scale) - Decimal(1).scaleb(-scale)
    return FixedPoint(scale, -largest, largest)


def exact_columns(columns: Mapping[str, Column]) -> dict[str, FixedPoint]:
    """The whole-number and DECIMAL columns among described ``columns``, by the engine's type name."""
    found = {name: fixed_point(c.type_name) for name, c in columns.items() if c.is_number}
    return {name: kind for name, kind in found.items() if kind is not None}


def edge_value(edge: float) -> Decimal:
    """The exact decimal a finite edge stands for: the shortest text that reads back as it."""
    return Decimal(repr(float(edge)))


def exact_test(edge: float, closed: str, kind: FixedPoint) -> tuple[bool, Decimal] | bool:
    """How ``x`` of type ``kind`` is tested against the upper ``edge`` of a bin.

    The bin test is "x is in this bin or a lower one": ``x < edge`` when bins are closed on
    their ``lower`` side, ``x <= edge`` when on their ``upper`` side. Returns ``(inclusive,
    literal)`` for ``x <= literal`` (inclusive) or ``x < literal``, or a plain bool when the
    answer is the same for every value of the type.

    >>> exact_test(540.5, "lower", fixed_point("BIGINT"))
    (False, Decimal('541'))
    >>> exact_test(540.5, "upper", fixed_point("BIGINT"))
    (True, Decimal('540'))
    >>> exact_test(1e300, "lower", fixed_point("BIGINT"))
    True
    """
    value = edge_value(edge)
    inclusive = closed == "upper"
    if kind.scale is not None:
        step = Decimal(1).scaleb(-kind.scale)
        if value.adjusted() < 60:  # larger edges are past every bound below anyway
            with localcontext() as context:
                context.prec = 200  # room for 60 whole digits and any scale the engines allow (38)
                value = value.quantize(step, rounding=ROUND_FLOOR if inclusive else ROUND_CEILING)
        if kind.high is not None and (value >= kind.high if inclusive else value > kind.high):
            return True
        if kind.low is not None and (value < kind.low if inclusive else value <= kind.low):
            return False
    return inclusive, value


def literal_text(value: Decimal) -> str:
    """A decimal as plain positional text without a sign or exponent (``1E+3`` → ``1000``)."""
    return format(abs(value), "f")
