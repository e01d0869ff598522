"""Events checked against the records they name: the same rules for record files, `log` and `import`;
with suggestions for an unknown id that stay quick at any scale, and exports kept by mistake among the
records found out."""
from __future__ import annotations

import difflib
from collections import Counter
from datetime import date

from . import model as m
from .errors import Problems, Source
from .recordfiles import CSV_SUFFIX

def event_problems(event: m.Event, portfolio: m.Portfolio, today: date) -> list[str]:
    """What is wrong with an event against the records: the same rules for files, `log` and `import`.
    `today` is the real date: an event after it has not happened yet."""
    problems = []
    if event.date > today:
        problems.append(f"dated {event.date}, after today ({today}): a date in the future")
    if event.action is m.Action.TEST and event.result is None:
        problems.append("a test needs 'result: pass' or 'result: fail'")
    if event.action is not m.Action.TEST and event.result is not None:
        problems.append(f"only a test has a result (this is a '{event.action}')")
    located = portfolio.devices.get(event.device)
    if located is None:
        return problems + [f"no device '{event.device}' (write property/unit/device)"
                           + device_suggestion(portfolio, event.device)]
    device = located.device
    if event.date < device.installed:
        problems.append(f"dated {event.date}, before '{event.device}' was installed ({device.installed})")
    retired = portfolio.retired_on(event.device)
    if retired and event.date > retired:
        problems.append(f"dated {event.date}, after '{event.device}' was retired ({retired}); "
                        "log it against the device that replaced it")
    return problems


def refuse_exports(events: list[m.Event], problems: Problems) -> None:
    """A CSV file every one of whose events is also in other record files is an events export kept in the
    records folder (or a link to one): loading it would count every event twice."""
    by_file: dict[str, set] = {}
    for event in events:
        by_file.setdefault(event.path, set()).add(
            (event.date, event.device, event.action, event.result, event.by, event.note))  # exports drop the time
    if not any(path.endswith(CSV_SUFFIX) for path in by_file):
        return
    files_holding: Counter = Counter()
    for keys in by_file.values():
        files_holding.update(keys)
    for path, keys in by_file.items():
        if path.endswith(CSV_SUFFIX) and all(files_holding[key] > 1 for key in keys):
            problems.add(Source(path, 0), "every event in this file is also in other record files: an events "
                         "export kept in the records folder? Move it out (its events would count twice)")


ORPHAN_MESSAGES = 3  # events listed one by one per unknown device id; the rest are counted


def device_suggestion(portfolio: m.Portfolio, wrong: str) -> str:
    """'; did you mean ...?' for an unknown property/unit/device id. Computed once per distinct id and
    one level at a time (the property among properties, the unit among its units, the device among its
    devices), never by comparing with every device id: a typo on a 1,000-unit portfolio stays quick."""
    memo = portfolio.__dict__.setdefault("_suggestions", {})  # kept with the portfolio, like its cached index
    if wrong not in memo:
        memo[wrong] = _device_suggestion(_id_tree(portfolio), wrong)
    return memo[wrong]


def _device_suggestion(tree: dict, wrong: str) -> str:
    parts = wrong.split("/")
    if len(parts) != 3:
        return ""
    found, level = [], tree
    for part in parts:
        if not level:
            return ""
        match = part if part in level else next(iter(difflib.get_close_matches(part, list(level), n=1)), None)
        if match is None:
            return ""
        found.append(match)
        level = level[match]
    guess = "/".join(found)
    return f"; did you mean '{guess}'?" if guess != wrong else ""


def _id_tree(portfolio: m.Portfolio) -> dict:
    tree = portfolio.__dict__.get("_id_tree")
    if tree is None:
        tree = portfolio.__dict__["_id_tree"] = {
            p.id: {u.id: {d.id: {} for d in u.devices} for u in p.units} for p in portfolio.properties}
    return tree


def suggest(wrong: str, known) -> str:
    close = difflib.get_close_matches(wrong, list(known), n=1)
    return f"; did you mean '{close[0]}'?" if close else ""
