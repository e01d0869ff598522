"""Commands that add record entries, or take the last ones out: add, replace and undo."""
from __future__ import annotations

import sys
from contextlib import contextmanager
from pathlib import Path

import click

from .. import journal
from .. import model as m
from .events import refuse_problems, split_when, write_or_exit
from .options import EXIT_ERRORS, Group, command, date_option, load_or_exit, records_option, today

when_installed = date_option("When it was installed (default: today).")


def register(main: click.Group) -> None:
    main.add_command(add)
    main.add_command(replace)
    main.add_command(undo)


@command()
@records_option
def undo(records_dir: Path) -> None:
    """Take out what the last `log`, `import`, `hear --log`, `add` or `replace` wrote.

    Only while every file it wrote is still exactly as it left it (otherwise
    nothing is removed, and the message says which file changed); the same
    lock, temp file, fsync and rename as every write. One step back only."""
    from ..journal import UndoRefused
    from ..logbook import LogWriteError, MaybeWritten, undo_last

    try:
        command_done, done = undo_last(records_dir)
    except (UndoRefused, LogWriteError, MaybeWritten) as exc:
        click.echo(f"Not undone: {exc}", err=True)
        sys.exit(EXIT_ERRORS)
    click.echo(f"Undid {command_done}:")
    for line in done:
        click.echo(f"  {line}")


def given(data: dict) -> dict:
    """The fields that were given: no None, empty text or list, or a flag left off (0 is a value)."""
    return {k: v for k, v in data.items() if not (v is None or v is False or (isinstance(v, (str, tuple)) and not v))}


@contextmanager
def written_or_exit(what: str, records_dir: Path):
    """Exit 1 with the reason (and the lines to add by hand, when there are some) if a write is refused."""
    from ..additions import AddRefused
    from ..logbook import LogWriteError, MaybeWritten

    try:
        with journal.batch(records_dir, f"add {what}"):
            yield
    except AddRefused as exc:
        click.echo(f"Not written: {exc}", err=True)
        if exc.lines:
            click.echo(f"Add these lines by hand (in the {what}'s list, indented like its siblings):\n"
                       + exc.lines, err=True)
        sys.exit(EXIT_ERRORS)
    except (LogWriteError, MaybeWritten) as exc:
        click.echo(str(exc), err=True)
        sys.exit(EXIT_ERRORS)


def write_entry(records_dir: Path, what: str, parent: str, data: dict, need_records: bool = True) -> None:
    from ..additions import add_entry

    loaded = load_or_exit(records_dir, today(), "Not written: fix the records first.", need_records)
    data = given(data)
    with written_or_exit(what, records_dir):
        path, line = add_entry(records_dir, loaded, what, parent, data)
    click.echo(f"Added {what} '{data['id']}' at {path}:{line}")


@click.group(cls=Group)
def add() -> None:
    """Add a property, unit, room or device to the record files.

    The entry is checked against the records first, then inserted as new lines
    (no byte of the existing text changes) under a lock, through a temp file
    and an atomic rename; the new entry's file:line is printed. A layout that
    cannot take a clean insertion is refused with the lines to add by hand."""


@add.command("property")
@records_option
@click.option("--id", "ident", required=True, help="The property's id (lowercase a-z, 0-9, hyphens).")
@click.option("--name", required=True, help="Its name, as pages and sheets show it.")
@click.option("--address", default="", help="Its address (shown on sheets).")
@click.option("--unit", "unit_id", default="home", show_default=True, help="The id of its first unit.")
@click.option("--unit-name", default="", help="The first unit's name (default: the property's name).")
@click.option("--file", "file_name", metavar="PATH", help="The new file, relative to the records folder "
              "(default: ID.yaml).")
def add_property(records_dir: Path, ident, name, address, unit_id, unit_name, file_name) -> None:
    """Add a property (with its first unit) as a new file in the records folder."""
    from ..additions import add_property as write_property

    loaded = load_or_exit(records_dir, today(), "Not written: fix the records first.", need_records=False)
    data = {"id": ident, "name": name, **({"address": address} if address else {})}
    with written_or_exit("property", records_dir):
        path, unit_line = write_property(records_dir, loaded, data, {"id": unit_id, "name": unit_name or name},
                                         file_name)
    click.echo(f"Added property '{ident}' at {path}:2 (unit '{unit_id}' at line {unit_line}); add its rooms "
               f"with `recordkit add room --unit {ident}/{unit_id} ...`")


