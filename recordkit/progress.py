"""Progress on long work: a bar with counts and an estimate on stderr, shown only on a terminal, only once
the work has taken about two seconds, and never with --quiet (which sets RECORDKIT_QUIET for the
whole process, the site plugin included). Output a script reads (stdout) is never touched."""
from __future__ import annotations

import os
import sys
from typing import Protocol

QUIET_ENV = "RECORDKIT_QUIET"
DELAY_SECONDS = 2.0  # short work shows no bar at all


class Bar(Protocol):
    def update(self, n: int = 1) -> object: ...
    def close(self) -> None: ...


class _Silent:
    def update(self, n: int = 1) -> None:
        pass

    def close(self) -> None:
        pass


def quiet(on: bool = True) -> None:
    """--quiet: no progress bars in this process."""
    if on:
        os.environ[QUIET_ENV] = "1"


def shown() -> bool:
    return not os.environ.get(QUIET_ENV) and hasattr(sys.stderr, "isatty") and sys.stderr.isatty()


def bar(total: int, what: str, unit: str) -> Bar:
    """A bar for `total` steps of `what` (e.g. "Reading records", unit "file"), or one that shows nothing."""
    if not shown() or total <= 0:
        return _Silent()
    from tqdm import tqdm

    try:
        sized = os.get_terminal_size(sys.stderr.fileno()).columns > 0
    except (OSError, ValueError):
        sized = False
    # A terminal that reports no size (some consoles and terminal recorders) is taken as 80 by 24: tqdm
    # would otherwise draw nothing.
    return tqdm(total=total, desc=what, unit=unit, delay=DELAY_SECONDS, file=sys.stderr, leave=False,
                dynamic_ncols=sized, ncols=None if sized else 80, nrows=None if sized else 24, mininterval=0.25)
