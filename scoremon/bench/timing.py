"""Side-by-side timing: two pieces of work measured in turns, in one run, on one machine.

A shared or busy machine makes absolute times wander by a factor of two within a minute, so
the benchmark never reports a time alone. Both sides run once untimed (to warm DuckDB's cache
and the page cache), then in rounds, alternating which goes first so that a slow spell hits
both; the ratio is the median of the per-round ratios, which cancels most of the drift.
"""
from __future__ import annotations

import statistics
import time
from dataclasses import dataclass
from typing import Callable


@dataclass(frozen=True)
class PairTiming:
    """Seconds per round of each side, and their ratio (first ÷ second, median of rounds)."""

    first: tuple[float, ...]
    second: tuple[float, ...]

    @property
    def first_seconds(self) -> float:
        return statistics.median(self.first)

    @property
    def second_seconds(self) -> float:
        return statistics.median(self.second)

    @property
    def ratio(self) -> float:
        return statistics.median(a / b for a, b in zip(self.first, self.second))


def seconds(work: Callable[[], object]) -> float:
    started = time.perf_counter()
    work()
    return time.perf_counter() - started


def time_pair(first: Callable[[], object], second: Callable[[], object], repeat: int, warm: bool = True,
              second_leads: bool = False) -> PairTiming:
    """Time ``first`` and ``second`` ``repeat`` times each, in alternating order.

    ``second_leads``: ``second`` runs first in the first round (and every other round after it),
    for work that needs what ``second`` made; without ``warm`` it also pays the cold start."""
    if warm:
        for work in ((second, first) if second_leads else (first, second)):
            work()
    a, b = [], []
    for round_ in range(repeat):
        if (round_ % 2 == 0) != second_leads:
            a.append(seconds(first))
            b.append(seconds(second))
        else:
            b.append(seconds(second))
            a.append(seconds(first))
    return PairTiming(tuple(a), tuple(b))
