"""The site's pages as Markdown strings, built from loaded records and findings.

Pure: no MkDocs here. The plugin wraps these pages in MkDocs files; anything
else (a pre-build step, another generator) could use them too.
"""
from __future__ import annotations

import functools
import html
import json
import posixpath
from collections import Counter
from dataclasses import dataclass
from typing import Callable, Iterator
from datetime import date
from pathlib import Path

import jinja2
from markupsafe import Markup

from .. import model as m
from ..cautions import CAUTIONS, SHORT
from ..checks import Finding, by_property, urgency, worst_state
from ..loader import Loaded
from ..nodes import NodeReport, node_report
from .charts import envelope_svg, monthly_grid_svg, position_cells
from ..schema import record_schema
from ..rules import coverage_set_names
from ..schedule import State
from .compiled import keep_compiled
from .checklist import (UnitSheet, blank_unit_html, findings_by_device, inspection_html, monthly_card_html,
                        unit_sheet, walkround_html)
from .device_labels import device_address, grid, label_rows, labels_html
from .escape import md_text
from .page_keys import PageKeys
from .portfolio_pages import CALENDAR, NAV_PROPERTIES, PROPERTIES_INDEX, PortfolioPages
from .labels import STATE_LABELS, TASK_LABELS, TEMPLATES, kind_label, room_notes

# A QR code takes about 3 ms to make: past this many units the site leaves the label sheets to
# `recordkit labels`, which the unit page then names.
LABEL_SHEETS_UP_TO = 400


@dataclass(frozen=True)
class Page:
    """A generated page: where it goes and how to make it. Made on demand, when MkDocs reads it, so a
    large portfolio's pages are never all in memory (nor written twice)."""
    src_uri: str
    make: Callable[[], str]
    in_nav: bool = True
    static: bool = False   # a finished file (a printable sheet), written as it is
    # The HTML for the page's part("name") markers, put in after Markdown and search have run: long
    # tables and histories skip both, which keeps the build linear and fast at a landlord's scale.
    parts: Callable[[], dict[str, str]] | None = None
    # A hash of everything the page is made of (see page_keys); None: made at every build.
    key: str | None = None
    # For a file made of pieces, each with its own key (the calendar, a piece a unit): given the last
    # build's pieces {name: (key, text)}, the file's text and this build's pieces.
    pieces: Callable[[dict], tuple[str, dict]] | None = None
    # The unit a unit's page or sheet belongs to: its Markdown links only to the unit's other pages and to
    # pages not of a unit, so a build may leave a unit whose every page is kept out of MkDocs' view.
    unit: str | None = None
    owner: str | None = None  # the property a property's or unit's page or sheet belongs to


def part_marker(name: str) -> str:
    """What a part("name") leaves in the Markdown: a comment, which Markdown passes through as it is and
    search ignores."""
    return f"<!-- rk-part-{name} -->"


def checklist_uri(prop: m.Property, unit: m.Unit | None = None, monthly: bool = False) -> str:
    if unit is None:
        return f"checklists/{prop.id}.html"
    return f"checklists/{prop.id}/{unit.id}{'-monthly' if monthly else ''}.html"


def walkround_uri(prop: m.Property, unit: m.Unit) -> str:
    return f"walkround/{prop.id}/{unit.id}.html"


def labels_uri(prop: m.Property, unit: m.Unit) -> str:
    return f"labels/{prop.id}/{unit.id}.html"


NEW_UNIT_SHEET = "checklists/new-unit.html"
SCHEMA = "records.schema.json"


def property_uri(prop: m.Property) -> str:
    return f"properties/{prop.id}.md"


def unit_uri(prop: m.Property, unit: m.Unit) -> str:
    return f"properties/{prop.id}/{unit.id}.md"


def page_url(uri: str, directory_urls: bool) -> str:
    """Where MkDocs puts the page built from `uri`, as a URL path (for links in HTML, which MkDocs
    does not rewrite as it does Markdown links)."""
    if not uri.endswith(".md"):
        return uri
    stem = uri[:-3]
    if not directory_urls:
        return stem + ".html"
    if stem == "index" or stem.endswith("/index"):
        return stem[:-len("index")]
    return stem + "/"


