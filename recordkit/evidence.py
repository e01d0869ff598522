"""Recordings kept as evidence, stored by content hash so no two files can overwrite each other."""
from __future__ import annotations

import hashlib
import os
import shutil
from pathlib import Path

from .safeio import open_regular

EVIDENCE_DIR = "evidence"


MAX_RECORDING_BYTES = 512 * 1024 * 1024  # about 45 minutes of 16-bit stereo at 48 kHz


def content_hash(path: Path) -> str:
    """'sha256:<hex>' of a regular file (read in blocks: memory stays small)."""
    fd, _ = open_regular(path, MAX_RECORDING_BYTES)
    digest = hashlib.sha256()
    with os.fdopen(fd, "rb") as handle:
        for block in iter(lambda: handle.read(1 << 20), b""):
            digest.update(block)
    return "sha256:" + digest.hexdigest()


def evidence_path(records_dir: Path, reference: str) -> Path:
    return records_dir / EVIDENCE_DIR / (reference.split(":", 1)[1] + ".wav")


def recording_state(records_dir: Path, reference: str) -> list:
    """A kept recording as a page shows it: there or not, and which file (size and time), for the keys
    that tell whether a page must be made again."""
    try:
        info = os.stat(evidence_path(records_dir, reference))
        return [reference, info.st_size, info.st_mtime_ns]
    except OSError:
        return [reference, None]


def keep(records_dir: Path, recording: Path) -> str:
    """Copy a recording into records/evidence/<sha256>.wav (once, fsynced; a file already there is kept
    only if its content really has that hash); returns 'sha256:<hex>'."""
    reference = content_hash(recording)
    target = evidence_path(records_dir, reference)
    if os.path.lexists(target):
        try:
            if content_hash(target) == reference:
                return reference
        except OSError:
            pass  # damaged, a link or not a file: replaced below
    target.parent.mkdir(parents=True, exist_ok=True)
    temp = target.with_name(f".{target.name}.{os.getpid()}.tmp")
    shutil.copyfile(recording, temp)
    with open(temp, "rb+") as handle:
        os.fsync(handle.fileno())
    if content_hash(temp) != reference:  # the recording changed while it was copied
        os.unlink(temp)
        raise OSError(f"{recording}: changed while it was copied; nothing kept")
    os.replace(temp, target)
    folder = os.open(target.parent, os.O_RDONLY)
    try:
        os.fsync(folder)
    finally:
        os.close(folder)
    return reference


def hearing_of(records_dir: Path, reference: str):
    """The analysis of a kept recording, from the cache when this very file was analysed before (by its
    hash, size and time); analysing a long recording takes seconds, and a build shows every one.
    Raises AudioError when the recording is missing or unusable."""
    import dataclasses

    from .audio import AudioError, Hearing, hear_file
    from .cache import ParseCache

    path = evidence_path(records_dir, reference)
    try:
        info = os.stat(path)
    except OSError as exc:
        raise AudioError(f"{path}: the kept recording is missing ({exc.strerror})") from None
    cache, key = ParseCache(records_dir), f"{reference}:{info.st_size}:{info.st_mtime_ns}"
    known = cache.note("hearing", key)
    if isinstance(known, dict):
        try:
            return Hearing(**{**known, "pulses": [tuple(pulse) for pulse in known["pulses"]]})
        except (TypeError, KeyError):
            pass  # from another version of the analysis: analyse again
    hearing = hear_file(path)
    cache.put_note("hearing", key, dataclasses.asdict(hearing))
    return hearing
