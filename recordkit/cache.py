"""A parse cache for record files, so an edit to one file re-parses only that file.

What the loader made of each file is kept as JSON (never pickle: a cache is
data, and loading it must not run code) under `<records>/.recordkit/cache/`, keyed by the
file's path inside the records folder (so `../data` and `/home/x/data` share one cache), its size,
modification time and a hash of its content. An entry is
used only when all of them and recordkit's version match; anything else (a
missing, stale or corrupt entry) falls back to a normal parse. Deleting the
folder is always safe. Only files that loaded without problems are cached.
"""
from __future__ import annotations

import dataclasses
import functools
import hashlib
import hmac
import json
import os
import re
import secrets
import time
from datetime import date
from datetime import time as time_of_day
from enum import Enum
from itertools import repeat
from pathlib import Path
from stat import S_ISREG
from types import UnionType
from typing import Any, Callable, Union, get_args, get_origin, get_type_hints

from . import __version__
from . import model as m
from .errors import Source
from .fields import FIRST_YEAR, ID_PATTERN, LAST_YEAR, RESERVED_IDS
from .hashes import digest
from .logbook import ensure_work_dir
from .safeio import read_regular

EVIDENCE_PATTERN = re.compile(r"^sha256:[0-9a-f]{64}$")
CACHE_DIR = ".recordkit/cache"  # inside the tool's own hidden folder (see logbook.WORK_DIR)
FORMAT = 10  # 10: entries by path inside the records folder, with digests of each unit and device history
CLEAN_FILE = "clean.json"
RACY_SECONDS = 2.0
MAX_ENTRY_BYTES = 512 * 1024 * 1024  # an entry is smaller than the record file it stands for


def _codec(kind: Any) -> tuple[Callable[[Any], Any], Callable[[Any, str], Any]]:
    """(encode, decode) for a value of a record field's type, as plain JSON data. A `Source` keeps only
    its line: every record of an entry comes from the entry's file."""
    if get_origin(kind) in (Union, UnionType):
        (inner,) = [a for a in get_args(kind) if a is not type(None)]  # only "X | None" is known here
        inner_encode, inner_decode = _codec(inner)
        return ((lambda v: None if v is None else inner_encode(v)),
                (lambda v, p: None if v is None else inner_decode(v, p)))
    if get_origin(kind) is tuple:
        item_encode, item_decode = _codec(get_args(kind)[0])
        return (lambda v: [item_encode(x) for x in v]), (lambda v, p: tuple(item_decode(x, p) for x in v))
    if kind is Source:
        return (lambda v: v.line), (lambda v, p: Source(p, v))
    if kind is date:
        return date.isoformat, (lambda v, p: date.fromisoformat(v))
    if isinstance(kind, type) and issubclass(kind, Enum):
        return (lambda v: v.value), (lambda v, p: kind(v))
    if dataclasses.is_dataclass(kind):
        hints = get_type_hints(kind)
        names = [f.name for f in dataclasses.fields(kind)]
        codecs = [_codec(hints[name]) for name in names]
        decoders = [dec for _, dec in codecs]

        def decode(values: list, path: str):
            if len(values) != len(names):
                raise ValueError(f"{kind.__name__}: {len(values)} values for {len(names)} fields")
            for i, dec in enumerate(decoders):
                values[i] = dec(values[i], path)
            record = object.__new__(kind)  # the fields as checked when the entry was made (frozen: no __init__)
            record.__dict__.update(zip(names, values))
            return record
        return (lambda v: [enc(getattr(v, n)) for n, (enc, _) in zip(names, codecs)]), decode
    if kind in (str, int, float, bool):
        return (lambda v: v), _checked(kind)
    raise TypeError(f"no cache codec for {kind!r}")


def _checked(kind: type) -> Callable[[Any, str], Any]:
    """A plain value read back only if it has the type the record field has (a forged entry is a miss)."""
    allowed = (int, float) if kind is float else (kind,)

    def decode(value: Any, path: str) -> Any:
        if isinstance(value, bool) is not (kind is bool) or not isinstance(value, allowed):
            raise TypeError(f"expected {kind.__name__}, got {type(value).__name__}")
        return value
    return decode


_PROPERTY_ENCODE, _PROPERTY_DECODE = _codec(m.Property)
_UNIT_ENCODE = _codec(m.Unit)[0]


