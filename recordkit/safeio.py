"""Reading files that a person (or an attacker) put in the records folder, without hanging or running out
of memory: only regular files are read (a FIFO named `x.yaml` would block every command), the file is
opened non-blocking, its size is checked from the open file's own `stat` before anything is read, and no
more than the limit is ever read even if the file grows meanwhile."""
from __future__ import annotations

import os
import stat
from pathlib import Path


class UnsafeFile(OSError):
    """The file was not read; the message says why (not a regular file, too large, a link where none
    may be)."""


def open_regular(path: Path, limit: int, follow_links: bool = True) -> tuple[int, os.stat_result]:
    """An open file descriptor of a regular file of at most `limit` bytes, and its stat. Raises UnsafeFile
    or OSError."""
    flags = os.O_RDONLY | os.O_NONBLOCK | getattr(os, "O_CLOEXEC", 0) | (0 if follow_links else os.O_NOFOLLOW)
    try:
        fd = os.open(path, flags)
    except OSError as exc:
        if exc.errno == getattr(os, "ELOOP", -1) and not follow_links:
            raise UnsafeFile(f"{path}: a link, which is not followed here") from None
        raise
    try:
        info = os.fstat(fd)
        if not stat.S_ISREG(info.st_mode):
            raise UnsafeFile(f"{path}: not a regular file (a pipe, device or folder?); not read")
        if info.st_size > limit:
            raise UnsafeFile(f"{path}: {info.st_size:,} bytes, over the limit of {limit:,} bytes; not read")
    except BaseException:
        os.close(fd)
        raise
    return fd, info


def read_regular(path: Path, limit: int, follow_links: bool = True) -> bytes:
    """The bytes of a regular file of at most `limit` bytes. Raises UnsafeFile or OSError."""
    fd, info = open_regular(path, limit, follow_links)
    try:
        chunks, total = [], 0
        while total <= limit:
            chunk = os.read(fd, min(1 << 20, limit + 1 - total))
            if not chunk:
                break
            chunks.append(chunk)
            total += len(chunk)
        if total > limit:
            raise UnsafeFile(f"{path}: grew past the limit of {limit:,} bytes while being read; not read")
        return b"".join(chunks)
    finally:
        os.close(fd)


def is_regular(path: Path) -> bool:
    """Whether a path names a regular file (following links), without opening it."""
    try:
        return stat.S_ISREG(os.stat(path).st_mode)
    except OSError:
        return False
