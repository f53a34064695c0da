"""The edge-value deck: rows built from a spec to hit every place where engines could differ.

For each input column it lists the values worth trying, then lays them out in rows so that every
value appears (and, through different cycle lengths, in many combinations):

* numeric (DOUBLE): every finite cut point and its neighbours one ulp below and above
  (``math.nextafter``), NULL, NaN, ±inf, ±0, the largest and smallest doubles;
* numeric (BIGINT): every cut point's whole neighbours (⌊edge⌋ − 1 … ⌈edge⌉ + 1, exactly, with
  no float in between), NULL, very large values;
* numeric (DECIMAL(18,6)): every cut point and its neighbours one step (0.000001) below and
  above, NULL, zero and the type's extremes;
* categorical text: every listed value, look-alikes (case, leading and trailing spaces), an
  unseen value, the empty string, NULL;
* categorical whole numbers: every listed value, unseen values, NULL;
* linear: the bounds and the centre with their neighbours, NULL, NaN, ±inf, huge and tiny values.
"""
from __future__ import annotations

import math
from decimal import Decimal
from fractions import Fraction
from typing import Any

from scoremon.spec.model import CategoricalFeature, LinearFeature, NumericFeature, Spec

KEY = 'Row "ID"'
EXTREMES = [None, math.nan, math.inf, -math.inf, 0.0, -0.0, 1.7976931348623157e308, -1.7976931348623157e308,
            5e-324, -5e-324, 2.2250738585072014e-308]


def _around(value: float) -> list[float]:
    return [math.nextafter(value, -math.inf), value, math.nextafter(value, math.inf)]


def numeric_values(edges: list[float]) -> list[float | None]:
    values: list[Any] = list(EXTREMES)
    for edge in edges:
        values += _around(edge)
    return values


def whole_values(edges: list[float]) -> list[int | None]:
    values: list[Any] = [None, 0, 2**62, -(2**62), 2**63 - 1, -(2**63)]
    for edge in edges:
        exact = Fraction(edge)  # the double's exact value; these edges are whole or halves
        values += list(range(math.floor(exact) - 1, math.ceil(exact) + 2))
    return values


DECIMAL_STEP = Decimal("0.000001")
DECIMAL_LARGEST = Decimal("999999999999.999999")  # DECIMAL(18,6)


def decimal_values(edges: list[float]) -> list[Decimal | None]:
    values: list[Any] = [None, Decimal(0), DECIMAL_LARGEST, -DECIMAL_LARGEST]
    for edge in edges:
        exact = Decimal(repr(edge))  # the edge as the spec writes it
        values += [exact - DECIMAL_STEP, exact, exact + DECIMAL_STEP]
    return values


def text_values(listed: list[str]) -> list[str | None]:
    values: list[Any] = [None, "", "never seen", "N1\t"]
    for value in listed:
        values += [value, value.upper(), value.lower(), value + " ", " " + value, value.casefold()]
    return list(dict.fromkeys(values))  # one of each, in order


def code_values(listed: list[int]) -> list[int | None]:
    return [None, -1, 0, 999, 2**40] + listed


def column_of(feature) -> str:
    return feature.column or feature.name


def deck_columns(spec: Spec, whole_number_columns: set[str], decimal_columns: set[str]) -> list[tuple[str, str, list]]:
    """(column, kind, values to try) for every input column of ``spec``."""
    columns = []
    for feature in spec.features:
        name = column_of(feature)
        if isinstance(feature, CategoricalFeature):
            listed = [v for g in feature.groups for v in g.values] + list(feature.other.values)
            if all(isinstance(v, int) for v in listed):
                columns.append((name, "BIGINT", code_values(listed)))
            else:
                columns.append((name, "VARCHAR", text_values([str(v) for v in listed])))
        elif isinstance(feature, LinearFeature):
            values = numeric_values([feature.lower, feature.upper, feature.center])
            columns.append((name, "DOUBLE", values))
        elif isinstance(feature, NumericFeature):
            edges = sorted({edge for b in feature.bins for edge in (b.lower, b.upper) if math.isfinite(edge)})
            if name in whole_number_columns:
                columns.append((name, "BIGINT", whole_values(edges)))
            elif name in decimal_columns:
                columns.append((name, "DECIMAL(18,6)", decimal_values(edges)))
            else:
                columns.append((name, "DOUBLE", numeric_values(edges)))
    return columns


def build_deck(spec: Spec, whole_number_columns: set[str] = frozenset(),
               decimal_columns: set[str] = frozenset()) -> tuple[list[tuple[str, str]], list[tuple]]:
    """(columns as (name, kind), rows): the key first, then each input column."""
    columns = deck_columns(spec, set(whole_number_columns), set(decimal_columns))
    longest = max(len(values) for _, _, values in columns)
    rows = []
    for i in range(2 * longest):
        if i < longest:  # every value of every column appears at least once
            picks = [values[i % len(values)] for _, _, values in columns]
        else:  # then columns step at different rates, so values meet in other combinations
            picks = [values[(i * (c + 2) + c) % len(values)] for c, (_, _, values) in enumerate(columns)]
        rows.append((i, *picks))
    return [(KEY, "BIGINT")] + [(name, kind) for name, kind, _ in columns], rows
