"""How wide one query of `bin` and `fit` may be, and a list of columns cut into queries within it.

PostgreSQL refuses a SELECT of more than 1,664 columns ("target lists can have at most 1664
entries") and a table of more than 1,600. A pass that sums something for every characteristic
(or, in a fit, for every pair of them) is therefore cut into several queries over the same rows
whenever one would be wider than :data:`MAX_COLUMNS`; each sum is the same expression in
whichever query holds it, so the results are those of one wide query. The cut is the same on
every engine: DuckDB and Spark set no hard limit, but a plan of thousands of aggregates is slow
to analyse on Spark, and one rule keeps the engines' queries alike.
"""
from __future__ import annotations

import math
from typing import Callable, Sequence, TypeVar

from sqlglot import exp

# the widest table PostgreSQL holds (its SELECTs may list 1,664): a query this wide can still
# carry every column of any PostgreSQL table, and stays 64 below the SELECT limit
MAX_COLUMNS = 1600

T = TypeVar("T")


def widest(tree: exp.Expression) -> int:
    """The most columns any SELECT in ``tree`` lists (a ``*`` counts as one)."""
    return max((len(select.expressions) for select in tree.find_all(exp.Select)), default=0)


def runs(items: Sequence[T], size: int) -> list[Sequence[T]]:
    """``items`` in order, in runs of at most ``size`` (none when there are no items)."""
    return [items[start:start + size] for start in range(0, len(items), max(1, size))]


def cut(items: Sequence[T], build: Callable[[Sequence[T]], exp.Expression]) -> list[tuple[Sequence[T], exp.Expression]]:
    """``items`` in order, cut into runs whose query ``build(run)`` keeps every SELECT within
    :data:`MAX_COLUMNS`; each run with its query (one run, the whole list, when it fits).

    A run too wide is cut into about as many even runs as it is times too wide, again until
    each fits. Raises ``ValueError`` (a bug: the caller must bound what one item needs) when
    one item alone is too wide.
    """
    tree = build(items)
    width = widest(tree)
    if width <= MAX_COLUMNS:
        return [(items, tree)]
    if len(items) <= 1:
        raise ValueError(f"one item needs a SELECT of {width} columns, more than {MAX_COLUMNS}")
    parts = min(len(items), max(2, math.ceil(width / MAX_COLUMNS)))
    size = math.ceil(len(items) / parts)
    return [found for run in runs(items, size) for found in cut(run, build)]
