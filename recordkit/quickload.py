"""Loading only the properties a command is about, when the records are exactly as a clean load left
them: `log` and `status --property` then read a few cache entries, not the whole portfolio.

After every clean load with the cache, the loader saves a manifest beside the parse cache: each record
file's size, modification time and content hash, which file holds each property, the hash of its
devices' events in each file that holds some (so which files those are), and which other properties
its listening nodes hear. `quick_load` lists the
record files and compares each with the manifest (a file changed too recently for its time to be
trusted is compared by content, as the parse cache does); on any difference, or when the last load was
not clean, it returns None and the command loads everything as before. The result is marked `partial`.
"""
from __future__ import annotations

import hashlib
import os
import time
from datetime import date, datetime, timezone
from pathlib import Path
from typing import Any

from . import csvlog
from . import model as m
from .cache import RACY_SECONDS, ParseCache
from .hashes import digest
from .errors import Problems
from .evidence import recording_state
from .loader import Digests, Loaded, _Builder
from .recordfiles import CSV_SUFFIX, POLICY_FILE, record_files
from .rules import Policy, apply_policy_file
from .safeio import UnsafeFile, read_regular
from .yamltree import MAX_FILE_BYTES, read_yaml

KIND = "manifest"
FORMAT = 3  # 2: each property's events in each file as one hash; 3: which files hold them, from those


def save_manifest(cache: ParseCache, fileset: str, digests: dict[str, str], stats: dict[str, Any],
                  portfolio: m.Portfolio, inside_of: dict[str, str], hashes: Digests) -> None:
    from .status_cache import outline_of  # (it imports this module)

    now = time.time()
    histories: dict[str, dict[str, list]] = {}  # property -> file -> [device, hash of its events there]
    for device, held in hashes.events.items():
        for ref in held:
            name, _, hashed = ref.rpartition(":")
            histories.setdefault(device.split("/", 1)[0], {}).setdefault(name, []).append([device, hashed])
    evidence: dict[str, set[str]] = {}
    for device, refs in hashes.evidence.items():
        evidence.setdefault(device.split("/", 1)[0], set()).update(refs)
    cache.put_note(KIND, "records", {
        "format": FORMAT, "fileset": fileset,
        "files": {name: [stats[name].st_size, stats[name].st_mtime_ns, digest,
                         now - stats[name].st_mtime <= RACY_SECONDS] for name, digest in digests.items()},
        "properties": {p.id: inside_of[p.source.path] for p in portfolio.properties},
        "heard": {p.id: sorted(heard) for p in portfolio.properties if (heard := portfolio.heard(p))},
        "outline": outline_of(portfolio.properties),
        "histories": {pid: {name: _history_key(rows) for name, rows in by_file.items()}
                      for pid, by_file in histories.items()},
        "evidence": {pid: sorted(refs) for pid, refs in evidence.items()}})


def _history_key(rows: list[list[str]]) -> str:
    """A property's events in one file as one hash: each of its devices' history there (as the parse cache
    hashes it), so that other properties' events appended to a shared log leave it unchanged."""
    return digest(sorted(rows))


def file_keys(manifest: dict, root: Path | None = None) -> dict[str, str]:
    """Each property's records as one hash: the file holding it, by content, and its devices' events in
    each file that holds some. A property whose hash is unchanged has the same records and events. With
    `root`, also the recordings its events keep, by size and time (a page shows what each holds)."""
    files, evidence = manifest["files"], manifest.get("evidence", {}) if root is not None else {}
    histories = manifest["histories"]
    return {pid: digest([pid, files[name][2], sorted(histories.get(pid, {}).items()),
                         [recording_state(root, ref) for ref in evidence.get(pid, [])]])
            for pid, name in manifest["properties"].items()}


def quick_load(root: Path, property_ids: set[str], as_of: date, today: date | None = None,
               with_digests: bool = False, current: tuple | None = None) -> Loaded | None:
    """Just these properties (and those their nodes hear), with their devices' events; None when the
    records are not exactly as the last clean load left them, or a property is unknown. `with_digests`:
    with the parse cache's hashes of what was loaded (`loader.Digests`), as a whole load gives them.
    `current`: what `current_manifest` just gave the caller (not worked out twice)."""
    cache = ParseCache(root)
    try:
        return _quick(root, cache, property_ids, as_of, max(today or as_of, as_of), with_digests, current)
    except (OSError, UnsafeFile, KeyError, TypeError, ValueError, AttributeError):
        return None


def current_manifest(root: Path, cache: ParseCache, today: date) -> tuple[dict, dict[str, Path], float] | None:
    """The manifest, the record files by name and the newest file's time, when every record file is
    exactly as the last clean load (with no event after `today`) left it; else None."""
    manifest = cache.note(KIND, "records")
    if not isinstance(manifest, dict) or manifest.get("format") != FORMAT \
            or not cache.loaded_clean(manifest["fileset"], today):
        return None
    problems = Problems()
    paths = record_files(root, problems)
    files = manifest["files"]
    named = {path.relative_to(root).as_posix(): path for path in paths}
    if problems or set(named) != set(files):
        return None
    newest = 0.0
    for name, path in named.items():
        size, mtime_ns, digest, racy = files[name]
        stat = os.stat(path)
        if (stat.st_size, stat.st_mtime_ns) != (size, mtime_ns):
            return None
        if racy and hashlib.blake2b(read_regular(path, stat.st_size + 1), digest_size=16).hexdigest() != digest:
            return None
        newest = max(newest, stat.st_mtime)
    return manifest, named, newest


