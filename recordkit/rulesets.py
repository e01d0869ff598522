"""Coverage rule sets as data: one declarative YAML file per jurisdiction, shipped in the package
(`site_templates/rulesets/`), read with the same located reader as the records so a mistake in one is
reported as file:line. A file names its rules, each with a check from a fixed vocabulary (see
`coverage.CHECKS`), the alarm kinds it asks for, which rooms it concerns, the text of its finding and its
source. Adding a jurisdiction is adding a file.
"""
from __future__ import annotations

import functools
import string
from dataclasses import dataclass
from pathlib import Path

from . import model as m
from . import site_templates
from .errors import Problems, Source
from .fields import Fields
from .rules import Rule
from .yamltree import read_yaml

RULESETS = Path(site_templates.__file__).resolve().parent / "rulesets"
ALARMS = {"smoke": frozenset({m.Kind.SMOKE, m.Kind.SMOKE_CO}), "co": frozenset({m.Kind.CO, m.Kind.SMOKE_CO}),
          "heat": frozenset({m.Kind.HEAT})}
CHECK_NAMES = ("rooms_recorded", "alarm_in_each_room", "alarm_in_one_of_rooms", "alarm_outside_each_sleeping_area",
               "alarm_on_each_storey", "no_alarm_in_rooms", "interconnected", "power_is")
# What a finding's text may name, by check.
PLACEHOLDERS = {"room", "rooms", "level", "use", "appliances", "bedrooms", "where", "co_reason", "device", "kind"}


@dataclass(frozen=True)
class RoomSelector:
    """Which rooms a rule concerns: of these uses (if given), and (if `with` is given) holding a matching
    appliance or a flue. A room's `fuel_burning: true` is an appliance of unrecorded type: it matches
    `any` and `except` lists, never a list of named types."""

    uses: frozenset[m.RoomUse] | None = None
    appliance_mode: str = ""              # "" (not asked), "any", "except", "only"
    appliance_types: frozenset[m.Appliance] = frozenset()
    flue: bool = False

    def appliances_in(self, room: m.Room) -> list[str]:
        """The room's appliances this selector counts, as words ('a gas boiler')."""
        if not self.appliance_mode:
            return []
        named = [a for a in room.appliances if self.appliance_mode == "any"
                 or (a not in self.appliance_types if self.appliance_mode == "except" else a in self.appliance_types)]
        words = [f"a {a.value.replace('_', ' ')}" for a in named]
        if room.fuel_burning and self.appliance_mode in ("any", "except"):
            words.append("a fuel-burning appliance")
        return words

    def matches(self, room: m.Room) -> bool:
        if self.uses is not None and room.use not in self.uses:
            return False
        if not self.appliance_mode and not self.flue:
            return True
        return bool(self.appliances_in(room)) or (self.flue and room.flue)

    def describe(self, room: m.Room) -> str:
        words = self.appliances_in(room) + (["a flue passing through"] if self.flue and room.flue else [])
        return " and ".join(words) or "nothing that triggers this rule"


@dataclass(frozen=True)
class CoverageRule:
    rule: Rule                       # name, title, source: what `recordkit rules` and the pages list
    check: str
    kinds: frozenset[m.Kind]         # alarms that satisfy (or, for no_alarm_in_rooms, break) the rule
    kind: m.Kind                     # the kind a finding asks for
    finding: str
    rooms: RoomSelector = RoomSelector()
    finding_no_room: str = ""
    when_co_needed: bool = False
    required: str = "always"         # interconnected: "always" or "unit_flag"
    power: frozenset[m.Power] = frozenset()


@dataclass(frozen=True)
class RuleSet:
    name: str
    title: str
    path: str
    rules: tuple[CoverageRule, ...]
    storeys_not_counting: frozenset[m.RoomUse] = frozenset()
    co_needed_by: RoomSelector | None = None
    co_attached_garage: bool = False
    co_source: str = ""


def load_rule_set(path: Path, problems: Problems) -> RuleSet | None:
    shown = str(path)
    try:
        data = path.read_bytes()
    except OSError as exc:
        problems.add(Source(shown, 0), f"cannot read the rule set: {exc.strerror}")
        return None
    tree = read_yaml(data, shown, problems)
    f = Fields(tree, shown, problems, "rule set", 1)
    if not f.ok:
        return None
    name, title = f.text("name", required=True), f.text("title", required=True)
    not_counting = frozenset(f.choices("storeys_not_counting", m.RoomUse))
    co_needed, garage, co_source = None, False, ""
    if f.raw("co_needed_by") is not None:
        need = Fields(f.raw("co_needed_by"), shown, problems, "co_needed_by", f.map.line_of("co_needed_by"))
        co_needed = _appliances(need, RoomSelector()) if need.ok else None
        garage, co_source = need.flag("attached_garage"), need.text("source", required=True)
        need.finish()
    rules = tuple(r for item, line in f.items("rules", required=True)
                  if (r := _rule(item, shown, line, problems)) is not None)
    f.finish()
    return RuleSet(name, title, shown, rules, not_counting, co_needed, garage, co_source)


