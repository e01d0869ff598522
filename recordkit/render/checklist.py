"""Printable sheets as standalone HTML: inspection checklists, a monthly test card, a blank sheet.

Standalone (inline CSS, no scripts, no outside files) so one file prints the
same from the site, from disk, or through a PDF renderer. jinja2 autoescapes
all record text here (these are HTML templates, not Markdown).
"""
from __future__ import annotations

from dataclasses import dataclass
from datetime import date

import jinja2
from dateutil.relativedelta import relativedelta

from .. import model as m
from ..cautions import CAUTIONS, SHORT
from ..checks import Finding, last_event, urgency
from ..loader import Loaded
from ..schedule import State
from .labels import STATE_LABELS, TASK_LABELS, TEMPLATES, kind_label
from .compiled import keep_compiled

PAPER_SIZES = {"a4": "A4 landscape", "letter": "letter landscape", "any": "landscape"}
BUTTON_TEST_CAUTION = CAUTIONS[1]


class NotFound(LookupError):
    """No such property or unit; the message lists the ones there are."""


@dataclass(frozen=True)
class SheetRow:
    room: str
    device: m.Device
    made: str
    replace_by: str
    last_test: str
    last_battery: str
    due: list[tuple[State, str]]   # what needs doing now or soon, most pressing first


@dataclass(frozen=True)
class UnitSheet:
    prop: m.Property
    unit: m.Unit
    rows: list[SheetRow]
    gaps: list[str]                # rooms with a coverage gap (filled once coverage checks exist)


_env = keep_compiled(jinja2.Environment(loader=jinja2.FileSystemLoader(TEMPLATES), autoescape=True,
                                        trim_blocks=True, lstrip_blocks=True, undefined=jinja2.StrictUndefined))
_env.globals.update(kind_label=kind_label, state_labels=STATE_LABELS, short_caution=SHORT,
                    button_caution=BUTTON_TEST_CAUTION, kinds=list(m.Kind), powers=list(m.Power),
                    uses=list(m.RoomUse), sensors=list(m.Sensor), appliances=list(m.Appliance))


def _due_text(finding: Finding) -> str:
    label = TASK_LABELS[finding.task]
    if finding.task in ("node", "coverage"):
        return f"{label}: {finding.reason}"
    if finding.due is None:
        return f"{label} now (no date)"
    return f"{label} {'since' if finding.state is State.OVERDUE else 'by'} {finding.due}"


def findings_by_device(findings: list[Finding]) -> dict[str, list[Finding]]:
    by_device: dict[str, list[Finding]] = {}
    for finding in findings:
        by_device.setdefault(finding.device, []).append(finding)
    return by_device


def unit_sheet(portfolio: m.Portfolio, by_device: dict[str, list[Finding]], prop: m.Property, unit: m.Unit,
               as_of: date) -> UnitSheet:
    room_order = {room.id: i for i, room in enumerate(unit.rooms)}
    rows = []
    active = [d for d in unit.devices
              if (retired := portfolio.retired_on(d.uid)) is None or retired > as_of]
    for device in sorted(active, key=lambda d: room_order.get(d.room, len(room_order))):
        events = portfolio.events_for(device.uid)
        mine = sorted(by_device.get(device.uid, []), key=urgency)
        replace = next((f for f in mine if f.task == "replace"), None)
        test, battery = last_event(events, m.Action.TEST), last_event(events, m.Action.BATTERY)
        has_battery = device.power in (m.Power.BATTERY, m.Power.MAINS_BACKUP)
        room = unit.room(device.room)
        rows.append(SheetRow(
            room=room.name if room else device.room,
            device=device,
            made=device.manufactured_text or "—",
            replace_by=(str(replace.due) if replace.due else "now") if replace else "—",
            last_test=f"{test.date} {test.result or ''}".strip() if test else "never",
            last_battery=(str(battery.date) if battery else "none logged") if has_battery else f"n/a ({device.power})",
            due=[(f.state, _due_text(f)) for f in mine if f.state is not State.OK]))
    gaps = [f.reason for f in by_device.get(unit.uid, []) if f.task == "coverage"]
    return UnitSheet(prop, unit, rows, gaps=gaps)


def inspection_html(sheets: list[UnitSheet], as_of: date, paper: str = "any", title: str = "") -> str:
    """One unit per printed page."""
    return _env.get_template("checklist.html.j2").render(
        sheets=sheets, as_of=as_of, page_size=PAPER_SIZES[paper],
        title=title or "Inspection checklist")


def monthly_card_html(sheet: UnitSheet, as_of: date, paper: str = "any") -> str:
    """A year of monthly tests on one page, starting with the as-of month."""
    first = as_of.replace(day=1)
    months = [first + relativedelta(months=i) for i in range(12)]
    return _env.get_template("monthly_card.html.j2").render(
        sheet=sheet, months=months, as_of=as_of, page_size=PAPER_SIZES[paper])


def blank_unit_html(paper: str = "any", rooms: int = 8, devices: int = 10) -> str:
    """A sheet for a first visit: fields as the record files name them, to type straight in."""
    return _env.get_template("new_unit.html.j2").render(
        page_size=PAPER_SIZES[paper], room_rows=range(rooms), device_rows=range(devices))


def property_sheets(loaded: Loaded, findings: list[Finding], property_id: str, as_of: date,
                    unit_id: str | None = None) -> list[UnitSheet]:
    """Sheets for every unit of a property, or one unit. Raises NotFound naming what is missing."""
    prop = next((p for p in loaded.portfolio.properties if p.id == property_id), None)
    if prop is None:
        known = ", ".join(p.id for p in loaded.portfolio.properties)
        raise NotFound(f"no property '{property_id}' (known: {known})")
    units = [u for u in prop.units if unit_id is None or u.id == unit_id]
    if not units:
        raise NotFound(f"no unit '{unit_id}' in '{property_id}' (known: {', '.join(u.id for u in prop.units)})")
    by_device = findings_by_device(findings)
    return [unit_sheet(loaded.portfolio, by_device, prop, unit, as_of) for unit in units]


def walkround_html(sheet: UnitSheet, as_of: date, assets: str, unit_page: str) -> str:
    """The unit's walk-round form: devices in room order with buttons for each result (see walkround.js).
    `assets` and `unit_page` are URLs relative to the form."""
    return _env.get_template("walkround.html.j2").render(sheet=sheet, as_of=as_of, assets=assets,
                                                        unit_page=unit_page)