def _quick(root: Path, cache: ParseCache, property_ids: set[str], as_of: date, today: date,
           with_digests: bool = False, current: tuple | None = None) -> Loaded | None:
    current = current or current_manifest(root, cache, today)
    if current is None:
        return None
    manifest, named, newest = current
    problems = Problems()
    wanted = set(property_ids)
    if not wanted <= set(manifest["properties"]):
        return None
    wanted |= {pid for own in property_ids for pid in manifest["heard"].get(own, [])}
    needed = {manifest["properties"][pid] for pid in wanted}
    needed |= {name for pid in wanted for name in manifest["histories"].get(pid, {})}  # (its event files)
    builder, policy = _Builder(problems), Policy()
    hashes = Digests() if with_digests else None
    for name, path in named.items():  # in the loader's order, so events keep their order
        shown = str(path)
        if path.parent == root and path.name == POLICY_FILE:
            policy = apply_policy_file(read_yaml(read_regular(path, MAX_FILE_BYTES), shown, problems), shown,
                                       problems, policy)
        elif name in needed:
            limit = csvlog.MAX_CSV_BYTES if path.suffix == CSV_SUFFIX else MAX_FILE_BYTES
            payload = cache.get(path, name, limit)[0]
            if payload is None or not builder.add_cached(payload, shown, hashes, name):
                return None
    if problems:
        return None
    events = tuple(e for e in builder.events if e.device.split("/", 1)[0] in wanted)
    portfolio = m.Portfolio(tuple(p for p in builder.properties if p.id in wanted), events)
    if as_of < today and any(e.date > as_of for e in events):  # a past view, as the loader gives it
        portfolio = m.Portfolio(portfolio.properties, tuple(e for e in events if e.date <= as_of))
    last = datetime.fromtimestamp(newest, timezone.utc) if newest else None
    return Loaded(str(root), portfolio, policy, [], [str(p) for p in named.values()], last, hashes, partial=True)


def refresh_after_append(root: Path, paths: list[Path], appended: list) -> bool:
    """After `log` appended checked events (`appended`, each with a `record_key`) to these event files,
    bring the parse cache, the clean-load memo and the manifest up to date by reading those files alone,
    so the next command need not load everything again. Each file must be its text of the last clean load
    followed by exactly those events (anything else, such as a hand edit meanwhile, was not checked).
    False, with nothing changed, when that cannot be done safely: then the next load is a whole one."""
    cache = ParseCache(root)
    try:
        return _refresh(root, cache, paths, sorted(e.record_key for e in appended))
    except (OSError, UnsafeFile, KeyError, TypeError, ValueError, AttributeError):
        return False


def _refresh(root: Path, cache: ParseCache, paths: list[Path], appended: list) -> bool:
    manifest, memo = cache.note(KIND, "records"), cache.clean_memo()
    if not isinstance(manifest, dict) or manifest.get("format") != FORMAT or memo is None \
            or memo["key"] != manifest["fileset"]:
        return False
    files, newest = dict(manifest["files"]), date.fromisoformat(memo["newest_event"])
    added: list = []
    for path in paths:
        name, shown = path.relative_to(root).as_posix(), str(path)
        if name in memo["property_files"] or path.suffix == CSV_SUFFIX:
            return False
        stat = os.stat(path)
        data = read_regular(path, MAX_FILE_BYTES)
        problems = Problems()
        builder = _Builder(problems)
        tree = read_yaml(data, shown, problems)
        if tree is None or problems:
            return False
        builder.add_file(tree, shown)
        if problems or builder.properties:  # (an event file only)
            return False
        old_size, old_digest = (files[name][0], files[name][2]) if name in files else (0, None)
        if old_digest is not None and hashlib.blake2b(data[:old_size], digest_size=16).hexdigest() != old_digest:
            return False
        first_new_line = data[:old_size].count(b"\n") + 1
        added += [e.record_key for e in builder.events if e.line >= first_new_line]
        digest = hashlib.blake2b(data, digest_size=16).hexdigest()
        payload = builder.cache_payload(0, 0)
        cache.put(name, stat, digest, payload)
        files[name] = [stat.st_size, stat.st_mtime_ns, digest, True]
        newest = max([newest, *(e.date for e in builder.events)])
        by_property: dict[str, list] = {}
        for device, hashed in payload["digests"]["events"].items():
            by_property.setdefault(device.split("/", 1)[0], []).append([device, hashed])
        for pid, rows in by_property.items():
            manifest["histories"].setdefault(pid, {})[name] = _history_key(rows)
        for event in builder.events:
            if event.evidence:
                pid = event.device.split("/", 1)[0]
                manifest.setdefault("evidence", {})[pid] = sorted({*manifest["evidence"].get(pid, []), event.evidence})
    if sorted(added) != appended:
        return False  # (the cache entries written above are checked by content on their next use)
    digests = {name: entry[2] for name, entry in files.items()}
    fileset = cache.fileset_key(list(digests.items()))
    cache.mark_clean(fileset, newest, digests, memo["property_files"])
    cache.put_note(KIND, "records", {**manifest, "fileset": fileset, "files": files})
    return True
