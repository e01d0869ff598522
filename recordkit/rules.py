"""The policy: every value the schedule uses, each with the source it comes from.

Defaults come from the reference facts (NFPA 72, UL 217/2034, consumer
guidance, common practice). A `policy.yaml` at the records root may override
the interval values, and each override must say where its value comes from,
so every line of output can name the rule and source that set a date.
"""
from __future__ import annotations

import re
from dataclasses import dataclass, replace
from typing import Any

from dateutil.relativedelta import relativedelta

from .errors import Problems, Source

_INTERVAL = re.compile(r"^\s*(\d+)\s*(day|week|month|year)s?\s*$")


@dataclass(frozen=True)
class Interval:
    amount: int
    unit: str  # "days" | "weeks" | "months" | "years"

    @property
    def delta(self) -> relativedelta:
        return relativedelta(**{self.unit: self.amount})

    def __str__(self) -> str:
        word = self.unit if self.amount != 1 else self.unit[:-1]
        return f"{self.amount} {word}"

    @classmethod
    def parse(cls, text: Any) -> "Interval":
        match = _INTERVAL.match(str(text)) if isinstance(text, str) else None
        if not match:
            raise ValueError(f"expected an interval like '1 month', '12 months', '7 days' or '10 years', "
                             f"got {text!r}")
        return cls(int(match.group(1)), match.group(2) + "s")


@dataclass(frozen=True)
class Rule:
    name: str
    title: str
    value: Interval | str      # str for rules that are a fixed instruction ("replace now")
    source: str
    local: bool = False         # True when policy.yaml set it
    defined_at: Source | None = None
    minimum: int = 1            # smallest amount an override may give

    @property
    def overridable(self) -> bool:
        return isinstance(self.value, Interval)


DEFAULT_RULES: tuple[Rule, ...] = (
    Rule("smoke_life", "Replace a smoke alarm", Interval(10, "years"),
         "NFPA 72 (2013+) §14.4.7.1: no more than 10 years after the date of manufacture"),
    Rule("heat_life", "Replace a heat alarm", Interval(10, "years"),
         "common practice (UK fire-service guidance): 10 years after manufacture"),
    Rule("co_life", "Replace a CO alarm (maker's life not recorded)", Interval(7, "years"),
         "NFPA 72 (2019+) defers to the maker's stated life, typically 5-10 years; "
         "7 years is the conservative default when it is not known"),
    Rule("maker_life", "Replace at the maker's stated life", "life_years on the device",
         "the maker's instructions, as recorded in the device's life_years"),
    Rule("unknown_manufacture", "Alarm with no readable manufacture date", "replace now",
         "common practice (fire-service and maker guidance): treat as past its life"),
    Rule("test_every", "Test with the test button", Interval(1, "months"),
         "US Fire Administration and NFPA safety tips: test at least monthly (follow the maker)"),
    Rule("battery_every", "Change a replaceable battery", Interval(12, "months"),
         "NFPA and US CPSC consumer guidance: at least once a year, and at once on a low-battery chirp"),
    Rule("failed_test", "Fix or replace after a failed test", "fix now",
         "common practice: a failed alarm is repaired or replaced at once; "
         "NFPA 72 §7.6 records what was done about a failure (from memory)"),
    Rule("due_soon_replace", "Warn before a replacement date", Interval(90, "days"),
         "recordkit default (common practice: order a replacement ahead)", minimum=0),
    Rule("due_soon_test", "Warn before a test date", Interval(7, "days"),
         "recordkit default (common practice)", minimum=0),
    Rule("due_soon_battery", "Warn before a battery date", Interval(30, "days"),
         "recordkit default (common practice: buy batteries ahead)", minimum=0),
)


class Policy:
    """The rules in force, by name."""

    def __init__(self, rules: tuple[Rule, ...] = DEFAULT_RULES):
        self._rules = {rule.name: rule for rule in rules}

    def __getitem__(self, name: str) -> Rule:
        return self._rules[name]

    def __iter__(self):
        return iter(self._rules.values())

    def interval(self, name: str) -> Interval:
        value = self._rules[name].value
        assert isinstance(value, Interval), name
        return value

    def with_override(self, rule: Rule) -> "Policy":
        return Policy(tuple(rule if r.name == rule.name else r for r in self))


def apply_policy_file(tree: Any, path: str, problems: Problems, policy: Policy | None = None) -> Policy:
    """Apply a parsed `policy.yaml` (a located YAML tree) to the defaults.

    Shape:  policy: {RULE_NAME: {value: "1 week", source: "where this comes from"}}
    """
    policy = policy or Policy()
    if tree is None:
        return policy
    if not isinstance(tree, dict) or set(tree) - {"policy"}:
        line = getattr(tree, "line", 1)
        problems.add(Source(path, line), "policy.yaml holds one key, 'policy:', a mapping of rule name "
                     "to {value, source}")
        return policy
    overrides = tree.get("policy") or {}
    if not isinstance(overrides, dict):
        problems.add(Source(path, tree.line_of("policy")), "'policy:' must be a mapping of rule name to "
                     "{value, source}")
        return policy
    names = {rule.name for rule in policy}
    for name, body in overrides.items():
        where = Source(path, overrides.key_lines[name])
        if name not in names:
            problems.add(where, f"unknown rule {name!r}; rules: {', '.join(sorted(names))}")
            continue
        default = policy[name]
        if not default.overridable:
            problems.add(where, f"rule {name!r} ({default.value}) cannot be changed locally")
            continue
        if not isinstance(body, dict) or set(body) - {"value", "source"} or "value" not in body:
            problems.add(where, f"rule {name!r}: give {{value: ..., source: ...}}")
            continue
        source = body.get("source")
        if not isinstance(source, str) or not source.strip():
            problems.add(where, f"rule {name!r}: an override must name its source "
                         "(e.g. source: \"Eastfield fire code 2024 §3.2\")")
            continue
        try:
            value = Interval.parse(body["value"])
        except ValueError as exc:
            problems.add(Source(path, body.line_of("value")), f"rule {name!r}: {exc}")
            continue
        if value.amount < default.minimum:
            problems.add(Source(path, body.line_of("value")),
                         f"rule {name!r}: value must be at least {default.minimum}")
            continue
        policy = policy.with_override(replace(default, value=value, source=source.strip(), local=True,
                                              defined_at=where))
    return policy
