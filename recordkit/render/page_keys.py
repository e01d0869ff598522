"""What each generated page is made of, as one short hash: its render key.

A unit's pages depend on its property's own fields, the unit's record, each device's history and kept
recordings, the findings about them (which carry what the rules and other units make of them), the
policy, the as-of date, the site's address and URL style, and recordkit's templates and code. The
parse cache keeps a hash of each record and history (`loader.Digests`), so a key costs a few lookups, not a pass over the events. Two
builds that give a page the same key make the same page; the plugin then keeps the page it wrote before
(see `render_cache`). Pages about the whole portfolio (the overview, the rules) have no key and are
always made; the calendar is made of one piece a unit, keyed like the unit's pages.
"""
from __future__ import annotations

from datetime import date
from pathlib import Path

from .. import model as m
from ..checks import Finding
from ..evidence import recording_state
from ..hashes import code_digest, digest, joined_digest, policy_digest
from ..loader import Digests
from ..rules import Policy


def _finding_text(f: Finding) -> str:
    return f"{f.device}|{f.task}|{f.due}|{f.state.value}|{f.reason}|{f.rule}|{f.source}|{f.local}|{f.record}"


class PageKeys:
    """Render keys for the pages of units and properties; None for every page when the records were
    loaded without the cache (no hashes to build keys from)."""

    def __init__(self, digests: Digests | None, portfolio: m.Portfolio, policy: Policy,
                 by_device: dict[str, list[Finding]], as_of: date, settings: tuple, root: Path):
        self.digests = digests
        self.root = root
        self.portfolio = portfolio
        self.by_device = by_device
        self._units: dict[str, str] = {}
        self.site = digest([code_digest(), policy_digest(policy), as_of, *settings]) if digests else ""

    def _device_inputs(self, device: m.Device) -> list[str]:
        recordings = self.digests.evidence.get(device.uid)
        return [device.uid, *self.digests.events.get(device.uid, ()), "findings",
                *(_finding_text(f) for f in self.by_device.get(device.uid, ())),
                *([str(recording_state(self.root, ref)) for ref in recordings] if recordings else ()), "end"]

    def unit_inputs(self, prop: m.Property, unit: m.Unit) -> str:
        known = self._units.get(unit.uid)  # by uid: hashing the records themselves is slow
        if known is None:
            known = self._units[unit.uid] = self._unit_inputs(prop, unit)
        return known

    def _unit_inputs(self, prop: m.Property, unit: m.Unit) -> str:
        parts: list[str] = [str(self.digests.properties.get(prop.id)), str(self.digests.units.get(unit.uid)),
                            *(_finding_text(f) for f in self.by_device.get(unit.uid, ()))]
        for device in unit.devices:
            parts += self._device_inputs(device)
            if device.kind is m.Kind.LISTENING_NODE:  # what it hears is recorded in other units too
                for _, target in self.portfolio.listened(device):
                    parts += ["hears", str(self.digests.units.get(target.unit.uid)), *self._device_inputs(target.device)]
        return joined_digest(*parts)

    def unit_page(self, prop: m.Property, unit: m.Unit, uri: str) -> str | None:
        return joined_digest(self.site, uri, self.unit_inputs(prop, unit)) if self.digests else None

    def property_page(self, prop: m.Property, uri: str) -> str | None:
        if not self.digests:
            return None
        return joined_digest(self.site, uri, str(self.digests.properties.get(prop.id)),
                             *(self.unit_inputs(prop, unit) for unit in prop.units))

