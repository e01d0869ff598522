"""Events as CSV rows (date, device, action, result, by, note): spreadsheet imports and CSV log files.

Shared by `import` (which checks rows before appending them) and the loader
(which reads `*.csv` logs kept in the records folder, for very long histories).
"""
from __future__ import annotations

import csv
import re
from datetime import date
from typing import Iterator, NamedTuple

from dateutil import parser as date_parser

from . import model as m

# A cell may be as long as a record file may be (the csv module's default stops at 131,072 characters and
# raised out of every command).
MAX_CSV_BYTES = 64 * 1024 * 1024
csv.field_size_limit(MAX_CSV_BYTES)

CSV_COLUMNS = ("date", "device", "action", "result", "by", "note")
REQUIRED_COLUMNS = ("date", "device", "action")
_ISO = re.compile(r"^\d{4}-\d{2}-\d{2}$")


def parse_sheet_date(text: str, dayfirst: bool = False) -> date:
    """ISO dates as they are; otherwise as a spreadsheet writes them (MM/DD/YYYY, or DD/MM/YYYY
    with dayfirst). ISO is matched first because dateutil with dayfirst reads 2026-12-01 as 12 Jan."""
    text = text.strip()
    if _ISO.match(text):
        return date.fromisoformat(text)
    parsed = date_parser.parse(text, dayfirst=dayfirst, yearfirst=False)
    if (parsed.hour, parsed.minute, parsed.second) != (0, 0, 0):
        raise ValueError("has a time of day; give the date only")
    return parsed.date()


class CsvRow(NamedTuple):
    date: date
    device: str
    action: m.Action
    result: m.Result | None
    by: str
    note: str


def read_row(cells: dict[str, str], dayfirst: bool = False) -> tuple[CsvRow | None, list[str]]:
    """One row's event, or what is wrong with it (every problem, not just the first)."""
    messages = []
    when = action = result = None
    try:
        when = parse_sheet_date(cells["date"], dayfirst)
    except (ValueError, OverflowError) as exc:
        messages.append(f"date {cells['date']!r}: {exc}")
    try:
        action = m.Action(cells["action"].lower())
    except ValueError:
        messages.append(f"action {cells['action']!r}; expected one of: {', '.join(a.value for a in m.Action)}")
    if cells.get("result"):
        try:
            result = m.Result(cells["result"].lower())
        except ValueError:
            messages.append(f"result {cells['result']!r}; expected pass or fail")
    if not cells["device"]:
        messages.append("device is empty")
    if messages:
        return None, messages
    return CsvRow(when, cells["device"], action, result, cells.get("by", ""), cells.get("note", "")), []


def header_problem(header: list[str]) -> str | None:
    missing = [c for c in REQUIRED_COLUMNS if c not in header]
    unknown = [h for h in header if h and h not in CSV_COLUMNS]
    if missing or unknown:
        return (f"header needs columns {', '.join(CSV_COLUMNS)} (date, device and action required); "
                f"missing: {', '.join(missing) or 'none'}; unknown: {', '.join(unknown) or 'none'}")
    return None


def rows(text: str) -> tuple[list[str], Iterator[tuple[int, dict[str, str]]]]:
    """The lower-cased header, and (line number, cells by column) for each non-empty row."""
    reader = csv.reader(text.splitlines())
    header = [h.strip().lower() for h in next(reader, [])]

    def body() -> Iterator[tuple[int, dict[str, str]]]:
        for number, row in enumerate(reader, start=2):
            if any(cell.strip() for cell in row):
                yield number, {name: (row[i].strip() if i < len(row) else "") for i, name in enumerate(header)}
    return header, body()
