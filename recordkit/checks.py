"""Checks: plain functions of one shape that turn records into findings.

    Check = Callable[[Portfolio, Policy, date], Iterable[Finding]]

Adding a rule means writing one function and adding it to CHECKS. Every
finding names the rule and the source that set its date.
"""
from __future__ import annotations

import hashlib
from dataclasses import dataclass
from datetime import date
from typing import Callable, Iterable, Iterator

from . import model as m
from .coverage import CHECKS as COVERAGE_CHECKS
from .errors import Source
from .nodes import node_report
from .rules import Interval, Policy, Rule
from .schedule import State, add, state_of

Task = str  # "replace" | "test" | "battery" | "fix" | "coverage" | "node"
TASK_ORDER = {"coverage": 0, "fix": 1, "replace": 2, "test": 3, "battery": 4, "node": 5}


@dataclass(frozen=True)
class Finding:
    device: str            # property/unit/device; for a coverage gap, the unit (property/unit)
    kind: m.Kind           # for a coverage gap, the kind of alarm the rule asks for
    task: Task
    due: date | None       # None: now, because the date it depends on is unknown
    state: State
    reason: str
    rule: str
    source: str
    local: bool            # the rule was set by the local policy file
    record: Source         # where the device (or unit) is defined
    unit: str = ""         # property/unit

    @property
    def key(self) -> str:
        """Stable across runs: the same task of the same device keeps its key when its date moves."""
        if self.task in ("replace", "test", "battery", "fix"):
            return f"{self.device}/{self.task}"
        detail = self.due.isoformat() if self.due else hashlib.sha1(self.reason.encode()).hexdigest()[:10]
        return f"{self.device}/{self.task}/{self.rule}/{detail}"

    def as_json(self) -> dict:
        return {"device": self.device, "unit": self.unit, "kind": str(self.kind), "task": self.task,
                "due": self.due.isoformat() if self.due else None, "state": str(self.state),
                "label": self.state.word,
                "reason": self.reason, "rule": self.rule, "source": self.source, "local": self.local,
                "record": str(self.record)}


Check = Callable[[m.Portfolio, Policy, date], Iterable[Finding]]


def active_devices(portfolio: m.Portfolio, as_of: date) -> Iterator[m.Located]:
    """Devices in service on the as-of date: installed on or before it, and not yet retired."""
    for uid, located in portfolio.devices.items():
        retired = portfolio.retired_on(uid)
        if located.device.installed <= as_of and (retired is None or retired > as_of):
            yield located


def _finding(located: m.Located, task: Task, due: date | None, as_of: date, rule: Rule,
             window: Interval | None, reason: str) -> Finding:
    """A finding; with no warning window (window=None) the task is overdue at once."""
    device = located.device
    state = state_of(due, as_of, window) if window else State.OVERDUE
    return Finding(device.uid, device.kind, task, due, state, reason,
                   rule.name, rule.source, rule.local, device.source, located.unit.uid)


def urgency(finding: Finding) -> tuple:
    """Sort key for 'most pressing first': overdue before due soon before ok, then the earliest date."""
    return finding.state.rank, finding.due or date.min, TASK_ORDER.get(finding.task, 9)


def worst_state(findings: Iterable[Finding]) -> State | None:
    """A device's state: that of its most pressing finding (None: nothing to do)."""
    return min((f.state for f in findings), key=lambda s: s.rank, default=None)


def by_property(findings: Iterable[Finding]) -> dict[str, list[Finding]]:
    """Findings grouped by the property they are about, in their order."""
    grouped: dict[str, list[Finding]] = {}
    for finding in findings:
        grouped.setdefault(finding.unit.split("/", 1)[0], []).append(finding)
    return grouped


def last_event(events: Iterable[m.Event], *actions: m.Action) -> m.Event | None:
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
        why = ""
        if device.life_years and rule.name != "maker_life":
            why = f" (the maker's {int(device.life_years)} years does not extend the {life} of rule {rule.name})"
        elif rule.name == "maker_life" and len(options) > 1:
            why = " (the maker's life, shorter than the code's)"
        yield _finding(located, "replace", due, as_of, rule, window,
                       f"{what} made {device.manufactured_text or device.manufactured}; "
                       f"replace {life} after manufacture{why}")


