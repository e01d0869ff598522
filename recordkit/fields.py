"""Reading typed fields out of one located YAML mapping, collecting problems.

A `Fields` wraps one mapping (a property, a room, an event ...). Each getter
reports a wrong or missing value at its line and returns a fallback, so the
loader can go on and find every other problem in the same run. `finish()`
reports keys nobody asked for: a misspelt key is an error, not silently lost.
"""
from __future__ import annotations

import math
import re
from datetime import date, time
from enum import StrEnum
from typing import Any, TypeVar

from .errors import Problems, Source
from .yamltree import YMap

E = TypeVar("E", bound=StrEnum)

ID_PATTERN = re.compile(r"^[a-z0-9](?:[a-z0-9-]{0,62}[a-z0-9])?$")
# Ids become file names in the site: keep names Windows cannot create out.
RESERVED_IDS = {"con", "prn", "aux", "nul", *(f"com{i}" for i in range(1, 10)), *(f"lpt{i}" for i in range(1, 10))}
_DAY = re.compile(r"^(\d{4})-(\d{2})-(\d{2})$")
_MONTH = re.compile(r"^(\d{4})-(\d{2})$")
_DAY_TIME = re.compile(r"^(\d{4}-\d{2}-\d{2})(?:[ T](\d{2}):(\d{2})(?::(\d{2}))?)?$")
_SCIENTIFIC = re.compile(r"^[-+]?\d+(\.\d*)?[eE][-+]?\d+$")
_MISSING = object()
# Record dates are bounded so every date sum the tool makes stays a real date (a year-9999 entry once
# passed `check` and crashed every other command).
FIRST_YEAR, LAST_YEAR = 1900, 2199
MAX_LIFE_YEARS = 50  # a maker's stated life; no alarm is sold for longer


def parse_date(text: Any, *, allow_month: bool = False, allow_unknown: bool = False) -> date | None:
    """Strictly parse YYYY-MM-DD (or YYYY-MM, read as the 1st; or 'unknown' -> None), 1900-2199."""
    found = _parse_date(text, allow_month, allow_unknown)
    if found is not None and not FIRST_YEAR <= found.year <= LAST_YEAR:
        raise ValueError(f"{found} is outside the years {FIRST_YEAR}-{LAST_YEAR} a record may hold")
    return found


def _parse_date(text: Any, allow_month: bool, allow_unknown: bool) -> date | None:
    value = str(text).strip() if isinstance(text, (str, int)) and not isinstance(text, bool) else None
    if value is not None:
        if allow_unknown and value.lower() == "unknown":
            return None
        if m := _DAY.match(value):
            year, month, day = map(int, m.groups())
            try:
                return date(year, month, day)
            except ValueError:
                raise ValueError(f"{value} is not a real date") from None
        if allow_month and (m := _MONTH.match(value)):
            year, month = map(int, m.groups())
            if 1 <= month <= 12:
                return date(year, month, 1)  # a month is read as its first day (the cautious reading)
            raise ValueError(f"{value} is not a real month")
    forms = "YYYY-MM-DD" + (", YYYY-MM" if allow_month else "") + (" or unknown" if allow_unknown else "")
    raise ValueError(f"expected a date as {forms}, got {text!r}")


def parse_date_time(text: Any) -> tuple[date, time | None]:
    """YYYY-MM-DD, optionally followed by a time of day: 'YYYY-MM-DD HH:MM[:SS]' (or with a T)."""
    match = _DAY_TIME.match(str(text).strip()) if isinstance(text, str) else None
    if not match:
        return parse_date(text), None
    day = parse_date(match.group(1))
    if match.group(2) is None:
        return day, None
    hour, minute, second = int(match.group(2)), int(match.group(3)), int(match.group(4) or 0)
    try:
        return day, time(hour, minute, second)
    except ValueError:
        raise ValueError(f"{text} has no such time of day") from None


