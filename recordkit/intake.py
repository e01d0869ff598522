"""Events coming in: from the `log` command or a spreadsheet's CSV, checked, then appended.

Every event is checked against the loaded records with the same rules the
loader applies to hand-written events (`event_problems`), before anything is
written.
"""
from __future__ import annotations

import csv
import io
from dataclasses import dataclass, field
from datetime import date, time
from pathlib import Path

from . import csvlog, progress, sheets
from . import model as m
from .errors import Source
from .loader import Loaded
from .recordfiles import unread_reason
from .references import event_problems
from .logbook import NewEvent, append_events, default_log_file
from .safeio import read_regular

CSV_COLUMNS = csvlog.CSV_COLUMNS


class IntakeError(Exception):
    """Nothing was written; the message says why."""


def as_model_event(event: NewEvent, source: Source) -> m.Event:
    return m.Event(event.date, event.device, event.action, source.path, source.line, event.result, event.by, event.note,
                   event.when, event.evidence)


def check_new_events(loaded: Loaded, events: list[tuple[NewEvent, Source]], today: date,
                     again: bool = False) -> list[str]:
    """Problems with new events, each as 'source: message'; without `again`, an event already recorded
    (the same action on the device that day, or that time when given) is one."""
    recorded = set() if again else {e.record_key for e in loaded.portfolio.events}
    problems = []
    for event, source in events:
        problems += [f"{source}: {message}"
                     for message in event_problems(as_model_event(event, source), loaded.portfolio, today)]
        if event.action is m.Action.REPLACE:  # retiring it then would leave its later events invalid
            later = [e.date for e in loaded.portfolio.events_for(event.device) if e.date > event.date]
            if later:
                problems.append(f"{source}: dated {event.date}, but '{event.device}' has events up to {max(later)}: "
                                "a replacement is dated on or after the old device's last event")
        if event.record_key in recorded:
            when = f"{event.date} {event.when}" if event.when else str(event.date)
            problems.append(f"{source}: already recorded: {event.action} of {event.device} on {when} "
                            "(give --again if it really happened twice)")
    return problems


def unit_devices(loaded: Loaded, unit_uid: str, when: date) -> list[str]:
    """Device uids of every device of a unit in service on a date (for a walk-round)."""
    found = [loc for loc in loaded.portfolio.devices.values() if loc.unit.uid == unit_uid]
    if not found and not any(u.uid == unit_uid for p in loaded.portfolio.properties for u in p.units):
        raise IntakeError(f"no unit '{unit_uid}' (write property/unit)")
    return [loc.device.uid for loc in found if loc.device.installed <= when
            and ((retired := loaded.portfolio.retired_on(loc.device.uid)) is None or retired > when)]


def target_file(records_dir: Path, named: str | None, when: date) -> Path:
    """The log file to append to: the one named (relative to the records folder, and inside it),
    or log/YEAR.yaml for the event's year."""
    path = records_dir / named if named else default_log_file(records_dir, when)
    reason = unread_reason(records_dir, path)
    if reason:
        raise IntakeError(f"{named or path}: not a log file recordkit reads back ({reason}); nothing written")
    return path


def write_events(records_dir: Path, events: list[NewEvent], named: str | None,
                 again: bool = False) -> dict[Path, int]:
    """Append events, one atomic append per target file. Returns how many went where: without `again`,
    an event the file came to hold meanwhile (a concurrent import of the same sheet) is left out, under
    the file's lock."""
    by_file: dict[Path, list[NewEvent]] = {}
    for event in events:
        by_file.setdefault(target_file(records_dir, named, event.date), []).append(event)
    return {path: len(append_events(path, batch, records_dir, skip_recorded=not again))
            for path, batch in by_file.items()}


# ---- CSV ----------------------------------------------------------------------------------

@dataclass
class CsvImport:
    events: list[tuple[NewEvent, Source]] = field(default_factory=list)
    problems: list[str] = field(default_factory=list)
    bad_rows: set[int] = field(default_factory=set)
    duplicates: int = 0


