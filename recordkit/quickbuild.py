"""A build after a few properties' records changed (a logged test, say) reads only those properties.

A build saves, beside its render index (see `render_cache`), what the next one needs to leave the other
properties alone: each property's records as one hash (`quickload.file_keys`), its summary (what the
pages about the whole portfolio need of it, see `render.summaries`) and the pages it has, with the order
of the properties and the site's key (recordkit's code, the policy, the as-of date, the site settings).

The next build into that folder, when every record file is as the last clean load left them (the
manifest of `quickload` says so; `log` keeps it so), compares the hashes: the properties whose records
changed, with every property linked to one of them by a listening node (its findings and pages may
depend on the other's records), are loaded (`quick_load`), evaluated and their pages made; the pages about
the whole portfolio are made from their new summaries and the others' kept ones; every other page is
kept as written. Anything else (most properties changed, a property added or removed, the site's key or
frame changed, a kept file not as written) means a whole load, as before.
"""
from __future__ import annotations

from dataclasses import dataclass
from datetime import date
from pathlib import Path
from typing import Any

from .cache import ParseCache
from .loader import Loaded
from .quickload import current_manifest, file_keys, quick_load

FORMAT = 1


@dataclass
class Update:
    loaded: Loaded                   # the properties to make again (partial), with the parse cache's hashes
    others: dict[str, dict]          # the other properties' summaries, from the last build
    groups: dict[str, list[str]]     # the other properties' pages, from the last build
    order: list[str]                 # every property, in order
    inputs: dict[str, str]           # every property's records as one hash, now


def inputs_now(root: Path, today: date) -> dict[str, Any] | None:
    """Each property's records as one hash, the properties' order and their listening nodes' links, with
    what `current_manifest` gave, when the manifest is current."""
    try:
        current = current_manifest(root, ParseCache(root), today)
        if current is None or "outline" not in current[0]:
            return None
        return {"inputs": file_keys(current[0], root), "order": list(current[0]["outline"]),
                "links": current[0]["heard"], "current": current}
    except (OSError, KeyError, TypeError, ValueError, IndexError):
        return None


def whole_record(now: dict[str, Any], as_of: date, site_key: str, frame: str, summaries: dict[str, dict],
                 groups: dict[str, list[str]]) -> dict[str, Any]:
    """What a build saves for the next (in the render index)."""
    return {"format": FORMAT, "as_of": as_of.isoformat(), "site": site_key, "frame": frame,
            "order": now["order"], "inputs": now["inputs"], "summaries": summaries, "groups": groups}


def plan_update(root: Path, last: dict[str, Any] | None, as_of: date, today: date) -> Update | None:
    """What this build must load, given what the last build into the same folder saved; None: load all."""
    try:
        return _plan(root, last, as_of, max(today, as_of))
    except (OSError, KeyError, TypeError, ValueError, IndexError, AttributeError):
        return None


def _plan(root: Path, last: dict[str, Any] | None, as_of: date, today: date) -> Update | None:
    if not isinstance(last, dict) or last.get("format") != FORMAT or last.get("as_of") != as_of.isoformat():
        return None
    now = inputs_now(root, today)
    if now is None or now["order"] != last["order"]:
        return None
    order, inputs = now["order"], now["inputs"]
    changed = {pid for pid in order if inputs[pid] != last["inputs"].get(pid)}
    links: dict[str, set[str]] = {pid: set() for pid in order}  # listening nodes, both ways
    for pid, heard in now["links"].items():
        for other in heard:
            links[pid].add(other)
            links.setdefault(other, set()).add(pid)
    wanted, todo = set(changed), list(changed)
    while todo:
        for other in links.get(todo.pop(), ()):
            if other not in wanted:
                wanted.add(other)
                todo.append(other)
    if len(wanted) * 2 > len(order):
        return None  # most changed: one whole load is quicker
    others = {pid: last["summaries"][pid] for pid in order if pid not in wanted}
    groups = {pid: list(last["groups"][pid]) for pid in others}
    loaded = quick_load(root, wanted, as_of, today, with_digests=True, current=now["current"])
    if loaded is None or {p.id for p in loaded.portfolio.properties} != wanted:
        return None
    return Update(loaded, others, groups, order, inputs)
