"""The command line through its real entry point: help, exit codes, text and the JSON contract."""
import json
import re
from datetime import date

import pytest
from dateutil.relativedelta import relativedelta

from .conftest import DEMO_AS_OF, HOUSE, device_yaml, run_cli

AS_OF = "2026-12-01"
SMOKE = dict(id="s1", kind="smoke", room="hall", power="sealed", installed="2020-02-01")


@pytest.mark.parametrize("command", [[], ["check"], ["status"], ["rules"]])
def test_every_command_has_help(command):
    result = run_cli(*command, "--help")
    assert result.returncode == 0 and "Usage:" in result.stdout
    assert len(result.stdout.split("\n\n")) >= 2  # a description, not just the usage line


def test_check_exit_0_on_sound_records(records):
    folder = records({"h.yaml": HOUSE + device_yaml(**SMOKE, manufactured="2020-01")})
    result = run_cli("check", "-r", str(folder), "--as-of", AS_OF)
    assert result.returncode == 0, result.stderr
    assert "1 devices" in result.stdout and "no problems" in result.stdout


def test_check_exit_1_with_file_line_messages_and_no_traceback(records):
    folder = records({"h.yaml": HOUSE + device_yaml(**SMOKE, manufactured="2020-02-30"),
                      "log.yaml": "events:\n  - {date: 2026-01-01, device: a/b/c, action: clean}\n"})
    result = run_cli("check", "-r", str(folder), "--as-of", AS_OF)
    assert result.returncode == 1
    assert "Traceback" not in result.stderr
    assert re.search(r"h\.yaml:11: device 's1': 'manufactured': 2020-02-30 is not a real date", result.stderr)
    assert re.search(r"log\.yaml:2: event: no device 'a/b/c'", result.stderr)
    assert "2 problem(s) in 2 file(s)" in result.stderr


def test_status_exit_codes(records):
    fresh = records({"h.yaml": HOUSE + device_yaml(**{**SMOKE, "installed": "2026-11-20"}, manufactured="2026-10")
                     + device_yaml(**{**SMOKE, "id": "s2", "room": "bed-1", "installed": "2026-11-20"},
                                   manufactured="2026-10")})
    assert run_cli("status", "-r", str(fresh), "--as-of", AS_OF).returncode == 0  # nothing overdue
    assert run_cli("status", "-r", str(fresh), "--as-of", "2027-01-01").returncode == 3  # test overdue by then
    broken = records({"h.yaml": HOUSE + device_yaml(**SMOKE, manufactured="soon")})
    assert run_cli("status", "-r", str(broken), "--as-of", AS_OF).returncode == 1


def test_status_json_contract(records):
    folder = records({"h.yaml": HOUSE
                      + device_yaml(**SMOKE, manufactured="2016-06")
                      + device_yaml(id="b1", kind="co", room="hall", power="battery", manufactured="unknown",
                                    installed="2024-01-01")})
    result = run_cli("status", "-r", str(folder), "--as-of", AS_OF, "--format", "json")
    assert result.returncode == 3
    report = json.loads(result.stdout)
    assert report["as_of"] == AS_OF
    items = {(i["device"], i["task"]): i for i in report["items"] if i["task"] != "coverage"}
    assert set(items) == {("test-house/main/s1", "replace"), ("test-house/main/s1", "test"),
                          ("test-house/main/b1", "replace"), ("test-house/main/b1", "test"),
                          ("test-house/main/b1", "battery")}
    for item in report["items"]:
        assert {"device", "kind", "task", "due", "state", "reason", "source"} <= set(item)
        assert item["state"] in ("overdue", "due_soon", "ok") and item["source"]
        assert item["due"] is None or date.fromisoformat(item["due"])
    # NFPA 72 §14.4.7.1: 10 years from manufacture (2016-06 read as 2016-06-01)
    assert items[("test-house/main/s1", "replace")]["due"] == str(date(2016, 6, 1) + relativedelta(years=10))
    assert items[("test-house/main/s1", "replace")]["state"] == "overdue"
    # common practice: unknown manufacture date -> replace now (due null)
    assert items[("test-house/main/b1", "replace")]["due"] is None
    assert items[("test-house/main/b1", "replace")]["state"] == "overdue"
    assert report["summary"]["overdue"] == sum(i["state"] == "overdue" for i in report["items"])


def test_status_json_with_errors_lists_them(records):
    folder = records({"h.yaml": HOUSE + device_yaml(**SMOKE, manufactured="soon")})
    result = run_cli("status", "-r", str(folder), "--as-of", AS_OF, "--format", "json")
    report = json.loads(result.stdout)
    assert result.returncode == 1 and report["items"] == []
    assert report["errors"][0]["line"] == 11 and report["errors"][0]["file"].endswith("h.yaml")


def test_status_text_fits_80_columns_and_ends_with_the_caution():
    result = run_cli("status", "-r", "records", "--as-of", DEMO_AS_OF.isoformat(), "--all")
    assert result.returncode == 3, result.stderr
    lines = result.stdout.splitlines()
    assert max(len(line) for line in lines) <= 80
    assert "AHJ" in result.stdout.split("\n\n")[-1]  # the local code and the AHJ decide
    rank = {"OVERDUE": 0, "SOON": 1, "ok": 2}
    units, states = 0, []
    for line in lines + ["  end [x]"]:
        if re.match(r"^  \S.*\[[a-z0-9-]+\]$", line):  # a unit heading closes the previous unit
            assert states == sorted(states, key=rank.get), states  # overdue first, then soon, then ok
            units, states = units + 1, []
        elif m := re.match(r"^    \[..\] (\w+)", line):
            states.append(m.group(1))
    assert units == 5  # the demo's four units, plus the sentinel


def test_bad_as_of_is_a_usage_error():
    result = run_cli("status", "-r", "records", "--as-of", "01/12/2026")
    assert result.returncode == 2 and "01/12/2026" in result.stderr


def test_rules_lists_sources_and_local_overrides():
    result = run_cli("rules", "-r", "records", "--as-of", DEMO_AS_OF.isoformat())
    assert result.returncode == 0
    assert "smoke_life: 10 years  [default]" in result.stdout
    assert re.search(r"due_soon_battery: 45 days  \[local, records/policy\.yaml:\d+\]", result.stdout)
