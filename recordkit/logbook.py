"""Appending events to a log file without losing a byte or an event.

Promises (see the reliability notes): the user's existing text is kept byte for
byte and new events are appended as text; a reader or a crash sees the old file
or the old file plus every new event, never half of one (temp file in the same
folder, fsync, atomic rename, folder fsync); one writer at a time through a
lock on a *separate* lock file (locking the data file and then replacing it
would lose events); the result is re-read and refused unless it holds exactly
the old data plus the new events.
"""
from __future__ import annotations

import errno
import fcntl
import hashlib
import logging
import os
import time as time_module
from contextlib import contextmanager
from dataclasses import dataclass
from datetime import date, time
from pathlib import Path
from typing import Callable, Iterator

from . import journal
from . import model as m
from .errors import Problems
from .safeio import UnsafeFile, read_regular
from .yamltree import MAX_FILE_BYTES, YList, YMap, plain, quoted, read_yaml


log = logging.getLogger("recordkit")


class LogWriteError(Exception):
    """The events were not written; the file is as it was. The message says why and what to do."""


class MaybeWritten(Exception):
    """The rename happened but a later step failed: the events are probably on disk. Check."""


@dataclass(frozen=True)
class NewEvent:
    date: date
    device: str
    action: m.Action
    result: m.Result | None = None
    by: str = ""
    note: str = ""
    evidence: str = ""
    when: "time | None" = None   # time of day, when known

    @property
    def record_key(self) -> tuple:
        return m.record_key(self.date, self.when, self.device, self.action, self.result, self.by, self.note)

    def as_data(self) -> dict:
        data = {"date": self._date_text(), "device": self.device, "action": str(self.action)}
        if self.result:
            data["result"] = str(self.result)
        if self.by:
            data["by"] = self.by
        if self.note:
            data["note"] = self.note
        if self.evidence:
            data["evidence"] = self.evidence
        return data

    def _date_text(self) -> str:
        return f"{self.date.isoformat()} {self.when.strftime('%H:%M:%S')}" if self.when else self.date.isoformat()

    def as_yaml(self) -> str:
        """One flow mapping on one line. Free text is written as a JSON string, which is
        also a valid YAML double-quoted string, so no character can break the line."""
        parts = [f"date: {self._date_text()}", f"device: {self.device}", f"action: {self.action}"]
        if self.result:
            parts.append(f"result: {self.result}")
        if self.by:
            parts.append(f"by: {quoted(self.by)}")
        if self.note:
            parts.append(f"note: {quoted(self.note)}")
        if self.evidence:
            parts.append(f"evidence: {self.evidence}")
        return "{" + ", ".join(parts) + "}"


def default_log_file(records_dir: Path, when: date) -> Path:
    return records_dir / "log" / f"{when.year}.yaml"


WORK_DIR = ".recordkit"  # the tool's own files in a records folder (cache/, locks/); hidden, so never read


def ensure_work_dir(records_dir: Path) -> Path:
    """The records folder's `.recordkit/`, made with a .gitignore of its own so it is never committed."""
    work = records_dir / WORK_DIR
    work.mkdir(exist_ok=True)
    ignore = work / ".gitignore"
    if not ignore.exists():
        ignore.write_text("# recordkit's cache and lock files: safe to delete when no command runs; never commit\n*\n")
    return work


def lock_path(path: Path, records_dir: Path | None = None) -> Path:
    """The lock file for a data file: in the records folder's `.recordkit/locks/`, else beside it."""
    if records_dir is None:
        return path.with_name(path.name + ".lock")
    relative = path.resolve().relative_to(records_dir.resolve())
    return records_dir / WORK_DIR / "locks" / (str(relative).replace(os.sep, "%") + ".lock")


@contextmanager
def locked(path: Path, records_dir: Path | None = None) -> Iterator[None]:
    """Hold an exclusive lock on the data file's lock file (released by the kernel if the process dies)."""
    lock = lock_path(path, records_dir)
    try:
        if records_dir is not None:
            ensure_work_dir(records_dir)
        lock.parent.mkdir(parents=True, exist_ok=True)
        handle = open(lock, "a")
    except OSError as exc:
        raise LogWriteError(f"{path}: cannot open the lock file {lock} ({exc.strerror}; a read-only "
                            "folder?); nothing written") from None
    with handle:
        _wait_for_lock(handle, path, lock)
        try:
            yield
        finally:
            fcntl.flock(handle, fcntl.LOCK_UN)


