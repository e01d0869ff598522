"""The parse cache gives the same model as a cold parse, through random edits; losing it is harmless."""
import os
import shutil
from datetime import date

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from recordkit.loader import load_records

from .conftest import DEMO_AS_OF, DEMO_RECORDS, run_cli

AS_OF = DEMO_AS_OF


def same(a, b):
    assert a.problems == b.problems
    assert a.portfolio == b.portfolio  # every property, unit, room, device and event, with file and line
    assert [(r.name, r.value, r.source, r.local) for r in a.policy] == [(r.name, r.value, r.source, r.local)
                                                                        for r in b.policy]


def test_warm_load_equals_cold_load(tmp_path):
    folder = tmp_path / "records"
    shutil.copytree(DEMO_RECORDS, folder, ignore=shutil.ignore_patterns(".recordkit"))
    cold = load_records(folder, AS_OF, cache=False)
    first = load_records(folder, AS_OF)     # fills the cache
    second = load_records(folder, AS_OF)    # reads it
    assert (folder / ".recordkit").is_dir() and list((folder / ".recordkit" / "cache").glob("*.json"))
    same(cold, first)
    same(cold, second)


EDITS = st.lists(st.tuples(st.sampled_from(["log/2026.yaml", "log/2025.yaml", "tansy-house.yaml",
                                              "bramble-cottage.yaml"]),
                           st.sampled_from(["pass->fail", "drop-last-line", "append-event", "break", "touch",
                                            "made-later"])),
                 min_size=1, max_size=4)


def apply_edit(folder, name, edit):
    path = folder / name
    text = path.read_text()
    if edit == "pass->fail":
        text = text.replace("result: pass", "result: fail", 1)
    elif edit == "drop-last-line":
        text = "\n".join(text.splitlines()[:-1]) + "\n"
    elif edit == "append-event" and "events:" in text:
        text += "  - {date: 2026-11-30, device: bramble-cottage/home/hall-smoke, action: clean, note: edit}\n"
    elif edit == "break":
        text += "  - {date: 2026-11-31\n"
    elif edit == "made-later":
        text = text.replace("manufactured: 2016-05", "manufactured: 2016-06")
    path.write_text(text)
    if edit == "touch":
        os.utime(path)


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(edits=EDITS)
def test_cache_follows_random_edits(tmp_path_factory, edits):
    folder = tmp_path_factory.mktemp("edits") / "records"
    shutil.copytree(DEMO_RECORDS, folder, ignore=shutil.ignore_patterns(".recordkit"))
    load_records(folder, AS_OF)  # a warm cache of the original files
    for name, edit in edits:
        apply_edit(folder, name, edit)
        same(load_records(folder, AS_OF, cache=False), load_records(folder, AS_OF))


def test_deleting_or_corrupting_the_cache_is_harmless(tmp_path):
    folder = tmp_path / "records"
    shutil.copytree(DEMO_RECORDS, folder, ignore=shutil.ignore_patterns(".recordkit"))
    cold = load_records(folder, AS_OF, cache=False)
    load_records(folder, AS_OF)
    entries = sorted((folder / ".recordkit" / "cache").glob("*.json"))
    entries[0].write_text("{not json")
    entries[1].write_bytes(b"\x00\xff" * 50)
    entries[2].write_text('{"format": 2, "payload": "something else"}')
    # damage that still reads as JSON of the right shape: a level, a date and a line number changed
    for entry in entries[3:]:
        text = entry.read_text()
        entry.write_text(text.replace('"level', '"levels', 1).replace("2025-", "2024-", 1).replace(",3,", ",4,", 1))
    same(cold, load_records(folder, AS_OF))
    assert load_records(folder, AS_OF).problems == cold.problems
    shutil.rmtree(folder / ".recordkit")
    same(cold, load_records(folder, AS_OF))


def test_a_cache_from_another_version_is_ignored(tmp_path, monkeypatch):
    folder = tmp_path / "records"
    shutil.copytree(DEMO_RECORDS, folder, ignore=shutil.ignore_patterns(".recordkit"))
    load_records(folder, AS_OF)
    monkeypatch.setattr("recordkit.cache.__version__", "0.0.0-other")
    from recordkit.cache import ParseCache
    cache = ParseCache(folder)
    payload, *_ = cache.get(folder / "tansy-house.yaml", str(folder / "tansy-house.yaml"), 1 << 20)
    assert payload is None and cache.misses == 1


