"""What a record is. Typed, immutable, no I/O.

Every record carries the `Source` it was read from, so any later finding can
point the user back to the line they wrote.
"""
from __future__ import annotations

import operator
from dataclasses import dataclass
from datetime import date
from datetime import time as time_of_day
from enum import StrEnum
from functools import cached_property
from itertools import compress, repeat
from typing import NamedTuple

from .errors import Source


class Kind(StrEnum):
    SMOKE = "smoke"
    CO = "co"
    SMOKE_CO = "smoke_co"
    HEAT = "heat"
    LEAK = "leak"
    LISTENING_NODE = "listening_node"

    @property
    def label(self) -> str:
        return KIND_LABELS[self]


KIND_LABELS = {
    Kind.SMOKE: "smoke alarm",
    Kind.CO: "CO alarm",
    Kind.SMOKE_CO: "smoke/CO alarm",
    Kind.HEAT: "heat alarm",
    Kind.LEAK: "leak alarm",
    Kind.LISTENING_NODE: "listening node",
}

# Kinds that are life-safety alarms with a published replacement life.
ALARM_KINDS = frozenset({Kind.SMOKE, Kind.CO, Kind.SMOKE_CO, Kind.HEAT})


class Power(StrEnum):
    BATTERY = "battery"          # replaceable battery
    SEALED = "sealed"            # non-replaceable long-life battery
    MAINS_BACKUP = "mains_backup"  # hard-wired with a replaceable backup battery
    MAINS = "mains"              # hard-wired, no battery to change


class Sensor(StrEnum):
    IONIZATION = "ionization"
    PHOTOELECTRIC = "photoelectric"
    DUAL = "dual"
    ELECTROCHEMICAL = "electrochemical"
    THERMAL = "thermal"


# Which sensing elements make sense for each kind (a records check, not a product rule).
SENSORS_FOR_KIND = {
    Kind.SMOKE: {Sensor.IONIZATION, Sensor.PHOTOELECTRIC, Sensor.DUAL},
    Kind.CO: {Sensor.ELECTROCHEMICAL},
    Kind.SMOKE_CO: {Sensor.IONIZATION, Sensor.PHOTOELECTRIC, Sensor.DUAL, Sensor.ELECTROCHEMICAL},
    Kind.HEAT: {Sensor.THERMAL},
    Kind.LEAK: set(),
    Kind.LISTENING_NODE: set(),
}


class RoomUse(StrEnum):
    BEDROOM = "bedroom"
    HALLWAY = "hallway"
    LIVING = "living"
    DINING = "dining"
    KITCHEN = "kitchen"
    BATHROOM = "bathroom"
    UTILITY = "utility"
    GARAGE = "garage"
    BASEMENT = "basement"
    LOFT = "loft"
    OFFICE = "office"
    STAIRS = "stairs"
    STORAGE = "storage"
    PLANT = "plant"      # boiler or plant room
    OTHER = "other"


class Appliance(StrEnum):
    """Fuel-burning appliances a room may hold; each coverage rule set decides which need a CO alarm."""

    GAS_BOILER = "gas_boiler"
    OIL_BOILER = "oil_boiler"
    SOLID_FUEL_BOILER = "solid_fuel_boiler"
    GAS_WATER_HEATER = "gas_water_heater"
    GAS_COOKER = "gas_cooker"      # a gas cooker or hob
    GAS_FIRE = "gas_fire"
    STOVE = "stove"                # a wood-burning or multi-fuel stove
    OPEN_FIRE = "open_fire"
    OIL_HEATER = "oil_heater"
    OTHER = "other"                # some other fixed combustion appliance


class Action(StrEnum):
    TEST = "test"
    BATTERY = "battery"
    REPLACE = "replace"
    CLEAN = "clean"
    INSPECT = "inspect"
    NOTE = "note"
    HEARD = "heard"      # a listening node reported an alarm (give the time of day)


class Result(StrEnum):
    PASS = "pass"
    FAIL = "fail"


# Done at most once a day to one device, unless the user says it really happened twice (`--again`):
# a second battery change the same day is far likelier a repeated entry than a second battery.
ONCE_A_DAY = frozenset({Action.TEST, Action.BATTERY, Action.REPLACE, Action.CLEAN, Action.INSPECT})


