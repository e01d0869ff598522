"""Adding a property, unit, room or device to the record files by inserting lines.

No byte of the existing text changes: the new entry is written as new lines after the last line of its
list (or under its list's key), in the style of its siblings (block, or one `{...}` line each). The result
is read back and refused unless it is the old records plus exactly the new entry, and the file still loads
cleanly. A layout that cannot take a clean insertion (flow-style lists, `key: null`) is refused with the
lines to add by hand.
"""
from __future__ import annotations

import re
from dataclasses import dataclass
from datetime import date
from pathlib import Path

import yaml

from .errors import Problems
from .loader import Loaded, file_problems
from .logbook import update_file
from .yamltree import plain, quoted, read_yaml

LIST_OF = {"unit": "units", "room": "rooms", "device": "devices"}
_PLAIN = re.compile(r"[a-z][a-z0-9_-]*|\d{4}-\d{2}(-\d{2})?")
_YAML_WORDS = {"y", "n", "yes", "no", "on", "off", "true", "false", "null"}


class AddRefused(Exception):
    """Nothing was written. `lines` (when given) is the entry to add by hand."""

    def __init__(self, message: str, lines: str = ""):
        super().__init__(message)
        self.lines = lines


@dataclass(frozen=True)
class Insertion:
    text: str   # the whole new file text
    line: int   # 1-based line of the new entry's first line


