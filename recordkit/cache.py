"""A parse cache for record files, so an edit to one file re-parses only that file.

What the loader made of each file is kept as JSON (never pickle: a cache is
data, and loading it must not run code) under `<records>/.cache/`, keyed by the
file's path, size, modification time and a hash of its content. An entry is
used only when all of them and recordkit's version match; anything else (a
missing, stale or corrupt entry) falls back to a normal parse. Deleting the
folder is always safe. Only files that loaded without problems are cached.
"""
from __future__ import annotations

import hashlib
import json
import os
import time
from pathlib import Path
from typing import Any

from . import __version__
from .yamltree import YList, YMap

CACHE_DIR = ".cache"
FORMAT = 3
RACY_SECONDS = 2.0


def encode_tree(value: Any) -> Any:
    """A located YAML tree as plain JSON data (lines kept)."""
    if isinstance(value, YMap):
        return {"m": [[k, encode_tree(v), value.key_lines[k], value.value_lines[k]] for k, v in value.items()],
                "l": value.line}
    if isinstance(value, YList):
        return {"s": [[encode_tree(v), line] for v, line in zip(value, value.item_lines)], "l": value.line}
    return value


def decode_tree(value: Any) -> Any:
    if isinstance(value, dict):
        if "m" in value:
            result = YMap()
            result.line, result.key_lines, result.value_lines = value["l"], {}, {}
            for key, item, key_line, value_line in value["m"]:
                result[key] = decode_tree(item)
                result.key_lines[key], result.value_lines[key] = key_line, value_line
            return result
        result = YList(decode_tree(item) for item, _ in value["s"])
        result.line, result.item_lines = value["l"], [line for _, line in value["s"]]
        return result
    return value


class ParseCache:
    def __init__(self, records_dir: Path, enabled: bool = True):
        self.folder = records_dir / CACHE_DIR
        self.enabled = enabled
        self.hits = self.misses = 0

    def _entry_path(self, shown: str) -> Path:
        return self.folder / (hashlib.sha1(shown.encode()).hexdigest() + ".json")

    def get(self, path: Path, shown: str) -> tuple[Any, bytes | None, os.stat_result, str | None]:
        """(payload or None, the file's bytes if they were read, its stat, its content digest if known)."""
        stat = path.stat()
        entry = self._load_entry(shown) if self.enabled else None
        if entry and entry["stat_trusted"] and entry["size"] == stat.st_size \
                and entry["mtime_ns"] == stat.st_mtime_ns:
            self.hits += 1
            return entry["payload"], None, stat, entry["digest"]
        data = path.read_bytes()
        digest = hashlib.blake2b(data, digest_size=16).hexdigest()
        if entry and entry["digest"] == digest:  # touched but unchanged (e.g. a fresh checkout)
            self.hits += 1
            self.put(shown, stat, digest, entry["payload"])
            return entry["payload"], data, stat, digest
        self.misses += 1
        return None, data, stat, digest

    def _load_entry(self, shown: str) -> dict | None:
        try:
            entry = json.loads(self._entry_path(shown).read_text(encoding="utf-8"))
        except (OSError, ValueError):
            return None  # missing or corrupt: parse again
        keys = {"format", "version", "path", "size", "mtime_ns", "stat_trusted", "digest", "payload"}
        if not isinstance(entry, dict) or set(entry) != keys or entry["format"] != FORMAT \
                or entry["version"] != __version__ or entry["path"] != shown:
            return None
        return entry

    def put(self, shown: str, stat: os.stat_result, digest: str, payload: Any) -> None:
        if not self.enabled:
            return
        # A file changed within the clock's granularity of being read could change again with the same
        # size and mtime ("racy" in git's words): for such an entry, always compare the content hash.
        trusted = time.time() - stat.st_mtime > RACY_SECONDS
        entry = {"format": FORMAT, "version": __version__, "path": shown, "size": stat.st_size,
                 "mtime_ns": stat.st_mtime_ns, "stat_trusted": trusted, "digest": digest, "payload": payload}
        try:
            self.folder.mkdir(exist_ok=True)
            ignore = self.folder / ".gitignore"
            if not ignore.exists():
                ignore.write_text("# recordkit's parse cache: safe to delete, never commit\n*\n")
            target = self._entry_path(shown)
            temp = target.with_suffix(f".{os.getpid()}.tmp")
            temp.write_text(json.dumps(entry, separators=(",", ":")), encoding="utf-8")
            os.replace(temp, target)
        except OSError:
            pass  # a read-only records folder just means no cache