def record_digests(prop: m.Property | None, events: list[m.Event]) -> dict:
    """What one file says about each unit and each device's history, as short hashes: a page made from
    them is made again only when one of its hashes changes (see render_cache)."""
    by_device: dict[str, list] = {}
    evidence: dict[str, set[str]] = {}
    for e in events:
        by_device.setdefault(e.device, []).append(
            [e.date.isoformat(), e.time.isoformat() if e.time else None, e.action.value,
             e.result.value if e.result else None, e.by, e.note, e.evidence, e.line])
        if e.evidence:
            evidence.setdefault(e.device, set()).add(e.evidence)
    digests: dict[str, Any] = {"events": {device: digest(rows, 12) for device, rows in by_device.items()}}
    if evidence:  # a page shows what each kept recording holds: its file is one of the page's inputs
        digests["evidence"] = {device: sorted(refs) for device, refs in evidence.items()}
    if prop is not None:
        digests["property"] = digest([prop.id, prop.name, prop.address, prop.source.line], 12)
        digests["units"] = {unit.uid: digest(_UNIT_ENCODE(unit), 12) for unit in prop.units}
    return digests


def encode_property(prop: m.Property) -> list:
    """A validated property (units, rooms, devices) as JSON data: read back without validating again."""
    return _PROPERTY_ENCODE(prop)


def decode_property(data: list, path: str) -> m.Property:
    """A property from its entry, with every id checked as the loader checks it: ids become page paths
    and links, so an entry must not be able to name `../x` or carry markup."""
    prop = _PROPERTY_DECODE(data, path)
    ids = [prop.id]
    for unit in prop.units:
        ids += [unit.id, *(r.id for r in unit.rooms), *(d.id for d in unit.devices),
                *(d.replaces for d in unit.devices if d.replaces),
                *(served for r in unit.rooms for served in r.serves)]
        if unit.uid != f"{prop.id}/{unit.id}" or any(d.uid != f"{unit.uid}/{d.id}" for d in unit.devices):
            raise ValueError("an id path that does not match its ids")
    if not all(ID_PATTERN.match(i) and i not in RESERVED_IDS for i in ids):
        raise ValueError("a bad id")
    return prop


def encode_events(events: list[m.Event]) -> dict:
    """A file's events as columns of small numbers into tables of its distinct values: compact, and
    quick to turn back into events (see `decode_events`)."""
    strings: dict[str, int] = {}
    days: dict[date, int] = {}
    kinds: dict[tuple, int] = {}
    columns: dict[str, list] = {"day": [], "device": [], "kind": [], "by": [], "note": [], "line": []}
    times, evidence = [], []
    for row, e in enumerate(events):
        columns["day"].append(days.setdefault(e.date, len(days)))
        columns["kind"].append(kinds.setdefault((e.action.value, e.result.value if e.result else None), len(kinds)))
        for name, text in (("device", e.device), ("by", e.by), ("note", e.note)):
            columns[name].append(strings.setdefault(text, len(strings)))
        columns["line"].append(e.line)
        if e.time:
            times.append([row, e.time.isoformat()])
        if e.evidence:
            evidence.append([row, e.evidence])
    return {"count": len(events), "strings": list(strings), "days": [d.isoformat() for d in days],
            "kinds": [list(k) for k in kinds], **columns, "times": times, "evidence": evidence}


