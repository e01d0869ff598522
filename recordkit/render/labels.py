"""Words, symbols and template locations shared by the site and the printable sheets."""
from __future__ import annotations

from pathlib import Path

from .. import model as m
from .. import site_templates
from ..schedule import State

# Package data: the top-level site_templates/ folder, installed as recordkit.site_templates.
TEMPLATES = Path(site_templates.__file__).resolve().parent
ASSETS = TEMPLATES / "assets"
STARTER = TEMPLATES / "starter"
DEFAULT_SITE_CONFIG = TEMPLATES / "site.yml"

# Our own state labels: a symbol and a word, so state never rests on colour alone (one set, in schedule).
STATE_LABELS = {state: (state.symbol, state.word) for state in State}
TASK_LABELS = {"replace": "Replace", "test": "Test", "battery": "Battery", "fix": "Fix",
               "coverage": "Coverage", "node": "Hearing check"}


def kind_label(kind: m.Kind) -> str:
    return kind.label[0].upper() + kind.label[1:]


def room_notes(room: m.Room) -> list[str]:
    """What a room's record says beyond its use: sleeping area, appliances, flue, habitable."""
    notes = []
    if room.serves:
        notes.append("outside the sleeping area of " + ", ".join(room.serves))
    elif room.outside_sleeping:
        notes.append("outside the sleeping area")
    notes += [a.value.replace("_", " ") for a in room.appliances]
    if room.fuel_burning:
        notes.append("fuel-burning appliance")
    if room.flue:
        notes.append("flue passes through")
    if room.habitable:
        notes.append("habitable")
    return notes
