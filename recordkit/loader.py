"""Record files -> model, with every problem collected as file:line data.

Any number of `*.yaml` files anywhere under the records folder; each may hold a
`property:` mapping, an `events:` list, or both. `policy.yaml` at the root holds
local rule overrides. Nothing here raises for bad input: problems are returned.
"""
from __future__ import annotations

import gc
import re
from contextlib import contextmanager
from dataclasses import dataclass, field
from datetime import date, datetime, timezone
from pathlib import Path
from typing import Any

from . import csvlog, memo, progress
from . import model as m
from .cache import (EVIDENCE_PATTERN, ParseCache, decode_events, decode_property, encode_events, encode_property,
                    record_digests)
from .errors import Problem, Problems, Source
from .fields import MAX_LIFE_YEARS, Fields
from .rules import Policy, apply_policy_file
from .recordfiles import CSV_SUFFIX, POLICY_FILE, record_files
from .references import ORPHAN_MESSAGES, suggest, event_problems, refuse_exports
from .safeio import UnsafeFile
from .yamltree import MAX_FILE_BYTES, read_yaml

EVIDENCE = re.compile(r"^sha256:[0-9a-f]{64}$")
# A listening node's circuit design values (ohms, farads, hertz), all optional.
CIRCUIT_KEYS = ("filter_r_ohm", "filter_c_farad", "corner_hz", "hold_r_ohm", "hold_c_farad")


@dataclass
class Loaded:
    """The result of loading a records folder. Trust `portfolio` only when `problems` is empty."""

    root: str
    portfolio: m.Portfolio
    policy: Policy
    problems: list[Problem]
    files: list[str] = field(default_factory=list)
    last_changed: datetime | None = None  # newest record file's modification time (UTC)
    digests: "Digests | None" = None  # with the cache: short hashes of what each unit's pages are made of
    partial: bool = False  # only some properties (see quickload): for a command about those alone


@dataclass
class Digests:
    """Hashes of the records, from the parse cache: a property's own fields, each unit's record, and each
    device's history as (file, hash) in load order. Two loads with equal hashes hold equal records."""

    properties: dict[str, str] = field(default_factory=dict)
    units: dict[str, str] = field(default_factory=dict)
    events: dict[str, list[str]] = field(default_factory=dict)
    evidence: dict[str, list[str]] = field(default_factory=dict)  # device -> its events' recordings

    def add(self, digests: dict, file: str) -> None:
        if not all(isinstance(d, str) for part in ("units", "events") for d in digests.get(part, {}).values()):
            raise TypeError("a digest that is not text")
        for device, refs in digests.get("evidence", {}).items():
            if not all(isinstance(r, str) and EVIDENCE_PATTERN.match(r) for r in refs):
                raise TypeError("not a recording's reference")
            self.evidence.setdefault(device, []).extend(refs)
        if "property" in digests:
            self.properties[str(digests.get("id"))] = digests["property"]
        self.units.update(digests.get("units", {}))
        for device, digest in digests["events"].items():
            self.events.setdefault(device, []).append(f"{file}:{digest}")

    @property
    def ok(self) -> bool:
        return not self.problems


def load_records(root: str | Path, as_of: date, cache: bool = True, today: date | None = None) -> Loaded:
    """Load and validate every record under `root` as of a date.

    Events dated after `today` (the real date, which only the faces read; default `as_of`) are record
    problems. Events after `as_of` but not after `today` are valid and left out of the portfolio, so a past
    as-of date shows what the records said then.

    With `cache`, parsed files are kept under `root/.recordkit/cache/` and reused while unchanged. Afterwards the
    process's objects are frozen out of the cycle collector (see `_collector_paused`)."""
    with _collector_paused():
        return _load(Path(root), as_of, cache, max(today or as_of, as_of))


@contextmanager
def _collector_paused():
    """Python's cycle collector rescans every new object again and again while millions are made and
    none is garbage; pausing it for the load makes a large warm load 2-3x quicker (measured). Then what
    the process holds is moved out of the collector's sight (`gc.freeze`): records hold no reference
    cycles and live until the command ends, and otherwise the first collection after the load would scan
    them all (0.4 s at 10,000 units) and the build that follows would rescan them many times (about 10 %
    of a 10,000-unit build). They are still freed as usual when dropped."""
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        gc.freeze()
        if was_enabled:
            gc.enable()


