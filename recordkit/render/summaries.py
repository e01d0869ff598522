"""What the pages about the whole portfolio (the overview, the list of properties, the navigation) need of
each property, as plain data: its name and counts, its devices by kind and state, its replacements per
quarter, and its part of the overview's work lists.

Those pages are always made from these summaries, one a property, added up in the properties' order: so a
build that made only some properties' summaries again (see `quickbuild`) and took the others from the
last build writes the very same pages as a full build.
"""
from __future__ import annotations

from collections import Counter
from datetime import date
from typing import Any

from .. import model as m
from ..schedule import State
from .charts import Quarter, replacement_forecast

FORMAT = 1
STATES = {state.value: state for state in State}
KINDS = {kind.value: kind for kind in m.Kind}


def quarters_of(findings, portfolio: m.Portfolio, as_of: date, costs: dict[str, float]) -> list[list]:
    return [[q.count, q.cost] for q in replacement_forecast(findings, portfolio, as_of, costs)]


def kinds_of(counts: dict[m.Kind, Counter]) -> dict[str, dict[str, int]]:
    return {kind.value: {(state.value if state else ""): n for state, n in by_state.items()}
            for kind, by_state in counts.items()}


class Totals:
    """The summaries of every property, in order, added up."""

    def __init__(self, summaries: list[dict[str, Any]], as_of: date):
        self.summaries = summaries
        self.lines = [m.PropertyLine(s["id"], s["name"], s["address"]) for s in summaries]
        self.units = sum(s["units"] for s in summaries)
        self.overdue_tasks = sum(s["overdue"][0] for s in summaries)
        self.upcoming_tasks = sum(s["upcoming"][0] for s in summaries)
        by_kind: dict[m.Kind, Counter] = {}
        for summary in summaries:
            for kind, by_state in summary["kinds"].items():
                counter = by_kind.setdefault(KINDS[kind], Counter())
                for state, n in by_state.items():
                    counter[STATES[state] if state else None] += n
        self.by_kind = {kind: by_kind[kind] for kind in m.Kind if kind in by_kind}
        self.devices = sum(self.by_kind.values(), Counter())
        start = replacement_forecast([], m.Portfolio(), as_of, {})  # the quarters' dates and labels
        counts = [sum(s["quarters"][i][0] for s in summaries) for i in range(len(start))]
        costs = [0.0] * len(start)
        for summary in summaries:  # (always in this order: a sum of money is the same in every build)
            for i, (_, cost) in enumerate(summary["quarters"]):
                costs[i] += cost
        self.quarters = [Quarter(q.start, q.label, n, cost) for q, n, cost in zip(start, counts, costs)]

    def rows(self) -> list[dict]:
        """Per property: units, devices, overdue and due-soon tasks (the list of properties)."""
        return [{"prop": line, "units": s["units"], "devices": s["devices"], "overdue": s["tasks"][0],
                 "due_soon": s["tasks"][1]} for line, s in zip(self.lines, self.summaries)]

    def work_list(self, which: str) -> str | None:
        """The overview's list of overdue or upcoming work: each property's part, one after another; None
        when a property's part was not kept (then it cannot be put together here)."""
        parts = [s[which][1] for s in self.summaries if s[which][0]]
        return None if any(part is None for part in parts) else "".join(parts)

    def first_device(self) -> tuple[str | None, str | None]:
        """The portfolio's first device in service and its unit, else its first unit (for examples)."""
        device = next((s["first"] for s in self.summaries if s["first"][0]), None)
        if device:
            return device[0], device[1]
        return None, next((s["first"][1] for s in self.summaries if s["first"][1]), None)
