"""Due-date arithmetic. Pure: every function takes the as-of date it judges by.

Dates move by calendar units with python-dateutil's relativedelta, so
29 Feb + 1 year = 28 Feb and 31 Jan + 1 month = 28/29 Feb.
"""
from __future__ import annotations

from datetime import date
from enum import StrEnum

from .rules import Interval


class State(StrEnum):
    OVERDUE = "overdue"
    DUE_SOON = "due_soon"
    OK = "ok"

    @property
    def rank(self) -> int:
        return _RANK[self]

    @property
    def word(self) -> str:
        """The one set of state words: terminal, JSON, site and sheets."""
        return _WORDS[self][1]

    @property
    def symbol(self) -> str:
        """A symbol beside the word, so state never rests on colour alone."""
        return _WORDS[self][0]


_RANK = {State.OVERDUE: 0, State.DUE_SOON: 1, State.OK: 2}
_WORDS = {State.OVERDUE: ("‼", "Overdue"), State.DUE_SOON: ("◔", "Due soon"), State.OK: ("✓", "In date")}


def add(start: date, interval: Interval) -> date:
    """start + interval; total: a sum past the calendar's end is its last day (never an exception)."""
    try:
        return start + interval.delta
    except (OverflowError, ValueError):
        return date.max


def state_of(due: date | None, as_of: date, warn_before: Interval) -> State:
    """Overdue once the due day has passed (or at once when the date is unknown);
    due soon from `warn_before` ahead of it up to and including the due day."""
    if due is None or due < as_of:
        return State.OVERDUE
    if as_of >= due - warn_before.delta:
        return State.DUE_SOON
    return State.OK


def earliest(*dates: date | None) -> date | None:
    known = [d for d in dates if d is not None]
    return min(known) if known else None
