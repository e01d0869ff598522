"""Data out: devices with their next tasks, events, and an iCalendar file of the tasks."""
from __future__ import annotations

from datetime import date, datetime, time, timedelta, timezone

from . import model as m
from .cautions import SHORT
from .checks import Finding, active_devices, urgency
from .intake import events_csv_rows

DEVICE_COLUMNS = ("device", "property", "unit", "room", "kind", "power", "manufactured", "installed",
                  "next_task", "next_due", "state", "replace_due", "test_due", "battery_due", "fix_since")
REMINDER_DAYS = {"replace": 30, "test": 1, "battery": 7, "fix": 0, "node": 0}  # how far ahead a calendar reminds
TASK_VERBS = {"replace": "Replace", "test": "Test", "battery": "Change the battery of", "fix": "Fix",
              "node": "Check"}


def _iso(day: date | None) -> str:
    return day.isoformat() if day else ""


def device_rows(portfolio: m.Portfolio, findings: list[Finding], as_of: date) -> list[dict]:
    """One row per device in service, with its most pressing task and every task's date."""
    by_device: dict[str, list[Finding]] = {}
    for finding in findings:
        by_device.setdefault(finding.device, []).append(finding)
    rows = []
    for located in active_devices(portfolio, as_of):
        device, mine = located.device, by_device.get(located.device.uid, [])
        tasks = {f.task: f for f in mine}
        first = min(mine, default=None, key=urgency)
        room = located.unit.room(device.room)
        rows.append({
            "device": device.uid, "property": located.property.id, "unit": located.unit.id,
            "room": room.name if room else device.room, "kind": str(device.kind), "power": str(device.power),
            "manufactured": device.manufactured_text, "installed": _iso(device.installed),
            "next_task": first.task if first else "", "next_due": _iso(first.due) if first else "",
            "state": str(first.state) if first else "",
            "replace_due": ("now" if "replace" in tasks and tasks["replace"].due is None
                            else _iso(tasks["replace"].due) if "replace" in tasks else ""),
            "test_due": _iso(tasks["test"].due) if "test" in tasks else "",
            "battery_due": _iso(tasks["battery"].due) if "battery" in tasks else "",
            "fix_since": _iso(tasks["fix"].due) if "fix" in tasks else "",
        })
    return rows


def export_json(portfolio: m.Portfolio, findings: list[Finding], as_of: date) -> dict:
    header, *rows = events_csv_rows(portfolio)
    return {"as_of": as_of.isoformat(), "devices": device_rows(portfolio, findings, as_of),
            "events": [{k: v for k, v in zip(header, row) if v} for row in rows]}


def calendar_ics(portfolio: m.Portfolio, findings: list[Finding], as_of: date) -> bytes:
    """An iCalendar file: one all-day event per task, with a reminder.

    UIDs are the device and task, so importing a newer file updates the same
    events instead of adding copies; SEQUENCE grows with the as-of date. A task
    whose date is unknown (replace now) is placed on the as-of date. Each event
    is serialised as it is made, so a large portfolio never holds them all.
    """
    from icalendar import Calendar

    cal = Calendar()
    cal.add("prodid", "-//recordkit//alarm maintenance tasks//EN")
    cal.add("version", "2.0")
    cal.add("x-wr-calname", "Alarm maintenance tasks")
    end = b"END:VCALENDAR\r\n"
    head = cal.to_ical()
    assert head.endswith(end)
    events = (event.to_ical() for event in calendar_events(portfolio, findings, as_of))
    return b"".join([head[: -len(end)], *events, end])


def calendar_events(portfolio: m.Portfolio, findings: list[Finding], as_of: date):
    """The tasks as icalendar VEVENTs (coverage gaps, which have no date, are left out)."""
    from icalendar import Alarm, Event

    stamp = datetime.combine(as_of, time(0, 0), tzinfo=timezone.utc)
    sequence = (as_of - date(2000, 1, 1)).days
    for finding in findings:
        if finding.device not in portfolio.devices:
            continue  # a coverage gap belongs to a unit and has no date: it is not a calendar task
        located = portfolio.devices[finding.device]
        room = located.unit.room(located.device.room)
        day = finding.due or as_of
        event = Event()
        event.add("uid", f"{finding.key}@recordkit")
        event.add("dtstamp", stamp)
        event.add("sequence", sequence)
        event.add("dtstart", day)
        event.add("dtend", day + timedelta(days=1))
        label = located.device.kind.label
        event.add("summary", f"{TASK_VERBS[finding.task]} {label} {located.device.id}"
                             f" ({located.unit.name}, {located.property.name})")
        event.add("location", ", ".join(x for x in (room.name if room else located.device.room,
                                                      located.unit.name, located.property.name,
                                                      located.property.address) if x))
        event.add("description", f"{finding.reason}. Rule {finding.rule}: {finding.source}. "
                                 f"Device {finding.device}. {SHORT}")
        event.add("categories", ["alarm maintenance", finding.task])
        event.add("x-recordkit-device", finding.device)
        event.add("x-recordkit-task", finding.task)
        event.add("x-recordkit-due", finding.due.isoformat() if finding.due else "unknown")
        alarm = Alarm()
        alarm.add("action", "DISPLAY")
        alarm.add("description", f"{TASK_VERBS[finding.task]} {label} {located.device.id}")
        # 09:00 on the day that many days before the (all-day) event starts
        alarm.add("trigger", timedelta(days=-REMINDER_DAYS[finding.task], hours=9))
        event.add_component(alarm)
        yield event
