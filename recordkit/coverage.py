"""Placement (coverage) rules: is every room and level covered as the chosen rule set asks?

Each rule is a function of a unit and its devices in service, yielding
(kind of alarm needed, reason naming the room or level). The rule names and
their sources live in `rules.COVERAGE_SETS`; `checks.coverage_gaps` turns the
results into findings.
"""
from __future__ import annotations

from typing import Callable, Iterator

from . import model as m

Gap = tuple[m.Kind, str]
SMOKE_KINDS = {m.Kind.SMOKE, m.Kind.SMOKE_CO}
CO_KINDS = {m.Kind.CO, m.Kind.SMOKE_CO}


def _level_name(level: int) -> str:
    return "the basement" if level < 0 else "the ground level" if level == 0 else f"level {level}"


def _in_rooms(devices: list[m.Device], kinds: set[m.Kind], rooms: list[m.Room]) -> bool:
    ids = {room.id for room in rooms}
    return any(d.kind in kinds and d.room in ids for d in devices)


def _bedrooms(unit: m.Unit) -> list[m.Room]:
    return [room for room in unit.rooms if room.use is m.RoomUse.BEDROOM]


def _outside_sleeping_rooms(unit: m.Unit, level: int) -> list[m.Room]:
    """Where an alarm 'outside the sleeping area' can be: any non-bedroom room on the bedrooms' level,
    or a room marked outside_sleeping half a storey away (split levels)."""
    return [room for room in unit.rooms if room.use is not m.RoomUse.BEDROOM
            and (room.level == level or (room.outside_sleeping and abs(room.level - level) <= 1))]


def _needs_co(unit: m.Unit) -> bool:
    return unit.attached_garage or any(room.fuel_burning for room in unit.rooms)


def smoke_in_each_bedroom(unit: m.Unit, devices: list[m.Device]) -> Iterator[Gap]:
    for room in _bedrooms(unit):
        if not _in_rooms(devices, SMOKE_KINDS, [room]):
            yield m.Kind.SMOKE, f"no smoke alarm in the sleeping room {room.name}"


def smoke_outside_sleeping(unit: m.Unit, devices: list[m.Device]) -> Iterator[Gap]:
    for level in sorted({room.level for room in _bedrooms(unit)}):
        rooms = _outside_sleeping_rooms(unit, level)
        if not _in_rooms(devices, SMOKE_KINDS, rooms):
            where = ", ".join(r.name for r in rooms if r.outside_sleeping) or "a hall or landing by the bedrooms"
            yield m.Kind.SMOKE, f"no smoke alarm outside the sleeping area on {_level_name(level)} (e.g. {where})"


def smoke_on_every_level(unit: m.Unit, devices: list[m.Device]) -> Iterator[Gap]:
    for level in unit.levels:
        if not _in_rooms(devices, SMOKE_KINDS, [r for r in unit.rooms if r.level == level]):
            yield m.Kind.SMOKE, f"no smoke alarm on {_level_name(level)}"


def co_outside_sleeping(unit: m.Unit, devices: list[m.Device]) -> Iterator[Gap]:
    if not _needs_co(unit):
        return
    for level in sorted({room.level for room in _bedrooms(unit)}):
        if not _in_rooms(devices, CO_KINDS, _outside_sleeping_rooms(unit, level)):
            yield m.Kind.CO, (f"no CO alarm outside the sleeping area on {_level_name(level)}; the unit has "
                              f"{_co_reason(unit)}")


def co_on_every_level(unit: m.Unit, devices: list[m.Device]) -> Iterator[Gap]:
    if not _needs_co(unit):
        return
    for level in unit.levels:
        if not _in_rooms(devices, CO_KINDS, [r for r in unit.rooms if r.level == level]):
            yield m.Kind.CO, f"no CO alarm on {_level_name(level)}; the unit has {_co_reason(unit)}"


def co_in_fuel_burning_room(unit: m.Unit, devices: list[m.Device], bedrooms_only: bool) -> Iterator[Gap]:
    for room in unit.rooms:
        if room.fuel_burning and (room.use is m.RoomUse.BEDROOM or not bedrooms_only):
            if not _in_rooms(devices, CO_KINDS, [room]):
                yield m.Kind.CO, f"no CO alarm in {room.name}, which has a fuel-burning appliance"


def no_smoke_in_kitchen_or_bathroom(unit: m.Unit, devices: list[m.Device]) -> Iterator[Gap]:
    for device in devices:
        room = unit.room(device.room)
        if device.kind in SMOKE_KINDS and room and room.use in (m.RoomUse.KITCHEN, m.RoomUse.BATHROOM):
            advice = "fit a heat alarm instead" if room.use is m.RoomUse.KITCHEN else "move it outside the room"
            yield device.kind, (f"smoke alarm {device.id} is in the {room.use} {room.name}: steam or cooking "
                                f"will set it off; {advice}")


def interconnected_where_required(unit: m.Unit, devices: list[m.Device]) -> Iterator[Gap]:
    if not unit.interconnect_required:
        return
    for device in devices:
        if device.kind in SMOKE_KINDS and not device.interconnected:
            yield device.kind, (f"smoke alarm {device.id} is not interconnected, and the unit requires "
                                "interconnected alarms")


def rooms_recorded(unit: m.Unit, devices: list[m.Device]) -> Iterator[Gap]:
    if not unit.rooms:
        yield m.Kind.SMOKE, ("no rooms recorded, so coverage cannot be judged: add the unit's rooms "
                             "(recordkit add room)")


def _co_reason(unit: m.Unit) -> str:
    reasons = [f"a fuel-burning appliance in {r.name}" for r in unit.rooms if r.fuel_burning]
    if unit.attached_garage:
        reasons.append("an attached garage")
    return " and ".join(reasons)


COVERAGE_CHECKS: dict[str, Callable[[m.Unit, list[m.Device]], Iterator[Gap]]] = {
    "cov_rooms_recorded": rooms_recorded,
    "cov_smoke_bedroom": smoke_in_each_bedroom,
    "cov_smoke_outside_sleeping": smoke_outside_sleeping,
    "cov_smoke_every_level": smoke_on_every_level,
    "cov_co_outside_sleeping": co_outside_sleeping,
    "cov_co_every_level": co_on_every_level,
    "cov_co_fuel_bedroom": lambda unit, devices: co_in_fuel_burning_room(unit, devices, bedrooms_only=True),
    "cov_co_fuel_room": lambda unit, devices: co_in_fuel_burning_room(unit, devices, bedrooms_only=False),
    "cov_no_smoke_kitchen_bath": no_smoke_in_kitchen_or_bathroom,
    "cov_interconnect": interconnected_where_required,
}
