"""Landlords' own spreadsheets: their columns mapped to ours, their words for actions and results, device
ids composed from several columns and matched to the records by id or name, and Excel files.

A mapping comes from options (`--column date=When`, `--device "{property}/{flat}/{alarm}"`) or from
`import-map.yaml` in the records folder:

    columns: {date: When, action: Job, result: Outcome, by: Engineer, note: Comments}
    device: "{property}/{flat}/{alarm}"        # sheet headers in braces, matched ignoring case
    actions: {"annual service": inspect}        # more words, on top of the built-in ones
    results: {"all good": pass}
"""
from __future__ import annotations

import re
from dataclasses import dataclass, field
from datetime import date, datetime
from pathlib import Path

from . import model as m

FIELDS = ("date", "device", "action", "result", "by", "note", "evidence")
MAP_FILE = "import-map.yaml"
# Common English spreadsheet words (common practice), matched ignoring case and spacing.
ACTION_WORDS = {"tested": "test", "test": "test", "button test": "test", "alarm test": "test",
                "new battery": "battery", "battery replaced": "battery", "battery changed": "battery",
                "battery": "battery", "cleaned": "clean", "clean": "clean", "dusted": "clean",
                "replaced": "replace", "replace": "replace", "new alarm": "replace", "inspected": "inspect",
                "inspect": "inspect", "inspection": "inspect", "note": "note", "comment": "note"}
RESULT_WORDS = {"ok": "pass", "pass": "pass", "passed": "pass", "working": "pass", "sounded": "pass",
                "fail": "fail", "failed": "fail", "fault": "fail", "faulty": "fail", "not working": "fail",
                "no sound": "fail"}


class SheetError(Exception):
    """The sheet or its mapping cannot be read; the message says why and what to do."""


@dataclass
class Mapping:
    columns: dict[str, str] = field(default_factory=dict)    # our field -> the sheet's header (lower case)
    device: str = ""                                          # a template over the sheet's headers
    actions: dict[str, str] = field(default_factory=lambda: dict(ACTION_WORDS))
    results: dict[str, str] = field(default_factory=lambda: dict(RESULT_WORDS))
    seen: dict[str, str] = field(default_factory=dict)        # "'Tested' as action" -> "test", for --dry-run

    def header_of(self, name: str) -> str:
        return self.columns.get(name, name)


def words(text: str) -> str:
    return " ".join(text.split()).casefold()


def mapping_from(records_dir: Path, columns: tuple[str, ...], device: str | None) -> Mapping:
    """The mapping file (if any) with the options on top."""
    mapping = Mapping()
    path = records_dir / MAP_FILE
    if path.is_file():
        from .errors import Problems
        from .yamltree import read_yaml
        problems = Problems()
        tree = read_yaml(path.read_bytes(), str(path), problems)
        if problems or not isinstance(tree, dict) or set(tree) - {"columns", "device", "actions", "results"}:
            raise SheetError(f"{path}: holds columns:, device:, actions: and results: only"
                             + (f" ({problems[0]})" if problems else ""))
        mapping.columns.update({str(k): words(str(v)) for k, v in (tree.get("columns") or {}).items()})
        mapping.device = str(tree.get("device") or "")
        mapping.actions.update({words(str(k)): str(v) for k, v in (tree.get("actions") or {}).items()})
        mapping.results.update({words(str(k)): str(v) for k, v in (tree.get("results") or {}).items()})
    for option in columns:
        ours, _, theirs = option.partition("=")
        if ours.strip() not in FIELDS or not theirs.strip():
            raise SheetError(f"--column {option!r}: write FIELD=HEADER, FIELD one of {', '.join(FIELDS)}")
        mapping.columns[ours.strip()] = words(theirs)
    mapping.device = device or mapping.device
    unknown = [f for f, a in ((f, a) for f, a in mapping.actions.items()) if a not in {x.value for x in m.Action}]
    if unknown:
        raise SheetError(f"action words must map to {', '.join(a.value for a in m.Action)} (not for {unknown[0]!r})")
    return mapping


def header_problem(header: list[str], mapping: Mapping) -> str | None:
    needed = ["date", "action"] + ([] if mapping.device else ["device"])
    missing = [f for f in needed if mapping.header_of(f) not in header]
    template = [t.casefold() for t in re.findall(r"{([^}]+)}", mapping.device)]
    missing += [f"{{{t}}}" for t in template if t not in header]
    if not missing:
        return None
    return (f"the sheet has no column for {', '.join(missing)} (its headers: {', '.join(header) or 'none'}); "
            "map them: --column date=HEADER --column action=HEADER ..., --device '{property}/{flat}/{alarm}' "
            f"for an id made of several columns, or an {MAP_FILE} in the records folder")


