"""Months: what the month column holds, month labels, the calendar, and when a month is mature.

A month column is a DATE or TIMESTAMP (any day of the month; the query truncates it to the
first day), text ``YYYY-MM``, or a whole number ``YYYYMM``. Every month is written
``YYYY-MM`` in results, history and JSON.

Maturity: a month's outcomes are complete when every row in it has had the whole performance
window by the as-of date, i.e. when the last day of (month + window) is on or before the as-of
date. With a 12-month window and as-of 2026-11-30, 2025-11 is mature and 2025-12 is not.
"""
from __future__ import annotations

import calendar as _calendar
import re
from dataclasses import dataclass
from datetime import date, datetime

from ..errors import InputError

MONTH_TEXT = re.compile(r"^(\d{4})-(\d{2})$")


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
        raise InputError(f"{what} {text!r} is not a month; write it as YYYY-MM, e.g. 2025-04")
    year, number = int(match.group(1)), int(match.group(2))
    if not 1 <= number <= 12:
        raise InputError(f"{what} {text!r} has month {number}; months run from 01 to 12")
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
    raise InputError(f"month column {column!r} holds {value!r}; give a DATE column, text YYYY-MM or YYYYMM numbers")


def is_mature(month: Month, window_months: int, as_of: date) -> bool:
    """True when every row of ``month`` has had its whole performance window by ``as_of``."""
    return month.plus(window_months).last_day <= as_of


def calendar_between(first: Month, last: Month) -> list[Month]:
    """Every month from ``first`` to ``last``, both included."""
    return [first.plus(k) for k in range(last.minus(first) + 1)]
