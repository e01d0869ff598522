"""`status` for the whole portfolio without loading it: each property's findings as an earlier run left
them, while its record files are unchanged.

When every record file is exactly as the last clean load left it (the manifest of `quickload` says so),
a property's findings depend only on its files (its own record, the files holding its devices' events,
and those of the properties its listening nodes hear), the policy file, the as-of date, the records
folder as named and recordkit's code. Those, as the content hashes in the manifest, make the property's
key. Kept with that key, beside the parse cache: the property's findings that a plain `status` lists
(overdue and due soon) apart from the rest, and how many of each state. A property whose key changed
(after `log`, say) is loaded alone and evaluated again; when most changed, the caller loads everything.
The names `status` prints come from the manifest's outline of properties and units.
"""
from __future__ import annotations

from collections import Counter
from dataclasses import dataclass, field
from datetime import date
from pathlib import Path

from .cache import ParseCache
from .model import PropertyLine, UnitLine
from .checks import Finding, by_property, evaluate
from .findings_cache import decode, encode
from .hashes import code_digest, digest
from .quickload import current_manifest, file_keys, quick_load
from .recordfiles import POLICY_FILE
from .schedule import State

KIND = "status"
REST = "status-rest"
FORMAT = 1


@dataclass
class Outline:
    """The properties and units in load order, by name: what `status_text` needs of a portfolio."""
    properties: list[PropertyLine] = field(default_factory=list)


@dataclass
class QuickStatus:
    outline: Outline
    findings: list[Finding]  # all of them, or (when not asked for all) only those not in date
    tally: Counter


def outline_of(properties) -> dict:
    """What the manifest keeps of each property for `status`: its name, address and units."""
    return {p.id: [p.name, p.address, [[u.id, u.name] for u in p.units]] for p in properties}


def _keys(manifest: dict, root: Path, as_of: date) -> dict[str, str]:
    files = manifest["files"]
    policy = files.get(POLICY_FILE, [None, None, None])[2]
    base = digest([code_digest(), FORMAT, policy, as_of, str(root)])
    own = file_keys(manifest)
    return {pid: digest([base, [own[p] for p in [pid, *manifest["heard"].get(pid, [])]]])
            for pid in manifest["outline"]}


def remember(root: Path, findings: list[Finding], as_of: date, today: date) -> None:
    """Keep each property's findings of a whole load for the next `status` (when the manifest is current)."""
    cache = ParseCache(root)
    try:
        current = current_manifest(root, cache, today)
        if current is None or "outline" not in current[0]:
            return
        keys = _keys(current[0], root, as_of)
    except (OSError, KeyError, TypeError, ValueError, IndexError):
        return
    grouped = by_property(findings)
    for pid, key in keys.items():
        _put(cache, pid, key, grouped.get(pid, []))


def _put(cache: ParseCache, pid: str, key: str, findings: list[Finding]) -> None:
    """Two notes, so that a plain listing reads only the first: the findings not in date, with the count
    and places of the rest; the rest (in date) under the same key."""
    rest = [f for f in findings if f.state is State.OK]
    places = "".join("r" if f.state is State.OK else "d" for f in findings)
    cache.put_note(KIND, pid, {"key": key, "due": encode([f for f in findings if f.state is not State.OK]),
                               "ok": len(rest), "places": places})
    cache.put_note(REST, pid, {"key": key, "rest": encode(rest)})


def _kept(cache: ParseCache, pid: str, key: str, note: dict, everything: bool) -> list[Finding] | None:
    """A property's kept findings in their order (or only those not in date); None if the rest is lost."""
    due = decode(note["due"])
    if not everything:
        return due
    rest_note = cache.note(REST, pid)
    if not isinstance(rest_note, dict) or rest_note.get("key") != key:
        return None
    rest, places = decode(rest_note["rest"]), note["places"]
    if not isinstance(places, str) or places.count("r") != len(rest) or len(places) != len(rest) + len(due):
        return None
    in_date, not_in_date = iter(rest), iter(due)
    return [next(in_date) if place == "r" else next(not_in_date) for place in places]


def quick_status(root: Path, as_of: date, today: date, everything: bool) -> QuickStatus | None:
    """The whole portfolio's findings (`everything`), or those not in date and the count of each state;
    None when the records are not as the last clean load left them or most properties changed since."""
    cache = ParseCache(root)
    try:
        return _quick_status(root, cache, as_of, max(today, as_of), everything)
    except (OSError, KeyError, TypeError, ValueError, IndexError):
        return None


def _quick_status(root: Path, cache: ParseCache, as_of: date, today: date, everything: bool) -> QuickStatus | None:
    current = current_manifest(root, cache, today)
    if current is None or "outline" not in current[0]:
        return None
    manifest = current[0]
    keys = _keys(manifest, root, as_of)
    kept: dict[str, tuple[list[Finding], int]] = {}  # findings, how many in date
    for pid, key in keys.items():
        note = cache.note(KIND, pid)
        if isinstance(note, dict) and note.get("key") == key:
            found = _kept(cache, pid, key, note, everything)
            if found is not None:
                kept[pid] = found, int(note["ok"])
    stale = set(keys) - set(kept)
    if len(stale) * 2 > len(keys):
        return None
    made: dict[str, list[Finding]] = {}
    if stale:
        loaded = quick_load(root, stale, as_of, today, current=current)
        if loaded is None:
            return None
        made = by_property(evaluate(loaded.portfolio.only(stale), loaded.policy, as_of))
        for pid in stale:
            _put(cache, pid, keys[pid], made.get(pid, []))
    findings: list[Finding] = []
    tally: Counter = Counter()
    for pid in keys:
        if pid in made:
            chosen = [f for f in made[pid] if everything or f.state is not State.OK]
            tally.update(f.state for f in made[pid])
        else:
            chosen, in_date = kept[pid]
            tally.update(f.state for f in chosen)
            if not everything:
                tally[State.OK] += in_date
        findings += chosen
    outline = Outline([PropertyLine(pid, name, address, tuple(UnitLine(f"{pid}/{uid}", uid, uname)
                                                              for uid, uname in units))
                       for pid, (name, address, units) in manifest["outline"].items()])
    return QuickStatus(outline, findings, tally)
