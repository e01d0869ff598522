"""Due-date arithmetic, checked against hand-worked cases and an independent calendar calculation."""
import calendar
from datetime import date, timedelta

import pytest
from dateutil.relativedelta import relativedelta

from recordkit.rules import Interval
from recordkit.schedule import State, add, state_of


def months_later(start: date, months: int) -> date:
    """Independent of dateutil: same day N months on, clamped to the month's last day."""
    index = start.year * 12 + start.month - 1 + months
    year, month = divmod(index, 12)
    last = calendar.monthrange(year, month + 1)[1]
    return date(year, month + 1, min(start.day, last))


@pytest.mark.parametrize("start, interval, expected", [
    # hand-worked: 29 Feb plus 10 years lands on 28 Feb (2026 is not a leap year) — shared reference
    (date(2016, 2, 29), Interval(10, "years"), date(2026, 2, 28)),
    # hand-worked: 29 Feb plus 4 years stays on 29 Feb (2028 is a leap year)
    (date(2024, 2, 29), Interval(4, "years"), date(2028, 2, 29)),
    # hand-worked: 31 Jan + 1 month = last day of February
    (date(2026, 1, 31), Interval(1, "months"), date(2026, 2, 28)),
    (date(2028, 1, 31), Interval(1, "months"), date(2028, 2, 29)),
    # hand-worked: 12 months is one year, across a year end
    (date(2025, 12, 20), Interval(12, "months"), date(2026, 12, 20)),
    (date(2026, 12, 28), Interval(7, "days"), date(2027, 1, 4)),
    (date(2026, 12, 28), Interval(1, "weeks"), date(2027, 1, 4)),
])
def test_add_hand_worked(start, interval, expected):
    assert add(start, interval) == expected


def test_add_months_matches_an_independent_calendar_calculation():
    day = date(2023, 1, 1)
    while day < date(2029, 1, 1):
        for months in (1, 3, 12, 84, 120):
            assert add(day, Interval(months, "months")) == months_later(day, months), (day, months)
        day += timedelta(days=1)


def test_add_years_matches_python_dateutil():
    # python-dateutil relativedelta is the reference for calendar arithmetic (DEVELOPERS.md)
    day = date(2015, 1, 1)
    while day < date(2021, 1, 1):
        for years in (7, 10):
            assert add(day, Interval(years, "years")) == day + relativedelta(years=years)
        day += timedelta(days=1)


WEEK = Interval(7, "days")


@pytest.mark.parametrize("due, as_of, expected", [
    (date(2026, 12, 10), date(2026, 12, 2), State.OK),        # 8 days ahead, window 7
    (date(2026, 12, 10), date(2026, 12, 3), State.DUE_SOON),  # exactly 7 days ahead
    (date(2026, 12, 10), date(2026, 12, 10), State.DUE_SOON), # due today is not yet overdue
    (date(2026, 12, 10), date(2026, 12, 11), State.OVERDUE),  # the day after
    (None, date(2026, 12, 11), State.OVERDUE),                # unknown date: now
])
def test_state_boundaries(due, as_of, expected):
    assert state_of(due, as_of, WEEK) is expected


def test_zero_window_means_no_warning():
    assert state_of(date(2026, 12, 10), date(2026, 12, 9), Interval(0, "days")) is State.OK