LOCK_TIMEOUT_S = 60.0


def _wait_for_lock(handle, path: Path, lock: Path) -> None:
    """Take the lock at once, or say that another writer holds it and wait for at most LOCK_TIMEOUT_S."""
    deadline = None
    while True:
        try:
            fcntl.flock(handle, fcntl.LOCK_EX | fcntl.LOCK_NB)
            return
        except BlockingIOError:
            now = time_module.monotonic()
            if deadline is None:
                deadline = now + LOCK_TIMEOUT_S
                log.warning("%s: another recordkit command is writing it; waiting (up to %.0f s) ...", path,
                            LOCK_TIMEOUT_S)
            elif now > deadline:
                raise LogWriteError(f"{path}: another writer has held {lock} for over {LOCK_TIMEOUT_S:.0f} s; "
                                    "nothing written (try again, or check for a stuck command)") from None
            time_module.sleep(0.05)


def update_file(path: Path, change: Callable[[bytes | None], bytes | None], records_dir: Path | None = None) -> None:
    """Rewrite a record file safely: one writer at a time, the new text from `change(old bytes or None)`
    (which raises to refuse, or returns None to remove the file), temp file, fsync, atomic rename, folder
    fsync. The write is noted in the journal for `undo`."""
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise LogWriteError(f"{path.parent}: cannot create the folder ({exc.strerror}); nothing written") from None
    with locked(path, records_dir):
        _sweep_temp_files(path)
        try:
            old = read_regular(path, MAX_FILE_BYTES, follow_links=False) if os.path.lexists(path) else None
        except OSError as exc:
            raise LogWriteError(f"{exc if isinstance(exc, UnsafeFile) else f'{path}: cannot read ({exc.strerror})'}"
                                "; nothing written") from None
        new = change(old)
        if new is None:  # the change asks for the file to go (undo of a file a command made)
            os.unlink(path)
            return
        _replace_atomically(path, new)
        journal.note_write(path, old, new)


def undo_last(records_dir: Path) -> tuple[str, list[str]]:
    """Take out what the last command added (see `journal`): only from files still exactly as it left them,
    all or nothing; returns the command and what was done to each file. Raises UndoRefused."""
    command, changes = journal.last_batch(records_dir)
    last_of = {change.path: change for change in changes}
    for path, change in last_of.items():  # check every file first: nothing is removed unless all can be
        try:
            current = read_regular(Path(path), MAX_FILE_BYTES, follow_links=False)
        except OSError:
            raise journal.UndoRefused(f"{path}: cannot be read any more; nothing undone") from None
        if hashlib.sha256(current).hexdigest() != change.after_sha256:
            raise journal.UndoRefused(f"{path} was changed after `{command}` wrote it; nothing undone (edit "
                                      "it by hand, or use git)")
    done = []
    for change in reversed(changes):
        def take_out(old: bytes | None, change=change) -> bytes | None:
            if old is None or hashlib.sha256(old).hexdigest() != change.after_sha256:
                raise journal.UndoRefused(f"{change.path} changed while undoing; stopped")
            rest = old[:change.offset] + old[change.offset + len(change.added):]
            return None if change.created and not rest.strip() else rest
        update_file(Path(change.path), take_out, records_dir)
        done.append(f"{change.path}: removed {len(change.added.splitlines())} line(s)"
                    + (" (the file it made is gone)" if change.created and not Path(change.path).exists() else ""))
    journal.forget(records_dir)
    return command, done


def append_events(path: Path, events: list[NewEvent], records_dir: Path | None = None,
                  skip_recorded: bool = False) -> list[NewEvent]:
    """Append events to a log file (created if missing); returns those appended. With `skip_recorded`, an
    event the file already holds (by `m.record_key`, checked under the lock, so concurrent imports of one
    sheet record each row once) is left out. Raises LogWriteError or MaybeWritten."""
    written: list[NewEvent] = []

    def change(old: bytes | None) -> bytes:
        fresh = events
        if skip_recorded and old and old.strip():
            held = {_record_key_of(item) for item in (_parse(old, path).get("events") or [])}
            fresh = [e for e in events if e.record_key not in held]
        written[:] = fresh
        return _appended(old, path, fresh) if fresh else old

    if events:
        update_file(path, change, records_dir)
    return written


