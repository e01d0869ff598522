"""Short hashes of what something is made of: the records (see `cache.record_digests`), the policy and
recordkit itself. The caches beside the parse cache (findings, the render index, page keys) compare these
to tell whether what they kept still holds."""
from __future__ import annotations

import dataclasses
import functools
import hashlib
import json
from enum import Enum
from pathlib import Path
from typing import Any

from . import __version__, site_templates


def digest(parts: Any, size: int = 16) -> str:
    """A hash of JSON-like data; sets, enums, dataclasses and dates are taken as in `_plain`."""
    return hashlib.blake2b(json.dumps(parts, default=_plain, separators=(",", ":")).encode(),
                           digest_size=size).hexdigest()


def joined_digest(*parts: str) -> str:
    """A hash of a list of texts, each with its length (so no two lists give the same text): for keys
    made of many other hashes and texts, a fraction of the cost of `digest`."""
    return hashlib.blake2b("".join(f"{len(part)}:{part}" for part in parts).encode("utf-8", "surrogatepass"),
                           digest_size=16).hexdigest()


def _plain(value: Any) -> Any:
    """A value as JSON data that is the same in every process (a set's order is not: string hashes are
    salted per process, so sets are sorted)."""
    if isinstance(value, Enum):
        return value.value
    if isinstance(value, (set, frozenset)):
        return sorted((_plain(v) if not isinstance(v, str) else v for v in value), key=str)
    if dataclasses.is_dataclass(value):
        return [type(value).__name__, *(getattr(value, f.name) for f in dataclasses.fields(value))]
    return str(value)


@functools.cache
def code_digest() -> str:
    """recordkit itself by content: its templates, styles and scripts, and its code (a changed template or
    a changed way of making a page or a finding changes every key, with or without a new version number)."""
    hasher = hashlib.blake2b(__version__.encode(), digest_size=16)
    templates = Path(site_templates.__file__).resolve().parent
    package = Path(__file__).resolve().parent
    for folder, pattern in ((templates, "*"), (package, "*.py")):
        for path in sorted(p for p in folder.rglob(pattern) if p.is_file() and "__pycache__" not in p.parts):
            hasher.update(path.relative_to(folder).as_posix().encode() + b"\0" + path.read_bytes() + b"\0")
    return hasher.hexdigest()


def policy_digest(policy) -> str:
    """The policy in force: every rule's value and source, the placement rule set, costs and currency."""
    return digest([list(policy), policy.rule_set, policy.costs, policy.currency])