def test_csv_event_logs_load_like_yaml_ones(tmp_path):
    yaml_dir, csv_dir = tmp_path / "y", tmp_path / "c"
    assert run_cli("demo-portfolio", "--units", "12", "--years", "2", "--out", str(yaml_dir)).returncode == 0
    assert run_cli("demo-portfolio", "--units", "12", "--years", "2", "--events", "csv",
                   "--out", str(csv_dir)).returncode == 0
    as_yaml, as_csv = load_records(yaml_dir, AS_OF), load_records(csv_dir, AS_OF)
    assert as_yaml.problems == [] and as_csv.problems == []
    key = lambda e: (e.date, e.device, e.action, e.result, e.by, e.note)  # noqa: E731
    assert sorted(map(key, as_yaml.portfolio.events)) == sorted(map(key, as_csv.portfolio.events))
    assert len(as_csv.portfolio.events) > 100


def test_a_bad_csv_log_row_names_file_and_row(tmp_path):
    folder = tmp_path / "records"
    shutil.copytree(DEMO_RECORDS, folder, ignore=shutil.ignore_patterns(".recordkit"))
    (folder / "log" / "old.csv").write_text("date,device,action,result\n2020-01-01,x/y/z,clean,\n"
                                            "2020-13-01,bramble-cottage/home/hall-smoke,test,pass\n")
    messages = [str(p) for p in load_records(folder, date(2026, 12, 1)).problems]
    assert any("old.csv:2: event: no device 'x/y/z'" in m for m in messages), messages
    assert any("old.csv:3: event: cannot read this row" in m for m in messages), messages


@pytest.mark.parametrize("new_file", [
    # a replacement dated before a test kept in another, unchanged file: that test is now after retirement
    "events:\n  - {date: 2026-11-01, device: bramble-cottage/home/kitchen-heat, action: replace}\n",
    # an event of a device that does not exist
    "events:\n  - {date: 2026-11-01, device: bramble-cottage/home/no-such, action: clean}\n",
    # an event before its device was installed
    "events:\n  - {date: 2001-01-01, device: bramble-cottage/home/hall-smoke, action: clean}\n",
])
def test_an_event_file_added_after_a_clean_load_is_checked_like_a_cold_load(tmp_path, new_file):
    # After a clean load, a changed event file has only its own events checked (and every event of a
    # device it retires): the problems must be those a cold load finds.
    folder = tmp_path / "records"
    shutil.copytree(DEMO_RECORDS, folder, ignore=shutil.ignore_patterns(".recordkit"))
    assert not load_records(folder, AS_OF).problems  # clean: the cache remembers it
    (folder / "log" / "later.yaml").write_text(new_file)
    warm = load_records(folder, AS_OF)
    cold = load_records(folder, AS_OF, cache=False)
    assert warm.problems and warm.problems == cold.problems


def test_a_second_load_in_one_process_reuses_unchanged_files_and_sees_changed_ones(tmp_path, monkeypatch):
    """`serve` loads again after each edit: files unchanged since (and old enough to trust their time)
    are not read again; an edited file is, and the load equals a cold one."""
    from recordkit import memo
    from recordkit.cache import ParseCache

    folder = tmp_path / "records"
    shutil.copytree(DEMO_RECORDS, folder, ignore=shutil.ignore_patterns(".recordkit"))
    long_ago = 1_700_000_000  # (2023: a file time well past the racy window)
    for path in folder.rglob("*.yaml"):
        os.utime(path, (long_ago, long_ago))
    memo.forget()
    load_records(folder, AS_OF)
    read: list[str] = []
    original = ParseCache.get
    monkeypatch.setattr(ParseCache, "get", lambda self, path, *a: read.append(path.name) or original(self, path, *a))
    warm = load_records(folder, AS_OF)
    assert [name for name in read if name != "policy.yaml"] == []  # every record file from memory
    same(warm, load_records(folder, AS_OF, cache=False))
    read.clear()
    log = folder / "log" / "2026.yaml"
    log.write_text(log.read_text().replace("by: tenant", "by: a tenant", 1))
    os.utime(log, (long_ago + 60, long_ago + 60))
    again = load_records(folder, AS_OF)
    assert "2026.yaml" in read and any(e.by == "a tenant" for e in again.portfolio.events)
    same(again, load_records(folder, AS_OF, cache=False))
