"""Appending events: bytes kept, atomic replace, one writer at a time, crashes and full disks."""
import errno
import os
import subprocess
import sys
import textwrap
from datetime import date

import pytest

from recordkit.loader import load_records
from recordkit.logbook import LogWriteError, NewEvent, append_events, temp_name
from recordkit.model import Action, Result

from .conftest import HOUSE, REPO, device_yaml

OLD = b"# my log, keep this comment\nevents:\n  - {date: 2026-01-05, device: a/b/c, action: clean}  # trailing note\n# end\n"


def test_append_keeps_every_old_byte(tmp_path):
    path = tmp_path / "2026.yaml"
    path.write_bytes(OLD)
    append_events(path, [NewEvent(date(2026, 2, 1), "a/b/c", Action.TEST, Result.PASS, "Jo \"the\" tenant",
                                  "note: with # and , and {braces} and 'quotes'")])
    new = path.read_bytes()
    assert new.startswith(OLD)
    added = new[len(OLD):].decode()
    assert added.startswith("  - {date: 2026-02-01,") and added.count("\n") == 1


def test_append_matches_the_existing_dash_column_and_adds_a_missing_newline(tmp_path):
    path = tmp_path / "log.yaml"
    path.write_bytes(b"events:\n- {date: 2026-01-05, device: a/b/c, action: clean}")
    append_events(path, [NewEvent(date(2026, 2, 1), "a/b/c", Action.BATTERY)])
    assert path.read_bytes() == (b"events:\n- {date: 2026-01-05, device: a/b/c, action: clean}\n"
                                 b"- {date: 2026-02-01, device: a/b/c, action: battery}\n")


def test_append_after_block_style_events_and_property(tmp_path):
    path = tmp_path / "house.yaml"
    text = HOUSE + device_yaml(id="s1", kind="smoke", room="hall", power="sealed", manufactured="2020-01",
                               installed="2020-02-01") + textwrap.dedent("""\
        events:
          - date: 2026-01-05
            device: test-house/main/s1
            action: test
            result: pass
        """)
    path.write_text(text)
    append_events(path, [NewEvent(date(2026, 2, 1), "test-house/main/s1", Action.TEST, Result.FAIL)])
    loaded = load_records(tmp_path, date(2026, 3, 1))
    assert loaded.problems == []
    assert [e.result for e in loaded.portfolio.events] == [Result.PASS, Result.FAIL]


def test_new_file_is_created(tmp_path):
    path = tmp_path / "log" / "2027.yaml"
    append_events(path, [NewEvent(date(2027, 1, 2), "a/b/c", Action.NOTE, note="first")])
    assert b"events:\n  - {date: 2027-01-02, device: a/b/c, action: note, note: \"first\"}\n" in path.read_bytes()


@pytest.mark.parametrize("text, words", [
    ("events:\n  - {date: 2026-01-05, device: a/b/c, action: clean}\nproperty: {id: x}\n", "not the last key"),
    ("events: [{date: 2026-01-05, device: a/b/c, action: clean}]\n", "flow style"),
    ("events: []\n", "not a block list"),
    ("property: {id: x}\n", "has no 'events:' list"),
    ("events:\n  - {date: 2026-01-05\n", "fix the file first"),
])
def test_refuses_rather_than_reformat(tmp_path, text, words):
    path = tmp_path / "log.yaml"
    path.write_text(text)
    with pytest.raises(LogWriteError, match=words):
        append_events(path, [NewEvent(date(2026, 2, 1), "a/b/c", Action.CLEAN)])
    assert path.read_text() == text


def test_full_disk_leaves_the_old_file_and_no_temp(tmp_path, monkeypatch):
    path = tmp_path / "log.yaml"
    path.write_bytes(OLD)

    def no_space(fd):
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(os, "fsync", no_space)
    with pytest.raises(LogWriteError, match="disk full"):
        append_events(path, [NewEvent(date(2026, 2, 1), "a/b/c", Action.CLEAN)])
    assert path.read_bytes() == OLD
    assert not temp_name(path).exists()


