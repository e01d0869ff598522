"""`serve`'s own parts that need no MkDocs import: which changes start a rebuild, and what it prints."""
from __future__ import annotations

import logging
import os
from pathlib import Path

from .logbook import WORK_DIR


def watch_records(server, records_dir: Path) -> None:
    """Rebuild when a record changes, but not when recordkit writes its own files (the parse and render
    caches, locks, the journal, all under .recordkit/): those would start a second and a third rebuild
    for one saved edit. MkDocs' own `watch` cannot leave a folder out, so the handler is scheduled on
    its observer and wakes its build loop the way `watch` does; should those parts change in a later
    MkDocs, the whole folder is watched as before."""
    import watchdog.events

    own = os.path.join(os.path.abspath(records_dir), WORK_DIR)
    observer, wake = getattr(server, "observer", None), getattr(server, "_rebuild_cond", None)
    if observer is None or wake is None or not hasattr(server, "_want_rebuild"):
        server.watch(str(records_dir))
        return

    def ours(path: str) -> bool:
        path = os.path.abspath(path)
        return path == own or path.startswith(own + os.sep)

    def changed(event) -> None:
        paths = [p for p in (event.src_path, getattr(event, "dest_path", "")) if p]
        if event.is_directory or all(ours(os.fsdecode(p)) for p in paths):
            return
        with wake:
            server._want_rebuild = True
            wake.notify_all()

    handler = watchdog.events.FileSystemEventHandler()
    handler.on_any_event = changed
    observer.schedule(handler, os.path.abspath(records_dir), recursive=True)


class ServeLog(logging.Filter):
    """What `serve` prints: where it serves, each change seen and each rebuild's time, and every warning."""

    SHOWN = ("Serving on", "Detected file changes", "Documentation built in", "recordkit: built in")

    def filter(self, record: logging.LogRecord) -> bool:
        message = str(record.msg)
        if message.startswith("[") and "] " in message[:12]:  # MkDocs' server stamps its own lines "[hh:mm:ss] "
            message = message.split("] ", 1)[1]
        return record.levelno >= logging.WARNING or message.startswith(self.SHOWN)

    @classmethod
    def attach(cls) -> logging.Handler:
        handler = logging.StreamHandler()
        handler.setFormatter(logging.Formatter("%(message)s"))
        handler.addFilter(cls())
        logger = logging.getLogger("mkdocs")
        logger.addHandler(handler)
        logger.setLevel(logging.INFO)
        return handler