# The policy life of each alarm kind when the maker's life is not recorded.
_DEFAULT_LIFE_RULE = {m.Kind.SMOKE: "smoke_life", m.Kind.HEAT: "heat_life", m.Kind.CO: "co_life",
                      m.Kind.SMOKE_CO: "co_life"}


def _lives(device: m.Device, policy: Policy) -> list[tuple[Rule, Interval]]:
    """The service lives that apply to a device; the earliest end wins. The maker's stated life replaces
    the policy life of CO, heat and other devices, but never lengthens a smoke alarm's: NFPA 72 §14.4.7.1
    sets 10 years from manufacture as the most, so a smoke sensor always keeps `smoke_life` too."""
    if device.life_years:
        lives = [(policy["maker_life"], Interval(int(device.life_years), "years"))]
    elif device.kind in _DEFAULT_LIFE_RULE:
        name = _DEFAULT_LIFE_RULE[device.kind]
        lives = [(policy[name], policy.interval(name))]
    else:
        return []  # leak alarms and listening nodes: no life unless the maker gives one
    if device.kind in (m.Kind.SMOKE, m.Kind.SMOKE_CO) and all(rule.name != "smoke_life" for rule, _ in lives):
        lives.append((policy["smoke_life"], policy.interval("smoke_life")))
    return lives


def _rule_for(policy: Policy, device: m.Device, alarm_rule: str) -> Rule:
    """Smoke, CO and heat alarms follow alarm guidance; leak sensors and listening nodes their maker."""
    return policy[alarm_rule if device.kind in m.ALARM_KINDS else f"sensor_{alarm_rule}"]


def test_due(portfolio: m.Portfolio, policy: Policy, as_of: date) -> Iterator[Finding]:
    window = policy.interval("due_soon_test")
    for located in active_devices(portfolio, as_of):
        device = located.device
        rule = _rule_for(policy, device, "test_every")
        # a listening node's report of a real or test alarm shows it works, like a test
        actions = (m.Action.TEST, m.Action.HEARD) if device.kind is m.Kind.LISTENING_NODE else (m.Action.TEST,)
        last = last_event(portfolio.events_for(device.uid), *actions)
        start, since = (last.date, f"last tested {last.date}") if last else (device.installed,
                                                                              f"never tested; installed {device.installed}")
        yield _finding(located, "test", add(start, rule.value), as_of, rule, window,
                       f"{since}; test every {rule.value}")


def battery_due(portfolio: m.Portfolio, policy: Policy, as_of: date) -> Iterator[Finding]:
    window = policy.interval("due_soon_battery")
    for located in active_devices(portfolio, as_of):
        device = located.device
        rule = _rule_for(policy, device, "battery_every")
        if device.power not in (m.Power.BATTERY, m.Power.MAINS_BACKUP):
            continue
        last = last_event(portfolio.events_for(device.uid), m.Action.BATTERY)
        start, since = (last.date, f"battery last changed {last.date}") if last else (
            device.installed, f"no battery change logged; installed {device.installed}")
        yield _finding(located, "battery", add(start, rule.value), as_of, rule, window,
                       f"{since}; change every {rule.value}")


def failed_test(portfolio: m.Portfolio, policy: Policy, as_of: date) -> Iterator[Finding]:
    rule = policy["failed_test"]
    for located in active_devices(portfolio, as_of):
        last = last_event(portfolio.events_for(located.device.uid), m.Action.TEST)
        if last and last.result is m.Result.FAIL:
            note = f" ({last.note})" if last.note else ""
            yield _finding(located, "fix", last.date, as_of, rule, None,
                           f"failed its test on {last.date}{note}; fix or replace, then test again")


