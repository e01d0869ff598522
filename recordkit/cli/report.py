"""Commands that read the records and report: check, status, rules, node."""
from __future__ import annotations

import sys
from datetime import timedelta
from pathlib import Path

import click

from ..checks import TASK_ORDER, evaluate
from ..findings_cache import cached_evaluate
from ..schedule import State
from ..status import monitor_line, status_json, status_text
from ..status_cache import quick_status, remember
from .options import (command, EXIT_ERRORS, EXIT_OK, EXIT_OVERDUE, as_of_day, as_of_option, exit_unless_usable,
                      format_option, load, load_or_exit, print_json, quick_about, records_option, today)

# The open monitoring-plugin convention: 0 OK, 1 WARNING, 2 CRITICAL, 3 UNKNOWN.
MONITOR_OK, MONITOR_SOON, MONITOR_OVERDUE, MONITOR_UNREADABLE = 0, 1, 2, 3


def register(main: click.Group) -> None:
    for command_ in (check, status, rules, node_command):
        main.add_command(command_)


@command()
@records_option
@as_of_option
def check(records_dir: Path, as_of) -> None:
    """Validate the record files: print each problem as file:line: message.

    Exit status 0 when the records are sound, 1 when there are problems or
    the folder holds no property records yet (run `recordkit init`)."""
    loaded = load_or_exit(records_dir, as_of_day(as_of))
    portfolio = loaded.portfolio
    units = sum(len(p.units) for p in portfolio.properties)
    click.echo(f"{records_dir}: {len(loaded.files)} files, {len(portfolio.properties)} properties, "
               f"{units} units, {len(portfolio.devices)} devices, {len(portfolio.events)} events; "
               "no problems.")


@command()
@records_option
@as_of_option
@format_option("text", "json")
@click.option("--all", "show_ok", is_flag=True, help="Also list tasks that are not yet due (text format).")
@click.option("--property", "properties", multiple=True, metavar="ID",
              help="Only this property (repeat for several).")
@click.option("--unit", "units", multiple=True, metavar="PROPERTY/UNIT", help="Only this unit (repeat for several).")
@click.option("--task", "tasks", multiple=True, type=click.Choice(list(TASK_ORDER)),
              help="Only this kind of task (repeat for several).")
@click.option("--within", type=click.IntRange(0), metavar="DAYS",
              help="Only what is overdue or falls due within DAYS days.")
@click.option("--monitor", is_flag=True, help="One summary line and the monitoring-plugin exit codes: "
              "0 nothing due, 1 due soon, 2 overdue, 3 records unreadable.")
def status(records_dir: Path, as_of, fmt: str, show_ok: bool, properties, units, tasks, within, monitor) -> None:
    """Show what is overdue and due soon, and why, with the rule and its source.

    Exit status: 0 nothing overdue, 3 something overdue, 1 the records have
    problems (then nothing is reported as trusted). With --monitor: 0 nothing
    due, 1 something due soon, 2 something overdue, 3 records unreadable.

    Example:  recordkit status --property tansy-house --within 30"""
    day = as_of_day(as_of)
    chosen = set(properties) | {uid.split("/", 1)[0] for uid in units}
    # The whole portfolio, when the records are as the last clean load left them: each property's findings
    # as kept with its files' hashes (see status_cache); a plain listing needs only those not in date.
    everything = fmt == "json" or show_ok or bool(tasks) or within is not None
    quick = None if chosen else quick_status(records_dir, day, today(), everything)
    if quick is not None:
        findings, outline, tally = quick.findings, quick.outline, None if everything else quick.tally
    else:
        # Asked about a few properties: only they are read when the records are as the last clean load left
        # them, and their checks alone give the same findings about them.
        loaded = (quick_about(records_dir, day, [*properties, *units]) if chosen else None) or load(records_dir, day)
        if monitor and (loaded.problems or not loaded.portfolio.properties):
            why = f"{len(loaded.problems)} problem(s) in the records" if loaded.problems else "no property records"
            click.echo(f"ALARM RECORDS UNKNOWN - {records_dir}: {why}")
            sys.exit(MONITOR_UNREADABLE)
        if loaded.problems and fmt == "json":
            errors = [{"file": p.source.path, "line": p.source.line, "message": p.message} for p in loaded.problems]
            print_json({"as_of": day.isoformat(), "records": str(records_dir), "errors": errors, "items": []})
            sys.exit(EXIT_ERRORS)
        exit_unless_usable(loaded, records_dir)
        known_units = {u.uid for p in loaded.portfolio.properties for u in p.units}
        for wanted, known, what in ((properties, {p.id for p in loaded.portfolio.properties}, "property"),
                                    (units, known_units, "unit")):
            if missing := [x for x in wanted if x not in known]:
                raise click.UsageError(f"no {what} {', '.join(map(repr, missing))}")
        if chosen:
            findings = evaluate(loaded.portfolio.only(chosen), loaded.policy, day)
        else:
            findings = cached_evaluate(loaded, loaded.policy, day)
            remember(records_dir, findings, day, today())
        outline, tally = loaded.portfolio, None
    findings = [f for f in findings
                if (not properties or f.unit.split("/", 1)[0] in properties)
                and (not units or f.unit in units) and (not tasks or f.task in tasks)
                and (within is None or f.state is State.OVERDUE
                     or (f.due is not None and f.due <= day + timedelta(days=within)))]
    overdue = any(f.state is State.OVERDUE for f in findings)
    if monitor:
        click.echo(monitor_line(findings, day, tally))
        soon = any(f.state is State.DUE_SOON for f in findings)
        sys.exit(MONITOR_OVERDUE if overdue else MONITOR_SOON if soon else MONITOR_OK)
    if fmt == "json":
        print_json(status_json(findings, day, str(records_dir)))
    else:
        click.echo(status_text(findings, outline, day, show_ok or within is not None, tally), nl=False)
    sys.exit(EXIT_OVERDUE if overdue else EXIT_OK)