def read_csv(path: Path, loaded: Loaded, today: date, order: str | None = None,
             mapping: sheets.Mapping | None = None, sheet_name: str | None = None) -> CsvImport:
    """A spreadsheet's rows (CSV, or the first or named sheet of an .xlsx) as checked events, through the
    column mapping and value words. Slashed dates are read in `order` ('day' or 'month' first), or in the
    order the whole sheet shows; a sheet that cannot show it is refused, never guessed."""
    result = CsvImport()
    mapping = mapping or sheets.Mapping()
    shown, header, body = _table(path, mapping, sheet_name, result)
    if header is None:
        return result
    if problem := sheets.header_problem(header, mapping):
        result.problems.append(f"{shown}:1: {problem}")
        return result
    rows = []
    for row_number, cells in body:
        row, problems = sheets.canonical(cells, mapping, loaded.portfolio)
        rows.append((row_number, row, problems))
    if order is None:
        order, problem = csvlog.date_order([row["date"] for _, row, _ in rows])
        if problem:
            first = next((n for n, row, _ in rows if csvlog.is_slashed(row["date"])), 1)
            result.problems.append(f"{shown}:{first}: {problem}")
            result.bad_rows.update(n for n, _, _ in rows)
            return result
    existing = {e.record_key for e in loaded.portfolio.events}
    checking = progress.bar(len(rows), "Checking rows", "row")
    for row_number, cells, messages in rows:
        checking.update()
        source = Source(shown, row_number)
        row, row_messages = csvlog.read_row(cells, order)
        messages = messages + row_messages
        event = NewEvent(*row) if row and not messages else None
        if event:
            key = event.record_key
            if key in existing:
                result.duplicates += 1
                continue
            existing.add(key)
            messages += event_problems(as_model_event(event, source), loaded.portfolio, today)
        if messages:
            result.bad_rows.add(row_number)
            result.problems += [f"{source}: {message}" for message in messages]
        else:
            result.events.append((event, source))
    checking.close()
    return result


def _table(path: Path, mapping: sheets.Mapping, sheet_name: str | None, result: CsvImport):
    """(shown source, header, rows) of a CSV or Excel sheet, or (shown, None, []) after a problem."""
    shown = str(path)
    if path.suffix.lower() == ".json":
        return shown, *_json_events(path)
    if path.suffix.lower() == ".xlsx":
        try:
            read_regular(path, csvlog.MAX_CSV_BYTES)  # a regular file within the limit
            return sheets.read_xlsx(path, sheet_name, mapping.header_of("date"))
        except sheets.SheetError as exc:
            raise IntakeError(str(exc)) from None
        except OSError as exc:
            raise IntakeError(f"{shown}: cannot read: {exc.strerror or exc}") from None
    try:
        text = read_regular(path, csvlog.MAX_CSV_BYTES).decode("utf-8-sig")
    except UnicodeDecodeError:
        result.problems.append(f"{shown}:1: not UTF-8 text; save the sheet as 'CSV UTF-8'")
        return shown, None, []
    except OSError as exc:
        raise IntakeError(f"{shown}: cannot read: {exc.strerror or exc}") from None
    header, body = csvlog.rows(text)
    names = [sheets.words(h) for h in header]
    return shown, names, [(n, dict(zip(names, cells.values()))) for n, cells in body]


def _json_events(path: Path) -> tuple[list[str], list[tuple[int, dict[str, str]]]]:
    """The events of a JSON export (`recordkit export --format json`), as rows of the import's columns.
    JSON text needs no formula guard: it is put on here so that reading the row takes it off again."""
    import json

    try:
        data = json.loads(read_regular(path, csvlog.MAX_CSV_BYTES).decode("utf-8"))
        events = data["events"]
        rows = [(number, {name: ("" if item.get(name) is None else str(item.get(name))) for name in sheets.FIELDS})
                for number, item in enumerate(events, start=1)]
    except (OSError, ValueError, KeyError, TypeError, AttributeError) as exc:
        raise IntakeError(f"{path}: not an events export in JSON ({exc})") from None
    for _, cells in rows:
        cells["by"], cells["note"] = csvlog.guard(cells["by"]), csvlog.guard(cells["note"])
    return list(sheets.FIELDS), rows


def csv_text(rows: list[list[str]]) -> str:
    """Rows as CSV text (RFC 4180 line ends, so a cell holding a lone CR or LF is quoted and reads back)."""
    buffer = io.StringIO()
    csv.writer(buffer, lineterminator="\r\n").writerows(rows)
    return buffer.getvalue()


def events_csv_rows(portfolio: m.Portfolio, spreadsheet: bool = True) -> list[list[str]]:
    """Every event as CSV rows with the import's columns (so an export imports back)."""
    rows = [list(CSV_COLUMNS)]
    for event in sorted(portfolio.events, key=lambda e: (e.date, e.time or time.min)):
        moment = f"{event.date} {event.time.isoformat()}" if event.time else event.date.isoformat()
        rows.append([moment, event.device, str(event.action), str(event.result) if event.result else "",
                     *((csvlog.guard(event.by), csvlog.guard(event.note)) if spreadsheet else (event.by, event.note)),
                     event.evidence])
    return rows
