"""A seeded synthetic portfolio of invented buildings, for scale tests and benchmarks.

N units in buildings of 10-60 units, 3-6 devices a unit, monthly tests with
realistic gaps and failures over Y years, yearly battery changes and the odd
replacement. Everything is invented; the same seed gives the same files.
"""
from __future__ import annotations

import random
from datetime import date, timedelta
from pathlib import Path

from dateutil.relativedelta import relativedelta

_FIRST = ["Alder", "Bracken", "Corrow", "Dunmere", "Elsby", "Fenwick", "Gorse", "Harrow", "Ivel", "Juniper",
          "Kestle", "Larch", "Merrow", "Nettle", "Orwin", "Pell", "Quarry", "Rowan", "Sallow", "Teasel"]
_SECOND = ["Court", "House", "Yard", "Mews", "Terrace", "Rise", "Gardens", "Place"]
_TOWNS = ["Northmere", "Eastfield", "Little Wexcombe", "Sorrelby", "Hatherden"]


def generate(out: Path, units: int, years: int, seed: int = 7, as_of: date = date(2026, 12, 1),
             events_format: str = "yaml") -> dict[str, int]:
    """Write the portfolio under `out`; returns counts of what was written."""
    rng = random.Random(seed)
    out.mkdir(parents=True, exist_ok=True)
    start = as_of - relativedelta(years=years)
    counts = {"buildings": 0, "units": 0, "devices": 0, "events": 0}
    building = 0
    while counts["units"] < units:
        size = min(rng.randint(10, 60), units - counts["units"])
        building += 1
        bid = f"b{building:05d}-{rng.choice(_FIRST).lower()}-{rng.choice(_SECOND).lower()}"
        name = f"{bid.split('-')[1].title()} {bid.split('-')[2].title()} ({building})"
        prop_lines = [f"property:\n  id: {bid}\n  name: {name}\n"
                      f"  address: {rng.randint(1, 199)} {rng.choice(_FIRST)} Road, {rng.choice(_TOWNS)}\n  units:"]
        events: list[tuple[date, str]] = []
        for number in range(1, size + 1):
            uid = f"flat-{number}"
            level = (number - 1) // 4
            prop_lines.append(
                f"    - id: {uid}\n      name: Flat {number}\n      rooms:\n"
                f"        - {{id: bed-1, level: {level}, use: bedroom}}\n"
                f"        - {{id: bed-2, level: {level}, use: bedroom}}\n"
                f"        - {{id: hall, level: {level}, use: hallway, outside_sleeping: true}}\n"
                f"        - {{id: kitchen, level: {level}, use: kitchen, fuel_burning: {str(rng.random() < 0.3).lower()}}}\n"
                f"      devices:")
            kinds = ["smoke", "smoke", "heat"] + rng.sample(["smoke", "co", "smoke_co"], rng.randint(0, 3))
            rooms = ["hall", "bed-1", "kitchen", "bed-2", "hall", "bed-1"]
            for index, kind in enumerate(kinds):
                did = f"d{index + 1}-{kind.replace('_', '')}"
                made = start - timedelta(days=rng.randint(30, 3000))
                installed = made + timedelta(days=rng.randint(20, 200))
                power = rng.choice(["battery", "sealed", "mains_backup"])
                room = rooms[index] if kind != "heat" else "kitchen"
                prop_lines.append(f"        - {{id: {did}, kind: {kind}, room: {room}, power: {power}, "
                                  f"manufactured: {made:%Y-%m}, installed: {installed}}}")
                counts["devices"] += 1
                uid_full = f"{bid}/{uid}/{did}"
                day = max(installed, start) + timedelta(days=rng.randint(0, 27))
                replaced = None
                if rng.random() < 0.05 and (as_of - day).days > 120:  # now and then a device is replaced
                    replaced = day + timedelta(days=rng.randint(60, max(61, (as_of - day).days - 30)))
                    new_id = f"{did}-r"
                    prop_lines.append(f"        - {{id: {new_id}, kind: {kind}, room: {room}, power: sealed, "
                                      f"manufactured: {replaced - timedelta(days=90):%Y-%m}, installed: {replaced}}}")
                    counts["devices"] += 1
                    events.append((replaced, f"device: {uid_full}, action: replace, by: agent"))
                while day <= as_of and (replaced is None or day < replaced):
                    if rng.random() > 0.12:  # some months are missed
                        result = "fail" if rng.random() < 0.01 else "pass"
                        events.append((day, f"device: {uid_full}, action: test, result: {result}, by: tenant"))
                    if day.month == 1 and power != "sealed":
                        events.append((day, f"device: {uid_full}, action: battery, by: agent"))
                    day = day + relativedelta(months=1)
            counts["units"] += 1
        (out / f"{bid}.yaml").write_text("\n".join(prop_lines) + "\n", encoding="utf-8")
        counts["buildings"] += 1
        counts["events"] += len(events)
        _write_events(out / "log" / bid, sorted(events), events_format)
    return counts


def _write_events(folder: Path, events: list[tuple[date, str]], events_format: str) -> None:
    folder.mkdir(parents=True, exist_ok=True)
    by_year: dict[int, list[str]] = {}
    for day, body in events:
        if events_format == "csv":
            fields = dict(part.split(": ", 1) for part in body.split(", "))
            line = f"{day},{fields['device']},{fields['action']},{fields.get('result', '')},{fields.get('by', '')},"
        else:
            line = f"  - {{date: {day}, {body}}}"
        by_year.setdefault(day.year, []).append(line)
    for year, lines in by_year.items():
        if events_format == "csv":
            (folder / f"{year}.csv").write_text("date,device,action,result,by,note\n" + "\n".join(lines) + "\n")
        else:
            (folder / f"{year}.yaml").write_text("events:\n" + "\n".join(lines) + "\n")
