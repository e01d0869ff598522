"""The command line: a thin face over the library. The only module that imports click,
and the only place that reads the clock (for the default as-of date)."""
from __future__ import annotations

import json
import sys
from datetime import date

import click

from .checks import evaluate
from .loader import Loaded, load_records
from .schedule import State
from .status import status_json, status_text

EXIT_OK, EXIT_ERRORS, EXIT_OVERDUE = 0, 1, 3

records_argument = click.argument("records_dir", default="records", metavar="[RECORDS_DIR]",
                                  type=click.Path(file_okay=False, path_type=str))
as_of_option = click.option(
    "--as-of", "as_of", type=click.DateTime(formats=["%Y-%m-%d"]), default=None, metavar="YYYY-MM-DD",
    help="Judge the records as of this date (default: today). Events dated after it are refused.")


def _as_of(value) -> date:
    return value.date() if value else date.today()


def _load(records_dir: str, as_of: date) -> Loaded:
    loaded = load_records(records_dir, as_of)
    for problem in loaded.problems:
        click.echo(str(problem), err=True)
    if loaded.problems:
        files = {p.source.path for p in loaded.problems}
        click.echo(f"{len(loaded.problems)} problem(s) in {len(files)} file(s); fix them and run again.",
                   err=True)
    return loaded


def _load_or_exit(records_dir: str, as_of: date, refusal: str = "") -> Loaded:
    """The records, or exit 1 after printing their problems (and what was not done)."""
    loaded = _load(records_dir, as_of)
    if loaded.problems:
        if refusal:
            click.echo(refusal, err=True)
        sys.exit(EXIT_ERRORS)
    return loaded


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(package_name="recordkit")
def main() -> None:
    """Keep maintenance and test records of smoke, CO and heat alarms and listening
    nodes, and see what is overdue. Records are YAML files under RECORDS_DIR
    (default: records). The local fire code and the AHJ decide; this is a
    record-keeping aid, not an inspection."""


@main.command()
@records_argument
@as_of_option
def check(records_dir: str, as_of) -> None:
    """Validate the record files: print each problem as file:line: message.

    Exit status 0 when the records are sound, 1 when there are problems."""
    day = _as_of(as_of)
    loaded = _load_or_exit(records_dir, day)
    portfolio = loaded.portfolio
    units = sum(len(p.units) for p in portfolio.properties)
    click.echo(f"{records_dir}: {len(loaded.files)} files, {len(portfolio.properties)} properties, "
               f"{units} units, {len(portfolio.devices)} devices, {len(portfolio.events)} events; "
               "no problems.")


@main.command()
@records_argument
@as_of_option
@click.option("--format", "fmt", type=click.Choice(["text", "json"]), default="text", show_default=True,
              help="text for people (80 columns), json for scripts.")
@click.option("--all", "show_ok", is_flag=True, help="Also list tasks that are not yet due (text format).")
def status(records_dir: str, as_of, fmt: str, show_ok: bool) -> None:
    """Show what is overdue and due soon, and why, with the rule and its source.

    Exit status: 0 nothing overdue, 3 something overdue, 1 the records have
    problems (then nothing is reported as trusted). Suits a cron job."""
    day = _as_of(as_of)
    loaded = _load(records_dir, day)
    if loaded.problems:
        if fmt == "json":
            errors = [{"file": p.source.path, "line": p.source.line, "message": p.message}
                      for p in loaded.problems]
            click.echo(json.dumps({"as_of": day.isoformat(), "records": records_dir, "errors": errors,
                                   "items": []}, indent=1))
        sys.exit(EXIT_ERRORS)
    findings = evaluate(loaded.portfolio, loaded.policy, day)
    if fmt == "json":
        click.echo(json.dumps(status_json(findings, day, records_dir), indent=1, ensure_ascii=False))
    else:
        click.echo(status_text(findings, loaded.portfolio, day, show_ok), nl=False)
    sys.exit(EXIT_OVERDUE if any(f.state is State.OVERDUE for f in findings) else EXIT_OK)