@command()
@records_option
@as_of_option
def rules(records_dir: Path, as_of) -> None:
    """List every rule in force: value, source, and whether policy.yaml set it."""
    loaded = load_or_exit(records_dir, as_of_day(as_of), need_records=False)
    rule_set = loaded.policy.rule_set
    for rule in loaded.policy:
        if rule.name == rule_set.rules[0].rule.name:
            click.echo(f"\nPlacement rule set in force: {rule_set.name} - {rule_set.title}")
        where = f"local, {rule.defined_at}" if rule.local else "default"
        click.echo(f"{rule.name}: {rule.value}  [{where}]")
        click.echo(f"    {rule.title}. Source: {rule.source}")
    click.echo("\nThe local fire code and the authority having jurisdiction (AHJ) decide; where they differ "
               "from these rules, the local rule wins.")


@command("node")
@click.argument("device_id", metavar="DEVICE_ID")
@records_option
@as_of_option
@format_option("text", "json")
def node_command(device_id, records_dir: Path, as_of, fmt) -> None:
    """Show what a listening node can hear: level margin at the node for each alarm it
    listens to, its filter against the alarm tone, its hold circuit against the
    temporal-3 and temporal-4 patterns, and how many alarm tests it reported.

    DEVICE_ID is property/unit/device. A listening node is an extra, not a listed
    fire alarm system."""
    from ..checks import node_problems
    from ..model import Kind
    from ..nodes import node_report

    day = as_of_day(as_of)
    loaded = load_or_exit(records_dir, day)
    located = loaded.portfolio.devices.get(device_id)
    if located is None or located.device.kind is not Kind.LISTENING_NODE:
        nodes = [uid for uid, loc in loaded.portfolio.devices.items() if loc.device.kind is Kind.LISTENING_NODE]
        raise click.UsageError(f"no listening node '{device_id}' (nodes: {', '.join(nodes) or 'none'})")
    report = node_report(loaded.portfolio, loaded.policy, located.device, day)
    problems = [reason for _, _, reason in node_problems(report, loaded.policy)]
    retired = loaded.portfolio.retired_on(device_id)
    retired = retired if retired and retired <= day else None
    if fmt == "json":
        print_json({"as_of": day.isoformat(), "retired": retired.isoformat() if retired else None,
                    **report.as_json(), "findings": problems})
        return
    click.echo(f"Listening node {device_id}, as of {day}" + (
        f": RETIRED on {retired} (no longer in service; the figures are its last design)" if retired else ""))
    for check_ in report.listened:
        margin = f"{check_.margin_db:.1f} dB margin" if check_.margin_db is not None else "margin unknown"
        level = f"{check_.expected_dba:.0f} dBA" if check_.expected_dba is not None else "level unknown"
        click.echo(f"  hears {check_.device}: {level} at the node, {margin}; tests heard "
                   f"{len(check_.heard_tests)}, missed {len(check_.missed_tests)}")
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
