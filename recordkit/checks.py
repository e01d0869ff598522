"""Checks: plain functions of one shape that turn records into findings.

    Check = Callable[[Portfolio, Policy, date], Iterable[Finding]]

Adding a rule means writing one function and adding it to CHECKS. Every
finding names the rule and the source that set its date.
"""
from __future__ import annotations

from dataclasses import dataclass
from datetime import date
from typing import Callable, Iterable, Iterator

from . import model as m
from .errors import Source
from .rules import Interval, Policy, Rule
from .schedule import State, add, state_of

Task = str  # "replace" | "test" | "battery" | "fix"
TASK_ORDER = {"fix": 0, "replace": 1, "test": 2, "battery": 3}


@dataclass(frozen=True)
class Finding:
    device: str            # property/unit/device
    kind: m.Kind
    task: Task
    due: date | None       # None: now, because the date it depends on is unknown
    state: State
    reason: str
    rule: str
    source: str
    local: bool            # the rule was set by the local policy file
    record: Source         # where the device is defined

    def as_json(self) -> dict:
        return {"device": self.device, "kind": str(self.kind), "task": self.task,
                "due": self.due.isoformat() if self.due else None, "state": str(self.state),
                "reason": self.reason, "rule": self.rule, "source": self.source, "local": self.local,
                "record": str(self.record)}


Check = Callable[[m.Portfolio, Policy, date], Iterable[Finding]]


def active_devices(portfolio: m.Portfolio, as_of: date) -> Iterator[m.Located]:
    """Devices in service on the as-of date (installed, not yet retired)."""
    for uid, located in portfolio.devices.items():
        retired = portfolio.retired_on(uid)
        if retired is None or retired > as_of:
            yield located


def _finding(located: m.Located, task: Task, due: date | None, as_of: date, rule: Rule,
             window: Interval | None, reason: str) -> Finding:
    """A finding; with no warning window (window=None) the task is overdue at once."""
    device = located.device
    state = state_of(due, as_of, window) if window else State.OVERDUE
    return Finding(device.uid, device.kind, task, due, state, reason,
                   rule.name, rule.source, rule.local, device.source)


def _last(events: Iterable[m.Event], *actions: m.Action) -> m.Event | None:
    last = None
    for event in events:
        if event.action in actions:
            last = event
    return last


def replacement_due(portfolio: m.Portfolio, policy: Policy, as_of: date) -> Iterator[Finding]:
    window = policy.interval("due_soon_replace")
    for located in active_devices(portfolio, as_of):
        device = located.device
        what = device.kind.label
        if device.kind in m.ALARM_KINDS and device.manufactured is None:
            yield _finding(located, "replace", None, as_of, policy["unknown_manufacture"], window,
                           f"{what} with no readable manufacture date: replace now")
            continue
        if device.manufactured is None:
            continue  # leak alarms and nodes without a date have no life to count
        options = _lives(device, policy)
        if not options:
            continue
        due, rule, life = min(((add(device.manufactured, life), rule, life) for rule, life in options),
                              key=lambda option: option[0])
        yield _finding(located, "replace", due, as_of, rule, window,
                       f"{what} made {device.manufactured_text or device.manufactured}; "
                       f"replace {life} after manufacture")


# The policy life of each alarm kind when the maker's life is not recorded.
_DEFAULT_LIFE_RULE = {m.Kind.SMOKE: "smoke_life", m.Kind.HEAT: "heat_life", m.Kind.CO: "co_life",
                      m.Kind.SMOKE_CO: "co_life"}


def _lives(device: m.Device, policy: Policy) -> list[tuple[Rule, Interval]]:
    """The service lives that apply to a device; the earliest end wins."""
    if device.life_years:
        lives = [(policy["maker_life"], Interval(int(device.life_years), "years"))]
    elif device.kind in _DEFAULT_LIFE_RULE:
        name = _DEFAULT_LIFE_RULE[device.kind]
        lives = [(policy[name], policy.interval(name))]
    else:
        return []  # leak alarms and listening nodes: no life unless the maker gives one
    if device.kind is m.Kind.SMOKE_CO:  # the CO element's life, and the smoke sensor's life
        lives.append((policy["smoke_life"], policy.interval("smoke_life")))
    return lives


def test_due(portfolio: m.Portfolio, policy: Policy, as_of: date) -> Iterator[Finding]:
    rule, window = policy["test_every"], policy.interval("due_soon_test")
    for located in active_devices(portfolio, as_of):
        device = located.device
        last = _last(portfolio.events_for(device.uid), m.Action.TEST)
        start, since = (last.date, f"last tested {last.date}") if last else (device.installed,
                                                                              f"never tested; installed {device.installed}")
        yield _finding(located, "test", add(start, rule.value), as_of, rule, window,
                       f"{since}; test every {rule.value}")


def battery_due(portfolio: m.Portfolio, policy: Policy, as_of: date) -> Iterator[Finding]:
    rule, window = policy["battery_every"], policy.interval("due_soon_battery")
    for located in active_devices(portfolio, as_of):
        device = located.device
        if device.power not in (m.Power.BATTERY, m.Power.MAINS_BACKUP):
            continue
        last = _last(portfolio.events_for(device.uid), m.Action.BATTERY)
        start, since = (last.date, f"battery last changed {last.date}") if last else (
            device.installed, f"no battery change logged; installed {device.installed}")
        yield _finding(located, "battery", add(start, rule.value), as_of, rule, window,
                       f"{since}; change every {rule.value}")


def failed_test(portfolio: m.Portfolio, policy: Policy, as_of: date) -> Iterator[Finding]:
    rule = policy["failed_test"]
    for located in active_devices(portfolio, as_of):
        last = _last(portfolio.events_for(located.device.uid), m.Action.TEST)
        if last and last.result is m.Result.FAIL:
            note = f" ({last.note})" if last.note else ""
            yield _finding(located, "fix", last.date, as_of, rule, None,
                           f"failed its test on {last.date}{note}; fix or replace, then test again")


CHECKS: list[Check] = [replacement_due, test_due, battery_due, failed_test]


def evaluate(portfolio: m.Portfolio, policy: Policy, as_of: date) -> list[Finding]:
    """Run every check; findings in record order, then task order."""
    order = {uid: i for i, uid in enumerate(portfolio.devices)}
    findings = [finding for check in CHECKS for finding in check(portfolio, policy, as_of)]
    return sorted(findings, key=lambda f: (order[f.device], TASK_ORDER.get(f.task, 9)))
