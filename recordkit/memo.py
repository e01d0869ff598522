"""What this process already read from each record file, for the next load of the same folder.

`serve` loads the records again after every saved edit, and a program or a test may load them many
times: the files that did not change need not be read from the parse cache and decoded again. Records are
immutable (frozen dataclasses and tuples), so the same objects serve every load. A file is taken from here
only while it is a regular file of the same size and modification time as when it was read, and only when
that time was old enough to be trusted then (see `cache.RACY_SECONDS`). Other results kept by a key
(`findings_cache`) use a store here too. One folder is remembered at a time (the last one loaded), so
memory stays what one load of it holds.
"""
from __future__ import annotations

import os
import time
from dataclasses import dataclass
from stat import S_ISREG
from typing import Any

from . import model as m
from .cache import RACY_SECONDS


@dataclass(frozen=True)
class Decoded:
    size: int
    mtime_ns: int
    digest: str
    events: tuple[m.Event, ...]
    prop: m.Property | None
    digests: dict[str, Any] | None  # the file's part of `loader.Digests`


_folder: str | None = None
_stores: dict[str, dict] = {}


def store(folder: str, kind: str) -> dict:
    """This process's store of `kind` for the records folder (resolved); every store is emptied when
    another folder is loaded."""
    global _folder
    if folder != _folder:
        _folder = folder
        _stores.clear()
    return _stores.setdefault(kind, {})


def recall(folder: str, shown: str, stat: os.stat_result) -> Decoded | None:
    """The file as this process last read it, if it is certainly unchanged since."""
    known = store(folder, "files").get(shown)
    if known is None or not S_ISREG(stat.st_mode) or (known.size, known.mtime_ns) != (stat.st_size, stat.st_mtime_ns):
        return None
    return known


def remember(folder: str, shown: str, stat: os.stat_result, decoded: Decoded) -> None:
    files = store(folder, "files")
    if time.time() - stat.st_mtime > RACY_SECONDS:  # else it could change again unseen: read it next time
        files[shown] = decoded
    else:
        files.pop(shown, None)


def forget() -> None:
    global _folder
    _folder = None
    _stores.clear()
