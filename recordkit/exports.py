"""Data out: devices with their next tasks, events, and an iCalendar file of the tasks."""
from __future__ import annotations

from datetime import date, timedelta

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
    header, *rows = events_csv_rows(portfolio, spreadsheet=False)
    return {"as_of": as_of.isoformat(), "devices": device_rows(portfolio, findings, as_of),
            "events": [{k: v for k, v in zip(header, row) if v} for row in rows]}


def calendar_ics(portfolio: m.Portfolio, findings: list[Finding], as_of: date) -> bytes:
    """An iCalendar (RFC 5545) file: one all-day event per task, with a reminder.

    UIDs are the device and task, so importing a newer file updates the same
    events instead of adding copies; SEQUENCE grows with the as-of date. A task
    whose date is unknown (replace now) is placed on the as-of date.

    Written here rather than with the icalendar library: it took about 1 ms an event, most of a large
    site's build (120,000 tasks at 10,000 units). The tests read every file back with icalendar.
    """
    return calendar_text(portfolio, findings, as_of)[0].encode("utf-8")


CALENDAR_HEAD = "".join(line + "\r\n" for line in (
    "BEGIN:VCALENDAR", "VERSION:2.0", "PRODID:-//recordkit//alarm maintenance tasks//EN",
    "X-WR-CALNAME:Alarm maintenance tasks"))
CALENDAR_TAIL = "END:VCALENDAR\r\n"


def calendar_text(portfolio: m.Portfolio, findings: list[Finding], as_of: date, keys: dict[str, str] | None = None,
                  kept: dict[str, tuple[str, str]] | None = None) -> tuple[str, dict[str, tuple[str, str]]]:
    """The calendar file's text and the pieces it is the concatenation of, {name: (key, text)}: its head,
    one a unit, its tail. A unit whose key (in `keys`, a hash of what its tasks are made of) is that of
    a piece in `kept`, from the last build, takes that piece's text instead of being written again."""
    keys, kept = keys or {}, kept or {}
    by_unit: dict[str, list[Finding]] = {}
    for finding in calendar_tasks(portfolio, findings):
        by_unit.setdefault(finding.unit, []).append(finding)
    pieces: dict[str, tuple[str, str]] = {"(head)": ("head", CALENDAR_HEAD)}
    for unit, tasks in by_unit.items():
        key = keys.get(unit)
        old = kept.get(unit)
        if key is not None and old is not None and old[0] == key:
            pieces[unit] = old
            continue
        pieces[unit] = (key or "", "".join(
            "BEGIN:VEVENT\r\n" + "".join(_fold(line) + "\r\n" for line in event) + "END:VEVENT\r\n"
            for event in calendar_events(portfolio, tasks, as_of)))
    pieces["(tail)"] = ("tail", CALENDAR_TAIL)
    return "".join(text for _, text in pieces.values()), pieces


def calendar_tasks(portfolio: m.Portfolio, findings: list[Finding]) -> list[Finding]:
    """The findings the calendar holds: a coverage gap belongs to a unit and has no date, so it is left out."""
    return [finding for finding in findings if finding.device in portfolio.devices]


