"""The status report: findings for one as-of date, as text (80 columns) or JSON."""
from __future__ import annotations

import functools
import textwrap
from collections import Counter
from datetime import date

from . import model as m
from .cautions import SHORT
from .checks import TASK_ORDER, Finding
from .schedule import State

WIDTH = 80
LABELS = {state: f"{state.symbol} {state.word}" for state in State}  # the site's words and symbols


def counts(findings: list[Finding]) -> Counter:
    return Counter(f.state for f in findings)


def status_json(findings: list[Finding], as_of: date, root: str) -> dict:
    tally = counts(findings)
    return {"as_of": as_of.isoformat(), "records": root,
            "summary": {str(state): tally.get(state, 0) for state in State},
            "items": [f.as_json() for f in findings]}


def monitor_line(findings: list[Finding], as_of: date, tally: Counter | None = None) -> str:
    """One line in the open monitoring-plugin style: a status word, a summary and performance data.
    `tally`: the count of each state, when `findings` leaves out those in date."""
    tally = tally or counts(findings)
    overdue, soon = tally[State.OVERDUE], tally[State.DUE_SOON]
    word = "CRITICAL" if overdue else "WARNING" if soon else "OK"
    first = next((f for f in sorted(findings, key=lambda f: f.state.rank) if f.state is not State.OK), None)
    detail = f"; first: {first.device} {first.task}" if first else ""
    return (f"ALARM RECORDS {word} - {overdue} overdue, {soon} due soon as of {as_of}{detail}"
            f" | overdue={overdue} due_soon={soon} in_date={tally[State.OK]}")


def _when(finding: Finding, as_of: date) -> str:
    if finding.due is None:
        return "now (date unknown)" if finding.task == "replace" else "now"
    days = (finding.due - as_of).days
    if finding.state is State.OVERDUE:
        return f"since {finding.due}" + (f" ({-days} days)" if days < 0 else "")
    return f"due {finding.due}" + (" (today)" if days == 0 else f" (in {days} days)")


def status_text(findings: list[Finding], portfolio: m.Portfolio, as_of: date, show_ok: bool = False,
                tally: Counter | None = None) -> str:
    """`portfolio`: anything with properties, their units and names (a `status_cache.Outline` will do);
    `tally`: the count of each state, when `findings` leaves out those in date."""
    tally = tally or counts(findings)
    lines = [f"Alarm records as of {as_of}: {tally[State.OVERDUE]} overdue, "
             f"{tally[State.DUE_SOON]} due soon, {tally[State.OK]} in date", ""]
    shown = [f for f in findings if show_ok or f.state is not State.OK]
    by_unit: dict[str, list[Finding]] = {}
    for finding in shown:
        by_unit.setdefault(finding.unit, []).append(finding)
    for prop in portfolio.properties:
        units = [u for u in prop.units if u.uid in by_unit]
        if not units:
            continue
        lines.append(f"{prop.name} [{prop.id}]" + (f" - {prop.address}" if prop.address else ""))
        for unit in units:
            lines.append(f"  {unit.name} [{unit.id}]")
            for f in sorted(by_unit[unit.uid], key=lambda f: (f.state.rank, TASK_ORDER[f.task], f.due or date.min)):
                device_id = "(unit)" if f.device == f.unit else f.device.rsplit("/", 1)[1]
                lines.append(f"    {LABELS[f.state]:<11}{device_id} - {f.task}, {_when(f, as_of)}")
                lines += _wrap(f.reason, "        ")
                local = "local policy: " if f.local else ""
                lines += _wrap(f"rule {f.rule} ({local}{f.source})", "        ")
        lines.append("")
    if not shown:
        lines += ["Nothing is overdue or due soon.", ""]
    hidden = sum(tally.values()) - len(shown)
    if hidden:
        lines += [f"{hidden} tasks not yet due are not shown (--all shows them).", ""]
    lines += _wrap(SHORT, "")
    return "\n".join(lines) + "\n"


@functools.lru_cache(maxsize=4096)  # rules and their sources repeat on every device
def _wrapped(text: str, indent: str) -> tuple[str, ...]:
    if text and len(indent) + len(text) <= WIDTH and text.isprintable() and text == text.strip(" "):
        return (indent + text,)  # what textwrap gives a short line, at a fraction of the cost
    return tuple(textwrap.wrap(text, WIDTH, initial_indent=indent, subsequent_indent=indent + "  "))


def _wrap(text: str, indent: str) -> list[str]:
    return list(_wrapped(text, indent))
