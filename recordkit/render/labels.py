"""Words, symbols and template locations shared by the site and the printable sheets."""
from __future__ import annotations

from pathlib import Path

from .. import model as m
from ..schedule import State

TEMPLATES = Path(__file__).resolve().parents[2] / "site_templates"
ASSETS = TEMPLATES / "assets"

# Our own state labels: a symbol and a word, so state never rests on colour alone.
STATE_LABELS = {State.OVERDUE: ("‼", "Overdue"), State.DUE_SOON: ("◔", "Due soon"), State.OK: ("✓", "In date")}
TASK_LABELS = {"replace": "Replace", "test": "Test", "battery": "Battery", "fix": "Fix",
               "coverage": "Coverage", "node": "Hearing check"}


def kind_label(kind: m.Kind) -> str:
    return kind.label[0].upper() + kind.label[1:]
