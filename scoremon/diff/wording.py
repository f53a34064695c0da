"""Plain-words formatting shared by the diff's change records: numbers, signed deltas,
value lists. Kept apart so every record words a number the same way."""
from __future__ import annotations

import math

# Two values closer than this (relative to their size, at least 1) are the same value: a
# restatement such as woe × coefficient vs. log_odds can differ in the last bits.
TOLERANCE = 1e-9


def same(a: float | None, b: float | None) -> bool:
    if a is None or b is None:
        return a is b
    if math.isinf(a) or math.isinf(b):
        return a == b
    return abs(a - b) <= TOLERANCE * max(1.0, abs(a), abs(b))


def number(value: float | None, digits: int = 2) -> str:
    """A number for people: whole numbers without decimals, others to ``digits`` places."""
    if value is None:
        return "none"
    if math.isinf(value):
        return "inf" if value > 0 else "-inf"
    if float(value).is_integer():
        return f"{value + 0.0:.0f}"  # + 0.0 turns −0 into 0
    text = f"{value:.{digits}f}".rstrip("0").rstrip(".")
    if text in ("0", "-0"):  # smaller than the digits shown: keep its first digits
        return f"{value:.{digits}g}"
    return text


def signed(value: float, digits: int = 2) -> str:
    text = number(value, digits)
    return text if text.startswith("-") else f"+{text}"


def values_list(values, limit: int = 6) -> str:
    """``'A', 'B', 3`` (and how many more when the list is long)."""
    shown = [repr(v) for v in list(values)[:limit]]
    more = len(values) - limit
    return ", ".join(shown) + (f" and {more} more" if more > 0 else "")


def points_move(old_points: float, new_points: float, old_log_odds: float, new_log_odds: float) -> str:
    """``points 2.89 → 5.77 (+2.89); log-odds -0.1000 → -0.2000``."""
    return (f"points {number(old_points)} → {number(new_points)} ({signed(new_points - old_points)}); "
            f"log-odds {number(old_log_odds, 4)} → {number(new_log_odds, 4)}")
