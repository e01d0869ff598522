"""Commands that bring events in or take them out: log, import, export, hear."""
from __future__ import annotations

import sys
from datetime import date, datetime
from pathlib import Path

import click

from ..checks import evaluate
from ..findings_cache import cached_evaluate
from ..errors import Source
from .options import (command, EXIT_ERRORS, as_of_day, as_of_option, date_option, emit, format_option,
                      load_about, load_or_exit, now, out_option, print_json, quiet_option, records_option, today,
                      utf8_text)

file_option = click.option("--file", "log_file", metavar="PATH",
                           help="Append to this file, relative to the records folder "
                                "(default: log/YEAR.yaml for the event's year).")


def register(main: click.Group) -> None:
    for command_ in (log_command, import_command, export_command, hear):
        main.add_command(command_)


def write_or_exit(records_dir: Path, events, log_file: str | None, again: bool = False) -> dict[Path, int]:
    """Append events (checked already); exit 1 with the reason when nothing (or maybe something) was written.
    Returns how many went into which file."""
    from ..intake import IntakeError, write_events
    from ..logbook import LogWriteError, MaybeWritten

    from .. import journal

    try:
        with journal.batch(records_dir, f"{events[0].action} of {events[0].device}" if len(events) == 1
                           else f"{len(events)} events"):
            written = write_events(records_dir, events, log_file, again)
    except (IntakeError, LogWriteError) as exc:
        click.echo(f"Not written: {exc}", err=True)
        sys.exit(EXIT_ERRORS)
    except MaybeWritten as exc:
        click.echo(str(exc), err=True)
        sys.exit(EXIT_ERRORS)
    for path, count in written.items():
        click.echo(f"Appended {count} event(s) to {path}")
    if (left := len(events) - sum(written.values())) > 0:
        click.echo(f"{left} event(s) were recorded meanwhile by another command and were left out", err=True)
    return written


def refuse_problems(loaded, events, day: date, again: bool = False) -> None:
    """Exit 1, writing nothing, when any new event breaks the records' rules or is recorded already."""
    from ..intake import check_new_events

    problems = check_new_events(loaded, [(e, Source(e.device, 0)) for e in events], day, again)
    if problems:
        for problem in problems:
            click.echo(f"Not written: {problem}", err=True)
        sys.exit(EXIT_ERRORS)


def split_when(when: datetime | None) -> tuple[date, object]:
    """The day and (when one was given) the time of day of a --date value; today with no time by default."""
    if when is None:
        return today(), None
    clock = when.time()
    return when.date(), (clock if (clock.hour, clock.minute, clock.second) != (0, 0, 0) else None)


@command("log")
@click.argument("words", nargs=-1, required=True, metavar="[DEVICE] ACTION")
@records_option
@click.option("--unit", "unit_uid", metavar="PROPERTY/UNIT",
              help="Log ACTION for every device in service in this unit (a walk-round); then give no DEVICE.")
@click.option("--result", type=click.Choice(["pass", "fail"]), help="Required for a test.")
@date_option("When it was done (default: today); a time of day may follow. Not in the future.")
@click.option("--by", default="", help="Who did it.")
@click.option("--note", default="", help="A note, e.g. what was done about a failure.")
@click.option("--again", is_flag=True, help="Record it even though the same action on the device is recorded "
              "for that day (and time): it really happened twice.")
@file_option
def log_command(words, records_dir: Path, unit_uid, result, when, by, note, again, log_file) -> None:
    """Record a test, battery change, replacement, cleaning, inspection or note.

    DEVICE is property/unit/device; ACTION is test, battery, replace, clean,
    inspect or note. The event is checked against the records first (device
    exists and is in service, date not in the future, result given for a
    test), then appended without changing a byte of the file's existing text.
    To replace an alarm and add its successor in one step, use `recordkit replace`.

    Examples:  recordkit log tansy-house/flat-1/landing-smoke test --result pass --by tenant
               recordkit log --unit tansy-house/flat-1 test --result pass --date '2026-12-01 10:30'"""
    from ..intake import IntakeError, as_model_event, unit_devices
    from ..quickload import refresh_after_append
    from ..logbook import NewEvent
    from ..model import Action, Result

    day, clock = split_when(when)
    by, note = utf8_text(by, "--by"), utf8_text(note, "--note")
    if unit_uid:
        if len(words) != 1:
            raise click.UsageError("with --unit give only the ACTION, e.g. --unit tansy-house/flat-1 test")
        action_word = words[0]
    elif len(words) == 2:
        action_word = words[1]
    else:
        raise click.UsageError("give DEVICE ACTION (or --unit PROPERTY/UNIT ACTION)")
    try:
        action = Action(action_word)
    except ValueError:
        raise click.BadParameter(f"{action_word!r}; choose from {', '.join(a.value for a in Action)}",
                                 param_hint="ACTION") from None
    loaded = load_about(records_dir, today(), [unit_uid or words[0]], "Not written: fix the records first.")
    try:
        devices = unit_devices(loaded, unit_uid, day) if unit_uid else [words[0]]
    except IntakeError as exc:
        raise click.UsageError(str(exc)) from None
    if not devices:
        raise click.UsageError(f"no device in service in '{unit_uid}' on {day}")
    events = [NewEvent(day, uid, action, Result(result) if result else None, by, note, when=clock)
              for uid in devices]
    refuse_problems(loaded, events, today(), again)
    written = write_or_exit(records_dir, events, log_file, again)
    refresh_after_append(records_dir, list(written), events)  # the next command need not read everything
    # What is next for each device, from the records as loaded plus what was just written (not a second
    # load), worked out on the devices' own properties only.
    added = tuple(as_model_event(event, Source(log_file or "log", 0)) for event in events)
    touched = loaded.portfolio.only({uid.split("/")[0] for uid in devices}, added)
    findings = [f for f in evaluate(touched, loaded.policy, today()) if f.device in devices]
    for event in events:
        click.echo(f"  {event.date} {event.device}: {event.action}"
                   + (f" {event.result}" if event.result else "") + (f" by {event.by}" if event.by else ""))
        nxt = sorted((f for f in findings if f.device == event.device), key=lambda f: f.due or date.min)
        if nxt:
            click.echo("    next: " + "; ".join(f"{f.task} {f.due or 'now'} ({f.state.word})" for f in nxt))