@main.command()
@records_argument
@as_of_option
def rules(records_dir: str, as_of) -> None:
    """List every rule in force: value, source, and whether policy.yaml set it."""
    loaded = _load_or_exit(records_dir, _as_of(as_of))
    for rule in loaded.policy:
        where = f"local, {rule.defined_at}" if rule.local else "default"
        click.echo(f"{rule.name}: {rule.value}  [{where}]")
        click.echo(f"    {rule.title}. Source: {rule.source}")


@main.command()
@records_argument
@click.option("--property", "property_id", metavar="ID", help="The property (required unless --sheet blank).")
@click.option("--unit", "unit_id", metavar="ID", help="Just this unit (default: every unit, one per page).")
@as_of_option
@click.option("--sheet", type=click.Choice(["inspection", "monthly", "blank"]), default="inspection",
              show_default=True, help="inspection: a checklist per unit; monthly: a homeowner's 12-month "
              "test card (needs --unit); blank: a sheet for recording a new unit.")
@click.option("--paper", type=click.Choice(["a4", "letter"]), default="a4", show_default=True,
              help="Paper size for PDF output (landscape).")
@click.option("--out", required=True, type=click.Path(dir_okay=False, writable=True),
              help="Output file: .pdf or .html.")
def checklist(records_dir: str, property_id: str | None, unit_id: str | None, as_of, sheet: str, paper: str,
              out: str) -> None:
    """Print-ready checklists: one unit per page with tick boxes, signature lines and cautions.

    Examples:  recordkit checklist --property tansy-house --out packet.pdf
               recordkit checklist --property bramble-cottage --unit home --sheet monthly --out card.pdf"""
    from pathlib import Path

    from .render.checklist import NotFound, blank_unit_html, inspection_html, monthly_card_html, property_sheets

    target = Path(out)
    if target.suffix.lower() not in (".pdf", ".html"):
        raise click.BadParameter("give a file ending in .pdf or .html", param_hint="--out")
    if sheet == "blank":
        html = blank_unit_html(paper)
    else:
        if not property_id:
            raise click.UsageError("--property is required for inspection and monthly sheets")
        if sheet == "monthly" and not unit_id:
            raise click.UsageError("--sheet monthly needs --unit")
        day = _as_of(as_of)
        loaded = _load_or_exit(records_dir, day)
        findings = evaluate(loaded.portfolio, loaded.policy, day)
        try:
            sheets = property_sheets(loaded, findings, property_id, day, unit_id)
        except NotFound as exc:
            raise click.UsageError(exc.args[0]) from None
        html = (monthly_card_html(sheets[0], day, paper) if sheet == "monthly"
                else inspection_html(sheets, day, paper))
    if target.suffix.lower() == ".pdf":
        from .render.pdf import write_pdf

        click.echo(f"Rendering {target} ...", err=True)
        write_pdf(html, target)
    else:
        target.write_text(html, encoding="utf-8")
    click.echo(f"Wrote {target}")


records_option = click.option("--records", "records_dir", default="records", show_default=True,
                              type=click.Path(file_okay=False), help="The records folder.")
file_option = click.option("--file", "log_file", metavar="PATH",
                           help="Append to this file, relative to the records folder "
                                "(default: log/YEAR.yaml for the event's year).")


def _today() -> date:
    return date.today()


def _write(records_dir: str, events, log_file: str | None) -> None:
    from pathlib import Path

    from .intake import IntakeError, write_events
    from .logbook import LogWriteError, MaybeWritten

    try:
        written = write_events(Path(records_dir), events, log_file)
    except (IntakeError, LogWriteError) as exc:
        click.echo(f"Not written: {exc}", err=True)
        sys.exit(EXIT_ERRORS)
    except MaybeWritten as exc:
        click.echo(str(exc), err=True)
        sys.exit(EXIT_ERRORS)
    for path, count in written.items():
        click.echo(f"Appended {count} event(s) to {path}")