def _load(root: Path, as_of: date, cache: bool, today: date) -> Loaded:
    problems = Problems()
    if not root.is_dir():
        problems.add(Source(str(root), 0), "records folder not found")
        return Loaded(str(root), m.Portfolio(), Policy(), problems)
    policy = Policy()
    builder = _Builder(problems)
    parse_cache = ParseCache(root, enabled=cache)
    paths = record_files(root, problems)
    newest = 0.0
    digests: list[tuple[str, str]] = []
    record_hashes = Digests() if cache else None
    inside_of: dict[str, str] = {}  # each file's path as shown in messages -> as named in the cache
    stats: dict[str, Any] = {}
    shown_of: dict[str, str] = {}
    reading = progress.bar(len(paths), "Reading records", "file")
    folder = str(root.resolve())
    for path in paths:
        reading.update()
        shown = str(path)
        inside = path.relative_to(root).as_posix()  # the cache's name for the file, however root is written
        inside_of[shown], shown_of[inside] = inside, shown
        is_policy = path.parent == root and path.name == POLICY_FILE
        try:
            if cache and not is_policy and (known := memo.recall(folder, shown, stat := path.stat())):
                newest = max(newest, stat.st_mtime)
                digests.append((inside, known.digest))
                stats[inside] = stat
                builder.add_decoded(known.events, known.prop)
                if record_hashes is not None and known.digests is not None:
                    record_hashes.add(known.digests, inside)
                continue
            limit = csvlog.MAX_CSV_BYTES if path.suffix == CSV_SUFFIX else MAX_FILE_BYTES
            payload, data, stat, digest = parse_cache.get(path, inside, limit)
            newest = max(newest, stat.st_mtime)
            digests.append((inside, digest))
            stats[inside] = stat
            if payload is not None and not is_policy \
                    and (decoded := builder.add_cached(payload, shown, record_hashes, inside)):
                if cache:
                    memo.remember(folder, shown, stat, memo.Decoded(stat.st_size, stat.st_mtime_ns, digest,
                                                                    *decoded, payload.get("digests")))
                continue
            if data is None:
                data = path.read_bytes()
        except UnsafeFile as exc:
            problems.add(Source(shown, 0), str(exc).removeprefix(f"{path}: "))
            continue
        except OSError as exc:
            problems.add(Source(shown, 0), f"cannot read: {exc.strerror or exc}")
            continue
        before, properties_before, events_before = len(problems), len(builder.properties), len(builder.events)
        if path.suffix == CSV_SUFFIX:
            builder.add_csv(data, shown)
        else:
            tree = read_yaml(data, shown, problems)
            if is_policy:
                policy = apply_policy_file(tree, shown, problems, policy)
                continue
            if tree is None and not data.strip():
                problems.add(Source(shown, 1), "file is empty; expected 'property:' and/or 'events:'")
                continue
            if tree is None:
                continue
            builder.add_file(tree, shown)
        if len(problems) == before:
            payload = builder.cache_payload(properties_before, events_before, with_digests=cache)
            parse_cache.put(inside, stat, digest, payload)
            if record_hashes is not None:
                record_hashes.add(payload["digests"], inside)
            if cache:
                prop = builder.properties[-1] if len(builder.properties) > properties_before else None
                memo.remember(folder, shown, stat, memo.Decoded(stat.st_size, stat.st_mtime_ns, digest,
                                                                tuple(builder.events[events_before:]), prop,
                                                                payload.get("digests")))
    reading.close()
    # The checks across files (an event's device exists, was in service, ...) depend only on the files'
    # content and, for "not after the as-of date", on the newest event: skip them when this exact set of
    # files loaded cleanly before.
    # When only files without a property changed since a clean load (a `log` appended to one), only their
    # events need the checks, with every event of a device they retire.
    fileset = parse_cache.fileset_key(digests) if not problems else None
    known_clean = bool(fileset) and parse_cache.loaded_clean(fileset, today)
    property_files = sorted({inside_of[p.source.path] for p in builder.properties if p.source.path in inside_of})
    changed = parse_cache.changed_since_clean(dict(digests), property_files, today) \
        if fileset and not known_clean else None
    portfolio = builder.finish(today, check_events=not known_clean and changed is None)
    if changed is not None:
        builder.check_events_of(portfolio, {shown_of[inside] for inside in changed}, today)
    if not known_clean and any(path.suffix == CSV_SUFFIX for path in paths):  # (exports are CSV files)
        refuse_exports(builder.events, problems)
    if fileset and not known_clean and not problems and portfolio.events:
        parse_cache.mark_clean(fileset, max(e.date for e in portfolio.events), dict(digests), property_files)
    if fileset and not problems and record_hashes is not None and portfolio.events:
        from .quickload import save_manifest  # (it imports this module)

        save_manifest(parse_cache, fileset, dict(digests), stats, portfolio, inside_of, record_hashes)
    if as_of < today and any(event.date > as_of for event in portfolio.events):  # a past view
        portfolio = m.Portfolio(portfolio.properties, tuple(e for e in portfolio.events if e.date <= as_of))
    last = datetime.fromtimestamp(newest, timezone.utc) if newest else None
    return Loaded(str(root), portfolio, policy, problems.sorted(), [str(p) for p in paths], last, record_hashes)