@command("import")
@click.argument("csv_file", type=click.Path(exists=True, dir_okay=False, path_type=Path))
@records_option
@click.option("--dayfirst", "order", flag_value="day", help="Slashed dates are day first: 01/12/2026 is 1 December.")
@click.option("--monthfirst", "order", flag_value="month", help="Slashed dates are month first: 01/12/2026 is "
              "12 January. Without either, the sheet's own dates must show which (a part above 12).")
@click.option("--column", "columns", multiple=True, metavar="FIELD=HEADER",
              help="Which of the sheet's columns holds FIELD (date, device, action, result, by, note, evidence); "
                   "repeat for several. Also read from import-map.yaml in the records folder.")
@click.option("--device", "device_template", metavar="TEMPLATE",
              help="Make device ids from several columns, e.g. '{property}/{flat}/{alarm}': names or ids, "
                   "matched ignoring case; a room's name stands for its only device.")
@click.option("--sheet", "sheet_name", metavar="NAME", help="For an .xlsx file: the sheet (default: the first).")
@click.option("--skip-bad", is_flag=True, help="Import the good rows even when some rows are bad.")
@click.option("--dry-run", is_flag=True, help="Show what would be added; write nothing.")
@file_option
@quiet_option
def import_command(csv_file: Path, records_dir: Path, order, columns, device_template, sheet_name, skip_bad,
                   dry_run, log_file) -> None:
    """Import events from a spreadsheet: CSV, or Excel .xlsx (columns: date, device,
    action, result, by, note, evidence; or the sheet's own, mapped with --column).

    Common words are understood (tested, new battery, OK, failed, ...); --dry-run
    shows how each distinct value was read.

    Header names are matched ignoring case. Dates are ISO (2026-12-01) or slashed
    (DD/MM/YYYY or MM/DD/YYYY): the order is read from the whole sheet (a part above
    12 decides), or given with --dayfirst/--monthfirst; it is never guessed, and an
    incomplete date (2026, 2026-11, 11/5) is refused. Each
    bad row is reported as file.csv:row: message, and nothing is written when
    any row is bad unless --skip-bad. Rows already in the records are skipped,
    so importing the same sheet twice adds nothing."""
    from ..intake import IntakeError, read_csv
    from ..sheets import SheetError, mapping_from

    loaded = load_or_exit(records_dir, today(), "Not imported: fix the records first.")
    try:
        mapping = mapping_from(records_dir, columns, device_template)
        sheet = read_csv(csv_file, loaded, today(), order, mapping, sheet_name)
    except (IntakeError, SheetError) as exc:
        click.echo(str(exc), err=True)
        sys.exit(EXIT_ERRORS)
    for problem in sheet.problems:
        click.echo(problem, err=True)
    summary = (f"{len(sheet.events)} new event(s), {sheet.duplicates} already recorded, "
               f"{len(sheet.bad_rows)} bad row(s)")
    if sheet.problems and not (skip_bad and sheet.bad_rows and sheet.events):
        hint = "Fix the rows (or use --skip-bad)" if sheet.events else "Fix the sheet"
        click.echo(f"Nothing imported: {summary}. {hint}.", err=True)
        sys.exit(EXIT_ERRORS)
    events = [event for event, _ in sheet.events]
    if dry_run:
        for seen, value in sorted(mapping.seen.items()):
            click.echo(f"  read {seen}: {value}")
        for event in events:
            click.echo(f"  would add: - {event.as_yaml()}")
        click.echo(f"Dry run: {summary}; nothing written.")
        return
    write_or_exit(records_dir, events, log_file)
    click.echo(f"Imported: {summary}.")


@command("export")
@records_option
@as_of_option
@format_option("csv", "json", help_text="csv for spreadsheets, json for scripts.")
@click.option("--table", type=click.Choice(["devices", "events"]), default="devices", show_default=True,
              help="For CSV: devices in service with their next tasks, or every event (the import's columns).")