@main.command("node")
@click.argument("records_dir", type=click.Path(file_okay=False))
@click.argument("device_id", metavar="DEVICE_ID")
@as_of_option
@click.option("--format", "fmt", type=click.Choice(["text", "json"]), default="text", show_default=True)
def node_command(records_dir, device_id, as_of, fmt) -> None:
    """Show what a listening node can hear: level margin at the node for each alarm it
    listens to, its filter against the alarm tone, its hold circuit against the
    temporal-3 and temporal-4 patterns, and how many alarm tests it reported.

    DEVICE_ID is property/unit/device. A listening node is an extra, not a listed
    fire alarm system."""
    from .checks import node_problems
    from .model import Kind
    from .nodes import node_report

    day = _as_of(as_of)
    loaded = _load_or_exit(records_dir, day)
    located = loaded.portfolio.devices.get(device_id)
    if located is None or located.device.kind is not Kind.LISTENING_NODE:
        nodes = [uid for uid, loc in loaded.portfolio.devices.items() if loc.device.kind is Kind.LISTENING_NODE]
        raise click.UsageError(f"no listening node '{device_id}' (nodes: {', '.join(nodes) or 'none'})")
    report = node_report(loaded.portfolio, loaded.policy, located.device, day)
    problems = [reason for _, _, reason in node_problems(report, loaded.policy)]
    if fmt == "json":
        click.echo(json.dumps({"as_of": day.isoformat(), **report.as_json(), "findings": problems}, indent=1))
        return
    click.echo(f"Listening node {device_id}, as of {day}")
    for check in report.listened:
        margin = f"{check.margin_db:.1f} dB margin" if check.margin_db is not None else "margin unknown"
        level = f"{check.expected_dba:.0f} dBA" if check.expected_dba is not None else "level unknown"
        click.echo(f"  hears {check.device}: {level} at the node, {margin}; tests heard "
                   f"{len(check.heard_tests)}, missed {len(check.missed_tests)}")
    if report.corner_hz is not None:
        click.echo(f"  filter corner {report.corner_hz:.0f} Hz: the {report.tone_hz:.0f} Hz tone loses "
                   f"{report.tone_attenuation_db:.1f} dB, a {report.low_frequency_hz:.0f} Hz tone "
                   f"{report.low_frequency_attenuation_db:.1f} dB")
    if report.tau_s:
        click.echo(f"  hold tau {report.tau_s:.2f} s, releases {report.release_s:.1f} s after the sound stops")
        for pattern in report.patterns:
            click.echo(f"    {pattern.name}: holds {pattern.min_hold_fraction:.0%} over its "
                       f"{pattern.longest_gap_s:g} s gap: {'stays on' if pattern.stays_on else 'flickers'}")
    for line in problems + report.notes:
        click.echo(f"  ! {line}")
    click.echo("A listening node is an extra, not a listed fire alarm system; it is no substitute for "
               "interconnected alarms or a monitored system where one is required.")


@main.command("hear")
@click.argument("wav_file", type=click.Path(exists=True, dir_okay=False))
@click.option("--device", "device_id", metavar="PROPERTY/UNIT/DEVICE",
              help="The alarm that was tested (or the listening node whose clip this is).")
@click.option("--log", "log_it", is_flag=True, help="Append a test (or, for a node, heard) event with the verdict "
              "and keep the recording under records/evidence/. Needs --device.")
@click.option("--calibration-db", type=float, help="Add this to dBFS to estimate dBA (from a meter reading "
              "of a known sound with the same phone or node).")
@click.option("--date", "when", type=click.DateTime(formats=["%Y-%m-%d", "%Y-%m-%d %H:%M", "%Y-%m-%dT%H:%M"]),
              metavar="'YYYY-MM-DD HH:MM'", help="When it was recorded (default: now).")
@click.option("--json", "as_json", is_flag=True, help="Print the figures as JSON.")
@records_option
@file_option
def hear(wav_file, device_id, log_it, calibration_db, when, as_json, records_dir, log_file) -> None:
    """Hear an alarm test in a recording: the tone, its on/off pattern and its level.

    Reports the dominant frequency (about 3 kHz for most smoke alarms, 520 Hz for
    low-frequency alarms), whether the sound follows temporal-3 (smoke) or
    temporal-4 (CO) with the timing errors, the level in dBFS, and a verdict.
    A recording shows the horn sounds; it does not prove the sensor sees smoke."""
    from datetime import datetime
    from pathlib import Path

    from .acoustics import ALARM_DBA_AT_REFERENCE
    from .audio import AudioError, hear_file

    if log_it and not device_id:
        raise click.UsageError("--log needs --device")
    try:
        hearing = hear_file(Path(wav_file), calibration_db)
    except AudioError as exc:
        click.echo(str(exc), err=True)
        sys.exit(EXIT_ERRORS)
    if as_json:
        click.echo(json.dumps({"file": wav_file, **hearing.as_json()}, indent=1))
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
    if not log_it:
        return
    _log_hearing(hearing, Path(wav_file), device_id, when or datetime.now(), records_dir, log_file)


