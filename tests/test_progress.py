"""Progress bars: on a terminal's stderr only, never with --quiet, never on stdout."""
from __future__ import annotations

import os
import pty
import shutil
import sys
from datetime import date

import pytest
from click.testing import CliRunner

from recordkit import progress
from recordkit.cli import main
from recordkit.mkdocs_plugin import build_site

from .conftest import REPO


@pytest.fixture
def terminal(monkeypatch):
    """terminal() makes stderr a terminal (a pseudo-terminal that reports no size, as some consoles do)
    and returns what has been drawn on it so far. (Set in the test itself: pytest puts its own stderr
    back after fixtures run.)"""
    leader, follower = pty.openpty()
    stream = os.fdopen(follower, "w", buffering=1)
    monkeypatch.setattr(progress, "DELAY_SECONDS", 0)  # draw at once: the test builds a small site
    monkeypatch.setenv(progress.QUIET_ENV, "")
    os.set_blocking(leader, False)

    def drawn() -> str:
        if sys.stderr is not stream:
            monkeypatch.setattr(sys, "stderr", stream)
        stream.flush()
        out = b""
        while True:
            try:
                chunk = os.read(leader, 65536)
            except BlockingIOError:
                break
            out += chunk
        return out.decode(errors="replace")
    yield drawn
    stream.close()
    os.close(leader)


def test_a_build_on_a_terminal_shows_counts_and_an_estimate(terminal, tmp_path):
    records = tmp_path / "records"
    shutil.copytree(REPO / "records", records, ignore=shutil.ignore_patterns(".recordkit"))
    terminal()
    build_site(records, date(2026, 12, 1), tmp_path / "site")
    shown = terminal()
    assert "Reading records" in shown and "Building the site" in shown
    assert "step/s" in shown or "?step/s" in shown  # the rate, from which the estimate comes
    assert "/" in shown.split("Building the site", 1)[1]  # counts: done/total


def test_quiet_or_no_terminal_shows_no_bar(terminal, monkeypatch):
    terminal()
    assert not isinstance(progress.bar(100, "Reading records", "file"), progress._Silent)
    progress.quiet()
    assert isinstance(progress.bar(100, "Reading records", "file"), progress._Silent)
    monkeypatch.delenv(progress.QUIET_ENV)
    monkeypatch.setattr(sys, "stderr", open(os.devnull, "w"))  # not a terminal
    assert isinstance(progress.bar(100, "Reading records", "file"), progress._Silent)


@pytest.mark.parametrize("command", [["build", "-q"], ["import", "sheet.csv", "--quiet"]])
def test_quiet_is_an_option_of_the_long_commands(command, monkeypatch):
    monkeypatch.setenv(progress.QUIET_ENV, "")  # (and put back as it was after the test)
    result = CliRunner().invoke(main, [*command, "--help"])
    assert result.exit_code == 0 and "--quiet" in result.output
    assert os.environ.get(progress.QUIET_ENV) == "1"  # the flag reaches the site plugin through the environment
