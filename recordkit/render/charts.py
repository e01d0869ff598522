"""Charts as plain SVG strings: readable without JavaScript, in print, and in black and white.

Every mark carries a text label or symbol; colour only repeats what the text says.
"""
from __future__ import annotations

from dataclasses import dataclass
from datetime import date
from html import escape

from dateutil.relativedelta import relativedelta

from .. import model as m
from ..checks import Finding

FORECAST_YEARS = 5
GRID_MONTHS = 12
CELL_SYMBOLS = {"pass": "✓", "fail": "✗", "missed": "–", "none": ""}


@dataclass(frozen=True)
class Quarter:
    start: date
    label: str
    count: int
    cost: float


def replacement_forecast(findings: list[Finding], portfolio: m.Portfolio, as_of: date,
                         costs: dict[str, float]) -> list[Quarter]:
    """Replacements due per quarter for the next five years; anything already due counts in the first."""
    first = date(as_of.year, 3 * ((as_of.month - 1) // 3) + 1, 1)
    starts = [first + relativedelta(months=3 * i) for i in range(4 * FORECAST_YEARS)]
    counts = [0] * len(starts)
    money = [0.0] * len(starts)
    for finding in findings:
        if finding.task != "replace":
            continue
        due = finding.due or as_of   # unknown manufacture date: due now
        index = max(0, (due.year - first.year) * 4 + (due.month - first.month) // 3)
        if index >= len(starts):
            continue  # beyond the forecast
        counts[index] += 1
        money[index] += costs.get(str(portfolio.devices[finding.device].device.kind), 0.0)
    return [Quarter(s, f"Q{(s.month - 1) // 3 + 1} {s.year % 100:02d}", c, v)
            for s, c, v in zip(starts, counts, money)]


def yearly_costs(quarters: list[Quarter]) -> list[tuple[int, int, float]]:
    """(year, replacements, cost) per calendar year of the forecast."""
    years: dict[int, list] = {}
    for q in quarters:
        entry = years.setdefault(q.start.year, [0, 0.0])
        entry[0] += q.count
        entry[1] += q.cost
    return [(year, n, cost) for year, (n, cost) in sorted(years.items())]


def forecast_svg(quarters: list[Quarter]) -> str:
    width, height, left, bottom, top = 760, 230, 34, 40, 24
    slot = (width - left - 10) / len(quarters)
    peak = max((q.count for q in quarters), default=0) or 1
    scale = (height - bottom - top) / peak
    parts = [f'<svg xmlns="http://www.w3.org/2000/svg" class="rk-chart" viewBox="0 0 {width} {height}" '
             f'role="img" aria-labelledby="rk-fc-title rk-fc-desc">',
             '<title id="rk-fc-title">Replacements due per quarter, next five years</title>',
             '<desc id="rk-fc-desc">' + escape("; ".join(f"{q.label}: {q.count}" for q in quarters)) + "</desc>",
             f'<line x1="{left}" y1="{height - bottom}" x2="{width - 6}" y2="{height - bottom}" class="rk-axis"/>']
    for i, q in enumerate(quarters):
        x = left + i * slot + 4
        bar = q.count * scale
        y = height - bottom - bar
        label = "now" if i == 0 else q.label
        if q.count:
            parts.append(f'<rect x="{x:.1f}" y="{y:.1f}" width="{slot - 8:.1f}" height="{bar:.1f}" '
                         f'class="rk-bar{" rk-bar-now" if i == 0 else ""}"/>')
        parts.append(f'<text x="{x + (slot - 8) / 2:.1f}" y="{y - 4:.1f}" class="rk-value">{q.count}</text>')
        parts.append(f'<text x="{x + (slot - 8) / 2:.1f}" y="{height - bottom + 14}" class="rk-label">'
                     f'{escape(label)}</text>')
    parts.append(f'<text x="{left}" y="{height - 6}" class="rk-note">First bar: due this quarter or already '
                 'overdue. Each bar is labelled with its count.</text>')
    parts.append("</svg>")
    return "".join(parts)


def _month_after(first_of_month: date, months: int = 1) -> date:
    """The first day of the month `months` later (plain arithmetic: day 1 exists in every month)."""
    year, month = divmod(first_of_month.month - 1 + months, 12)
    return date(first_of_month.year + year, month + 1, 1)


def month_cells(portfolio: m.Portfolio, device: m.Device, as_of: date) -> list[tuple[date, str]]:
    """The last 12 months for one device: pass, fail, missed (in service, no test) or none."""
    last = date(as_of.year, as_of.month, 1)
    months = [_month_after(last, i - GRID_MONTHS + 1) for i in range(GRID_MONTHS)]
    retired = portfolio.retired_on(device.uid)
    results: dict[date, set] = {}
    for event in reversed(portfolio.events_for(device.uid)):  # oldest first: read back to the grid's start
        if event.date < months[0]:
            break
        if event.action is m.Action.TEST or event.action is m.Action.HEARD:
            month = date(event.date.year, event.date.month, 1)
            results.setdefault(month, set()).add("fail" if event.result is m.Result.FAIL else "pass")
    cells = []
    for month in months:
        month_end = _month_after(month)
        in_service = device.installed < month_end and (retired is None or retired > month) and month <= as_of
        if month in results:
            cells.append((month, "fail" if "fail" in results[month] else "pass"))
        elif in_service and month != last:  # the as-of month is not over: no test yet is not a miss
            cells.append((month, "missed"))
        else:
            cells.append((month, "none"))
    return cells


_CELL_PRIORITY = ("fail", "pass", "missed", "none")  # what a month shows when devices of one position differ


def position_cells(portfolio: m.Portfolio, devices: list[m.Device], as_of: date) -> list[tuple[date, str]]:
    """The last 12 months of one position (a device and those it replaced), so a replacement does not
    break the row: each month shows a failure by any of them, else a pass, else a miss."""
    per_device = [month_cells(portfolio, device, as_of) for device in devices]
    return [(cells[0][0], min((c[1] for c in cells), key=_CELL_PRIORITY.index)) for cells in zip(*per_device)]


def monthly_grid_svg(rows: list[tuple[str, list[tuple[date, str]]]]) -> str:
    """One row per device, one cell per month, each cell a symbol: ✓ pass, ✗ fail, – missed."""
    name_width, cell, head = 150, 40, 22
    width = name_width + cell * GRID_MONTHS + 4
    height = head + cell * 0.7 * len(rows) + 26
    row_h = cell * 0.7
    parts = [f'<svg xmlns="http://www.w3.org/2000/svg" class="rk-chart rk-grid" viewBox="0 0 {width} {height:.0f}" '
             f'role="img" aria-labelledby="rk-grid-title">',
             '<title id="rk-grid-title">Tests in the last 12 months: ✓ passed, ✗ failed, – no test</title>']
    if rows:
        for j, (month, _) in enumerate(rows[0][1]):
            parts.append(f'<text x="{name_width + j * cell + cell / 2:.0f}" y="14" class="rk-label">'
                         f'{month.strftime("%b %y")}</text>')
    for i, (name, cells) in enumerate(rows):
        y = head + i * row_h
        parts.append(f'<text x="4" y="{y + row_h * 0.68:.1f}" class="rk-name">{escape(name)}</text>')
        for j, (month, state) in enumerate(cells):
            x = name_width + j * cell
            parts.append(f'<rect x="{x + 1}" y="{y + 1:.1f}" width="{cell - 2}" height="{row_h - 2:.1f}" '
                         f'class="rk-cell rk-cell-{state}"><title>{escape(name)} {month.strftime("%B %Y")}: '
                         f'{state}</title></rect>')
            parts.append(f'<text x="{x + cell / 2:.0f}" y="{y + row_h * 0.7:.1f}" class="rk-symbol">'
                         f'{CELL_SYMBOLS[state]}</text>')
    parts.append(f'<text x="4" y="{height - 8:.0f}" class="rk-note">✓ tested, passed · ✗ failed · – in service, '
                 'no test that month · blank: not in service</text>')
    parts.append("</svg>")
    return "".join(parts)


def envelope_svg(points: list[float], duration_s: float, label: str) -> str:
    """A recording's loudness over time as a small line chart (0 = background, 1 = the sound's level)."""
    width, height = 320, 60
    if not points:
        return ""
    step = width / max(len(points) - 1, 1)
    path = " ".join(f"{'M' if i == 0 else 'L'}{i * step:.1f},{height - 8 - v * (height - 16):.1f}"
                    for i, v in enumerate(points))
    return (f'<svg xmlns="http://www.w3.org/2000/svg" class="rk-chart rk-envelope" viewBox="0 0 {width} {height}" '
            f'width="{width}" height="{height}" role="img"><title>{escape(label)}</title>'
            f'<path d="{path}" fill="none" stroke="currentColor" stroke-width="1.2"/>'
            f'<text x="2" y="{height - 1}" class="rk-note">0 s</text>'
            f'<text x="{width - 2}" y="{height - 1}" class="rk-note" text-anchor="end">{duration_s:.1f} s</text></svg>')