def _record_key_of(item) -> tuple | None:
    """The record key of an event as a log file holds it (None for one that does not read)."""
    from .fields import parse_date_time

    try:
        day, clock = parse_date_time(item["date"])
        action, result = m.Action(item["action"]), m.Result(item["result"]) if item.get("result") else None
        return m.record_key(day, clock, str(item["device"]), action, result, str(item.get("by") or ""),
                            str(item.get("note") or ""))
    except (TypeError, KeyError, ValueError):
        return None


def _appended(old: bytes | None, path: Path, events: list[NewEvent]) -> bytes:
    lines = "".join
    if old is None or not old.strip():
        header = old or b""
        body = "# Maintenance log, appended to by `recordkit log` and `recordkit import`.\nevents:\n"
        new = header + body.encode() + lines(f"  - {e.as_yaml()}\n" for e in events).encode()
        old_events: list = []
    else:
        tree = _parse(old, path)
        dash = _dash_column(tree, old, path)
        old_events = list(tree.get("events") or [])
        tail = b"" if old.endswith(b"\n") else b"\n"
        new = old + tail + lines(f"{' ' * dash}- {e.as_yaml()}\n" for e in events).encode()
    # Read the result back: it must be exactly the old data plus the new events.
    check = _parse(new, path)
    expected = old_events + [e.as_data() for e in events]
    if plain(check.get("events")) != plain(expected):
        raise LogWriteError(f"{path}: appending would not give the old events plus the new ones; "
                            "nothing written (is the file's layout unusual?)")
    return new


def _parse(data: bytes, path: Path) -> YMap:
    problems = Problems()
    tree = read_yaml(data, str(path), problems)
    if problems:
        raise LogWriteError(f"{problems[0]}; fix the file first, nothing written")
    if not isinstance(tree, YMap):
        raise LogWriteError(f"{path}: not a records file (no top-level mapping); nothing written")
    return tree


def _dash_column(tree: YMap, data: bytes, path: Path) -> int:
    """Where the new '- ' goes: the column of the existing items, when `events:` can take more."""
    if "events" not in tree:
        raise LogWriteError(f"{path}: has no 'events:' list; add 'events:' as its last key, or log to "
                            "another file (e.g. records/log/YEAR.yaml)")
    if list(tree)[-1] != "events":
        raise LogWriteError(f"{path}: 'events:' is not the last key, so appending would put events under "
                            "another key; move 'events:' to the end of the file, nothing written")
    events = tree["events"]
    if events is None:
        return 2
    if not isinstance(events, YList) or not events:
        raise LogWriteError(f"{path}:{tree.line_of('events')}: 'events:' is not a block list ('- ' items); "
                            "nothing written")
    text_lines = data.decode("utf-8-sig").splitlines()
    first_item = text_lines[events.item_lines[0] - 1]
    dash = len(first_item) - len(first_item.lstrip(" "))
    if not first_item[dash:].startswith("-"):
        raise LogWriteError(f"{path}:{tree.key_lines['events']}: 'events:' is in flow style ([...]); "
                            "write it as a block list to append, nothing written")
    return dash


def temp_name(path: Path) -> Path:
    # Starts with a dot: the loader skips it; ends in .tmp: swept on the next write.
    return path.with_name(f".{path.name}.{os.getpid()}.tmp")


def _sweep_temp_files(path: Path) -> None:
    """Remove temp files a killed writer left behind (we hold the lock: none is in use)."""
    for stale in path.parent.glob(f".{path.name}.*.tmp"):
        stale.unlink(missing_ok=True)


def _replace_atomically(path: Path, data: bytes) -> None:
    temp = temp_name(path)
    try:
        with open(temp, "wb") as handle:
            handle.write(data)
            handle.flush()
            os.fsync(handle.fileno())
        if path.exists():
            os.chmod(temp, path.stat().st_mode & 0o7777)
    except OSError as exc:
        temp.unlink(missing_ok=True)
        hint = " (disk full?)" if exc.errno == errno.ENOSPC else ""
        raise LogWriteError(f"{path}: could not write{hint}: {exc.strerror}; nothing written") from None
    try:
        os.replace(temp, path)
    except OSError as exc:
        temp.unlink(missing_ok=True)
        raise LogWriteError(f"{path}: could not replace the file: {exc.strerror}; nothing written") from None
    try:
        folder = os.open(path.parent, os.O_RDONLY)
        try:
            os.fsync(folder)
        finally:
            os.close(folder)
    except OSError as exc:
        raise MaybeWritten(f"{path}: written, but the folder could not be synced ({exc.strerror}); "
                           "the events may have been recorded: check the file") from None
