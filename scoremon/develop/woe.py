"""Weight of evidence (WoE) and information value (IV): the arithmetic `bin` and `fit` share.

For a bin j of a characteristic, with E the events and N the non-events of the whole sample:

    WoE_j = ln( (n_j / N) / (e_j / E) )          (a higher WoE is a lower risk)
    IV_j  = (n_j / N − e_j / E) · WoE_j          (never negative)
    IV    = Σ_j IV_j

Two rules for counts the formula cannot take, stated once here and in the README:

* a bin with rows but zero events or zero non-events: 0.5 is added to both of its counts
  (the totals E and N stay as they are) before its shares are taken, for WoE and IV alike, so
  its IV term stays non-negative and finite (common practice);
* a bin with no rows at all (an empty catch-all, or no missing values): WoE 0 (the sample's
  own odds, no evidence either way) and IV 0.

A sample with no events or no non-events has no WoE at all: :func:`bin_evidence` raises
:class:`~scoremon.errors.InputError` (the outcome checks refuse such a table before any work).

>>> round(bin_evidence(rows=100, events=10, total_rows=1000, total_events=50).woe, 6)
-0.747214
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Sequence

from ..errors import InputError

ZERO_COUNT_ADDITION = 0.5


@dataclass(frozen=True)
class Evidence:
    """One bin's WoE and its term of the IV."""

    woe: float
    iv: float


def bin_evidence(rows: int, events: int, total_rows: int, total_events: int) -> Evidence:
    """WoE and IV term of a bin holding ``rows`` rows of which ``events`` are events.

    ``total_rows`` and ``total_events`` are the whole sample's. Raises :class:`InputError`
    when the sample has no events or no non-events.
    """
    total_non_events = total_rows - total_events
    if total_events <= 0 or total_non_events <= 0:
        raise InputError(f"the sample has {total_events} events and {total_non_events} non-events; WoE needs "
                         "both (check the outcome column)")
    if rows < 0 or events < 0 or events > rows:
        raise ValueError(f"a bin cannot hold {events} events in {rows} rows")
    if rows == 0:
        return Evidence(0.0, 0.0)
    bad, good = float(events), float(rows - events)
    if bad == 0 or good == 0:
        bad, good = bad + ZERO_COUNT_ADDITION, good + ZERO_COUNT_ADDITION
    good_share, bad_share = good / total_non_events, bad / total_events
    woe = math.log(good_share / bad_share)
    return Evidence(woe, (good_share - bad_share) * woe)


def evidence_of_bins(rows: Sequence[int], events: Sequence[int], total_rows: int, total_events: int) -> list[Evidence]:
    """:func:`bin_evidence` for each bin, in order."""
    return [bin_evidence(r, e, total_rows, total_events) for r, e in zip(rows, events, strict=True)]


def information_value(rows: Sequence[int], events: Sequence[int], total_rows: int, total_events: int) -> float:
    """IV of a characteristic whose bins hold ``rows`` and ``events`` (all its bins, missing too)."""
    return math.fsum(e.iv for e in evidence_of_bins(rows, events, total_rows, total_events))


def event_rate(rows: int, events: int) -> float | None:
    """events / rows, or None for an empty bin."""
    return events / rows if rows else None
