"""The pages about the whole portfolio (overview, list of properties, how to keep records, calendar),
made from each property's summary (see `summaries`), so that they need only the properties a build
loaded, with the others' summaries from the last build."""
from __future__ import annotations

import functools
from collections import Counter
from datetime import date, timedelta
from typing import Any

from markupsafe import Markup

from .. import model as m
from ..checks import TASK_ORDER, Finding, by_property, worst_state
from ..exports import calendar_text
from ..schedule import State
from .charts import forecast_svg, yearly_costs
from .labels import kind_label
from .summaries import Totals, kinds_of, quarters_of

UPCOMING_DAYS = 90
# At a managing agent's scale the overview lists counts per property instead of every task,
# and properties leave the navigation for an index page (Material renders the nav into every page).
OVERVIEW_ROWS = 150
NAV_PROPERTIES = 40
PROPERTIES_INDEX = "properties.md"
CALENDAR = "due.ics"


class PortfolioPages:
    """Mixed into `site.SiteBuilder`: `own` are the properties loaded (their pages are made), `order` every
    property's id in order, `others` the summaries of the properties not loaded."""

    own: list[m.Property]
    order: list[str]
    others: dict[str, dict[str, Any]]
    findings: list[Finding]
    as_of: date

    @functools.cached_property
    def _findings_of(self) -> dict[str, list[Finding]]:
        return by_property(self.findings)

    @functools.cached_property
    def _work(self) -> tuple[list[Finding], list[Finding]]:
        """The overview's work in the loaded properties: overdue tasks, and those due in UPCOMING_DAYS days."""
        overdue = sorted((f for f in self.findings if f.state is State.OVERDUE),
                         key=lambda f: (f.due or date.min, f.device))
        horizon = self.as_of + timedelta(days=UPCOMING_DAYS)
        upcoming = sorted((f for f in self.findings
                           if f.state is not State.OVERDUE and f.due and f.due <= horizon),
                          key=lambda f: (f.due, f.device, TASK_ORDER[f.task]))
        return overdue, upcoming

    def _summary(self, prop: m.Property) -> dict[str, Any]:
        findings = self._findings_of.get(prop.id, [])
        tasks = Counter(f.state for f in findings)
        by_kind: dict[m.Kind, Counter] = {}
        for unit in prop.units:  # devices in service by kind and state (no histories needed)
            for device in unit.devices:
                retired = self.portfolio.retired_on(device.uid)
                if retired is None or retired > self.as_of:
                    by_kind.setdefault(device.kind, Counter())[worst_state(self.by_device.get(device.uid, ()))] += 1
        overdue, upcoming = ([f for f in work if f.unit.split("/", 1)[0] == prop.id] for work in self._work)
        first = next(((d.uid, u.uid) for u in prop.units for d in u.devices), None) \
            or (None, prop.units[0].uid if prop.units else None)
        return {"format": 1, "id": prop.id, "name": prop.name, "address": prop.address, "units": len(prop.units),
                "devices": sum(len(u.devices) for u in prop.units),
                "tasks": [tasks[State.OVERDUE], tasks[State.DUE_SOON]], "kinds": kinds_of(by_kind),
                "quarters": quarters_of(findings, self.portfolio, self.as_of, self.loaded.policy.costs),
                "overdue": [len(overdue), None], "upcoming": [len(upcoming), None], "first": list(first),
                "_work": (overdue, upcoming)}

    @functools.cached_property
    def totals(self) -> Totals:
        """Every property's summary, in order, added up; the loaded ones' parts of the work lists made
        when the whole list is short enough to be shown."""
        own = {p.id: self._summary(p) for p in self.own}
        summaries = [own[pid] if pid in own else self.others[pid] for pid in self.order]
        for n, (which, label) in enumerate((("overdue", "Since"), ("upcoming", "Due"))):
            if sum(s[which][0] for s in summaries) <= OVERVIEW_ROWS:
                for prop in self.own:
                    work = own[prop.id]["_work"][n]
                    own[prop.id][which][1] = self._work_list(work, "index.md", [prop], label,
                                                            several=len(self.order) > 1) if work else ""
        for summary in own.values():
            del summary["_work"]
        return Totals(summaries, self.as_of)

    def summaries(self) -> dict[str, dict[str, Any]]:
        return dict(zip(self.order, self.totals.summaries))

    def complete(self) -> bool:
        """Whether the pages about the whole portfolio can be made: every part of a work list that is
        shown is at hand (a summary kept from the last build may not have it)."""
        totals = self.totals
        return all(totals.work_list(which) is not None for which, count in
                   (("overdue", totals.overdue_tasks), ("upcoming", totals.upcoming_tasks)) if count <= OVERVIEW_ROWS)

    def overview(self) -> str:
        totals, policy = self.totals, self.loaded.policy
        return self._render(
            "overview.md.j2", "index.md",
            forecast=Markup(forecast_svg(totals.quarters)), yearly=yearly_costs(totals.quarters),
            costs=policy.costs, currency=policy.currency, totals=totals.devices,
            overdue_tasks=totals.overdue_tasks, upcoming_tasks=totals.upcoming_tasks, upcoming_days=UPCOMING_DAYS,
            last_changed=self.loaded.last_changed, files=len(self.loaded.files),
            properties=totals.lines, row_limit=OVERVIEW_ROWS,
            properties_index=PROPERTIES_INDEX if len(self.order) > NAV_PROPERTIES else None)

    def overview_parts(self) -> dict[str, str]:
        totals = self.totals
        rows = [(kind_label(k), sum(counts.values()), counts) for k, counts in totals.by_kind.items()]
        rows.append((Markup("<b>All</b>"), sum(totals.devices.values()), totals.devices))
        from .site import property_uri  # (site imports this module)

        by_property = self._parts.property_table(
            totals.rows(), lambda p: self._href("index.md", property_uri(p), "overdue"), overdue_only=True) \
            if totals.overdue_tasks > OVERVIEW_ROWS else ""
        return {"kinds": self._parts.counts_table("Kind", "Devices", rows), "by_property": by_property,
                "overdue": totals.work_list("overdue") or "" if totals.overdue_tasks <= OVERVIEW_ROWS else "",
                "upcoming": totals.work_list("upcoming") or "" if totals.upcoming_tasks <= OVERVIEW_ROWS else ""}

    def properties_index(self) -> str:
        return self._render("properties.md.j2", PROPERTIES_INDEX)

    def properties_index_parts(self) -> dict[str, str]:
        from .site import property_uri

        return {"properties": self._parts.property_table(
            self.totals.rows(), lambda p: self._href(PROPERTIES_INDEX, property_uri(p)))}

    def keeping_records(self) -> str:
        """How to keep these records, with examples from the user's own ids (not the demo's)."""
        device, unit = self.totals.first_device()
        unit = unit or "PROPERTY/UNIT"
        return self._render("keeping_records.md.j2", "keeping-records.md", folder=self.folder,
                            device=device or f"{unit}/DEVICE", unit=unit)

    def calendar(self, kept: dict[str, tuple[str, str]]) -> tuple[str, dict[str, tuple[str, str]]]:
        """The calendar file: its head, each unit's tasks (a piece kept from the last build while its key
        holds; for a property not loaded, its units' pieces as the last build wrote them), its tail."""
        keys = {unit.uid: key for prop in self.own for unit in prop.units
                if (key := self.keys.unit_page(prop, unit, CALENDAR)) is not None}
        _, made = calendar_text(self.portfolio, self.findings, self.as_of, keys, kept)
        loaded = {p.id for p in self.own}
        by_property: dict[str, dict[str, dict]] = {"made": {}, "kept": {}}
        for source, found in (("made", made), ("kept", kept)):
            for name, piece in found.items():
                by_property[source].setdefault(name.split("/", 1)[0], {})[name] = piece
        pieces = {"(head)": made["(head)"]}
        for pid in self.order:
            pieces.update(by_property["made" if pid in loaded else "kept"].get(pid, {}))
        tail = made["(tail)"]
        pieces["(tail)"] = tail
        return "".join(text for _, text in pieces.values()), pieces
