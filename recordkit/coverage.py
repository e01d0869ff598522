"""Placement (coverage) checks: the vocabulary the rule-set files use.

Each check is a function of one rule (its parameters, from a rule-set file), the rule set, a unit and the
devices in service, yielding (kind of alarm needed, finding text). Which rules apply, with which rooms,
words and sources, is data (`rulesets`); how each kind of rule is judged is here.

Sleeping areas: a room outside a sleeping area may list the bedrooms it `serves`; a bedroom that no room
lists belongs, with the other unlisted bedrooms of its level, to one sleeping area per level, served by the
rooms on that level marked `outside_sleeping` without a `serves` list. A hall one floor away never serves
bedrooms unless it says so (IRC R314.3 item 2: "in the immediate vicinity of the bedrooms").
"""
from __future__ import annotations

from typing import Callable, Iterator

from . import model as m
from .rulesets import CoverageRule, RuleSet

Gap = tuple[m.Kind, str]


def level_name(level: int) -> str:
    return "the basement" if level < 0 else "the ground level" if level == 0 else f"level {level}"


def _has(devices: list[m.Device], kinds: frozenset[m.Kind], rooms: list[m.Room]) -> bool:
    ids = {room.id for room in rooms}
    return any(d.kind in kinds and d.room in ids for d in devices)


def _text(rule: CoverageRule, template: str | None = None, **values) -> str:
    return (template or rule.finding).format_map(_Blank(values))


class _Blank(dict):
    """Leaves a placeholder a finding names but a check cannot fill as an empty string."""

    def __missing__(self, key: str) -> str:
        return ""


def co_reason(rule_set: RuleSet, unit: m.Unit) -> str:
    """Why a unit needs CO alarms under the rule set's trigger ("" when it does not)."""
    reasons = []
    if rule_set.co_needed_by is not None:
        reasons = [f"{rule_set.co_needed_by.describe(r)} in {r.name}" for r in unit.rooms
                   if rule_set.co_needed_by.matches(r)]
    if rule_set.co_attached_garage and unit.attached_garage:
        reasons.append("an attached garage")
    return " and ".join(reasons)


def rooms_recorded(rule: CoverageRule, rule_set: RuleSet, unit: m.Unit, devices: list[m.Device]) -> Iterator[Gap]:
    if not unit.rooms:
        yield rule.kind, _text(rule)


def alarm_in_each_room(rule: CoverageRule, rule_set: RuleSet, unit: m.Unit, devices: list[m.Device]) -> Iterator[Gap]:
    for room in unit.rooms:
        if rule.rooms.matches(room) and not _has(devices, rule.kinds, [room]):
            yield rule.kind, _text(rule, room=room.name, level=level_name(room.level), use=room.use,
                                   appliances=rule.rooms.describe(room), co_reason=co_reason(rule_set, unit))


def alarm_in_one_of_rooms(rule: CoverageRule, rule_set: RuleSet, unit: m.Unit, devices: list[m.Device]) -> Iterator[Gap]:
    rooms = [room for room in unit.rooms if rule.rooms.matches(room)]
    if not rooms:
        yield rule.kind, _text(rule, rule.finding_no_room)
    elif not _has(devices, rule.kinds, rooms):
        yield rule.kind, _text(rule, rooms=", ".join(r.name for r in rooms))


def sleeping_areas(unit: m.Unit) -> list[tuple[list[m.Room], list[m.Room]]]:
    """(bedrooms, the rooms outside them that serve them), one pair per separate sleeping area."""
    bedrooms = [room for room in unit.rooms if room.use is m.RoomUse.BEDROOM]
    listed = {bedroom for room in unit.rooms for bedroom in room.serves}
    areas: dict[tuple, tuple[list[m.Room], list[m.Room]]] = {}
    for bedroom in bedrooms:
        if bedroom.id in listed:
            serving = [r for r in unit.rooms if bedroom.id in r.serves]
        else:
            serving = [r for r in unit.rooms if r.outside_sleeping and not r.serves and r.use is not m.RoomUse.BEDROOM
                       and r.level == bedroom.level]
        key = (tuple(sorted(r.id for r in serving)), None if bedroom.id in listed or serving else bedroom.level)
        areas.setdefault(key, ([], serving))[0].append(bedroom)
    return list(areas.values())


def alarm_outside_each_sleeping_area(rule: CoverageRule, rule_set: RuleSet, unit: m.Unit,
                                     devices: list[m.Device]) -> Iterator[Gap]:
    if rule.when_co_needed and not co_reason(rule_set, unit):
        return
    for bedrooms, serving in sleeping_areas(unit):
        if _has(devices, rule.kinds, serving):
            continue
        where = ("e.g. " + ", ".join(r.name for r in serving) if serving else
                 "no room on their level is marked outside_sleeping or serves them: record the hall or landing "
                 "by these bedrooms")
        yield rule.kind, _text(rule, bedrooms=", ".join(r.name for r in bedrooms), where=where,
                               level=level_name(bedrooms[0].level), co_reason=co_reason(rule_set, unit))


def storeys(rule_set: RuleSet, unit: m.Unit) -> list[int]:
    """The levels that need an alarm: with a room whose use counts (or marked habitable)."""
    return sorted({room.level for room in unit.rooms
                   if room.habitable or room.use not in rule_set.storeys_not_counting})


def alarm_on_each_storey(rule: CoverageRule, rule_set: RuleSet, unit: m.Unit, devices: list[m.Device]) -> Iterator[Gap]:
    if rule.when_co_needed and not co_reason(rule_set, unit):
        return
    for level in storeys(rule_set, unit):
        if not _has(devices, rule.kinds, [r for r in unit.rooms if r.level == level]):
            yield rule.kind, _text(rule, level=level_name(level), co_reason=co_reason(rule_set, unit))


def no_alarm_in_rooms(rule: CoverageRule, rule_set: RuleSet, unit: m.Unit, devices: list[m.Device]) -> Iterator[Gap]:
    for device in devices:
        room = unit.room(device.room)
        if device.kind in rule.kinds and room and rule.rooms.matches(room):
            yield device.kind, _text(rule, device=device.id, use=room.use, room=room.name)


def interconnected(rule: CoverageRule, rule_set: RuleSet, unit: m.Unit, devices: list[m.Device]) -> Iterator[Gap]:
    if rule.required == "unit_flag" and not unit.interconnect_required:
        return
    for device in devices:
        if device.kind in rule.kinds and not device.interconnected:
            yield device.kind, _text(rule, device=device.id, kind=device.kind.label)


def power_is(rule: CoverageRule, rule_set: RuleSet, unit: m.Unit, devices: list[m.Device]) -> Iterator[Gap]:
    for device in devices:
        if device.kind in rule.kinds and device.power not in rule.power:
            yield device.kind, _text(rule, device=device.id, kind=device.kind.label)


Check = Callable[[CoverageRule, RuleSet, m.Unit, list[m.Device]], Iterator[Gap]]
CHECKS: dict[str, Check] = {check.__name__: check for check in (
    rooms_recorded, alarm_in_each_room, alarm_in_one_of_rooms, alarm_outside_each_sleeping_area,
    alarm_on_each_storey, no_alarm_in_rooms, interconnected, power_is)}