def _log_hearing(hearing, recording, device_id: str, when, records_dir: str, log_file) -> None:
    from pathlib import Path

    from .errors import Source
    from .evidence import keep
    from .intake import check_new_events
    from .logbook import NewEvent
    from .model import Action, Kind, Result

    today = _today()
    loaded = _load_or_exit(records_dir, today, "Not written: fix the records first.")
    located = loaded.portfolio.devices.get(device_id)
    is_node = located is not None and located.device.kind is Kind.LISTENING_NODE
    reference = keep(Path(records_dir), recording)
    if is_node:
        event = NewEvent(when.date(), device_id, Action.HEARD, None, "recordkit hear", hearing.verdict,
                         reference, when.time().replace(microsecond=0))
    else:
        event = NewEvent(when.date(), device_id, Action.TEST, Result.PASS if hearing.alarm_heard else Result.FAIL,
                         "recordkit hear", hearing.verdict, reference, when.time().replace(microsecond=0))
    problems = check_new_events(loaded, [(event, Source(device_id, 0))], today)
    if problems:
        for problem in problems:
            click.echo(f"Not written: {problem}", err=True)
        sys.exit(EXIT_ERRORS)
    _write(records_dir, [event], log_file)
    click.echo(f"  logged {event.action}" + (f" {event.result}" if event.result else "") +
               f" for {device_id}; recording kept as {reference}")


@main.command("log")
@click.argument("words", nargs=-1, required=True, metavar="[DEVICE] ACTION")
@click.option("--unit", "unit_uid", metavar="PROPERTY/UNIT",
              help="Log ACTION for every device in service in this unit (a walk-round); then give no DEVICE.")
@click.option("--result", type=click.Choice(["pass", "fail"]), help="Required for a test.")
@click.option("--date", "when", type=click.DateTime(formats=["%Y-%m-%d"]), metavar="YYYY-MM-DD",
              help="When it was done (default: today). Not in the future.")
@click.option("--by", default="", help="Who did it.")
@click.option("--note", default="", help="A note, e.g. what was done about a failure.")
@records_option
@file_option
def log_command(words, unit_uid, result, when, by, note, records_dir, log_file) -> None:
    """Record a test, battery change, replacement, cleaning, inspection or note.

    DEVICE is property/unit/device; ACTION is test, battery, replace, clean,
    inspect or note. The event is checked against the records first (device
    exists and is in service, date not in the future, result given for a
    test), then appended without changing a byte of the file's existing text.

    Examples:  recordkit log tansy-house/flat-1/landing-smoke test --result pass --by tenant
               recordkit log --unit tansy-house/flat-1 test --result pass"""
    from .checks import evaluate
    from .errors import Source
    from .intake import IntakeError, check_new_events, unit_devices
    from .logbook import NewEvent
    from .model import Action, Result

    today = _today()
    day = when.date() if when else today
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
    loaded = _load_or_exit(records_dir, today, "Not written: fix the records first.")
    try:
        devices = unit_devices(loaded, unit_uid, day) if unit_uid else [words[0]]
    except IntakeError as exc:
        raise click.UsageError(str(exc)) from None
    if not devices:
        raise click.UsageError(f"no device in service in '{unit_uid}' on {day}")
    events = [NewEvent(day, uid, action, Result(result) if result else None, by, note) for uid in devices]
    problems = check_new_events(loaded, [(e, Source(e.device, 0)) for e in events], today)
    if problems:
        for problem in problems:
            click.echo(f"Not written: {problem}", err=True)
        sys.exit(EXIT_ERRORS)
    _write(records_dir, events, log_file)
    reloaded = _load(records_dir, today)
    findings = [f for f in evaluate(reloaded.portfolio, reloaded.policy, today) if f.device in devices]
    for event in events:
        click.echo(f"  {event.date} {event.device}: {event.action}"
                   + (f" {event.result}" if event.result else "") + (f" by {event.by}" if event.by else ""))
        nxt = sorted((f for f in findings if f.device == event.device), key=lambda f: f.due or date.min)
        if nxt:
            click.echo("    next: " + "; ".join(f"{f.task} {f.due or 'now'} ({f.state})" for f in nxt))