def decode_events(data: dict, path: str, share: Callable[[str], str], day: Callable[[str], date]) -> list[m.Event]:
    """Events from `encode_events` columns. Each column becomes values by table lookups done in C, and the
    events are built as tuples in C: a warm load is then about as quick as reading a CSV file.
    A damaged entry raises (ValueError, KeyError, IndexError, TypeError); the caller parses the file again."""
    count = data["count"]
    if not all(isinstance(s, str) for s in data["strings"]):
        raise TypeError("a text that is not text")
    strings = [share(s) for s in data["strings"]]
    days = [day(d) for d in data["days"]]
    if any(not FIRST_YEAR <= d.year <= LAST_YEAR for d in days):
        raise ValueError("a date outside the years records may hold")
    kinds = [(m.Action(a), m.Result(r) if r is not None else None) for a, r in data["kinds"]]
    actions, results = [k[0] for k in kinds], [k[1] for k in kinds]
    columns = [data[name] for name in ("day", "device", "kind", "by", "note", "line")]
    if any(len(column) != count for column in columns):
        raise ValueError("columns of different lengths")
    times: list = [None] * count
    for row, text in data["times"]:
        times[row] = time_of_day.fromisoformat(text)
    evidence: list = [""] * count
    for row, text in data["evidence"]:
        if not EVIDENCE_PATTERN.match(text):
            raise ValueError("a bad evidence reference")
        evidence[row] = text
    day_col, device_col, kind_col, by_col, note_col, line_col = columns
    text_at = strings.__getitem__
    rows = zip(map(days.__getitem__, day_col), map(text_at, device_col), map(actions.__getitem__, kind_col),
               repeat(path, count), line_col, map(results.__getitem__, kind_col), map(text_at, by_col),
               map(text_at, note_col), times, evidence)
    return list(map(tuple.__new__, repeat(m.Event), rows))


def _checksum(text: str) -> str:
    """Keyed with this machine's own cache key: an entry made elsewhere (copied, synced, planted in a
    shared folder) is a miss, never trusted. An entry names its file's path, size, time and content hash,
    so it cannot stand for another file or other content either."""
    return hashlib.blake2b(text.encode("utf-8"), digest_size=16, key=_machine_key()).hexdigest()


