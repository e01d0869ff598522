"""Events as CSV rows (date, device, action, result, by, note): spreadsheet imports and CSV log files.

Shared by `import` (which checks rows before appending them) and the loader
(which reads `*.csv` logs kept in the records folder, for very long histories).
"""
from __future__ import annotations

import csv
import io
import re
from datetime import date, time
from typing import Iterator, NamedTuple

from . import model as m

# A cell may be as long as a record file may be (the csv module's default stops at 131,072 characters and
# raised out of every command).
MAX_CSV_BYTES = 64 * 1024 * 1024
csv.field_size_limit(MAX_CSV_BYTES)

CSV_COLUMNS = ("date", "device", "action", "result", "by", "note", "evidence")
# A cell starting with one of these runs as a formula when a spreadsheet opens the file: exports put an
# apostrophe before it (the usual guard), and imports take that apostrophe off again, so text survives
# the round trip byte for byte. A text that itself starts with an apostrophe before one of these (or
# before another apostrophe) gets one more, so the guard can always be told from the text.
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
_GUARDED = (*FORMULA_STARTS, "'")


def guard(text: str) -> str:
    """A free-text cell as an export writes it (see FORMULA_STARTS)."""
    return "'" + text if text.startswith(FORMULA_STARTS) or (text[:1] == "'" and text[1:2] in _GUARDED) else text


def unguard(text: str) -> str:
    """A free-text cell as an import reads it: `guard` undone."""
    return text[1:] if text[:1] == "'" and text[1:2] in _GUARDED and text[1:2] != "" else text
REQUIRED_COLUMNS = ("date", "device", "action")
_ISO = re.compile(r"^\d{4}-\d{2}-\d{2}$")
_ISO_TIME = re.compile(r"^(\d{4}-\d{2}-\d{2})[ T](\d{2}:\d{2}(?::\d{2})?)$")
_EVIDENCE = re.compile(r"^sha256:[0-9a-f]{64}$")
_SLASHED = re.compile(r"^(\d{1,2})[/.-](\d{1,2})[/.-](\d{4})$")
DAY_FIRST, MONTH_FIRST = "day", "month"


def is_slashed(text: str) -> bool:
    return bool(_SLASHED.match(text.strip()))


def date_order(texts: list[str]) -> tuple[str | None, str | None]:
    """How a whole sheet writes its slashed dates: (order, problem). A part above 12 decides; dates that
    can be read both ways throughout, or that decide both ways, leave the order to the user. Never
    guessed: '02/09/2025' is 2 September or 9 February, and only the file can say which."""
    day_first = month_first = ambiguous = False
    for text in texts:
        match = _SLASHED.match(text.strip())
        if not match:
            continue
        first, second = int(match.group(1)), int(match.group(2))
        day_first |= first > 12
        month_first |= second > 12
        ambiguous |= first <= 12 and second <= 12 and first != second
    if day_first and month_first:
        return None, ("the sheet writes dates both day-first (e.g. 14/03) and month-first (e.g. 03/14); "
                      "fix the sheet, or say which with --dayfirst or --monthfirst")
    if day_first or month_first:
        return (DAY_FIRST if day_first else MONTH_FIRST), None
    if ambiguous:
        return None, ("every slashed date in the sheet could be day-first or month-first (e.g. 02/09/2025); "
                      "say which with --dayfirst or --monthfirst")
    return DAY_FIRST, None  # no slashed dates, or only ones like 01/01/2026 that read the same both ways


def parse_sheet_moment(text: str, order: str | None = None) -> tuple[date, time | None]:
    """An ISO date (YYYY-MM-DD), optionally with a time (HH:MM[:SS]), or with `order` a slashed date
    (DD/MM/YYYY or MM/DD/YYYY). Nothing is filled in: a year alone, a year and month, or a day and month
    without a year are refused."""
    text = text.strip()
    if moment := _ISO_TIME.match(text):
        return date.fromisoformat(moment.group(1)), time.fromisoformat(moment.group(2))
    return _sheet_date(text, order), None