@main.command("import")
@click.argument("csv_file", type=click.Path(exists=True, dir_okay=False))
@records_option
@click.option("--dayfirst", is_flag=True, help="Read 01/12/2026 as 1 December (default: as January 12).")
@click.option("--skip-bad", is_flag=True, help="Import the good rows even when some rows are bad.")
@click.option("--dry-run", is_flag=True, help="Show what would be added; write nothing.")
@file_option
def import_command(csv_file, records_dir, dayfirst, skip_bad, dry_run, log_file) -> None:
    """Import events from a spreadsheet's CSV (columns: date, device, action, result, by, note).

    Header names are matched ignoring case. Dates may be ISO (2026-12-01) or as
    a spreadsheet writes them (MM/DD/YYYY, or DD/MM/YYYY with --dayfirst). Each
    bad row is reported as file.csv:row: message, and nothing is written when
    any row is bad unless --skip-bad. Rows already in the records are skipped,
    so importing the same sheet twice adds nothing."""
    from pathlib import Path

    from .intake import IntakeError, read_csv

    today = _today()
    loaded = _load_or_exit(records_dir, today, "Not imported: fix the records first.")
    try:
        sheet = read_csv(Path(csv_file), loaded, today, dayfirst)
    except IntakeError as exc:
        click.echo(str(exc), err=True)
        sys.exit(EXIT_ERRORS)
    for problem in sheet.problems:
        click.echo(problem, err=True)
    summary = (f"{len(sheet.events)} new event(s), {sheet.duplicates} already recorded, "
               f"{len(sheet.bad_rows)} bad row(s)")
    if sheet.problems and not (skip_bad and sheet.bad_rows):
        click.echo(f"Nothing imported: {summary}. Fix the rows (or use --skip-bad).", err=True)
        sys.exit(EXIT_ERRORS)
    events = [event for event, _ in sheet.events]
    if dry_run:
        for event in events:
            click.echo(f"  would add: - {event.as_yaml()}")
        click.echo(f"Dry run: {summary}; nothing written.")
        return
    _write(records_dir, events, log_file)
    click.echo(f"Imported: {summary}.")


@main.command("export")
@records_argument
@as_of_option
@click.option("--format", "fmt", type=click.Choice(["csv", "json"]), default="csv", show_default=True)
@click.option("--table", type=click.Choice(["devices", "events"]), default="devices", show_default=True,
              help="For CSV: devices in service with their next tasks, or every event (the import's columns).")
@click.option("-o", "--out", type=click.Path(dir_okay=False, writable=True), help="Write here (default: stdout).")
def export_command(records_dir, as_of, fmt, table, out) -> None:
    """Export devices with their next tasks, and events, as CSV or JSON."""
    import csv
    import io

    from .exports import DEVICE_COLUMNS, device_rows, export_json
    from .intake import events_csv_rows

    day = _as_of(as_of)
    loaded = _load_or_exit(records_dir, day)
    findings = evaluate(loaded.portfolio, loaded.policy, day)
    if fmt == "json":
        text = json.dumps(export_json(loaded.portfolio, findings, day), indent=1, ensure_ascii=False) + "\n"
    else:
        buffer = io.StringIO()
        writer = csv.writer(buffer, lineterminator="\n")
        if table == "events":
            writer.writerows(events_csv_rows(loaded.portfolio))
        else:
            writer.writerow(DEVICE_COLUMNS)
            writer.writerows([row[c] for c in DEVICE_COLUMNS] for row in device_rows(loaded.portfolio, findings, day))
        text = buffer.getvalue()
    _emit(text, out)


@main.command("calendar")
@records_argument
@as_of_option
@click.option("-o", "--out", required=True, type=click.Path(dir_okay=False, writable=True),
              help="The .ics file to write.")