@functools.cache
def _machine_key() -> bytes:
    """32 random bytes kept outside any records folder ($XDG_CACHE_HOME or ~/.cache, recordkit/cache-key,
    mode 0600); made on first use. Where it cannot be kept, a key for this process only (no reuse)."""
    home = Path(os.environ.get("XDG_CACHE_HOME") or Path.home() / ".cache") / "recordkit"
    path = home / "cache-key"
    try:
        key = read_regular(path, 64, follow_links=False)
        if len(key) == 32:
            return key
    except OSError:
        pass
    key = secrets.token_bytes(32)
    try:
        home.mkdir(parents=True, exist_ok=True)
        temp = home / f".cache-key.{os.getpid()}"
        fd = os.open(temp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
        with os.fdopen(fd, "wb") as handle:
            handle.write(key)
        os.replace(temp, path)
    except OSError:
        pass
    return key


class ParseCache:
    def __init__(self, records_dir: Path, enabled: bool = True):
        self.records_dir = records_dir
        self.folder = records_dir / CACHE_DIR
        self.enabled = enabled
        self.hits = self.misses = 0

    def _entry_path(self, shown: str) -> Path:
        return self.folder / (hashlib.sha1(shown.encode()).hexdigest() + ".json")

    def get(self, path: Path, shown: str, limit: int) -> tuple[Any, bytes | None, os.stat_result, str | None]:
        """(payload or None, the file's bytes if they were read, its stat, its content digest if known).
        Only a regular file of at most `limit` bytes is read (UnsafeFile otherwise)."""
        stat = path.stat()
        if not S_ISREG(stat.st_mode) or stat.st_size > limit:
            read_regular(path, limit)  # raises UnsafeFile with the reason, without reading
        entry = self._load_entry(shown) if self.enabled else None
        if entry and entry["stat_trusted"] and entry["size"] == stat.st_size \
                and entry["mtime_ns"] == stat.st_mtime_ns:
            self.hits += 1
            return entry["payload"], None, stat, entry["digest"]
        data = read_regular(path, limit)
        digest = hashlib.blake2b(data, digest_size=16).hexdigest()
        if entry and entry["digest"] == digest:  # touched but unchanged (e.g. a fresh checkout)
            self.hits += 1
            self.put(shown, stat, digest, entry["payload"])
            return entry["payload"], data, stat, digest
        self.misses += 1
        return None, data, stat, digest

    def _load_entry(self, shown: str) -> dict | None:
        entry = self._read(self._entry_path(shown))
        keys = {"format", "version", "path", "size", "mtime_ns", "stat_trusted", "digest", "payload"}
        if not isinstance(entry, dict) or set(entry) != keys or entry["format"] != FORMAT \
                or entry["version"] != __version__ or entry["path"] != shown:
            return None
        return entry

    # ---- the last clean load: the files it read (by content hash) and its newest event date ----------
    @staticmethod
    def fileset_key(digests: list[tuple[str, str]]) -> str:
        """One hash for a whole set of record files, from each file's path and content hash."""
        joined = "\n".join(f"{path}\0{digest}" for path, digest in sorted(digests))
        return hashlib.blake2b(f"{FORMAT}\0{__version__}\n{joined}".encode(), digest_size=16).hexdigest()

    def loaded_clean(self, key: str, as_of: date) -> bool:
        """True when exactly these files (same content) loaded without a problem before, and none of
        their events is after `as_of`: the checks across files would find nothing again."""
        if not self.enabled:
            return False
        try:
            memo = self._read(self.folder / CLEAN_FILE)
            return memo["key"] == key and date.fromisoformat(memo["newest_event"]) <= as_of
        except (OSError, ValueError, KeyError, TypeError):
            return False

    # ---- small derived results kept by a key (e.g. a recording's analysis by its hash and size) ----------
    def note(self, kind: str, key: str) -> Any:
        entry = self._read(self._entry_path(f"{kind}\0{key}"))
        return entry["value"] if isinstance(entry, dict) and entry.get("key") == f"{kind}\0{key}" else None

    def put_note(self, kind: str, key: str, value: Any) -> None:
        self._write(self._entry_path(f"{kind}\0{key}"), {"key": f"{kind}\0{key}", "value": value})

    def mark_clean(self, key: str, newest_event: date, files: dict[str, str] | None = None,
                   property_files: list[str] | None = None) -> None:
        self._write(self.folder / CLEAN_FILE, {"key": key, "newest_event": newest_event.isoformat(),
                                               "files": files or {}, "property_files": property_files or []})

    def clean_memo(self) -> dict | None:
        """What `mark_clean` last wrote, or None."""
        memo = self._read(self.folder / CLEAN_FILE) if self.enabled else None
        return memo if isinstance(memo, dict) and {"key", "newest_event", "files", "property_files"} <= set(memo) \
            else None

    def changed_since_clean(self, files: dict[str, str], property_files: list[str], as_of: date) -> set[str] | None:
        """The record files that changed or came since the last clean load, when every file holding a
        property is as it was then (so the devices events are checked against are the same); None when
        the whole check is needed."""
        memo = self.clean_memo()
        if memo is None:
            return None
        try:
            before, held = memo["files"], memo["property_files"]
            if date.fromisoformat(memo["newest_event"]) > as_of or held != property_files \
                    or any(before.get(name) != files.get(name) for name in held):
                return None
            return {name for name, digest in files.items() if before.get(name) != digest}
        except (OSError, ValueError, KeyError, TypeError, AttributeError):
            return None

    def put(self, shown: str, stat: os.stat_result, digest: str, payload: Any) -> None:
        if not self.enabled:
            return
        # A file changed within the clock's granularity of being read could change again with the same
        # size and mtime ("racy" in git's words): for such an entry, always compare the content hash.
        trusted = time.time() - stat.st_mtime > RACY_SECONDS
        entry = {"format": FORMAT, "version": __version__, "path": shown, "size": stat.st_size,
                 "mtime_ns": stat.st_mtime_ns, "stat_trusted": trusted, "digest": digest, "payload": payload}
        self._write(self._entry_path(shown), entry)

    @staticmethod
    def _read(source: Path) -> Any:
        """What `_write` wrote, or None when it is missing or damaged in any way (its checksum tells,
        even where the damage still reads as JSON: cached records are not validated again)."""
        try:
            raw = read_regular(source, MAX_ENTRY_BYTES, follow_links=False)  # never a link or a FIFO
            check, _, text = raw.decode("utf-8").partition("\n")
            return json.loads(text) if hmac.compare_digest(check, _checksum(text)) else None
        except (OSError, ValueError, RecursionError):  # RecursionError: absurdly nested JSON
            return None

    def _write(self, target: Path, data: dict) -> None:
        if not self.enabled:
            return
        try:
            ensure_work_dir(self.records_dir)
            self.folder.mkdir(exist_ok=True)
            temp = target.with_suffix(f".{os.getpid()}.tmp")
            text = json.dumps(data, separators=(",", ":"))
            temp.write_text(f"{_checksum(text)}\n{text}", encoding="utf-8")
            os.replace(temp, target)
        except OSError:
            pass  # a read-only records folder just means no cache