def relative_url(target: str, here: str) -> str:
    """`target` as a link from the page at `here` (both URL paths as page_url gives them)."""
    base = here if here.endswith("/") else posixpath.dirname(here)
    url = posixpath.relpath(target or ".", base or ".")
    return url + "/" if target.endswith("/") or not target else url


def device_anchor(device: m.Device) -> str:
    return f"device-{device.id}"


@dataclass
class DeviceView:
    """One device with its findings, in the shape the templates need."""

    located: m.Located
    findings: list[Finding]
    history: tuple[m.Event, ...]
    retired: date | None

    @property
    def device(self) -> m.Device:
        return self.located.device

    @property
    def state(self) -> State | None:
        return worst_state(self.findings)

    @property
    def next(self) -> Finding | None:
        """The most pressing task: overdue first, then the earliest date."""
        return min(self.findings, default=None, key=urgency)

    node: "NodeReport | None" = None   # listening nodes: what the node can hear, and its record

    @property
    def replacement(self) -> Finding | None:
        return next((f for f in self.findings if f.task == "replace"), None)


class DeviceViews(dict):
    """Each device's view by uid, made when first asked for: a build that keeps most pages needs few."""

    def __init__(self, portfolio: m.Portfolio, policy, by_device: dict[str, list[Finding]], as_of: date):
        super().__init__()
        self.portfolio, self.policy, self.by_device, self.as_of = portfolio, policy, by_device, as_of

    def __missing__(self, uid: str) -> DeviceView:
        loc = self.portfolio.devices[uid]
        node = node_report(self.portfolio, self.policy, loc.device, self.as_of) \
            if loc.device.kind is m.Kind.LISTENING_NODE else None
        view = self[uid] = DeviceView(loc, self.by_device.get(uid, []), self.portfolio.events_for(uid),
                                      self.portfolio.retired_on(uid), node)
        return view

    def __contains__(self, uid: object) -> bool:
        return uid in self.portfolio.devices

    def get(self, uid, default=None):
        return self[uid] if uid in self.portfolio.devices else default