@add.command("unit")
@records_option
@click.option("--property", "property_id", required=True, metavar="ID", help="The property it belongs to.")
@click.option("--id", "ident", required=True, help="The unit's id (lowercase a-z, 0-9, hyphens).")
@click.option("--name", default="", help="Its name (default: the id).")
@click.option("--attached-garage", is_flag=True, help="It has an attached garage (a CO alarm trigger).")
@click.option("--interconnect-required", is_flag=True, help="Its smoke alarms must be interconnected.")
def add_unit(records_dir: Path, property_id, ident, name, attached_garage, interconnect_required) -> None:
    """Add a unit (a flat or home) to a property."""
    write_entry(records_dir, "unit", property_id, {"id": ident, "name": name, "attached_garage": attached_garage,
                                                   "interconnect_required": interconnect_required})


@add.command("room")
@records_option
@click.option("--unit", "unit_uid", required=True, metavar="PROPERTY/UNIT", help="The unit it belongs to.")
@click.option("--id", "ident", required=True, help="The room's id (lowercase a-z, 0-9, hyphens).")
@click.option("--name", default="", help="Its name (default: the id).")
@click.option("--level", type=int, required=True, help="Its storey: 0 ground, 1 first floor, -1 basement.")
@click.option("--use", type=click.Choice([u.value for u in m.RoomUse]), required=True, help="What it is used for.")
@click.option("--outside-sleeping", is_flag=True, help="A hall or landing outside the bedrooms.")
@click.option("--serves", multiple=True, metavar="BEDROOM_ID", help="A bedroom this hall or landing serves "
              "(repeat for several): they form one sleeping area.")
@click.option("--appliance", "appliances", multiple=True, type=click.Choice([a.value for a in m.Appliance]),
              help="A fuel-burning appliance in the room (repeat for several).")
@click.option("--fuel-burning", is_flag=True, help="It holds a fixed combustion appliance of unrecorded type.")
@click.option("--flue", is_flag=True, help="A flue passes through it.")
@click.option("--habitable", is_flag=True, help="Living accommodation whatever its use (a converted loft).")
def add_room(records_dir: Path, unit_uid, ident, name, level, use, outside_sleeping, serves, appliances,
             fuel_burning, flue, habitable) -> None:
    """Add a room to a unit."""
    write_entry(records_dir, "room", unit_uid, {
        "id": ident, "name": name, "level": level, "use": use, "outside_sleeping": outside_sleeping and not serves,
        "serves": tuple(serves), "appliances": tuple(appliances), "fuel_burning": fuel_burning, "flue": flue,
        "habitable": habitable})


def device_options(func):
    for option in reversed([
        click.option("--kind", type=click.Choice([k.value for k in m.Kind]), help="What it is."),
        click.option("--room", metavar="ROOM_ID", help="The room it is in."),
        click.option("--power", type=click.Choice([p.value for p in m.Power]), help="battery (replaceable), "
                     "sealed (long-life), mains_backup or mains. Default: battery."),
        click.option("--sensor", type=click.Choice([s.value for s in m.Sensor]), help="Its sensing element."),
        click.option("--manufactured", metavar="YYYY-MM", help="Date of manufacture from its label "
                     "(YYYY-MM, YYYY-MM-DD or unknown); smoke alarms are replaced 10 years after it."),
        click.option("--life-years", type=click.IntRange(1), help="The maker's stated life in years."),
        click.option("--location", default="", help="Where exactly, e.g. 'ceiling, centre of landing'."),
        click.option("--interconnected", is_flag=True, default=None, help="Wired or radio-linked to the others."),
    ]):
        func = option(func)
    return func