def _rule(tree, path: str, line: int, problems: Problems) -> CoverageRule | None:
    f = Fields(tree, path, problems, "rule", line)
    if not f.ok:
        return None
    before = len(problems)
    rule_id, check = f.text("id", required=True), f.text("check", required=True)
    f.what = f"rule '{rule_id}'"
    if check and check not in CHECK_NAMES:
        f.error("check", f"unknown check {check!r}; checks: {', '.join(CHECK_NAMES)}")
    alarm = f.raw("alarm")
    names = [alarm] if isinstance(alarm, str) else list(alarm) if isinstance(alarm, list) else []
    if check != "rooms_recorded" and (not names or any(n not in ALARMS for n in names)):
        f.error("alarm", f"'alarm' is one of {', '.join(ALARMS)} (or a list of them)")
    f.used.add("alarm")
    kinds = frozenset().union(*(ALARMS.get(n, frozenset()) for n in names)) if names else frozenset()
    kind = {"smoke": m.Kind.SMOKE, "co": m.Kind.CO, "heat": m.Kind.HEAT}.get(names[0] if names else "", m.Kind.SMOKE)
    rooms = RoomSelector()
    if f.raw("rooms") is not None:
        rooms = _rooms(Fields(f.raw("rooms"), path, problems, "rooms", f.map.line_of("rooms")))
    texts = {key: f.text(key, required=key == "finding") for key in ("finding", "finding_no_room")}
    for key, text in texts.items():
        unknown = {n for _, n, _, _ in string.Formatter().parse(text) if n} - PLACEHOLDERS
        if unknown:
            f.error(key, f"'{key}' names {', '.join(sorted(unknown))}; it may name {', '.join(sorted(PLACEHOLDERS))}")
    when = f.text("when")
    if when and when != "co_needed":
        f.error("when", "'when' is co_needed (or left out)")
    required = f.text("required", default="always")
    if required not in ("always", "unit_flag"):
        f.error("required", "'required' is always or unit_flag")
    power = frozenset(f.choices("power", m.Power))
    rule = Rule(rule_id, f.text("title", required=True), "required", f.text("source", required=True))
    f.finish()
    if len(problems) > before:
        return None
    return CoverageRule(rule, check, kinds, kind, texts["finding"], rooms, texts["finding_no_room"],
                        when == "co_needed", required, power)


def _rooms(f: Fields) -> RoomSelector:
    if not f.ok:
        return RoomSelector()
    uses = frozenset(f.choices("use", m.RoomUse)) if f.raw("use") is not None else None
    selector = RoomSelector(uses)
    if f.raw("with") is not None:
        having = Fields(f.raw("with"), f.path, f.problems, "with", f.map.line_of("with"))
        if having.ok:
            selector = _appliances(having, selector)
            selector = RoomSelector(selector.uses, selector.appliance_mode, selector.appliance_types,
                                    having.flag("flue"))
            having.finish()
    f.finish()
    return selector


def _appliances(f: Fields, base: RoomSelector) -> RoomSelector:
    """`appliances: any`, `appliances: {except: [types]}` or `appliances: [types]`."""
    value = f.raw("appliances")
    if value is None:
        return base
    if value == "any":
        return RoomSelector(base.uses, "any")
    if isinstance(value, dict) and set(value) == {"except"}:
        inner = Fields(value, f.path, f.problems, "appliances", f.map.line_of("appliances"))
        return RoomSelector(base.uses, "except", frozenset(inner.choices("except", m.Appliance)))
    if isinstance(value, list):
        return RoomSelector(base.uses, "only", frozenset(f.choices("appliances", m.Appliance)))
    f.error("appliances", "'appliances' is any, a list of appliance types, or {except: [types]}")
    return base


@functools.cache
def rule_sets() -> dict[str, RuleSet]:
    """Every rule set shipped in the package, by name. A broken shipped file is a packaging fault."""
    problems = Problems()
    found = {}
    for path in sorted(RULESETS.glob("*.yaml")):
        rule_set = load_rule_set(path, problems)
        if rule_set is not None:
            found[rule_set.name] = rule_set
    if problems:
        raise RuntimeError("recordkit's rule sets are damaged: " + "; ".join(str(p) for p in problems))
    return found
