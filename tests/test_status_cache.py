"""`status` of the whole portfolio from the kept findings: word for word what a whole load reports, with
every option, before and after a logged test; and a whole load whenever a file is not as it was."""
from __future__ import annotations

from datetime import date
from pathlib import Path

import pytest
from click.testing import CliRunner

from recordkit.cli import main
from recordkit.cli import report
from recordkit.demo_portfolio import generate
from recordkit.loader import load_records

AS_OF = date(2026, 12, 1)  # the generated portfolio's story date (invented data)
OPTIONS = ([], ["--all"], ["--within", "30"], ["--task", "test", "--task", "battery"], ["--format", "json"],
           ["--monitor"])


@pytest.fixture(scope="module")
def portfolio(tmp_path_factory) -> Path:
    records = tmp_path_factory.mktemp("status") / "records"
    generate(records, 60, 1, as_of=AS_OF)  # a few properties, each with its own event files
    return records


def status(records: Path, *options: str):
    return CliRunner().invoke(main, ["status", "-r", str(records), "--as-of", AS_OF.isoformat(), *options],
                              catch_exceptions=False)


def whole(records: Path, *options: str):
    """What a whole load reports: with the kept findings out of the way."""
    for note in (records / ".recordkit" / "cache").glob("*.json"):
        note.unlink()
    return status(records, *options)


def no_whole_load(monkeypatch) -> None:
    def refused(*args, **kwargs):
        raise AssertionError("a whole load")
    monkeypatch.setattr(report, "load", refused)


@pytest.mark.parametrize("options", OPTIONS, ids=lambda o: " ".join(o) or "plain")
def test_kept_findings_report_what_a_whole_load_does(portfolio, monkeypatch, options):
    expected = whole(portfolio, *options)  # (and it keeps each property's findings for the next run)
    assert expected.exit_code in (2, 3) and expected.output  # the generated history has overdue work
    with monkeypatch.context() as patch:
        no_whole_load(patch)
        quick = status(portfolio, *options)
    assert (quick.exit_code, quick.output) == (expected.exit_code, expected.output)


def test_after_a_logged_test_only_that_property_is_worked_out_again(portfolio, tmp_path, monkeypatch):
    before = status(portfolio, "--format", "json").output  # (findings kept)
    loaded = load_records(portfolio, AS_OF)
    prop = loaded.portfolio.properties[1]
    device = next(d for u in prop.units for d in u.devices)
    logged = CliRunner().invoke(main, ["log", "-r", str(portfolio), device.uid, "test", "--result", "fail",
                                       "--date", AS_OF.isoformat(), "--note", "no sound"])
    assert logged.exit_code == 0, logged.output
    with monkeypatch.context() as patch:
        no_whole_load(patch)
        quick = [status(portfolio, *options) for options in OPTIONS]
    assert quick[OPTIONS.index(["--format", "json"])].output != before  # the failed test is in the report
    for options, seen in zip(OPTIONS, quick):
        expected = whole(portfolio, *options)
        assert (seen.exit_code, seen.output) == (expected.exit_code, expected.output), options


def test_a_hand_edit_since_means_a_whole_load(portfolio, monkeypatch):
    status(portfolio)
    some_file = sorted((portfolio / "log").rglob("*.yaml"))[0]
    some_file.write_text(some_file.read_text() + "\n")  # not checked by any load yet
    with monkeypatch.context() as patch:
        no_whole_load(patch)
        with pytest.raises(AssertionError, match="a whole load"):
            status(portfolio)
    assert status(portfolio).exit_code in (0, 3)