def calendar_events(portfolio: m.Portfolio, findings: list[Finding], as_of: date):
    """Each calendar task's content lines, unfolded."""
    stamp = f"DTSTAMP:{as_of:%Y%m%d}T000000Z"
    sequence = f"SEQUENCE:{(as_of - date(2000, 1, 1)).days}"
    for finding in calendar_tasks(portfolio, findings):
        located = portfolio.devices[finding.device]
        room = located.unit.room(located.device.room)
        # an overdue task sits on the as-of date with its reminder that morning (one dated years ago would
        # never fire); a task due later sits on its date, reminded ahead
        overdue = finding.due is None or finding.due < as_of
        day = as_of if overdue else finding.due
        ahead = timedelta(hours=9) if overdue else timedelta(days=-REMINDER_DAYS[finding.task], hours=9)
        since = ("Overdue (date unknown): " if finding.due is None else f"Overdue since {finding.due}: ") if overdue else ""
        label, verb = located.device.kind.label, TASK_VERBS[finding.task]
        where = (room.name if room else located.device.room, located.unit.name, located.property.name,
                 located.property.address)
        yield [
            f"UID:{_text(finding.key)}@recordkit", stamp, sequence,
            f"DTSTART;VALUE=DATE:{day:%Y%m%d}", f"DTEND;VALUE=DATE:{day + timedelta(days=1):%Y%m%d}",
            "SUMMARY:" + _text(f"{since}{verb} {label} {located.device.id} ({located.unit.name}, "
                               f"{located.property.name})"),
            "LOCATION:" + _text(", ".join(x for x in where if x)),
            "DESCRIPTION:" + _text(f"{finding.reason}. Rule {finding.rule}: {finding.source}. "
                                   f"Device {finding.device}. {SHORT}"),
            f"CATEGORIES:alarm maintenance,{_text(finding.task)}",
            f"X-RECORDKIT-DEVICE:{_text(finding.device)}", f"X-RECORDKIT-TASK:{_text(finding.task)}",
            f"X-RECORDKIT-DUE:{finding.due.isoformat() if finding.due else 'unknown'}",
            "BEGIN:VALARM", "ACTION:DISPLAY", "DESCRIPTION:" + _text(f"{verb} {label} {located.device.id}"),
            # 09:00 on the day that many days before the (all-day) event starts (the day itself if overdue)
            "TRIGGER:" + _duration(ahead), "END:VALARM"]


# One table for both steps of RFC 5545 TEXT: the escapes, and dropping the control characters TEXT may
# not hold (their keys do not overlap, so one pass does both).
_TEXT_TABLE = str.maketrans({"\\": "\\\\", ";": "\\;", ",": "\\,", "\n": "\\n", "\r": ""}
                            | {c: None for c in range(32) if c not in (9, 10, 13)} | {127: None})


def _text(value: str) -> str:
    """An RFC 5545 TEXT value (§3.3.11): backslash, semicolon, comma and line breaks escaped; other
    control characters, which TEXT may not hold, dropped."""
    if "\r" in value:
        value = value.replace("\r\n", "\n").replace("\r", "\n")
    return value.translate(_TEXT_TABLE)


def _duration(delta: timedelta) -> str:
    """An RFC 5545 DURATION (§3.3.6) in days and hours, e.g. -P29DT15H."""
    seconds = int(delta.total_seconds())
    days, rest = divmod(abs(seconds), 86400)
    hours = rest // 3600
    text = ("P" + (f"{days}D" if days else "") + (f"T{hours}H" if hours else "")) if seconds else "PT0S"
    return ("-" if seconds < 0 else "") + text


def _fold(line: str, limit: int = 75) -> str:
    """RFC 5545 §3.1: lines of at most 75 octets; longer ones continue after CRLF and a space,
    never splitting a UTF-8 character or a backslash escape (some readers mishandle a split one)."""
    if len(line) <= limit and (line.isascii() or len(line.encode("utf-8")) <= limit):
        return line  # most lines: nothing to fold
    data = line.encode("utf-8")
    parts, start, room = [], 0, limit
    while len(data) - start > room:
        end = start + room
        while data[end] & 0xC0 == 0x80:  # a UTF-8 continuation byte: cut before its character instead
            end -= 1
        run = end - 1
        while run >= 0 and data[run] == 0x5C:  # backslashes just before the cut
            run -= 1
        if (end - 1 - run) % 2:  # data[end - 1] opens an escape whose second half is data[end]
            end -= 1
        parts.append(data[start:end])
        start, room = end, limit - 1  # a continuation line starts with a space
    parts.append(data[start:])
    return b"\r\n ".join(parts).decode("utf-8")