class SiteBuilder(PortfolioPages):
    def __init__(self, loaded: Loaded, findings: list[Finding], as_of: date, directory_urls: bool = False,
                 site_url: str | None = None, others: dict[str, dict] | None = None, order: list[str] | None = None):
        """`others`: the summaries of the properties not in `loaded` (see quickbuild), by id; `order`: every
        property's id in order, when some are not loaded."""
        self.loaded = loaded
        self.site_url = site_url
        self.directory_urls = directory_urls
        # A unit's checklist content serves its property's packet, its sheet and its card, which are
        # written one after the other: keep the last 64 units' worth.
        self._sheet_of = functools.lru_cache(maxsize=64)(self._make_sheet)
        self.portfolio = loaded.portfolio
        self.folder = Path(loaded.root).resolve().name or str(loaded.root)  # as the user names it
        self.as_of = as_of
        self.findings = findings
        self.rule_titles = {rule.name: rule.title for rule in loaded.policy}
        self.by_device = by_device = findings_by_device(findings)
        self.others = others or {}
        self.order = order or [p.id for p in self.portfolio.properties]
        self.own = [p for p in self.portfolio.properties if p.id not in self.others]
        self.units = {u.uid: (p, u) for p in self.portfolio.properties for u in p.units}
        all_units = sum(len(p.units) for p in self.own) + sum(s["units"] for s in self.others.values())
        self.label_sheets = all_units <= LABEL_SHEETS_UP_TO
        self.keys = PageKeys(loaded.digests, self.portfolio, loaded.policy, by_device, as_of,
                             (directory_urls, site_url, self.label_sheets, str(Path(loaded.root).resolve())),
                             Path(loaded.root))
        self.views = DeviceViews(self.portfolio, loaded.policy, by_device, as_of)
        self.env = keep_compiled(jinja2.Environment(
            loader=jinja2.FileSystemLoader(TEMPLATES), autoescape=False, finalize=md_text,
            trim_blocks=True, lstrip_blocks=True, undefined=jinja2.StrictUndefined, keep_trailing_newline=True))
        # the HTML parts (put in after Markdown): a second environment that escapes for HTML
        self.html_env = keep_compiled(jinja2.Environment(
            loader=jinja2.FileSystemLoader(TEMPLATES), autoescape=True, trim_blocks=True, lstrip_blocks=True,
            undefined=jinja2.StrictUndefined))
        self.html_env.globals.update(badge=badge, state_labels=STATE_LABELS, kind_label=kind_label, room_notes=room_notes, task_label=TASK_LABELS.get, as_of=as_of,
                                    device_anchor=device_anchor)
        self.env.globals.update(badge=badge, anchor=anchor, front_title=front_title, task_label=TASK_LABELS.get, kind_label=kind_label,
                                when=lambda f: when(f, as_of), as_of=as_of, short_caution=SHORT,
                                state_labels=STATE_LABELS, rule_anchor=rule_anchor,
                                part=lambda name: Markup(f"\n\n{part_marker(name)}\n\n"))  # see Page.parts

    # ---- helpers available to templates ------------------------------------------------
    def _render(self, template: str, here: str, **context) -> str:
        def link(target: str, anchor: str | None = None) -> Markup:
            url = posixpath.relpath(target, posixpath.dirname(here) or ".")
            return Markup(url + (f"#{anchor}" if anchor else ""))

        return self.env.get_template(template).render(
            here=here, link=link,
            unit_uri=unit_uri, property_uri=property_uri, device_anchor=device_anchor,
            checklist_uri=checklist_uri, walkround_uri=walkround_uri, labels_uri=labels_uri,
            new_unit_sheet=NEW_UNIT_SHEET, calendar_file=CALENDAR,
            schema_file=SCHEMA, **context)

    # ---- HTML parts (links in them are not rewritten by MkDocs, so they are made here as URLs) --------
    @functools.cached_property
    def _parts(self):
        return self.html_env.get_template("_parts.html.j2").module

    def _href(self, here: str, target: str, anchor: str | None = None) -> Markup:
        url = relative_url(page_url(target, self.directory_urls), page_url(here, self.directory_urls))
        return Markup(html.escape(url + (f"#{anchor}" if anchor else "")))

    def _device_href(self, here: str, view: DeviceView) -> Markup:
        loc = view.located
        return self._href(here, unit_uri(loc.property, loc.unit), device_anchor(loc.device))

    def _html_what(self, here: str, f: Finding) -> Markup:
        if f.device in self.views:
            view = self.views[f.device]
            return Markup('{} <a href="{}">{}</a>').format(kind_label(f.kind), self._device_href(here, view),
                                                          view.device.id)
        prop, unit = self.units[f.unit]
        return Markup('<a href="{}">Coverage of {}</a>').format(self._href(here, unit_uri(prop, unit), "coverage"),
                                                               unit.name)

    def _device_section(self, view: DeviceView) -> Markup:
        loc = view.located
        here = unit_uri(loc.property, loc.unit)
        return Markup(self.html_env.get_template("_device.html.j2").render(
            v=view, unit=view.located.unit, views=self.views, device_anchor=device_anchor,
            successor=self.portfolio.successors.get(view.device.uid),
            evidence_html=lambda events: Markup(self._evidence_html(events)),
            history_html=history_html, when=lambda f: when(f, self.as_of),
            rule_link=functools.partial(self._rule_link, here),
            walkround=self._href(here, walkround_uri(loc.property, loc.unit), device_anchor(view.device))))

    # ---- pages -------------------------------------------------------------------------
    def pages(self) -> Iterator[Page]:
        """Every page, each made only when asked for."""
        yield Page("index.md", self.overview, parts=self.overview_parts)
        yield Page("rules.md", self.rules)
        yield Page("about.md", self.about)
        yield Page("keeping-records.md", self.keeping_records)
        yield Page(NEW_UNIT_SHEET, blank_unit_html, static=True)
        yield Page(CALENDAR, lambda: self.calendar({})[0], static=True, pieces=self.calendar)
        yield Page(SCHEMA, lambda: json.dumps(record_schema(), indent=2) + "\n", static=True)
        many = len(self.order) > NAV_PROPERTIES
        if many:
            yield Page(PROPERTIES_INDEX, self.properties_index, parts=self.properties_index_parts)
        keys = self.keys
        for prop in self.own:
            uri = property_uri(prop)
            yield Page(uri, functools.partial(self.property_page, prop), in_nav=not many,
                       parts=functools.partial(self.property_parts, prop), key=keys.property_page(prop, uri),
                       owner=prop.id)
            uri = checklist_uri(prop)
            yield Page(uri, functools.partial(self.inspection_sheets, prop), static=True,
                       key=keys.property_page(prop, uri), owner=prop.id)
            for unit in prop.units:
                uri = unit_uri(prop, unit)
                yield Page(uri, functools.partial(self.unit_page, prop, unit), in_nav=False,
                           parts=functools.partial(self.unit_parts, prop, unit), key=keys.unit_page(prop, unit, uri),
                           unit=unit.uid, owner=prop.id)
                sheets = [(checklist_uri(prop, unit), functools.partial(self.inspection_sheets, prop, unit)),
                          (checklist_uri(prop, unit, monthly=True), functools.partial(self.monthly_card, prop, unit)),
                          (walkround_uri(prop, unit), functools.partial(self.walkround, prop, unit))]
                if self.label_sheets:
                    sheets.append((labels_uri(prop, unit), functools.partial(self.labels, prop, unit)))
                for uri, make in sheets:
                    yield Page(uri, make, static=True, key=keys.unit_page(prop, unit, uri), unit=unit.uid,
                               owner=prop.id)

    def inspection_sheets(self, prop: m.Property, unit: m.Unit | None = None) -> str:
        units = prop.units if unit is None else [unit]
        return inspection_html([self._sheet_of(u.uid) for u in units], self.as_of)

    def monthly_card(self, prop: m.Property, unit: m.Unit) -> str:
        return monthly_card_html(self._sheet_of(unit.uid), self.as_of)

    def walkround(self, prop: m.Property, unit: m.Unit) -> str:
        here = walkround_uri(prop, unit)
        return walkround_html(self._sheet_of(unit.uid), self.as_of, relative_url("assets", here),
                              self._href(here, unit_uri(prop, unit)))

    def labels(self, prop: m.Property, unit: m.Unit) -> str:
        """The unit's device labels on A4 (`recordkit labels` prints Letter and other sizes)."""
        return unit_labels_html([self._sheet_of(unit.uid)], self.site_url, self.directory_urls, grid("a4"))

    def _make_sheet(self, unit_uid: str) -> UnitSheet:
        prop, unit = self.units[unit_uid]
        return unit_sheet(self.portfolio, self.by_device, prop, unit, self.as_of)

    @functools.cached_property
    def _overdue_by_property(self) -> dict[str, list[Finding]]:
        return by_property(self._work[0])  # the overview's overdue list, longest overdue first

    def property_page(self, prop: m.Property) -> str:
        return self._render("property.md.j2", property_uri(prop), prop=prop)

    def property_parts(self, prop: m.Property) -> dict[str, str]:
        here = property_uri(prop)
        units = [(u, self._href(here, unit_uri(prop, u)), self._active([u])) for u in prop.units]
        rows = [(Markup('<a href="{}">{}</a> <span class="rk-keep">· <a href="{}">walk-round form</a></span>').format(
                    href, u.name, self._href(here, walkround_uri(prop, u))), len(views), Counter(v.state for v in views))
                for u, href, views in units]
        return {"overdue": self._work_list(self._overdue_by_property.get(prop.id, []), here, [prop])
                or self._parts.nothing(f"Nothing is overdue here as of {self.as_of}."),
                "units": self._parts.counts_table("Unit", "Devices in service", rows),
                "devices": self._parts.device_table([unit for unit in units if unit[2]],
                                                    functools.partial(self._device_href, here),
                                                    lambda f: when(f, self.as_of))}

    def _work_list(self, findings: list[Finding], here: str, props, when_label: str = "Since",
                   several: bool | None = None) -> str:
        """Findings as a work list grouped by property (when several may be listed) and unit."""
        by_unit: dict[str, list[Finding]] = {}
        for finding in findings:
            by_unit.setdefault(finding.unit, []).append(finding)
        groups = [(p, units) for p in props
                  if (units := [(u, self._href(here, unit_uri(p, u)), by_unit[u.uid]) for u in p.units
                                if u.uid in by_unit])]
        if not groups:
            return ""
        several = len(props) > 1 if several is None else several
        return self._parts.work_list(
            groups, functools.partial(self._html_what, here), self._room_of, lambda f: when(f, self.as_of),
            functools.partial(self._rule_link, here), when_label,
            (lambda p: self._href(here, property_uri(p))) if several else None)

    def _room_of(self, finding: Finding) -> str:
        view = self.views.get(finding.device)
        if view is None:
            return ""  # a coverage gap belongs to the unit
        room = view.located.unit.room(view.device.room)
        return room.name if room else view.device.room

    def _rule_link(self, here: str, finding: Finding) -> Markup:
        """The rule in words, linked to its row on the rules page; its id stays in the tooltip."""
        return Markup('<a href="{}" title="rule {}">{}</a>{}').format(
            self._href(here, "rules.md", f"rule-{finding.rule}"), finding.rule,
            self.rule_titles.get(finding.rule, finding.rule), " (local)" if finding.local else "")

    def _evidence_html(self, events) -> str:
        """What each recorded test sounded like: frequency, pattern, level and the envelope."""
        from ..audio import AudioError
        from ..evidence import hearing_of

        rows = []
        for event in (e for e in events if e.evidence):
            try:
                h = hearing_of(Path(self.loaded.root), event.evidence)
            except AudioError as exc:
                rows.append(f"<li>{event.date}: recording not readable ({md_text(str(exc))})</li>")
                continue
            tone = f"{h.tone_hz:.0f} Hz" if h.tone_hz else "no tone"
            level = f"{h.level_dbfs:.1f} dBFS" if h.level_dbfs is not None else "no level"
            chart = envelope_svg(h.envelope, h.duration_s, f"Loudness of the recording of {event.date}")
            rows.append(f"<li><b>{event.date} {event.action}</b>: {md_text(h.verdict)}; {tone}, "
                        f"{md_text(h.pattern)}, {level}<br>{chart}</li>")
        if not rows:
            return ""
        return ('<div class="rk-evidence"><p><b>Recorded evidence</b> (a recording shows the horn sounds; it '
                'does not prove the sensor sees smoke)</p><ul>' + "".join(rows) + "</ul></div>")

    def _active(self, units) -> list[DeviceView]:
        return [self.views[d.uid] for u in units for d in u.devices if not self._retired(self.views[d.uid])]

    def _retired(self, view: DeviceView) -> bool:
        return view.retired is not None and view.retired <= self.as_of

    def _unit_views(self, unit: m.Unit) -> tuple[list[DeviceView], list[DeviceView]]:
        """The unit's devices in service and retired ones."""
        views = [self.views[d.uid] for d in unit.devices]
        return [v for v in views if not self._retired(v)], [v for v in views if self._retired(v)]

    def unit_page(self, prop: m.Property, unit: m.Unit) -> str:
        active, retired = self._unit_views(unit)
        return self._render("unit.md.j2", unit_uri(prop, unit), prop=prop, unit=unit, active=active, retired=retired,
                            label_sheets=self.label_sheets)

    def unit_parts(self, prop: m.Property, unit: m.Unit) -> dict[str, str]:
        active, retired = self._unit_views(unit)
        rooms = [(room, [v for v in active if v.device.room == room.id]) for room in unit.rooms]
        grid = monthly_grid_svg([(self._position_name(chain), position_cells(self.portfolio, chain, self.as_of))
                                 for chain in (self._position(unit, v.device) for v in active)])
        gaps = [f for f in self.by_device.get(unit.uid, []) if f.task == "coverage"]
        return {"rooms": self._parts.rooms_table(rooms, unit),
                "coverage": self._parts.gaps_table(gaps, self.loaded.policy.coverage,
                                                   functools.partial(self._rule_link, unit_uri(prop, unit))),
                "grid": f'<div class="rk-figure">{grid}</div>',
                "active": self._parts.sections(active, self._device_section),
                "retired": self._parts.sections(retired, self._device_section)}

    @staticmethod
    def _position(unit: m.Unit, device: m.Device) -> list[m.Device]:
        """A device and, through `replaces:`, the devices that held its place before it (newest first)."""
        by_id = {d.id: d for d in unit.devices}
        chain = [device]
        while chain[-1].replaces in by_id and by_id[chain[-1].replaces] not in chain:
            chain.append(by_id[chain[-1].replaces])
        return chain

    @staticmethod
    def _position_name(chain: list[m.Device]) -> str:
        return chain[0].id if len(chain) == 1 else f"{chain[0].id} (was {chain[1].id})"

    def rules(self) -> str:
        policy = self.loaded.policy
        return self._render("rules.md.j2", "rules.md", rules=list(policy), rule_set=policy.coverage,
                            rule_set_title=policy.rule_set.title, rule_set_names=coverage_set_names())

    def about(self) -> str:
        policy = self.loaded.policy
        return self._render("about.md.j2", "about.md", cautions=CAUTIONS, coverage=policy.coverage,
                            coverage_rules=policy.coverage_rules)


