"""Loading only the properties a command is about (`log`, `status --property`): the same records as a
whole load gives for them, and a whole load whenever the files are not as the last clean load left them."""
from __future__ import annotations

import shutil
from pathlib import Path

from click.testing import CliRunner

from recordkit.cli import main
from recordkit.loader import load_records
from recordkit.quickload import quick_load

from .conftest import DEMO_AS_OF, REPO

TODAY = DEMO_AS_OF  # the demo's story date, given as today: nothing in the records is after it


def demo(tmp_path: Path) -> Path:
    records = tmp_path / "records"
    shutil.copytree(REPO / "records", records, ignore=shutil.ignore_patterns(".recordkit"))
    assert not load_records(records, DEMO_AS_OF).problems  # a clean whole load leaves the manifest
    return records


def same_as_whole(records: Path, prop: str) -> None:
    quick = quick_load(records, {prop}, DEMO_AS_OF, TODAY)
    assert quick is not None and quick.partial
    whole = load_records(records, DEMO_AS_OF, cache=False).portfolio.only({prop})
    assert quick.portfolio.properties == whole.properties
    assert {d: quick.portfolio.events_for(d) for d in quick.portfolio.devices} == \
        {d: whole.events_for(d) for d in whole.devices}  # every event, with its file and line, in order


def test_a_property_alone_is_what_the_whole_load_says_of_it(tmp_path):
    records = demo(tmp_path)
    for prop in ("tansy-house", "bramble-cottage"):
        same_as_whole(records, prop)
    assert quick_load(records, {"no-such-house"}, DEMO_AS_OF, TODAY) is None


def test_any_change_to_the_files_means_a_whole_load(tmp_path):
    records = demo(tmp_path)
    log = records / "log" / "2026.yaml"
    text = log.read_text()
    log.write_text(text.replace("by: tenant", "by: tenant ", 1))  # a hand edit: not checked yet
    assert quick_load(records, {"tansy-house"}, DEMO_AS_OF, TODAY) is None
    log.write_text(text)
    (records / "log" / "extra.yaml").write_text("events: []\n")  # a new file
    assert quick_load(records, {"tansy-house"}, DEMO_AS_OF, TODAY) is None
    (records / "log" / "extra.yaml").unlink()
    load_records(records, DEMO_AS_OF)
    assert quick_load(records, {"tansy-house"}, DEMO_AS_OF, TODAY) is not None
    (records / "log" / "2025.yaml").unlink()  # a file gone
    assert quick_load(records, {"tansy-house"}, DEMO_AS_OF, TODAY) is None


def log(records: Path, *args: str):
    return CliRunner().invoke(main, ["log", "-r", str(records), *args], catch_exceptions=False)


def test_logging_keeps_the_next_command_quick_and_right(tmp_path):
    records = demo(tmp_path)
    for day in ("2026-11-29", "2026-11-30"):
        result = log(records, "tansy-house/flat-1/landing-smoke", "test", "--result", "pass", "--date", day)
        assert result.exit_code == 0, result.output
        same_as_whole(records, "tansy-house")  # the log brought the manifest up to date: still quick, and right
    refused = log(records, "tansy-house/flat-1/landing-smoke", "test", "--result", "pass", "--date", "2026-11-30")
    assert refused.exit_code == 1 and "already recorded" in refused.output  # seen in the quick load


def test_status_of_a_property_says_the_same_quick_or_whole(tmp_path):
    records = demo(tmp_path)
    args = ["status", "-r", str(records), "--as-of", DEMO_AS_OF.isoformat(), "--property", "tansy-house",
            "--within", "30", "--format", "json"]
    quick = CliRunner().invoke(main, args)
    for note in (records / ".recordkit" / "cache").glob("*.json"):
        note.unlink()  # no manifest, no cache: a whole load
    whole = CliRunner().invoke(main, args)
    assert quick.exit_code == whole.exit_code == 3  # something overdue in the demo
    assert quick.output == whole.output and '"items"' in quick.output