def scalar(value) -> str:
    """A value as a YAML scalar that reads back as exactly that value."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (int, float)):
        return repr(value)
    if isinstance(value, date):
        return value.isoformat()
    if isinstance(value, (list, tuple)):
        return "[" + ", ".join(scalar(v) for v in value) + "]"
    text = str(value)
    if _PLAIN.fullmatch(text) and text not in _YAML_WORDS:
        return text
    return quoted(text)


def entry_lines(data: dict, dash: int, offset: int = 2, flow: bool = False) -> list[str]:
    """One list item: `- {k: v, ...}` on one line, or a block mapping with keys `offset` after the dash."""
    if flow:
        return [" " * dash + "- {" + ", ".join(f"{k}: {scalar(v)}" for k, v in data.items()) + "}\n"]
    pad = " " * (dash + offset)
    first, *rest = data.items()
    return ([" " * dash + "-" + " " * (offset - 1) + f"{first[0]}: {scalar(first[1])}\n"]
            + [f"{pad}{k}: {scalar(v)}\n" for k, v in rest])


def new_property_text(data: dict, unit: dict) -> str:
    """A whole new property file with its first unit."""
    head = "".join(f"  {k}: {scalar(v)}\n" for k, v in data.items())
    return ("# Added by `recordkit add property`. Add rooms and devices with `recordkit add room|device`.\n"
            f"property:\n{head}  units:\n" + "".join(entry_lines(unit, 4)))


def insert_entry(text: str, path: str, what: str, unit_id: str | None, data: dict) -> Insertion:
    """Insert a unit (into the file's property), or a room or device (into unit `unit_id`)."""
    by_hand = "".join(entry_lines(data, 0))
    try:
        root = yaml.compose(text, Loader=yaml.SafeLoader)
    except yaml.YAMLError as exc:
        raise AddRefused(f"{path}: cannot read the file as YAML ({' '.join(str(exc).split())})", by_hand) from None
    prop = _value(root, "property")
    if not isinstance(prop, yaml.MappingNode):
        raise AddRefused(f"{path}: no 'property:' mapping to add to", by_hand)
    parent = prop
    if what != "unit":
        units = _value(prop, "units")
        found = [item for item in getattr(units, "value", [])
                 if isinstance(item, yaml.MappingNode) and _scalar_of(_value(item, "id")) == unit_id]
        if not found:
            raise AddRefused(f"{path}: no unit '{unit_id}' in this file", by_hand)
        parent = found[0]
    lines = text.splitlines(keepends=True)
    index, new = _placement(parent, LIST_OF[what], data, lines, path, by_hand)
    newline = "\r\n" if "\r\n" in text else "\n"  # the file's own line breaks
    new = [line[:-1] + newline for line in new]
    if index > 0 and not lines[index - 1].endswith(("\n", "\r")):
        lines[index - 1] += newline  # the file's last line had no line break: add one after it, change nothing
    new_text = "".join(lines[:index] + new + lines[index:])
    first = index + 1 + (1 if new[0].rstrip().endswith(":") else 0)  # after a new 'key:' line
    return Insertion(new_text, first)


def _placement(parent: yaml.MappingNode, key: str, data: dict, lines: list[str], path: str,
               by_hand: str) -> tuple[int, list[str]]:
    """Where the new lines go (0-based index into lines) and the lines themselves."""
    if parent.flow_style:
        raise AddRefused(f"{path}:{parent.start_mark.line + 1}: written in flow style ({{...}}); "
                         f"add the entry under '{key}:' by hand", by_hand)
    pair = next(((k, v) for k, v in parent.value if _scalar_of(k) == key), None)
    if pair is None:  # no list yet: the key goes after the parent's last line, at its keys' column
        column = parent.value[0][0].start_mark.column
        return _last_line(parent) + 1, [" " * column + f"{key}:\n", *entry_lines(data, column + 2)]
    key_node, value = pair
    if isinstance(value, yaml.ScalarNode) and value.value == "" and value.style is None:
        return key_node.end_mark.line + 1, entry_lines(data, key_node.start_mark.column + 2)
    if not isinstance(value, yaml.SequenceNode) or value.flow_style or not value.value:
        raise AddRefused(f"{path}:{key_node.start_mark.line + 1}: '{key}:' is not a block list of '- ' items, "
                         "so the entry cannot be inserted cleanly; add it by hand", by_hand)
    dash = value.start_mark.column
    first = value.value[0]
    flow = isinstance(first, yaml.MappingNode) and bool(first.flow_style)
    offset = 2 if flow or not isinstance(first, yaml.MappingNode) else first.start_mark.column - dash
    if offset < 1 or lines[first.start_mark.line][dash:dash + 1] != "-":
        raise AddRefused(f"{path}:{first.start_mark.line + 1}: unusual indentation under '{key}:'; add the "
                         "entry by hand", by_hand)
    return _last_line(value) + 1, entry_lines(data, dash, offset, flow)


def _value(mapping, key: str):
    if not isinstance(mapping, yaml.MappingNode):
        return None
    return next((v for k, v in mapping.value if _scalar_of(k) == key), None)


def _scalar_of(node) -> str | None:
    return node.value if isinstance(node, yaml.ScalarNode) else None


def _last_line(node) -> int:
    """The 0-based last line that holds any of the node's own text (not comments or blank lines after it)."""
    if isinstance(node, yaml.ScalarNode) or getattr(node, "flow_style", False):
        end = node.end_mark
        return end.line if end.column > 0 else end.line - 1
    if isinstance(node, yaml.MappingNode):
        last = node.start_mark.line
        for key, value in node.value:
            last = max(last, _last_line(key))
            if not (isinstance(value, yaml.ScalarNode) and value.value == "" and value.style is None):
                last = max(last, _last_line(value))
        return last
    return max([node.start_mark.line] + [_last_line(item) for item in node.value])


def check_insertion(old: str, new: str, path: str, what: str, unit_id: str | None, data: dict) -> None:
    """Refuse unless the new text reads as the old records plus exactly the new entry."""
    problems = Problems()
    before, after = read_yaml(old.encode(), path, problems), read_yaml(new.encode(), path, problems)
    expected = plain(before)
    prop = expected.get("property") if isinstance(expected, dict) else None
    target = prop if what == "unit" else next(u for u in prop["units"] if u.get("id") == unit_id)
    key = LIST_OF[what]
    target[key] = (target.get(key) or []) + [plain(read_yaml(scalar_map(data).encode(), path, problems))]
    if problems or plain(after) != expected:
        raise AddRefused(f"{path}: inserting would not give the old records plus the new {what}; nothing "
                         "written (is the file's layout unusual?)", "".join(entry_lines(data, 0)))


def scalar_map(data: dict) -> str:
    return "".join(f"{k}: {scalar(v)}\n" for k, v in data.items())


def target_file(records_dir: Path, shown_path: str) -> Path:
    """A record file's path from its shown path (as the loader reported it)."""
    path = Path(shown_path)
    return path if path.is_absolute() or path.exists() else records_dir / path


def add_entry(records_dir: Path, loaded: Loaded, what: str, parent: str, data: dict) -> tuple[Path, int]:
    """Add a unit to property `parent`, or a room or device to unit `parent` (property/unit), with the
    guarantees of `log`: checked first, one writer at a time, temp file, fsync, rename. Returns where the
    new entry starts. Raises AddRefused (nothing written), LogWriteError or MaybeWritten."""
    by_hand = "".join(entry_lines(data, 0))
    property_id, _, unit_id = parent.partition("/")
    prop = next((p for p in loaded.portfolio.properties if p.id == property_id), None)
    if prop is None:
        raise AddRefused(f"no property '{property_id}'" + _known([p.id for p in loaded.portfolio.properties]))
    if what != "unit" and not any(u.id == unit_id for u in prop.units):
        raise AddRefused(f"no unit '{parent}'" + _known([u.uid for u in prop.units]))
    path = target_file(records_dir, prop.source.path)
    shown = prop.source.path
    placed: list[int] = []

    def change(old: bytes | None) -> bytes:
        if old is None:
            raise AddRefused(f"{shown}: the file has gone; nothing written", by_hand)
        try:
            text = old.decode("utf-8-sig")
        except UnicodeDecodeError:
            raise AddRefused(f"{shown}: not UTF-8 text; nothing written", by_hand) from None
        insertion = insert_entry(text, shown, what, unit_id or None, data)
        check_insertion(text, insertion.text, shown, what, unit_id or None, data)
        problems = [p for p in file_problems(insertion.text, shown) if p not in file_problems(text, shown)]
        if problems:
            raise AddRefused("; ".join(str(p) for p in problems) + "; nothing written", by_hand)
        placed.append(insertion.line)
        bom = b"\xef\xbb\xbf" if old.startswith(b"\xef\xbb\xbf") else b""
        return bom + insertion.text.encode("utf-8")

    update_file(path, change, records_dir)
    return path, placed[-1]


def add_property(records_dir: Path, loaded: Loaded, data: dict, unit: dict,
                 name: str | None = None) -> tuple[Path, int]:
    """Write a new property file (never over an existing file). Returns its path and its unit's line."""
    property_id = data["id"]
    if any(p.id == property_id for p in loaded.portfolio.properties):
        raise AddRefused(f"a property '{property_id}' exists already")
    path = records_dir / (name or f"{property_id}.yaml")
    if not path.resolve().is_relative_to(records_dir.resolve()) or path.suffix not in (".yaml", ".yml"):
        raise AddRefused(f"{name}: a property file is a .yaml file inside the records folder")
    text = new_property_text(data, unit)
    problems = file_problems(text, str(path))
    if problems:
        raise AddRefused("; ".join(p.message for p in problems), text)

    def change(old: bytes | None) -> bytes:
        if old is not None:
            raise AddRefused(f"{path}: exists already; nothing written (choose another --file)", text)
        return text.encode("utf-8")

    update_file(path, change, records_dir)
    return path, text.splitlines().index("  units:") + 2


def _known(ids: list[str]) -> str:
    return f" (known: {', '.join(ids[:12])}{', ...' if len(ids) > 12 else ''})" if ids else ""