def canonical(cells: dict[str, str], mapping: Mapping, portfolio: m.Portfolio) -> tuple[dict[str, str], list[str]]:
    """One row in our columns, with the device id composed and matched, and words read as actions and
    results. Returns the row and what could not be read."""
    row = {name: cells.get(mapping.header_of(name), "") for name in FIELDS}
    problems = []
    if mapping.device:
        parts = [cells.get(p.casefold(), "").strip() for p in re.findall(r"{([^}]+)}", mapping.device)]
        found, problem = match_device(parts, portfolio)
        row["device"] = found or "/".join(parts)
        if problem:
            problems.append(problem)
    for name, table in (("action", mapping.actions), ("result", mapping.results)):
        value = row[name].strip()
        if value and words(value) in table:
            row[name] = table[words(value)]
            mapping.seen[f"{value!r} as {name}"] = row[name]
    return row, problems


def match_device(parts: list[str], portfolio: m.Portfolio) -> tuple[str | None, str | None]:
    """property/unit/device from names or ids, matched ignoring case; a device may be named by its room
    when it is the room's only device (or its only one in service)."""
    if len(parts) != 3:
        return None, f"the device template gives {len(parts)} parts; it needs property, unit and device"
    prop = next((p for p in portfolio.properties if words(parts[0]) in (p.id, words(p.name))), None)
    if prop is None:
        return None, f"no property named {parts[0]!r}" + _did_you_mean(
            parts[0], [p.name for p in portfolio.properties] + [p.id for p in portfolio.properties])
    unit = next((u for u in prop.units if words(parts[1]) in (u.id, words(u.name))), None)
    if unit is None:
        return None, f"no unit {parts[1]!r} in {prop.id}" + _did_you_mean(
            parts[1], [u.name for u in prop.units] + [u.id for u in prop.units])
    wanted = words(parts[2])
    device = next((d for d in unit.devices if d.id == wanted), None)
    if device is None:
        rooms = {r.id for r in unit.rooms if wanted in (r.id, words(r.name))}
        in_room = [d for d in unit.devices if d.room in rooms]
        current = [d for d in in_room if portfolio.retired_on(d.uid) is None]  # the room's alarm now
        device = in_room[0] if len(in_room) == 1 else current[0] if len(current) == 1 else None
        if device is None:
            return None, (f"{parts[2]!r} is not a device of {unit.uid}, nor a room with one device in service"
                          + _did_you_mean(parts[2], [d.id for d in unit.devices] + [r.name for r in unit.rooms]))
    return device.uid, None


def _did_you_mean(wrong: str, known: list[str]) -> str:
    import difflib

    by_words = {words(k): k for k in known}
    close = difflib.get_close_matches(words(wrong), list(by_words), n=1)
    return f"; did you mean {by_words[close[0]]!r}?" if close else ""


def read_xlsx(path: Path, sheet_name: str | None,
              date_header: str = "date") -> tuple[str, list[str], list[tuple[int, dict[str, str]]]]:
    """(source prefix 'file.xlsx:Sheet', lower-cased header, (row number, cells)) of the first sheet or the
    one named. Dates come as ISO text; a number in a date column is an Excel serial date."""
    try:
        import openpyxl
        book = openpyxl.load_workbook(path, read_only=True, data_only=True)
    except Exception as exc:  # noqa: BLE001 - openpyxl raises many kinds for a bad file
        raise SheetError(f"{path}: cannot read it as an Excel workbook ({exc})") from None
    if sheet_name is not None and sheet_name not in book.sheetnames:
        raise SheetError(f"{path}: no sheet {sheet_name!r} (sheets: {', '.join(book.sheetnames)})")
    sheet = book[sheet_name] if sheet_name else book.worksheets[0]
    rows = sheet.iter_rows(values_only=True)
    header = [words(str(h or "")) for h in next(rows, ())]
    body = []
    for number, values in enumerate(rows, start=2):
        cells = {name: _cell(value, name == date_header) for name, value in zip(header, values)}
        if any(v.strip() for v in cells.values()):
            body.append((number, cells))
    return f"{path}:{sheet.title}", header, body


def _cell(value, is_date: bool) -> str:
    if value is None:
        return ""
    if isinstance(value, datetime):
        return value.date().isoformat() if value.time() == datetime.min.time() else value.isoformat(sep=" ")
    if isinstance(value, date):
        return value.isoformat()
    if is_date and isinstance(value, (int, float)) and not isinstance(value, bool):
        from openpyxl.utils.datetime import from_excel
        return _cell(from_excel(value), True)
    return str(value)