def calendar_command(records_dir, as_of, out) -> None:
    """Write every task (replacements, tests, batteries, fixes) as calendar events with reminders.

    Each event keeps the same UID from one export to the next, so importing a
    newer file into a calendar updates the events instead of adding copies."""
    from .exports import calendar_ics, calendar_tasks

    day = _as_of(as_of)
    loaded = _load_or_exit(records_dir, day)
    findings = evaluate(loaded.portfolio, loaded.policy, day)
    with open(out, "wb") as handle:
        handle.write(calendar_ics(loaded.portfolio, findings, day))
    click.echo(f"Wrote {len(calendar_tasks(loaded.portfolio, findings))} task(s) to {out}")


@main.command("schema")
@click.option("-o", "--out", type=click.Path(dir_okay=False, writable=True), help="Write here (default: stdout).")
def schema_command(out) -> None:
    """Print the JSON Schema of the record files, for editors that check YAML as you type."""
    from .schema import record_schema

    _emit(json.dumps(record_schema(), indent=2) + "\n", out)


def _emit(text: str, out: str | None) -> None:
    if out:
        with open(out, "w", encoding="utf-8", newline="") as handle:
            handle.write(text)
        click.echo(f"Wrote {out}", err=True)
    else:
        click.echo(text, nl=False)


@main.command("demo-portfolio")
@click.option("--units", type=click.IntRange(1), default=200, show_default=True, help="How many units.")
@click.option("--years", type=click.IntRange(1, 30), default=5, show_default=True, help="Years of history.")
@click.option("--seed", type=int, default=7, show_default=True, help="Same seed, same files.")
@click.option("--events", "events_format", type=click.Choice(["yaml", "csv"]), default="yaml", show_default=True,
              help="Keep the event logs as YAML or as CSV.")
@click.option("--out", required=True, type=click.Path(file_okay=False), help="An empty folder to fill.")
def demo_portfolio(units, years, seed, events_format, out) -> None:
    """Write a synthetic portfolio of invented buildings (for trying recordkit at scale).

    Judge it with --as-of 2026-12-01, the date its history ends."""
    from pathlib import Path

    from .demo_portfolio import generate

    target = Path(out)
    if target.exists() and any(target.iterdir()):
        raise click.UsageError(f"{out} is not empty")
    click.echo(f"Writing {units} units ...", err=True)
    counts = generate(target, units, years, seed, events_format=events_format)
    click.echo(", ".join(f"{n} {what}" for what, n in counts.items()) + f" written to {out}")


config_option = click.option("--config", "config_file", default="mkdocs.yml", show_default=True,
                             type=click.Path(exists=True, dir_okay=False),
                             help="The MkDocs configuration that uses the recordkit plugin.")


@main.command()
@records_argument
@as_of_option
@click.option("--out", default=None, type=click.Path(file_okay=False),
              help="Write the site here (default: site_dir of the config, usually site/).")
@config_option
def build(records_dir: str, as_of, out: str | None, config_file: str) -> None:
    """Build the static site from the records (MkDocs + Material, through our plugin).

    Open OUT/index.html from disk or host the folder anywhere. Exit status 1
    when the records have problems (each printed as file:line: message)."""
    from .mkdocs_plugin import SiteBuildError, build_site

    click.echo(f"Building the site from {records_dir} ...", err=True)
    try:
        site_dir = build_site(config_file, records_dir, _as_of(as_of), out)
    except SiteBuildError as exc:
        click.echo(str(exc), err=True)
        sys.exit(EXIT_ERRORS)
    click.echo(f"Site written to {site_dir}/ (open index.html).")


@main.command()
@records_argument
@as_of_option
@config_option
@click.option("--address", default="127.0.0.1:8000", show_default=True, help="Where to serve the site.")
def serve(records_dir: str, as_of, config_file: str, address: str) -> None:
    """Serve the site locally and rebuild it whenever a record file changes."""
    from .mkdocs_plugin import SiteBuildError, serve_site

    try:
        serve_site(config_file, records_dir, _as_of(as_of) if as_of else None, address)
    except SiteBuildError as exc:
        click.echo(str(exc), err=True)
        sys.exit(EXIT_ERRORS)


if __name__ == "__main__":  # pragma: no cover
    main()
