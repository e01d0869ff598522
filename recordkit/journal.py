"""What the last command added, so `recordkit undo` can take it out again.

Every write recordkit makes to a record file adds bytes in one place (an append, or an entry's lines put
in) and changes none: the journal keeps, per file, where the bytes went, the bytes themselves and a hash
of the whole file afterwards. `undo` removes them only while the file is still exactly as that write left
it (same hash); after any other edit it refuses and says why. The journal lives in `.recordkit/` (never
committed) and holds the last batch only: one command's writes.
"""
from __future__ import annotations

import base64
import hashlib
import json
import os
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Iterator

JOURNAL = "last-batch.json"
_current: list | None = None  # the batch being recorded by the running command, if any


class UndoRefused(Exception):
    """Nothing was removed; the message says why."""


@dataclass(frozen=True)
class Change:
    path: str
    offset: int          # where the added bytes start
    added: bytes
    after_sha256: str    # the whole file right after the write
    created: bool        # the write made the file


def inserted(old: bytes | None, new: bytes) -> tuple[int, bytes] | None:
    """(offset, bytes) when `new` is `old` with one run of bytes put in, else None."""
    old = old or b""
    if len(new) < len(old):
        return None
    prefix = 0
    limit = len(old)
    while prefix < limit and old[prefix] == new[prefix]:
        prefix += 1
    added = len(new) - len(old)
    if new[prefix + added:] != old[prefix:]:
        return None
    return prefix, new[prefix:prefix + added]


def note_write(path: Path, old: bytes | None, new: bytes) -> None:
    """Called by every record-file write: remember it when a batch is being recorded."""
    if _current is None or old == new:
        return
    found = inserted(old, new)
    if found is None:  # not an insertion: such a write could not be undone safely
        _current.append(None)
        return
    offset, added = found
    _current.append(Change(str(path), offset, added, hashlib.sha256(new).hexdigest(), old is None))


@contextmanager
def batch(records_dir: Path, command: str) -> Iterator[None]:
    """Record the writes a command makes; afterwards they are the batch `undo` can take out (kept even when
    the command stops part way, so what was written can still be undone)."""
    global _current
    if _current is not None:  # inside another command's batch (replace adds a device, then logs)
        yield
        return
    _current = []
    try:
        yield
    finally:
        changes, _current = _current, None
        if changes:
            _save(records_dir, command, changes)


def _save(records_dir: Path, command: str, changes: list) -> None:
    from .logbook import ensure_work_dir

    data = {"command": command, "changes": None if None in changes else [
        {"path": c.path, "offset": c.offset, "added": base64.b64encode(c.added).decode(),
         "after_sha256": c.after_sha256, "created": c.created} for c in changes]}
    try:
        work = ensure_work_dir(records_dir)
        temp = work / f".{JOURNAL}.{os.getpid()}"
        temp.write_text(json.dumps(data), encoding="utf-8")
        os.replace(temp, work / JOURNAL)
    except OSError:
        pass  # a read-only folder: nothing to undo later, the write itself stands


def last_batch(records_dir: Path) -> tuple[str, list[Change]]:
    from .logbook import WORK_DIR

    try:
        data = json.loads((records_dir / WORK_DIR / JOURNAL).read_text(encoding="utf-8"))
        command = str(data["command"])
        if data["changes"] is None:
            raise UndoRefused(f"the last change ({command}) was not a plain insertion; undo it by hand (git)")
        return command, [Change(c["path"], int(c["offset"]), base64.b64decode(c["added"]), str(c["after_sha256"]),
                                bool(c["created"])) for c in data["changes"]]
    except FileNotFoundError:
        raise UndoRefused("nothing to undo: no command has written here since the last undo") from None
    except (OSError, ValueError, KeyError, TypeError):
        raise UndoRefused("the record of the last change is damaged; undo it by hand (git)") from None


def forget(records_dir: Path) -> None:
    from .logbook import WORK_DIR

    (records_dir / WORK_DIR / JOURNAL).unlink(missing_ok=True)