def file_problems(text: str, path: str) -> list[Problem]:
    """The problems one record file's text has on its own (fields, ids, rooms), as the loader finds them:
    for checking an edit before it is written. Events are not checked against the other files."""
    problems = Problems()
    tree = read_yaml(text.encode("utf-8"), path, problems)
    if tree is not None:
        builder = _Builder(problems)
        builder.add_file(tree, path)
        builder.finish(date.max, check_events=False)
    return problems.sorted()


class _Builder:
    def __init__(self, problems: Problems):
        self.problems = problems
        self.properties: list[m.Property] = []
        self.events: list[m.Event] = []
        self.property_sources: dict[str, Source] = {}
        self.strings: dict[str, str] = {}
        self.days: dict[str, date] = {}
        self.orphans: dict[str, list] = {}  # unknown device id -> [events naming it, the first one's source]

    # ---- files -------------------------------------------------------------------------
    def add_file(self, tree: Any, path: str) -> None:
        top = Fields(tree, path, self.problems, "file")
        if not top.ok:
            return
        top.used.update({"property", "events"})
        if not top.map:
            top.error(None, "expected 'property:' and/or 'events:' at the top level")
        if "property" in top.map:
            prop = self._property(top.raw("property"), path, top.map.line_of("property"))
            if prop:
                self._add_property(prop)
        for item, line in top.items("events"):
            event = self._event(item, path, line)
            if event:
                self.events.append(event)
        top.finish()

    def _add_property(self, prop: m.Property) -> None:
        first = self.property_sources.get(prop.id)
        if first:
            self.problems.add(prop.source, f"property: duplicate id '{prop.id}' (first at {first})")
        else:
            self.property_sources[prop.id] = prop.source
            self.properties.append(prop)

    # ---- the parse cache: a file's property as the checked record, its events as columns ----------
    def cache_payload(self, properties_before: int, events_before: int, with_digests: bool = True) -> dict:
        events = self.events[events_before:]
        prop = self.properties[-1] if len(self.properties) > properties_before else None
        payload: dict[str, Any] = {"events": encode_events(events)}
        if prop is not None:
            payload["property"] = encode_property(prop)
        if with_digests:
            payload["digests"] = {**record_digests(prop, events), **({"id": prop.id} if prop else {})}
        return payload

    def add_cached(self, payload: Any, path: str, digests: "Digests | None" = None,
                   inside: str = "") -> tuple[tuple[m.Event, ...], m.Property | None] | None:
        """Add a file from its cache entry: (its events, its property); None (nothing added) when the entry
        is damaged."""
        try:
            events = tuple(decode_events(payload["events"], path, self._shared, self._day))
            prop = decode_property(payload["property"], path) if "property" in payload else None
            if digests is not None:
                digests.add(payload["digests"], inside)
        except (ValueError, KeyError, IndexError, TypeError, AttributeError):
            return None
        self.add_decoded(events, prop)
        return events, prop

    def add_decoded(self, events: tuple[m.Event, ...], prop: m.Property | None) -> None:
        if prop is not None:
            self._add_property(prop)
        self.events.extend(events)

    def _shared(self, text: str) -> str:
        """One copy of each repeated string (device ids, 'tenant'): millions of events share them."""
        return self.strings.setdefault(text, text)

    def _day(self, iso: str) -> date:
        day = self.days.get(iso)
        if day is None:
            day = self.days[iso] = date.fromisoformat(iso)
        return day

    def add_csv(self, data: bytes, path: str) -> None:
        """Events from a CSV log: one per row, with the same checks as YAML events."""
        try:
            text = data.decode("utf-8-sig")
        except UnicodeDecodeError:
            self.problems.add(Source(path, 1), "not UTF-8 text; save the log as UTF-8 CSV")
            return
        header, body = csvlog.rows(text)
        if problem := csvlog.header_problem(header):
            self.problems.add(Source(path, 1), problem)
            return
        for line, cells in body:
            source = Source(path, line)
            row, messages = csvlog.read_row(cells)
            if messages:
                self.problems.add(source, f"event: cannot read this row ({'; '.join(messages)})")
                continue
            self.events.append(m.Event(row.date, self._shared(row.device), row.action, path, line, row.result,
                                       self._shared(row.by), self._shared(row.note), row.when, row.evidence))

    # ---- properties, units, rooms, devices ----------------------------------------------
    def _property(self, tree: Any, path: str, line: int) -> m.Property | None:
        f = Fields(tree, path, self.problems, "property", line)
        if not f.ok:
            return None
        pid = f.ident()
        name = f.text("name", required=True)
        address = f.text("address")
        units = self._unique(
            [self._unit(item, path, ln, pid) for item, ln in f.items("units", required=True)], "unit")
        f.finish()
        return m.Property(pid, name, f.source(), address, tuple(units)) if pid else None

    def _unit(self, tree: Any, path: str, line: int, pid: str) -> m.Unit | None:
        f = Fields(tree, path, self.problems, "unit", line)
        if not f.ok:
            return None
        uid = f.ident()
        f.what = f"unit '{uid}'"
        name = f.text("name", default=uid)
        # rooms may be added later (`recordkit add room`); a unit without them is a coverage finding
        rooms = self._unique([self._room(item, path, ln) for item, ln in f.items("rooms")], "room")
        room_ids = {r.id for r in rooms}
        devices = self._unique(
            [self._device(item, path, ln, f"{pid}/{uid}", room_ids) for item, ln in f.items("devices")], "device")
        self._check_replaces(devices)
        self._check_serves(rooms)
        unit = m.Unit(uid, f"{pid}/{uid}", name, f.source(), tuple(rooms), tuple(devices),
                      attached_garage=f.flag("attached_garage"),
                      interconnect_required=f.flag("interconnect_required"))
        f.finish()
        return unit if uid else None

    def _check_replaces(self, devices: list[m.Device]) -> None:
        """`replaces:` names another device of the same unit, and no device is replaced twice."""
        ids = {d.id for d in devices}
        by_old: dict[str, m.Device] = {}
        for device in devices:
            old = device.replaces
            if not old:
                continue
            if old == device.id or old not in ids:
                self.problems.add(device.source, f"device '{device.id}': replaces '{old}', which is not "
                                  "another device of this unit" + suggest(old, ids - {device.id}))
            elif old in by_old:
                self.problems.add(device.source, f"device '{device.id}': '{old}' is already replaced by "
                                  f"'{by_old[old].id}'")
            else:
                by_old[old] = device

    def _check_serves(self, rooms: list[m.Room]) -> None:
        """`serves:` lists bedrooms of the same unit."""
        bedrooms = {r.id for r in rooms if r.use is m.RoomUse.BEDROOM}
        for room in rooms:
            for served in room.serves:
                if served not in bedrooms:
                    self.problems.add(room.source, f"room '{room.id}': serves '{served}', which is not a bedroom "
                                      "of this unit" + suggest(served, bedrooms))

    def _room(self, tree: Any, path: str, line: int) -> m.Room | None:
        f = Fields(tree, path, self.problems, "room", line)
        if not f.ok:
            return None
        rid = f.ident()
        f.what = f"room '{rid}'"
        level = f.number("level", integer=True, required=True)
        serves = tuple(str(item) for item, _ in f.items("serves"))
        room = m.Room(rid, f.text("name", default=rid), int(level or 0),
                      f.choice("use", m.RoomUse, m.RoomUse.OTHER, required=True), f.source(),
                      outside_sleeping=f.flag("outside_sleeping") or bool(serves), fuel_burning=f.flag("fuel_burning"),
                      appliances=f.choices("appliances", m.Appliance), flue=f.flag("flue"), serves=serves,
                      habitable=f.flag("habitable"))
        f.finish()
        return room if rid else None

    def _device(self, tree: Any, path: str, line: int, unit_uid: str, room_ids: set[str]) -> m.Device | None:
        f = Fields(tree, path, self.problems, "device", line)
        if not f.ok:
            return None
        did = f.ident()
        f.what = f"device '{did}'"
        kind = f.choice("kind", m.Kind, required=True)
        room = f.text("room", required=True)
        if room and room not in room_ids:
            f.error("room", f"room '{room}' is not a room of this unit"
                    + suggest(room, room_ids))
        sensor = f.choice("sensor", m.Sensor)
        if kind and sensor and sensor not in m.SENSORS_FOR_KIND[kind]:
            allowed = ", ".join(sorted(m.SENSORS_FOR_KIND[kind])) or "none"
            f.error("sensor", f"a {kind.label} does not have a {sensor} sensor (expected: {allowed})")
        power = f.choice("power", m.Power, m.Power.BATTERY, required=True)
        is_alarm = kind in m.ALARM_KINDS
        manufactured_text = f.text("manufactured", required=is_alarm)
        manufactured = f.day("manufactured", allow_month=True, allow_unknown=True)
        installed = f.day("installed", required=True, allow_month=True)
        if manufactured and installed and manufactured > installed:
            f.error("manufactured", f"manufactured ({manufactured_text}) is after installed ({installed})")
        removed = f.day("removed")
        if removed and installed and removed < installed:
            f.error("removed", f"removed ({removed}) is before installed ({installed})")
        life = f.number("life_years", integer=True, minimum=1, maximum=MAX_LIFE_YEARS)
        listens = [self._listen(item, path, ln) for item, ln in f.items("listens_to")]
        if kind is m.Kind.LISTENING_NODE and not listens and f.ok:
            f.error(None, "a listening node needs 'listens_to': the alarm device ids it is meant to hear")
        if listens and kind is not m.Kind.LISTENING_NODE:
            f.error("listens_to", "only a listening_node has 'listens_to'")
        threshold = f.number("threshold_dba", minimum=0)
        circuit = {key: f.number(key, minimum=0) for key in CIRCUIT_KEYS}
        hold_threshold = f.number("hold_threshold", minimum=0.01)
        if hold_threshold is not None and hold_threshold >= 1:
            f.error("hold_threshold", "'hold_threshold' is a fraction of the charged level, below 1 (e.g. 0.5)")
            hold_threshold = None
        node_only = [k for k in (*CIRCUIT_KEYS, "threshold_dba", "hold_threshold")
                     if k in f.map and f.map[k] is not None]
        if kind is not m.Kind.LISTENING_NODE and node_only:
            f.error(node_only[0], f"only a listening_node has '{node_only[0]}'")
        device = m.Device(
            did, f"{unit_uid}/{did}", kind or m.Kind.SMOKE, room, power or m.Power.BATTERY,
            installed or date.min, f.source(), manufactured=manufactured,
            manufactured_text=manufactured_text, sensor=sensor,
            life_years=life, removed=removed, location=f.text("location"), note=f.text("note"),
            interconnected=f.flag("interconnected"), replaces=f.text("replaces"), listens_to=tuple(x for x in listens if x),
            threshold_dba=threshold, hold_threshold=hold_threshold, **circuit)
        f.finish()
        return device if did and kind and installed else None

    def _listen(self, tree: Any, path: str, line: int) -> m.Listen | None:
        if isinstance(tree, str):
            return m.Listen(tree, Source(path, line))
        f = Fields(tree, path, self.problems, "listens_to item", line)
        if not f.ok:
            return None
        listen = m.Listen(f.text("device", required=True), f.source(),
                          distance_m=f.number("distance_m", minimum=0.1),
                          doors=f.number("doors", integer=True, minimum=0),
                          walls=f.number("walls", integer=True, minimum=0))
        f.finish()
        return listen if listen.device else None

    def _unique(self, items: list, what: str) -> list:
        """Drop unreadable items and refuse a second item with the same id in one parent."""
        seen: dict[str, Source] = {}
        kept = []
        for item in items:
            if item is None:
                continue
            if item.id in seen:
                self.problems.add(item.source, f"{what}: duplicate id '{item.id}' (first at {seen[item.id]})")
                continue
            seen[item.id] = item.source
            kept.append(item)
        return kept

    # ---- events --------------------------------------------------------------------------
    def _event(self, tree: Any, path: str, line: int) -> m.Event | None:
        before = len(self.problems)
        f = Fields(tree, path, self.problems, "event", line)
        if not f.ok:
            return None
        when, clock = f.day_time("date", required=True)
        device = f.text("device", required=True)
        action = f.choice("action", m.Action, required=True)
        result = f.choice("result", m.Result)
        event = m.Event(when or date.min, self._shared(device), action or m.Action.NOTE, path, f.line, result,
                        by=self._shared(f.text("by")), note=self._shared(f.text("note")), time=clock,
                        evidence=f.text("evidence"))
        if event.evidence and not EVIDENCE.match(event.evidence):
            f.error("evidence", "'evidence' is 'sha256:' and 64 hex digits (written by `recordkit hear --log`)")
        f.finish()
        return event if len(self.problems) == before else None  # unreadable: not checked further

    # ---- cross-references ----------------------------------------------------------------
    def finish(self, today: date, check_events: bool = True) -> m.Portfolio:
        portfolio = m.Portfolio(tuple(self.properties), tuple(self.events))
        devices = portfolio.devices
        for located in devices.values():
            for listen in located.device.listens_to:
                target = listen.device if "/" in listen.device else f"{located.unit.uid}/{listen.device}"
                if target not in devices:
                    self.problems.add(listen.source, f"listens_to: no device '{listen.device}'"
                                      + suggest(target, devices))
                elif devices[target].device.kind is m.Kind.LISTENING_NODE:
                    self.problems.add(listen.source, f"listens_to: '{listen.device}' is a listening node, "
                                      "not an alarm")
        if check_events:
            for event in portfolio.events:
                self._check_event(event, portfolio, today)
            self.report_orphans()
        return portfolio

    def check_events_of(self, portfolio: m.Portfolio, files: set[str], today: date) -> None:
        """The checks across files for the events of these files only, and for every event of a device
        one of them retires (a replacement makes that device's later events wrong wherever they are)."""
        retired = {e.device for e in portfolio.events if e.path in files and e.action is m.Action.REPLACE}
        for event in portfolio.events:
            if event.path in files or event.device in retired:
                self._check_event(event, portfolio, today)
        self.report_orphans()

    def _check_event(self, event: m.Event, portfolio: m.Portfolio, today: date) -> None:
        messages = event_problems(event, portfolio, today)
        if messages and event.device not in portfolio.devices:
            # one typo in a device id can orphan thousands of events: say it a few times, then count
            seen = self.orphans.setdefault(event.device, [0, event.source])
            seen[0] += 1
            if seen[0] > ORPHAN_MESSAGES:
                return
        for message in messages:
            self.problems.add(event.source, f"event: {message}")

    def report_orphans(self) -> None:
        for device, (count, first) in self.orphans.items():
            if count > ORPHAN_MESSAGES:
                self.problems.add(first, f"event: {count - ORPHAN_MESSAGES} more event(s) name the unknown device "
                                  f"'{device}' (not listed one by one)")