def record_key(day: date, clock, device: str, action: Action, result, by: str, note: str) -> tuple:
    """Two events with one key are one record entered twice: the same action on the same device on the
    same day (and time, when given); notes and heard reports are told apart by their text as well."""
    if action in ONCE_A_DAY:
        return (day, clock, device, action)
    return (day, clock, device, action, result, by, note)


_NO_TIME = time_of_day.min


@dataclass(frozen=True)
class Room:
    id: str
    name: str
    level: int
    use: RoomUse
    source: Source
    outside_sleeping: bool = False
    fuel_burning: bool = False        # some fixed combustion appliance (type not recorded)
    appliances: tuple[Appliance, ...] = ()
    flue: bool = False                # a flue passes through the room
    serves: tuple[str, ...] = ()      # for a room outside a sleeping area: the bedrooms it serves
    habitable: bool = False           # counts as living accommodation whatever its use (a converted loft)

    @property
    def burns_fuel(self) -> bool:
        return self.fuel_burning or bool(self.appliances)


@dataclass(frozen=True)
class Listen:
    """One alarm a listening node is meant to hear, with optional path details."""

    device: str          # as written: a device id in the same unit, or property/unit/device
    source: Source
    distance_m: float | None = None
    doors: int | None = None
    walls: int | None = None


@dataclass(frozen=True)
class Device:
    id: str
    uid: str             # property/unit/device, the id events use
    kind: Kind
    room: str
    power: Power
    installed: date
    source: Source
    manufactured: date | None = None   # None: unknown (or not recorded for non-alarms)
    manufactured_text: str = ""        # as the user wrote it, e.g. "2019-03" or "unknown"
    sensor: Sensor | None = None
    life_years: float | None = None
    removed: date | None = None
    location: str = ""
    note: str = ""
    interconnected: bool = False
    replaces: str = ""   # the id of the device (same unit) this one took the place of
    # listening nodes only: what they listen to and their circuit's design values
    listens_to: tuple[Listen, ...] = ()
    threshold_dba: float | None = None
    filter_r_ohm: float | None = None
    filter_c_farad: float | None = None
    corner_hz: float | None = None
    hold_r_ohm: float | None = None
    hold_c_farad: float | None = None
    hold_threshold: float | None = None   # logic threshold as a fraction of the charged hold level


@dataclass(frozen=True)
class Unit:
    id: str
    uid: str             # property/unit
    name: str
    source: Source
    rooms: tuple[Room, ...] = ()
    devices: tuple[Device, ...] = ()
    attached_garage: bool = False
    interconnect_required: bool = False

    def room(self, room_id: str) -> Room | None:
        return next((r for r in self.rooms if r.id == room_id), None)

    @property
    def levels(self) -> list[int]:
        return sorted({room.level for room in self.rooms})


@dataclass(frozen=True)
class Property:
    id: str
    name: str
    source: Source
    address: str = ""
    units: tuple[Unit, ...] = ()


@dataclass(frozen=True)
class UnitLine:
    uid: str
    id: str
    name: str


@dataclass(frozen=True)
class PropertyLine:
    """A property by its names alone (and its units'), where a report or page about the whole portfolio
    needs no more of a property it has not loaded."""
    id: str
    name: str
    address: str
    units: tuple[UnitLine, ...] = ()


class Event(NamedTuple):
    """One thing done to a device. A tuple, not a dataclass: a long history holds millions of events,
    and a tuple is built in C (the warm load makes them from cached columns without a Python call each)."""

    date: date
    device: str          # property/unit/device
    action: Action
    path: str            # the record file it was read from ...
    line: int            # ... and its line; `source` joins them only when a message needs it
    result: Result | None = None
    by: str = ""
    note: str = ""
    time: time_of_day | None = None   # time of day, when recorded (needed to match a node's report to a test)
    evidence: str = ""         # "sha256:<hex>" of a recording kept under records/evidence/

    @property
    def record_key(self) -> tuple:
        return record_key(self.date, self.time, self.device, self.action, self.result, self.by, self.note)

    @property
    def source(self) -> Source:
        return Source(self.path, self.line)


_ACTION = operator.itemgetter(Event._fields.index("action"))  # (quicker than an attribute in a map)


