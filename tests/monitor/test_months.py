"""Months: reading the month column's values and the maturity rule."""
from __future__ import annotations

from datetime import date, datetime

import pytest

from scoremon.errors import InputError
from scoremon.monitor.months import Month, calendar_between, is_mature, month_of, parse_month


@pytest.mark.parametrize("value, expected", [
    (date(2024, 5, 17), Month(2024, 5)),
    (datetime(2024, 5, 1, 13, 0), Month(2024, 5)),
    ("2024-05", Month(2024, 5)),
    (202405, Month(2024, 5)),
])
def test_month_values(value, expected):
    assert month_of(value, "m") == expected


@pytest.mark.parametrize("value, message", [
    ("2024-5", "is not a month; write it as YYYY-MM"),
    ("2024-13", "has month 13"),
    (202413, "not a month written YYYYMM"),
    (1.5, "give a DATE column"),
])
def test_values_that_are_not_months(value, message):
    with pytest.raises(InputError, match=message):
        month_of(value, "m")


def test_maturity_needs_the_whole_window_by_the_as_of_date():
    # a month is mature when the last day of month + window is on or before the as-of date
    assert is_mature(Month(2025, 11), 12, date(2026, 11, 30))
    assert not is_mature(Month(2025, 11), 12, date(2026, 11, 29))
    assert not is_mature(Month(2025, 12), 12, date(2026, 11, 30))
    assert is_mature(Month(2024, 2), 1, date(2024, 3, 31))


def test_calendar_and_arithmetic():
    assert [m.label for m in calendar_between(Month(2024, 11), Month(2025, 2))] == \
        ["2024-11", "2024-12", "2025-01", "2025-02"]
    assert Month(2024, 12).plus(1) == Month(2025, 1)
    assert Month(2025, 1).last_day == date(2025, 1, 31) and Month(2024, 2).last_day == date(2024, 2, 29)
    assert parse_month("2025-04") == Month(2025, 4)
