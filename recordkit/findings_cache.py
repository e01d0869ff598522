"""Findings kept per property between runs: the rules are worked out again only for a property whose
records changed.

A property's findings depend only on its own records and events and on the properties its listening
nodes hear (`Portfolio.only`), the policy, the as-of date and recordkit's code. Those, as the parse
cache's hashes (`loader.Digests`), make the property's key; its findings are kept beside the parse cache
(`.recordkit/cache/`, checksummed like every entry) with that key. A property whose key is unchanged
takes its findings from there; the others are evaluated, on their own when few changed, with the whole
portfolio when most did. Without the parse cache's hashes, everything is evaluated.
"""
from __future__ import annotations

from datetime import date
from pathlib import Path
from typing import Any

from . import memo
from . import model as m
from .cache import ParseCache
from .checks import Finding, by_property, evaluate
from .errors import Source
from .loader import Digests, Loaded
from .hashes import code_digest, digest, policy_digest
from .rules import Policy
from .schedule import State

KIND = "findings"
FORMAT = 1


def property_key(digests: Digests, portfolio: m.Portfolio, prop: m.Property, base: str) -> str:
    heard = sorted(portfolio.heard(prop))
    properties = [prop, *(p for p in portfolio.properties if p.id in heard)] if heard else [prop]
    return digest([base, [[p.id, digests.properties.get(p.id),
                           [[u.uid, digests.units.get(u.uid),
                             [digests.events.get(d.uid, []) for d in u.devices]] for u in p.units]]
                          for p in properties]])


def encode(findings: list[Finding]) -> dict:
    """Findings as rows of numbers into one table of their strings (reasons and sources repeat a lot)."""
    strings: dict[str, int] = {}

    def at(text: str) -> int:
        return strings.setdefault(text, len(strings))
    rows = [[at(f.device), at(f.kind.value), at(f.task), f.due.isoformat() if f.due else None, at(f.state.value),
             at(f.reason), at(f.rule), at(f.source), f.local, at(f.record.path), f.record.line, at(f.unit)]
            for f in findings]
    return {"strings": list(strings), "rows": rows}


def decode(data: Any) -> list[Finding]:
    """Raises (ValueError, KeyError, IndexError, TypeError) on anything that is not what `encode` wrote."""
    s = data["strings"]
    if not all(isinstance(x, str) for x in s):
        raise TypeError("not a string table")
    days: dict[str, date] = {}
    found = []
    for device, kind, task, due, state, reason, rule, source, local, path, line, unit in data["rows"]:
        if not isinstance(local, bool) or not isinstance(line, int) or not (due is None or isinstance(due, str)):
            raise TypeError("not a finding")
        day = (days.get(due) or days.setdefault(due, date.fromisoformat(due))) if due else None
        found.append(Finding(s[device], KINDS[s[kind]], s[task], day, STATES[s[state]], s[reason], s[rule],
                             s[source], local, Source(s[path], line), s[unit]))
    return found


KINDS = {kind.value: kind for kind in m.Kind}  # (a lookup is 5x quicker than Kind(value) a finding)
STATES = {state.value: state for state in State}


def cached_evaluate(loaded: Loaded, policy: Policy, as_of: date) -> list[Finding]:
    """`evaluate(loaded.portfolio, policy, as_of)`, from the findings kept for unchanged properties."""
    portfolio, digests = loaded.portfolio, loaded.digests
    if digests is None:
        return evaluate(portfolio, policy, as_of)
    cache = ParseCache(Path(loaded.root))
    base = digest([code_digest(), FORMAT, policy_digest(policy), as_of, loaded.root])
    kept: dict[str, list[Finding]] = {}
    keys: dict[str, str] = {}
    in_memory = memo.store(str(Path(loaded.root).resolve()), KIND)  # (what this process has: `serve`)
    for prop in portfolio.properties:
        keys[prop.id] = key = property_key(digests, portfolio, prop, base)
        known = in_memory.get(prop.id)
        if known is not None and known[0] == key:
            kept[prop.id] = known[1]
            continue
        note = cache.note(KIND, prop.id)
        if isinstance(note, dict) and note.get("key") == key:
            try:
                kept[prop.id] = decode(note["findings"])
                in_memory[prop.id] = key, kept[prop.id]
            except (ValueError, KeyError, IndexError, TypeError):
                pass
    stale = [p.id for p in portfolio.properties if p.id not in kept]
    if not stale:
        return [f for p in portfolio.properties for f in kept[p.id]]
    made: dict[str, list[Finding]] = {}
    if len(stale) * 2 > len(portfolio.properties):  # most changed: one pass over everything is quicker
        made = by_property(evaluate(portfolio, policy, as_of))
    else:
        for pid in stale:
            made[pid] = [f for f in evaluate(portfolio.only({pid}), policy, as_of) if f.unit.split("/", 1)[0] == pid]
    for pid in stale:
        cache.put_note(KIND, pid, {"key": keys[pid], "findings": encode(made.get(pid, []))})
        in_memory[pid] = keys[pid], made.get(pid, [])
    return [f for p in portfolio.properties for f in (kept[p.id] if p.id in kept else made.get(p.id, []))]