@dataclass(frozen=True)
class Located:
    """A device together with the unit and property that hold it."""

    property: Property
    unit: Unit
    device: Device


@dataclass(frozen=True)
class Portfolio:
    properties: tuple[Property, ...] = ()
    events: tuple[Event, ...] = ()

    @cached_property
    def devices(self) -> dict[str, Located]:
        """Every device by uid, in record order."""
        return {d.uid: Located(p, u, d) for p in self.properties for u in p.units for d in u.devices}

    @cached_property
    def _unsorted(self) -> dict[str, list[Event]]:
        by_device: dict[str, list[Event]] = {}
        for event in self.events:
            by_device.setdefault(event.device, []).append(event)
        return by_device

    @cached_property
    def _sorted(self) -> dict[str, tuple[Event, ...]]:  # each device's sorted events, filled by events_for
        return {}

    @property
    def history(self) -> dict[str, tuple[Event, ...]]:
        """Each device's events, oldest first (see `events_for`)."""
        return {uid: self.events_for(uid) for uid in self._unsorted}

    def events_for(self, uid: str) -> tuple[Event, ...]:
        """A device's events, oldest first: by date, then time of day; on one day an event with no time
        comes before the timed ones (so a timed failure is never hidden by an untimed pass of that day),
        and events alike in both keep file order (the sort is stable). Sorted when first asked for: a
        build that keeps most pages asks for few."""
        known = self._sorted.get(uid)
        if known is None:
            known = self._sorted[uid] = tuple(sorted(self._unsorted.get(uid, ()),
                                                     key=lambda e: (e.date, e.time or _NO_TIME)))
        return known

    def only(self, property_ids: set[str], added: tuple[Event, ...] = ()) -> "Portfolio":
        """Just these properties, with their events and `added`, and the properties their listening nodes
        hear: all a finding about one of their devices is worked out from (a few properties' checks cost a
        few milliseconds where the whole portfolio's cost seconds)."""
        ids = set(property_ids)
        for prop in self.properties:
            if prop.id in property_ids:
                ids.update(self.heard(prop))
        properties = tuple(p for p in self.properties if p.id in ids)
        if "_unsorted" in self.__dict__:  # already grouped by device
            events = tuple(e for p in properties for u in p.units for d in u.devices for e in self.events_for(d.uid))
        else:  # one pass picking theirs (in file order, which `events_for` sorts alike) beats grouping all
            wanted = {d.uid for p in properties for u in p.units for d in u.devices}
            events = tuple(e for e in self.events if e.device in wanted)
        return Portfolio(properties, events + tuple(added))

    def heard(self, prop: Property) -> set[str]:
        """The other properties whose alarms this property's listening nodes are meant to hear."""
        return {target.property.id for u in prop.units for d in u.devices if d.listens_to
                for _, target in self.listened(d)} - {prop.id}

    def listened(self, node: Device) -> list[tuple[Listen, "Located"]]:
        """The alarms a listening node is meant to hear, resolved to devices (unknown ids skipped)."""
        unit_uid = node.uid.rsplit("/", 1)[0]
        pairs = []
        for listen in node.listens_to:
            target = listen.device if "/" in listen.device else f"{unit_uid}/{listen.device}"
            if target in self.devices:
                pairs.append((listen, self.devices[target]))
        return pairs

    @cached_property
    def _retirements(self) -> dict[str, date]:
        retired: dict[str, date] = {}
        # (the replacements picked out in C: a Python test of each of millions of events is the slow part)
        events = self.events
        for event in compress(events, map(operator.is_, map(_ACTION, events), repeat(Action.REPLACE))):
            if event.device not in retired or event.date < retired[event.device]:
                retired[event.device] = event.date
        for uid, located in self.devices.items():
            removed = located.device.removed
            if removed and (uid not in retired or removed < retired[uid]):
                retired[uid] = removed
        return retired

    @cached_property
    def successors(self) -> dict[str, str]:
        """Device uid -> the uid of the device recorded as replacing it (`replaces:`)."""
        return {f"{d.uid.rsplit('/', 1)[0]}/{d.replaces}": d.uid
                for p in self.properties for u in p.units for d in u.devices if d.replaces}

    def retired_on(self, uid: str) -> date | None:
        """The day a device left service: its `removed:` date or its first `replace` event."""
        return self._retirements.get(uid)

