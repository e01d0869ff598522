"""Dates the codes turn on: a smoke alarm's most life, when a device is in service, the order of one day's
events, and a past view. Expected dates come from python-dateutil; sources beside the values."""
from __future__ import annotations

import tempfile
from datetime import date, timedelta
from pathlib import Path

import pytest
from dateutil.relativedelta import relativedelta
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from recordkit.checks import evaluate
from recordkit.loader import load_records

from .conftest import DEMO_AS_OF, HOUSE, device_yaml, run_cli, write_records

AS_OF = date(2026, 12, 1)


def findings(folder: Path, as_of: date = AS_OF, today: date | None = None):
    loaded = load_records(folder, as_of, cache=False, today=today)
    assert loaded.problems == [], [str(p) for p in loaded.problems]
    return evaluate(loaded.portfolio, loaded.policy, as_of)


def house(records, devices: str, events: str = "") -> Path:
    files = {"house.yaml": HOUSE + devices}
    if events:
        files["log.yaml"] = "events:\n" + events
    return records(files)


@pytest.mark.parametrize("maker_years, years, rule, words", [
    (12, 10, "smoke_life", "the maker's 12 years does not extend"),  # NFPA 72 §14.4.7.1: no more than 10 years
    (8, 8, "maker_life", "shorter than the code's"),                 # the maker's instructions come first
])
def test_a_makers_life_shortens_a_smoke_alarms_but_never_lengthens_it(records, maker_years, years, rule, words):
    folder = house(records, device_yaml(id="s1", kind="smoke", room="hall", power="sealed", manufactured="2019-03",
                                        installed="2019-05-01", life_years=maker_years))
    (replace,) = [f for f in findings(folder) if f.task == "replace"]
    assert replace.due == date(2019, 3, 1) + relativedelta(years=years) and replace.rule == rule
    assert words in replace.reason


def test_a_device_installed_after_the_as_of_date_is_not_in_service(records):
    folder = house(records, device_yaml(id="s1", kind="smoke", room="bed-1", power="sealed", manufactured="2026-06",
                                        installed="2026-12-10")
                   + device_yaml(id="s2", kind="smoke", room="hall", power="sealed", manufactured="2026-06",
                                 installed="2026-11-01"))
    found = findings(folder, today=date(2026, 12, 20))
    assert not any(f.device.endswith("/s1") for f in found)  # no tasks before it is installed
    # and it does not yet cover the bedroom (IRC R314.3 item 1: a smoke alarm in each sleeping room)
    assert any(f.rule == "cov_smoke_bedroom" for f in found)


def _same_day(records, first: str, second: str):
    folder = house(records, device_yaml(id="s1", kind="smoke", room="hall", power="sealed", manufactured="2026-01",
                                        installed="2026-02-01"), first + second)
    return [f for f in findings(folder) if f.task == "fix"]


FAIL_1030 = "  - {date: 2026-11-20 10:30, device: test-house/main/s1, action: test, result: fail}\n"
PASS_1045 = "  - {date: 2026-11-20 10:45, device: test-house/main/s1, action: test, result: pass}\n"
PASS_1015 = "  - {date: 2026-11-20 10:15, device: test-house/main/s1, action: test, result: pass}\n"


def test_same_day_events_are_ordered_by_time_not_by_file_order(records):
    # a pass at 10:45 clears a fail at 10:30, whichever the files list first (common practice: a retest)
    assert _same_day(records, FAIL_1030, PASS_1045) == []
    assert _same_day(records, PASS_1045, FAIL_1030) == []
    # a fail at 10:30 after a pass at 10:15 stands, in either order
    assert len(_same_day(records, PASS_1015, FAIL_1030)) == 1
    assert len(_same_day(records, FAIL_1030, PASS_1015)) == 1


# ---- past views ------------------------------------------------------------------------------------

DEVICES = (device_yaml(id="s1", kind="smoke", room="bed-1", power="battery", manufactured="2023-01",
                       installed="2023-02-01")
           + device_yaml(id="s2", kind="smoke", room="hall", power="battery", manufactured="2023-01",
                         installed="2023-02-01"))
# days from 2025-01-01: 0..699 is up to 2026-12-01, the test's today
events = st.lists(st.tuples(st.integers(0, 699), st.sampled_from(["s1", "s2"]),
                            st.sampled_from(["test pass", "test fail", "battery", "clean"])), max_size=25)


def _event_line(day: date, device: str, what: str) -> str:
    action, _, result = what.partition(" ")
    return (f"  - {{date: {day}, device: test-house/main/{device}, action: {action}"
            + (f", result: {result}" if result else "") + "}\n")


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(events, st.integers(0, 699))
def test_a_past_view_is_what_the_records_said_then(history, cut):
    start, today = date(2025, 1, 1), date(2026, 12, 1)
    as_of = start + timedelta(days=cut)
    dated = [(start + timedelta(days=d), device, what) for d, device, what in history]
    with tempfile.TemporaryDirectory() as work:
        everything = write_records(Path(work) / "all", {
            "house.yaml": HOUSE + DEVICES,
            "log.yaml": "events:\n" + "".join(_event_line(*e) for e in dated) if dated else "events: []\n"})
        earlier = [e for e in dated if e[0] <= as_of]
        then = write_records(Path(work) / "then", {
            "house.yaml": HOUSE + DEVICES,
            "log.yaml": "events:\n" + "".join(_event_line(*e) for e in earlier) if earlier else "events: []\n"})
        past = findings(everything, as_of, today=today)
        reference = findings(then, as_of, today=as_of)
        strip = lambda items: [{k: v for k, v in f.as_json().items() if k != "record"} for f in items]  # noqa: E731
        assert strip(past) == strip(reference)


def test_past_view_through_the_command_line(tmp_path):
    # the demo holds events up to its story's date; a year earlier they are left out, not problems
    result = run_cli("status", "-r", "records", "--as-of", "2025-12-01", "--format", "json")
    assert result.returncode in (0, 3), result.stderr
    assert run_cli("check", "-r", "records", "--as-of", "2025-12-01").returncode == 0
    # an event after today is still a problem
    folder = write_records(tmp_path / "r", {"house.yaml": HOUSE + DEVICES, "log.yaml": "events:\n" + _event_line(
        date.today() + timedelta(days=3), "s1", "clean")})
    late = run_cli("check", "-r", str(folder), "--as-of", DEMO_AS_OF.isoformat())
    assert late.returncode == 1 and "a date in the future" in late.stderr