def site_pages(loaded: Loaded, findings: list[Finding], as_of: date, directory_urls: bool = False,
               site_url: str | None = None) -> Iterator[Page]:
    return SiteBuilder(loaded, findings, as_of, directory_urls, site_url).pages()


def unit_labels_html(sheets: list[UnitSheet], site_url: str | None, directory_urls: bool, layout) -> str:
    """Labels for the devices of these units; with the site's address, each QR code opens the device's page."""
    def address(sheet: UnitSheet, row) -> str:
        return device_address(site_url, page_url(unit_uri(sheet.prop, sheet.unit), directory_urls), row.device.id)

    return labels_html(label_rows(sheets, address), layout)


def badge(state: State | str | None) -> Markup:
    if state is None:
        return Markup('<span class="rk-state rk-none">— no tasks</span>')
    state = State(state)
    symbol, word = STATE_LABELS[state]
    return Markup(f'<span class="rk-state rk-{state.value.replace("_", "-")}">'
                  f'<span aria-hidden="true">{symbol}</span> {word}</span>')


@functools.lru_cache(maxsize=8192)  # names and notes repeat across thousands of events
def _cell(text: str | None) -> str:
    return html.escape(" ".join(text.split())) if text else ""


def history_html(events: tuple[m.Event, ...]) -> Markup:
    """A device's events, newest first, as one raw HTML block: Markdown leaves it alone, which keeps
    long histories cheap to build. Every value is escaped."""
    rows = "".join(
        f"<tr><td>{e.date}{' ' + e.time.strftime('%H:%M') if e.time else ''}</td><td>{e.action}</td>"
        f"<td>{e.result or ''}</td><td>{_cell(e.by)}</td><td>{_cell(e.note)}</td></tr>"
        for e in reversed(events))
    return Markup(f'<details class="rk-history"><summary>History: {len(events)} event(s), newest first</summary>'
                  f'<table><thead><tr><th>Date</th><th>Action</th><th>Result</th><th>By</th><th>Note</th></tr>'
                  f'</thead><tbody>{rows}</tbody></table></details>')


def front_title(text: str) -> Markup:
    """A page title for the front matter. MkDocs puts it into the nav and <title> as it is
    (it expects HTML, as when it takes a title from a heading), so escape it here."""
    return Markup(json.dumps(html.escape(" ".join(text.split()))))


def rule_anchor(name: str) -> Markup:
    """Where a rule's row on the rules page can be linked to (work lists link their rule here)."""
    return Markup('<span id="rule-{}"></span>').format(name)


def anchor(name: str) -> Markup:
    """A Markdown attr_list id for a heading (names are validated ids, safe as they are)."""
    return Markup("{#" + name + "}")


def when(finding: Finding | None, as_of: date) -> str:
    if finding is None:
        return ""
    if finding.due is None:
        return "now (date unknown)"
    days = (finding.due - as_of).days
    if days < 0:
        return f"{finding.due} ({-days} days ago)"
    return f"{finding.due} (today)" if days == 0 else f"{finding.due} (in {days} days)"