class Fields:
    def __init__(self, mapping: Any, path: str, problems: Problems, what: str, line: int = 1):
        self.ok = isinstance(mapping, YMap)
        self.map: YMap = mapping if self.ok else YMap()
        self.path = path
        self.problems = problems
        self.what = what
        self.line = mapping.line if self.ok else line
        self.used: set[str] = set()
        if not self.ok:
            problems.add(Source(path, line), f"{what}: expected a mapping of key: value, got {_describe(mapping)}")

    def source(self, key: str | None = None) -> Source:
        return Source(self.path, self.map.line_of(key) if key and key in self.map else self.line)

    def error(self, key: str | None, message: str) -> None:
        self.problems.add(self.source(key), f"{self.what}: {message}")

    def _get(self, key: str, required: bool) -> Any:
        self.used.add(key)
        value = self.map.get(key, _MISSING)
        if value is _MISSING or value is None:
            if required and self.ok:
                self.error(None, f"missing '{key}'")
            return _MISSING
        return value

    def text(self, key: str, default: str = "", required: bool = False) -> str:
        value = self._get(key, required)
        if value is _MISSING:
            return default
        if isinstance(value, (dict, list)) or isinstance(value, bool):
            self.error(key, f"'{key}' must be text, got {_describe(value)}")
            return default
        return getattr(value, "written", None) or str(value)  # a number-like note keeps its own digits

    def ident(self, key: str = "id") -> str:
        value = self._get(key, True)
        if value is _MISSING:
            return ""
        if not isinstance(value, str):
            written = getattr(value, "written", repr(value))
            self.error(key, f"bad id {written}: it reads as a number, not a name; quote it (id: \"{written}\") "
                       "or use letters")
            return ""
        text = value
        if not ID_PATTERN.match(text) or text in RESERVED_IDS:
            self.error(key, f"bad id {value!r}: use lowercase a-z, 0-9 and single hyphens inside "
                       "(e.g. flat-1), at most 64 characters, not a reserved device name")
            return ""
        return text

    def choice(self, key: str, enum: type[E], default: E | None = None, required: bool = False) -> E | None:
        value = self._get(key, required)
        if value is _MISSING:
            return default
        try:
            return enum(value)
        except ValueError:
            self.error(key, f"'{key}' is {value!r}; expected one of: {', '.join(e.value for e in enum)}")
            return default

    def choices(self, key: str, enum: type[E]) -> tuple[E, ...]:
        """A list of enum values, each checked at its own line."""
        found = []
        for item, line in self.items(key):
            try:
                found.append(enum(item))
            except ValueError:
                self.problems.add(Source(self.path, line), f"{self.what}: '{key}' has {item!r}; expected any of: "
                                  f"{', '.join(e.value for e in enum)}")
        return tuple(found)

    def flag(self, key: str) -> bool:
        value = self._get(key, False)
        if value is _MISSING:
            return False
        if not isinstance(value, bool):
            self.error(key, f"'{key}' must be true or false, got {value!r}")
            return False
        return value

    def number(self, key: str, *, integer: bool = False, minimum: float | None = None,
               maximum: float | None = None, required: bool = False) -> float | int | None:
        value = self._get(key, required)
        if value is _MISSING:
            return None
        if isinstance(value, float) and not math.isfinite(value):
            self.error(key, f"'{key}' must be a finite number, got {value!r}")
            return None
        kinds = (int,) if integer else (int, float)
        if not integer and isinstance(value, str) and _SCIENTIFIC.match(value.strip()):
            value = float(value)  # YAML 1.1 reads 22e-9 (no dot) as text; a capacitor value is written so
        if isinstance(value, bool) or not isinstance(value, kinds):
            self.error(key, f"'{key}' must be {'a whole number' if integer else 'a number'}, got {value!r}")
            return None
        if minimum is not None and value < minimum:
            self.error(key, f"'{key}' must be at least {minimum}, got {value!r}")
            return None
        if maximum is not None and value > maximum:
            self.error(key, f"'{key}' must be at most {maximum}, got {value!r}")
            return None
        return value

    def day(self, key: str, *, required: bool = False, allow_month: bool = False,
            allow_unknown: bool = False) -> date | None:
        value = self._get(key, required)
        if value is _MISSING:
            return None
        try:
            return parse_date(value, allow_month=allow_month, allow_unknown=allow_unknown)
        except ValueError as exc:
            self.error(key, f"'{key}': {exc}")
            return None

    def day_time(self, key: str, *, required: bool = False) -> tuple[date | None, time | None]:
        value = self._get(key, required)
        if value is _MISSING:
            return None, None
        try:
            return parse_date_time(value)
        except ValueError as exc:
            self.error(key, f"'{key}': {exc}")
            return None, None

    def items(self, key: str, required: bool = False) -> list[tuple[Any, int]]:
        """A list field as (item, line) pairs."""
        value = self._get(key, required)
        if value is _MISSING:
            return []
        if not isinstance(value, list):
            self.error(key, f"'{key}' must be a list, got {_describe(value)}")
            return []
        lines = getattr(value, "item_lines", [self.map.line_of(key)] * len(value))
        return list(zip(value, lines))

    def raw(self, key: str) -> Any:
        value = self._get(key, False)
        return None if value is _MISSING else value

    def finish(self) -> None:
        for key in self.map:
            if key not in self.used:
                allowed = ", ".join(sorted(self.used))
                self.problems.add(Source(self.path, self.map.key_lines[key]),
                                  f"{self.what}: unknown key '{key}' (allowed here: {allowed})")


def _describe(value: Any) -> str:
    if isinstance(value, dict):
        return "a mapping"
    if isinstance(value, list):
        return "a list"
    if value is None:
        return "nothing"
    return repr(value)
