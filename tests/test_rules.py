"""The default policy against the reference facts, and local overrides."""
from datetime import date

import pytest

from recordkit.errors import Problems
from recordkit.rules import DEFAULT_RULES, Interval, Policy, apply_policy_file
from recordkit.yamltree import read_yaml

from .conftest import HOUSE, device_yaml, findings_for

policy = Policy()


def test_smoke_life_is_ten_years_with_its_source():
    # NFPA 72 (2013+) §14.4.7.1: replace no more than 10 years after the date of manufacture
    assert policy.interval("smoke_life") == Interval(10, "years")
    assert "NFPA 72" in policy["smoke_life"].source and "14.4.7.1" in policy["smoke_life"].source


def test_heat_life_is_ten_years():
    # common practice (UK fire-service guidance): heat alarms 10 years from manufacture
    assert policy.interval("heat_life") == Interval(10, "years")
    assert "common practice" in policy["heat_life"].source


def test_co_life_default_is_seven_years():
    # NFPA 72 (2019+) defers to the maker; conservative default 7 years when unknown (shared reference)
    assert policy.interval("co_life") == Interval(7, "years")
    assert "maker" in policy["co_life"].source


def test_test_interval_is_monthly():
    # US Fire Administration / NFPA public safety tips: test at least monthly
    assert policy.interval("test_every") == Interval(1, "months")


def test_battery_interval_is_yearly():
    # NFPA and US CPSC consumer guidance: replace replaceable batteries at least once a year
    assert policy.interval("battery_every") == Interval(12, "months")


def test_every_default_names_a_source():
    for rule in DEFAULT_RULES:
        assert rule.source.strip(), rule.name
        assert not rule.local


@pytest.mark.parametrize("text, expected", [
    ("1 month", Interval(1, "months")), ("12 months", Interval(12, "months")),
    ("7 days", Interval(7, "days")), ("1 week", Interval(1, "weeks")), ("10 years", Interval(10, "years")),
])
def test_interval_parse(text, expected):
    assert Interval.parse(text) == expected
    assert Interval.parse(str(expected)) == expected  # prints in a form it reads back


@pytest.mark.parametrize("bad", ["monthly", "1", 1, "-1 month", "1 fortnight", None])
def test_interval_parse_refuses(bad):
    with pytest.raises(ValueError):
        Interval.parse(bad)


def _apply(text: str):
    problems = Problems()
    tree = read_yaml(text.encode(), "records/policy.yaml", problems)
    return apply_policy_file(tree, "records/policy.yaml", problems), problems


def test_override_with_source_is_applied_and_marked_local():
    result, problems = _apply('policy:\n  test_every:\n    value: 1 week\n    source: "Eastfield code §3"\n')
    assert problems == []
    rule = result["test_every"]
    assert rule.value == Interval(1, "weeks") and rule.local and rule.source == "Eastfield code §3"
    assert str(rule.defined_at) == "records/policy.yaml:2"
    assert not result["smoke_life"].local  # others untouched


@pytest.mark.parametrize("text, line, words", [
    ("policy:\n  test_every:\n    value: 1 week\n", 2, "must name its source"),
    ("policy:\n  test_every: {value: 1 week, source: ''}\n", 2, "must name its source"),
    ("policy:\n  tset_every: {value: 1 week, source: x}\n", 2, "unknown rule"),
    ("policy:\n  test_every:\n    source: x\n    value: weekly\n", 4, "expected an interval"),
    ("policy:\n  failed_test: {value: 1 week, source: x}\n", 2, "cannot be changed"),
    ("policy:\n  smoke_life: {value: 0 years, source: x}\n", 2, "at least 1"),
    ("rules:\n  smoke_life: {value: 8 years, source: x}\n", 1, "nothing else"),
    ("coverage: mars-2050\n", 1, "choose one of: england-2022, scotland-2022, us-irc"),
    ("replacement_costs: {smoke: cheap}\n", 1, "smoke must be a number"),
    ("policy:\n  door_loss: {value: 12 dBA, source: x}\n", 2, "expected a number of dB"),
])
def test_bad_overrides_are_reported_with_line(text, line, words):
    result, problems = _apply(text)
    assert len(problems) == 1, problems
    assert problems[0].source.line == line and words in problems[0].message
    assert not any(rule.local for rule in result)


def test_policy_file_in_records_changes_the_schedule(records):
    # A local weekly-test rule (e.g. a UK fire service's advice) moves the test date by 7 days, not a month.
    folder = records({
        "house.yaml": HOUSE + device_yaml(id="s1", kind="smoke", room="hall", power="sealed",
                                          manufactured="2024-01", installed="2024-02-01"),
        "policy.yaml": "policy:\n  test_every: {value: 1 week, source: 'Eastfield FRS leaflet'}\n",
    })
    (test,) = [f for f in findings_for(folder, date(2024, 2, 5)) if f.task == "test"]
    assert test.due == date(2024, 2, 8)  # hand-worked: 2024-02-01 + 7 days
    assert test.local and test.source == "Eastfield FRS leaflet"
