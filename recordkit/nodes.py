"""Listening nodes: can each node hear the alarms it watches, and has it been heard doing so?

`node_report` computes the figures of one node (the `recordkit node` JSON
contract); `listening_node_findings` turns weak spots into findings.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date, datetime, time, timedelta

from . import acoustics as ac
from . import model as m
from .rules import Policy

LOW_FREQUENCY_NOTE_DB = 6.0  # half the amplitude: worth saying the node may miss a 520 Hz alarm
_SMOKE_PATTERN_KINDS = {m.Kind.SMOKE, m.Kind.SMOKE_CO, m.Kind.HEAT}
_CO_PATTERN_KINDS = {m.Kind.CO, m.Kind.SMOKE_CO}


@dataclass
class HeardCheck:
    device: str
    kind: m.Kind
    distance_m: float | None
    doors: int
    walls: int
    expected_dba: float | None
    margin_db: float | None
    heard_tests: list[date] = field(default_factory=list)
    missed_tests: list[date] = field(default_factory=list)


@dataclass
class PatternCheck:
    name: str
    longest_gap_s: float
    min_hold_fraction: float
    stays_on: bool
    relevant: bool     # the node listens to an alarm that sounds this pattern


@dataclass
class NodeReport:
    device: str
    threshold_dba: float | None
    corner_hz: float | None
    tone_hz: float
    tone_attenuation_db: float | None
    low_frequency_hz: float
    low_frequency_attenuation_db: float | None
    tau_s: float | None
    hold_threshold: float
    release_s: float | None
    patterns: list[PatternCheck]
    listened: list[HeardCheck]
    last_heard: str | None
    notes: list[str]

    @property
    def hit_rate(self) -> float | None:
        heard = sum(len(c.heard_tests) for c in self.listened)
        total = heard + sum(len(c.missed_tests) for c in self.listened)
        return heard / total if total else None

    def as_json(self) -> dict:
        def num(value, digits=2):
            return None if value is None else round(value, digits)
        return {
            "device": self.device, "threshold_dba": self.threshold_dba,
            "corner_hz": num(self.corner_hz, 1), "tone_hz": self.tone_hz,
            "tone_attenuation_db": num(self.tone_attenuation_db),
            "low_frequency_hz": self.low_frequency_hz,
            "low_frequency_attenuation_db": num(self.low_frequency_attenuation_db),
            "tau_s": num(self.tau_s, 4), "hold_threshold": self.hold_threshold, "release_s": num(self.release_s, 3),
            **{p.name: {"longest_gap_s": p.longest_gap_s, "min_hold_fraction": num(p.min_hold_fraction, 4),
                        "stays_on": p.stays_on, "release_s": num(self.release_s, 3), "relevant": p.relevant}
               for p in self.patterns},
            "listens_to": [{"device": c.device, "distance_m": c.distance_m, "doors": c.doors, "walls": c.walls,
                            "expected_dba": num(c.expected_dba, 1), "margin_db": num(c.margin_db, 1),
                            "heard_tests": len(c.heard_tests), "missed_tests": len(c.missed_tests),
                            "missed_dates": [d.isoformat() for d in c.missed_tests]} for c in self.listened],
            "hit_rate": num(self.hit_rate, 3), "last_heard": self.last_heard, "notes": self.notes,
        }


def node_report(portfolio: m.Portfolio, policy: Policy, node: m.Device, as_of: date) -> NodeReport:
    tone = policy.quantity("alarm_tone")
    low = policy.quantity("low_frequency_tone")
    corner = node.corner_hz
    if corner is None and node.filter_r_ohm and node.filter_c_farad:
        corner = ac.rc_corner_hz(node.filter_r_ohm, node.filter_c_farad)
    tau = node.hold_r_ohm * node.hold_c_farad if node.hold_r_ohm and node.hold_c_farad else None
    threshold = node.hold_threshold or policy.quantity("hold_threshold") / 100
    listened = portfolio.listened(node)
    kinds = {located.device.kind for _, located in listened}
    patterns = []
    if tau:
        for pattern, relevant_kinds in ((ac.TEMPORAL_3, _SMOKE_PATTERN_KINDS), (ac.TEMPORAL_4, _CO_PATTERN_KINDS)):
            fraction = ac.hold_fraction(pattern.longest_gap_s, tau)
            patterns.append(PatternCheck(pattern.name, pattern.longest_gap_s, fraction, fraction >= threshold,
                                         bool(kinds & relevant_kinds)))
    heard_events = [e for e in portfolio.events_for(node.uid) if e.action is m.Action.HEARD and e.date <= as_of]
    checks = [_heard_check(portfolio, policy, node, listen, located, heard_events, as_of)
              for listen, located in listened]
    notes = []
    if corner is not None and ac.highpass_loss_db(corner, low) > LOW_FREQUENCY_NOTE_DB:
        notes.append(f"tuned for about {tone:.0f} Hz: a {low:.0f} Hz low-frequency alarm (NFPA 72) is weakened by "
                     f"{ac.highpass_loss_db(corner, low):.0f} dB and will likely not be heard")
    last = heard_events[-1] if heard_events else None
    return NodeReport(
        device=node.uid, threshold_dba=node.threshold_dba, corner_hz=corner, tone_hz=tone,
        tone_attenuation_db=ac.highpass_loss_db(corner, tone) if corner is not None else None,
        low_frequency_hz=low,
        low_frequency_attenuation_db=ac.highpass_loss_db(corner, low) if corner is not None else None,
        tau_s=tau, hold_threshold=threshold, release_s=ac.release_time_s(tau, threshold) if tau else None,
        patterns=patterns, listened=checks,
        last_heard=(f"{last.date} {last.time}" if last.time else str(last.date)) if last else None, notes=notes)


def _heard_check(portfolio, policy, node, listen, located, heard_events, as_of) -> HeardCheck:
    doors, walls = listen.doors or 0, listen.walls or 0
    expected = margin = None
    if listen.distance_m:
        expected = ac.expected_level_dba(listen.distance_m, doors, walls,
                                         policy.quantity("door_loss"), policy.quantity("wall_loss"))
        if node.threshold_dba is not None:
            margin = expected - node.threshold_dba
    check = HeardCheck(located.device.uid, located.device.kind, listen.distance_m, doors, walls, expected, margin)
    since = as_of - policy.interval("evidence_lookback").delta
    window = timedelta(minutes=policy.quantity("evidence_window"))
    for test in portfolio.events_for(located.device.uid):
        if test.action is not m.Action.TEST or not (since < test.date <= as_of) or test.date < node.installed:
            continue
        heard = any(_close(test, report, window) for report in heard_events)
        (check.heard_tests if heard else check.missed_tests).append(test.date)
    return check


def _close(test: m.Event, report: m.Event, window: timedelta) -> bool:
    """A report matches a test within the window when both have times; on the same day otherwise."""
    if test.time is None or report.time is None:
        return test.date == report.date
    moment = lambda e: datetime.combine(e.date, e.time or time(0))  # noqa: E731
    return abs(moment(report) - moment(test)) <= window