def coverage_gaps(portfolio: m.Portfolio, policy: Policy, as_of: date) -> Iterator[Finding]:
    """Placement rules of the chosen rule set, per unit, from its rooms and the devices in service."""
    in_service = {loc.device.uid for loc in active_devices(portfolio, as_of)}
    for prop in portfolio.properties:
        for unit in prop.units:
            devices = [d for d in unit.devices if d.uid in in_service]
            rule_set = policy.rule_set
            for coverage in rule_set.rules:
                rule = coverage.rule
                for kind, reason in COVERAGE_CHECKS[coverage.check](coverage, rule_set, unit, devices):
                    yield Finding(unit.uid, kind, "coverage", None, State.OVERDUE, reason, rule.name,
                                  rule.source, rule.local, unit.source, unit.uid)


def listening_node_findings(portfolio: m.Portfolio, policy: Policy, as_of: date) -> Iterator[Finding]:
    """Can each node hear its alarms (level, filter, hold circuit), and did it report their tests?"""
    for located in active_devices(portfolio, as_of):
        node = located.device
        if node.kind is not m.Kind.LISTENING_NODE:
            continue
        report = node_report(portfolio, policy, node, as_of)
        for rule_name, due, reason in node_problems(report, policy):
            yield _finding(located, "node", due, as_of, policy[rule_name], None, reason)


def node_problems(report, policy: Policy) -> Iterator[tuple[str, date | None, str]]:
    minimum = policy.quantity("min_hearing_margin")
    for check in report.listened:
        name = check.device.rsplit("/", 1)[1]
        if check.margin_db is None:
            missing = " and ".join(x for x, v in (("distance_m", check.distance_m),
                                                   ("threshold_dba", report.threshold_dba)) if v is None)
            yield "min_hearing_margin", None, f"cannot check how well it hears {name}: record {missing}"
        elif check.margin_db < 0:
            yield ("min_hearing_margin", None,
                   f"will not hear {name}: about {check.expected_dba:.0f} dBA reaches it, {-check.margin_db:.1f} dB "
                   f"below its trigger level of {report.threshold_dba:g} dBA (want {minimum:g} dB above): move it "
                   "closer or lower the trigger level")
        elif check.margin_db < minimum:
            yield ("min_hearing_margin", None,
                   f"hears {name} at about {check.expected_dba:.0f} dBA, only {check.margin_db:.1f} dB over its "
                   f"trigger level of {report.threshold_dba:g} dBA (want {minimum:g} dB): move it closer or lower "
                   "the trigger level")
        for missed in check.missed_tests:
            yield "evidence_window", missed, f"did not report the test of {name} on {missed}"
    if report.corner_hz is not None and report.corner_hz > report.tone_hz:
        yield ("alarm_tone", None, f"its filter's corner ({report.corner_hz:.0f} Hz) is above the alarm tone "
               f"({report.tone_hz:.0f} Hz): the tone is weakened by {report.tone_attenuation_db:.1f} dB")
    for pattern in report.patterns:
        if pattern.relevant and not pattern.stays_on:
            rule = "temporal_3" if pattern.name == "temporal3" else "temporal_4"
            yield (rule, None, f"its hold circuit (tau {report.tau_s:.2f} s) decays to "
                   f"{pattern.min_hold_fraction:.0%} over the {pattern.longest_gap_s:g} s gap of {pattern.name}, "
                   f"below its {report.hold_threshold:.0%} threshold: the alarm will flicker on and off")


CHECKS: list[Check] = [coverage_gaps, replacement_due, test_due, battery_due, failed_test, listening_node_findings]


def evaluate(portfolio: m.Portfolio, policy: Policy, as_of: date) -> list[Finding]:
    """Run every check; findings in record order (unit, then device), then task order."""
    unit_order = {u.uid: i for i, u in enumerate(u for p in portfolio.properties for u in p.units)}
    device_order = {uid: i for i, uid in enumerate(portfolio.devices)}
    findings = [finding for check in CHECKS for finding in check(portfolio, policy, as_of)]
    return sorted(findings, key=lambda f: (unit_order.get(f.unit, 0), device_order.get(f.device, -1),
                                           TASK_ORDER.get(f.task, 9)))