def _sheet_date(text: str, order: str | None) -> date:
    if _ISO.match(text):
        return date.fromisoformat(text)
    match = _SLASHED.match(text)
    if match and order:
        first, second, year = map(int, match.groups())
        day, month = (first, second) if order == DAY_FIRST else (second, first)
        try:
            return date(year, month, day)
        except ValueError:
            raise ValueError(f"is not a real date read {order}-first") from None
    if match:
        raise ValueError("is not an ISO date (YYYY-MM-DD); record CSV logs write dates as YYYY-MM-DD")
    if re.fullmatch(r"\d{4}(-\d{1,2})?|\d{1,2}[/.-]\d{1,2}|\d{1,2}[/.-]\d{4}", text):
        raise ValueError("is incomplete (a day, month and year are all needed); nothing is filled in")
    raise ValueError("is not a date as YYYY-MM-DD or DD/MM/YYYY or MM/DD/YYYY")


class CsvRow(NamedTuple):  # the fields of logbook.NewEvent, in its order
    date: date
    device: str
    action: m.Action
    result: m.Result | None
    by: str
    note: str
    evidence: str = ""
    when: time | None = None


def read_row(cells: dict[str, str], order: str | None = None) -> tuple[CsvRow | None, list[str]]:
    """One row's event, or what is wrong with it (every problem, not just the first). Slashed dates are
    read in `order` (see `date_order`); without one only ISO dates are accepted."""
    messages = []
    when = action = result = None
    clock = None
    try:
        when, clock = parse_sheet_moment(cells["date"], order)
    except (ValueError, OverflowError) as exc:
        messages.append(f"date {cells['date']!r}: {exc}")
    evidence = cells.get("evidence", "").strip()
    if evidence and not _EVIDENCE.match(evidence):
        messages.append(f"evidence {evidence!r}: expected 'sha256:' and 64 hex digits")
    try:
        action = m.Action(cells["action"].strip().lower())
    except ValueError:
        messages.append(f"action {cells['action']!r}; expected one of: {', '.join(a.value for a in m.Action)}")
    if cells.get("result", "").strip():
        try:
            result = m.Result(cells["result"].strip().lower())
        except ValueError:
            messages.append(f"result {cells['result']!r}; expected pass or fail")
    if not cells["device"].strip():
        messages.append("device is empty")
    if messages:
        return None, messages
    return CsvRow(when, cells["device"].strip(), action, result, unguard(cells.get("by", "")),
                  unguard(cells.get("note", "")), evidence, clock), []


def header_problem(header: list[str]) -> str | None:
    missing = [c for c in REQUIRED_COLUMNS if c not in header]
    unknown = [h for h in header if h and h not in CSV_COLUMNS]
    if missing or unknown:
        return (f"header needs columns {', '.join(CSV_COLUMNS)} (date, device and action required); "
                f"missing: {', '.join(missing) or 'none'}; unknown: {', '.join(unknown) or 'none'}")
    return None


def rows(text: str) -> tuple[list[str], Iterator[tuple[int, dict[str, str]]]]:
    """The lower-cased header, and (line number, cells by column) for each non-empty row."""
    # csv reads the text itself: str.splitlines would also split at U+2028, NEL or a form feed inside a
    # quoted note. Cells are kept as written (a note's leading spaces are the note's); the fields that
    # name things are stripped where they are read.
    reader = csv.reader(io.StringIO(text, newline=""))
    header = [h.strip().lower() for h in next(reader, [])]

    def body() -> Iterator[tuple[int, dict[str, str]]]:
        for number, row in enumerate(reader, start=2):
            if any(cell.strip() for cell in row):
                yield number, {name: (row[i] if i < len(row) else "") for i, name in enumerate(header)}
    return header, body()