@add.command("device")
@records_option
@click.option("--unit", "unit_uid", required=True, metavar="PROPERTY/UNIT", help="The unit it belongs to.")
@click.option("--id", "ident", required=True, help="The device's id (lowercase a-z, 0-9, hyphens).")
@device_options
@when_installed
@click.option("--listens-to", multiple=True, metavar="DEVICE_ID", help="For a listening node: an alarm it "
              "is meant to hear (repeat for several).")
@click.option("--threshold-dba", type=click.FloatRange(0), help="For a listening node: its trigger level.")
def add_device(records_dir: Path, unit_uid, ident, kind, room, power, sensor, manufactured, life_years, location,
               interconnected, when, listens_to, threshold_dba) -> None:
    """Add an alarm or listening node to a unit."""
    if not kind or not room:
        raise click.UsageError("--kind and --room are required")
    day, _ = split_when(when)
    write_entry(records_dir, "device", unit_uid, {
        "id": ident, "kind": kind, "room": room, "sensor": sensor, "power": power or "battery",
        "manufactured": manufactured, "installed": day, "life_years": life_years, "location": location,
        "interconnected": interconnected, "listens_to": tuple(listens_to), "threshold_dba": threshold_dba})


@command()
@click.argument("old_id", metavar="OLD")
@click.option("--new-id", required=True, help="The new device's id (in the same unit).")
@records_option
@device_options
@date_option("When it was replaced (default: today); the new device is installed that day.")
@click.option("--by", default="", help="Who replaced it.")
@click.option("--note", default="", help="A note, e.g. why it was replaced.")
def replace(old_id, new_id, records_dir: Path, kind, room, power, sensor, manufactured, life_years, location,
            interconnected, when, by, note) -> None:
    """Replace an alarm in one step: log the replacement of OLD and add the new device.

    OLD is property/unit/device. The new device goes in the same room with
    `replaces: OLD`; kind, sensor, power, location and interconnection are
    copied unless given. Pages and sheets link the two and keep the position's
    test history continuous.

    Example:  recordkit replace tansy-house/flat-1/bed-2-smoke --new-id bed-2-smoke-b --manufactured 2026-10"""
    from ..additions import add_entry
    from ..logbook import NewEvent

    day, clock = split_when(when)
    loaded = load_or_exit(records_dir, today(), "Not written: fix the records first.")
    located = loaded.portfolio.devices.get(old_id)
    if located is None:
        raise click.UsageError(f"no device '{old_id}' (write property/unit/device)")
    if not manufactured:
        raise click.UsageError("--manufactured is required: the date on the new device's label (YYYY-MM)")
    old = located.device
    new_kind = m.Kind(kind) if kind else old.kind
    data = {"id": new_id, "kind": new_kind.value, "room": room or old.room,
            "sensor": sensor or (old.sensor.value if old.sensor and new_kind is old.kind else None),
            "power": power or old.power.value, "manufactured": manufactured, "installed": day,
            "life_years": life_years, "location": location or old.location,
            "interconnected": old.interconnected if interconnected is None else interconnected,
            "replaces": old.id}
    data = given(data)
    event = NewEvent(day, old_id, m.Action.REPLACE, None, by, note or f"replaced by {new_id}", when=clock)
    refuse_problems(loaded, [event], today())
    with journal.batch(records_dir, f"replace of {old_id}"):  # one batch: `undo` takes out both
        with written_or_exit("device", records_dir):
            path, line = add_entry(records_dir, loaded, "device", located.unit.uid, data)
        click.echo(f"Added device '{new_id}' at {path}:{line} (replaces '{old.id}')")
        try:
            write_or_exit(records_dir, [event], None)
        except SystemExit:
            click.echo(f"The new device is recorded but the replacement event is not: run `recordkit log "
                       f"{old_id} replace --date {day}` once the cause is fixed (or `recordkit undo`).", err=True)
            raise
    listeners = [loc.device.uid for loc in loaded.portfolio.devices.values()
                 if any(listen.device in (old.id, old_id) for listen in loc.device.listens_to)]
    if listeners:
        click.echo(f"  listening node(s) {', '.join(listeners)} listen to '{old.id}': point their listens_to at "
                   f"'{new_id}'")
