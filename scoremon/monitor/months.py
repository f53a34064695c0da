"""Months: what the month column holds, month labels, the calendar, and when a month is mature.

A month column is a DATE or TIMESTAMP (any day of the month; the query truncates it to the
first day), text ``YYYY-MM``, or a whole number ``YYYYMM``. Every month is written
``YYYY-MM`` in results, history and JSON.

Months out of range: a month is *in range* when it is one of the :data:`MONTHS_IN_RANGE`
months ending with the as-of month (``monitor``: ``--as-of``; ``baseline``: the day it runs).
Rows of earlier months are counted as out of range and left out; rows of later months have
not happened yet and are left out too. So a stray date (1900-01-01, a default 0001-01-01)
never becomes hundreds of empty months, and no month list is ever longer than the range.
``baseline`` and ``monitor`` sort month values with the same function, :func:`sort_months`,
after reading each with :func:`month_of`.

Maturity: a month's outcomes are complete when every row in it has had the whole performance
window by the as-of date, i.e. when the last day of (month + window) is on or before the as-of
date. With a 12-month window and as-of 2026-11-30, 2025-11 is mature and 2025-12 is not.
"""
from __future__ import annotations

import calendar as _calendar
import re
from dataclasses import dataclass
from datetime import date, datetime

from ..errors import InputError, cut

MONTH_TEXT = re.compile(r"^(\d{4})-(\d{2})$")
# Ten years: longer than any performance window and any monitoring history a model owner reads
# month by month, short enough that a month list stays a readable page.
MONTHS_IN_RANGE = 120


@dataclass(frozen=True, order=True)
class Month:
    """A calendar month."""

    year: int
    number: int

    def __post_init__(self):
        if not 1 <= self.number <= 12 or not 1 <= self.year <= 9999:
            raise InputError(f"{self.year:04d}-{self.number:02d} is not a month")

    @property
    def label(self) -> str:
        return f"{self.year:04d}-{self.number:02d}"

    def __str__(self) -> str:
        return self.label

    def plus(self, months: int) -> "Month":
        index = self.year * 12 + (self.number - 1) + months
        return Month(index // 12, index % 12 + 1)

    def minus(self, other: "Month") -> int:
        """Months from ``other`` to this month."""
        return (self.year - other.year) * 12 + (self.number - other.number)

    @property
    def first_day(self) -> date:
        return date(self.year, self.number, 1)

    @property
    def last_day(self) -> date:
        return date(self.year, self.number, _calendar.monthrange(self.year, self.number)[1])


def parse_month(text: str, what: str = "month") -> Month:
    """``"2025-04"`` → :class:`Month`; raises :class:`InputError` naming ``what`` otherwise."""
    match = MONTH_TEXT.match(text.strip())
    if not match:
        raise InputError(f"{what} {cut(repr(text))} is not a month; write it as YYYY-MM, e.g. 2025-04")
    year, number = int(match.group(1)), int(match.group(2))
    if not 1 <= number <= 12:
        raise InputError(f"{what} {cut(repr(text))} has month {number}; months run from 01 to 12")
    return Month(year, number)


def month_of(value, column: str) -> Month:
    """The :class:`Month` of one value the month column query returned.

    Raises :class:`InputError` for a value that is not a month (text that is not ``YYYY-MM``,
    a number that is not ``YYYYMM``).
    """
    if isinstance(value, datetime):
        return Month(value.year, value.month)
    if isinstance(value, date):
        return Month(value.year, value.month)
    if isinstance(value, str):
        return parse_month(value, f"month column {column!r} holds")
    if isinstance(value, int) and not isinstance(value, bool):
        year, number = divmod(value, 100)
        if 1 <= number <= 12 and 1000 <= year <= 9999:
            return Month(year, number)
        raise InputError(f"month column {column!r} holds {value}, which is not a month written YYYYMM")
    raise InputError(f"month column {column!r} holds {cut(repr(value))}; give a DATE column, text YYYY-MM or "
                     "YYYYMM numbers")


def is_mature(month: Month, window_months: int, as_of: date) -> bool:
    """True when every row of ``month`` has had its whole performance window by ``as_of``."""
    return month.plus(window_months).last_day <= as_of


def calendar_between(first: Month, last: Month) -> list[Month]:
    """Every month from ``first`` to ``last``, both included (at most :data:`MONTHS_IN_RANGE`)."""
    if last.minus(first) >= MONTHS_IN_RANGE:
        raise ValueError(f"{first} to {last} is longer than {MONTHS_IN_RANGE} months")  # sort_months keeps it shorter
    return [first.plus(k) for k in range(last.minus(first) + 1)]


def range_ending(as_of: date) -> tuple[Month, Month]:
    """The first and last month in range for ``as_of`` (see the module docstring)."""
    last = Month(as_of.year, as_of.month)
    return last.plus(1 - MONTHS_IN_RANGE), last


@dataclass(frozen=True)
class SortedMonths:
    """Rows of a month pass sorted by the rule: in range (one row per month), earlier, later."""

    kept: dict  # Month → the pass's row for it, in range
    rows_out_of_range: int  # rows of months before the range
    rows_later: int  # rows of months after the as-of month
    rows_without_month: int
    earliest: Month | None  # the earliest month out of range, for the note

    def notes(self, as_of: date) -> list[str]:
        """What was left out, in words."""
        notes = []
        if self.rows_without_month:
            notes.append(f"{self.rows_without_month:,} rows have no month and are left out")
        if self.rows_later:
            notes.append(f"{self.rows_later:,} rows are in months after the as-of date {as_of} and are left out")
        if self.rows_out_of_range:
            notes.append(out_of_range_note(self.rows_out_of_range, as_of, self.earliest))
        return notes


def out_of_range_note(rows: int, as_of: date, earliest: Month | None = None) -> str:
    """How many rows were left out as out of range, and what the range is, in words."""
    first, _ = range_ending(as_of)
    counted = "1 row" if rows == 1 else f"{rows:,} rows"
    since = f"; the earliest in {earliest}" if earliest else ""
    return (f"{counted} out of range: in months before {first}, more than {MONTHS_IN_RANGE} months before the "
            f"as-of month{since}; left out")


def sort_months(rows, column: str, as_of: date) -> SortedMonths:
    """Sort the rows of a month pass (each with its month ``value`` and its ``rows``; see
    :class:`~scoremon.monitor.passes.MonthSums`) by the rule.

    Raises :class:`InputError` for a value that is not a month (:func:`month_of`) and for two
    values of one month.
    """
    first, last = range_ending(as_of)
    kept: dict[Month, object] = {}
    out_of_range = later = without = 0
    earliest = None
    for row in rows:
        count = row.rows
        if row.value is None:
            without += count
            continue
        month = month_of(row.value, column)
        if month > last:
            later += count
        elif month < first:
            out_of_range += count
            earliest = month if earliest is None else min(earliest, month)
        elif month in kept:
            raise InputError(f"month column {column!r} holds several values for {month} "
                             f"({cut(repr(kept[month].value))}, {cut(repr(row.value))}); give one value per month")
        else:
            kept[month] = row
    return SortedMonths(kept, out_of_range, later, without, earliest)