CRASHING_WRITER = """
import os, sys
from datetime import date
from recordkit import logbook
from recordkit.model import Action
os.replace = lambda *a: os._exit(9)   # die between the temp file write and the rename
logbook.append_events(logbook.Path(sys.argv[1]), [logbook.NewEvent(date(2026, 2, 1), "a/b/c", Action.CLEAN)])
"""


def test_a_writer_killed_before_the_rename_leaves_the_old_file_whole(tmp_path):
    path = tmp_path / "log.yaml"
    path.write_bytes(OLD)
    run = subprocess.run([sys.executable, "-c", CRASHING_WRITER, str(path)], cwd=REPO)
    assert run.returncode == 9
    assert path.read_bytes() == OLD
    assert list(tmp_path.glob(".log.yaml.*.tmp"))  # the half-done temp file is there ...
    append_events(path, [NewEvent(date(2026, 3, 1), "a/b/c", Action.CLEAN)])
    assert not list(tmp_path.glob(".log.yaml.*.tmp"))  # ... and the next write sweeps it
    assert path.read_bytes().startswith(OLD)


WRITER = """
import sys
from datetime import date, timedelta
from recordkit.logbook import NewEvent, append_events, Path
from recordkit.model import Action
path, who, count = Path(sys.argv[1]), sys.argv[2], int(sys.argv[3])
for i in range(count):
    append_events(path, [NewEvent(date(2026, 1, 1) + timedelta(days=i % 300), "test-house/main/s1",
                                  Action.NOTE, by=who, note=f"{who}-{i}")])
"""


def test_two_concurrent_writers_lose_nothing(tmp_path):
    records = tmp_path / "records"
    records.mkdir()
    (records / "house.yaml").write_text(HOUSE + device_yaml(id="s1", kind="smoke", room="hall", power="sealed",
                                                            manufactured="2020-01", installed="2020-02-01"))
    log = records / "log.yaml"
    log.write_text("# shared log: this comment must survive\nevents:\n")
    writers = [subprocess.Popen([sys.executable, "-c", WRITER, str(log), who, "200"], cwd=REPO)
               for who in ("alpha", "beta")]
    assert [w.wait(timeout=300) for w in writers] == [0, 0]
    text = log.read_text()
    assert text.startswith("# shared log: this comment must survive\nevents:\n")
    loaded = load_records(records, date(2026, 12, 31))
    assert loaded.problems == []
    notes = [e.note for e in loaded.portfolio.events]
    assert len(notes) == 400 and len(set(notes)) == 400  # all landed, none twice
    assert {f"{who}-{i}" for who in ("alpha", "beta") for i in range(200)} == set(notes)


def test_read_only_folder_is_reported_and_nothing_changes(tmp_path, monkeypatch):
    # Tests run as root, for whom chmod does not stop writes: refuse writes the way a read-only folder would.
    import builtins

    from recordkit import logbook

    path = tmp_path / "log.yaml"
    path.write_bytes(OLD)
    real_open = builtins.open

    def read_only(file, mode="r", *args, **kwargs):
        if any(flag in mode for flag in "wax+"):
            raise PermissionError(errno.EACCES, "Permission denied")
        return real_open(file, mode, *args, **kwargs)

    monkeypatch.setattr(logbook, "open", read_only, raising=False)
    with pytest.raises(LogWriteError, match="read-only"):
        append_events(path, [NewEvent(date(2026, 2, 1), "a/b/c", Action.CLEAN)])
    assert path.read_bytes() == OLD


def test_a_failure_after_the_rename_says_the_event_may_be_recorded(tmp_path, monkeypatch):
    from recordkit.logbook import MaybeWritten

    path = tmp_path / "log.yaml"
    path.write_bytes(OLD)
    real_open = os.open

    def no_folder_sync(file, flags, *args, **kwargs):
        if os.path.isdir(file):
            raise OSError(errno.EIO, "I/O error")
        return real_open(file, flags, *args, **kwargs)

    monkeypatch.setattr(os, "open", no_folder_sync)
    with pytest.raises(MaybeWritten, match="may have been recorded"):
        append_events(path, [NewEvent(date(2026, 2, 1), "a/b/c", Action.CLEAN)])
    assert path.read_bytes().startswith(OLD) and b"2026-02-01" in path.read_bytes()  # it was in fact written