@out_option("Write here (default: stdout).")
def export_command(records_dir: Path, as_of, fmt, table, out) -> None:
    """Export devices with their next tasks, and events, as CSV or JSON."""
    import json

    from ..exports import DEVICE_COLUMNS, device_rows, export_json
    from ..intake import csv_text, events_csv_rows

    day = as_of_day(as_of)
    loaded = load_or_exit(records_dir, day)
    findings = cached_evaluate(loaded, loaded.policy, day)
    if fmt == "json":
        text = json.dumps(export_json(loaded.portfolio, findings, day), indent=1, ensure_ascii=False) + "\n"
    elif table == "events":
        text = csv_text(events_csv_rows(loaded.portfolio))
    else:
        text = csv_text([list(DEVICE_COLUMNS)] + [[row[c] for c in DEVICE_COLUMNS]
                                                   for row in device_rows(loaded.portfolio, findings, day)])
    emit(text, out)


@command("hear")
@click.argument("wav_file", type=click.Path(exists=True, dir_okay=False, path_type=Path))
@records_option
@click.option("--device", "device_id", metavar="PROPERTY/UNIT/DEVICE",
              help="The alarm that was tested (or the listening node whose clip this is).")
@click.option("--log", "log_it", is_flag=True, help="Append a test (or, for a node, heard) event with the verdict "
              "and keep the recording under RECORDS/evidence/. Needs --device.")
@click.option("--calibration-db", type=float, help="Add this to dBFS to estimate dBA (from a meter reading "
              "of a known sound with the same phone or node).")
@date_option("When it was recorded (default: now).")
@format_option("text", "json")
@file_option
def hear(wav_file: Path, records_dir: Path, device_id, log_it, calibration_db, when, fmt, log_file) -> None:
    """Hear an alarm test in a recording: the tone, its on/off pattern and its level.

    Reports the dominant frequency (about 3 kHz for most smoke alarms, 520 Hz for
    low-frequency alarms), whether the sound follows temporal-3 (smoke) or
    temporal-4 (CO) with the timing errors, the level in dBFS, and a verdict.
    A recording shows the horn sounds; it does not prove the sensor sees smoke."""
    from ..acoustics import ALARM_DBA_AT_REFERENCE
    from ..audio import AudioError, hear_file

    if log_it and not device_id:
        raise click.UsageError("--log needs --device")
    try:
        hearing = hear_file(wav_file, calibration_db)
    except AudioError as exc:
        click.echo(str(exc), err=True)
        sys.exit(EXIT_ERRORS)
    if fmt == "json":
        print_json({"file": str(wav_file), **hearing.as_json()})
    else:
        click.echo(f"{wav_file}: {hearing.verdict}")
        tone = f"{hearing.tone_hz:.0f} Hz ({hearing.band})" if hearing.tone_hz else "none"
        click.echo(f"  tone {tone}; pattern {hearing.pattern}; {len(hearing.pulses)} sound(s) in "
                   f"{hearing.duration_s:.1f} s")
        if hearing.timing_errors_ms:
            click.echo("  timing error (mean, ms): " + ", ".join(f"{k} {v:.0f}" for k, v in
                                                                 hearing.timing_errors_ms.items())
                       + "  (tolerance about ±10 %, from memory)")
        if hearing.level_dbfs is not None:
            click.echo(f"  level {hearing.level_dbfs:.1f} dBFS" + (" (clipped)" if hearing.clipped else ""))
        if hearing.estimated_dba is not None:
            click.echo(f"  about {hearing.estimated_dba:.0f} dBA at the microphone (a listed alarm gives "
                       f"{ALARM_DBA_AT_REFERENCE:.0f} dBA at 3 m, UL 217)")
    if log_it:
        _log_hearing(hearing, wav_file, device_id, when or now(), records_dir, log_file)


def _log_hearing(hearing, recording: Path, device_id: str, when: datetime, records_dir: Path, log_file) -> None:
    from ..evidence import keep
    from ..logbook import NewEvent
    from ..model import Action, Kind, Result

    loaded = load_or_exit(records_dir, today(), "Not written: fix the records first.")
    located = loaded.portfolio.devices.get(device_id)
    is_node = located is not None and located.device.kind is Kind.LISTENING_NODE
    clock = when.time().replace(microsecond=0)
    if is_node:
        event = NewEvent(when.date(), device_id, Action.HEARD, None, "recordkit hear", hearing.verdict, "", clock)
    else:
        event = NewEvent(when.date(), device_id, Action.TEST, Result.PASS if hearing.alarm_heard else Result.FAIL,
                         "recordkit hear", hearing.verdict, "", clock)
    refuse_problems(loaded, [event], today())
    reference = keep(records_dir, recording)
    event = NewEvent(event.date, event.device, event.action, event.result, event.by, event.note, reference, clock)
    write_or_exit(records_dir, [event], log_file)
    click.echo(f"  logged {event.action}" + (f" {event.result}" if event.result else "") +
               f" for {device_id}; recording kept as {reference}")
