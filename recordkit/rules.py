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

# 50 years in each unit: longer than any alarm lives, and short enough that no date sum can overflow.
MAX_INTERVAL = {"days": 18262, "weeks": 2609, "months": 600, "years": 50}
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
        interval = cls(int(match.group(1)), match.group(2) + "s")
        if interval.amount > MAX_INTERVAL[interval.unit]:
            raise ValueError(f"{interval} is longer than any alarm rule needs (at most "
                             f"{MAX_INTERVAL[interval.unit]} {interval.unit})")
        return interval


@dataclass(frozen=True)
class Quantity:
    """A measured value with its unit, e.g. 10 dB, 3300 Hz, 2 minutes, 50 %."""

    amount: float
    unit: str

    def __str__(self) -> str:
        amount = int(self.amount) if float(self.amount).is_integer() else self.amount
        return f"{amount} {self.unit}" if self.unit != "%" else f"{amount} %"

    @classmethod
    def parse(cls, value: Any, unit: str) -> "Quantity":
        """A number, or a number followed by the same unit ("12 dB")."""
        if isinstance(value, (int, float)) and not isinstance(value, bool):
            return cls(float(value), unit)
        match = re.match(r"^\s*(-?\d+(?:\.\d+)?)\s*(.*?)\s*$", value) if isinstance(value, str) else None
        if not match or match.group(2) not in ("", unit):
            raise ValueError(f"expected a number of {unit}, e.g. '12 {unit}', got {value!r}")
        return cls(float(match.group(1)), unit)


@dataclass(frozen=True)
class Rule:
    name: str
    title: str
    value: Interval | Quantity | str   # str for rules that are a fixed instruction ("replace now")
    source: str
    local: bool = False         # True when policy.yaml set it
    defined_at: Source | None = None
    minimum: int = 1            # smallest amount an override may give

    @property
    def overridable(self) -> bool:
        return isinstance(self.value, (Interval, Quantity))

    def parse_value(self, value: Any) -> Interval | Quantity:
        """Read an override in the same kind of value as this rule's default."""
        if isinstance(self.value, Quantity):
            return Quantity.parse(value, self.value.unit)
        return Interval.parse(value)


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
    Rule("sensor_test_every", "Test a leak sensor or listening node", Interval(1, "months"),
         "the maker's instructions; monthly, with the alarms, is common practice"),
    Rule("sensor_battery_every", "Change a leak sensor's or listening node's replaceable battery",
         Interval(12, "months"), "the maker's instructions; yearly is common practice"),
    Rule("failed_test", "Fix or replace after a failed test", "fix now",
         "common practice: a failed alarm is repaired or replaced at once; "
         "NFPA 72 §7.6 records what was done about a failure (from memory)"),
    Rule("due_soon_replace", "Warn before a replacement date", Interval(90, "days"),
         "recordkit default (common practice: order a replacement ahead)", minimum=0),
    Rule("due_soon_test", "Warn before a test date", Interval(7, "days"),
         "recordkit default (common practice)", minimum=0),
    Rule("due_soon_battery", "Warn before a battery date", Interval(30, "days"),
         "recordkit default (common practice: buy batteries ahead)", minimum=0),
    # listening nodes: can the node hear the alarm, and does its circuit read the pattern as one alarm?
    Rule("alarm_output", "Sound output of a listed alarm", "85 dBA at 3 m", "UL 217; EN 14604"),
    Rule("door_loss", "Loss through a closed interior door", Quantity(17, "dB"),
         "UL FSRI tests, about 95 to 78 dBA across a closed bedroom door (15-20 dB) - from memory; common practice"),
    Rule("wall_loss", "Loss through an interior stud wall", Quantity(33, "dB"),
         "building acoustics tables: STC 33 typical for a stud wall (30-35 dB) - from memory"),
    Rule("min_hearing_margin", "Least margin of the alarm's level over the node's trigger level",
         Quantity(10, "dB"), "common practice (headroom for furniture, closed doors, a weak battery)"),
    Rule("alarm_tone", "Alarm tone a node is checked against", Quantity(3300, "Hz"),
         "about 3 kHz, most between 2.8 and 3.5 kHz (Fire Protection Research Foundation studies); "
         "3.3 kHz is common practice"),
    Rule("low_frequency_tone", "Low-frequency alarm tone for sleeping areas", Quantity(520, "Hz"),
         "NFPA 72 §18.4.6.3 (2010+): 520 Hz square wave - from memory"),
    Rule("temporal_3", "Smoke alarm evacuation pattern", "3 x 0.5 s on / 0.5 s off, then 1.5 s off",
         "ISO 8201; ANSI/ASA S3.41"),
    Rule("temporal_4", "CO alarm pattern", "4 x 0.1 s on / 0.1 s off, then about 5 s off",
         "UL 2034; NFPA 72 - from memory"),
    Rule("hold_threshold", "Logic threshold of a node's hold circuit (when not recorded)", Quantity(50, "%"),
         "recordkit default (a logic input switching at half the charged level)", minimum=1),
    Rule("evidence_window", "How close a node's report must be to an alarm test", Quantity(2, "minutes"),
         "recordkit default (common practice)", minimum=0),
    Rule("evidence_lookback", "How far back node reports are matched to alarm tests", Interval(12, "months"),
         "recordkit default; NFPA 72 §7.6 keeps test records at least a year (from memory)"),
)

DEFAULT_COVERAGE = "us-irc"  # placement rule sets are data files: see `rulesets`


def coverage_set_names() -> list[str]:
    from .rulesets import rule_sets  # rule sets are built from Rule: imported when first asked for

    return list(rule_sets())


class Policy:
    """The rules in force, by name, with the chosen placement rule set and optional unit costs."""

    def __init__(self, rules: tuple[Rule, ...] = DEFAULT_RULES, coverage: str = DEFAULT_COVERAGE,
                 costs: dict[str, float] | None = None, currency: str = ""):
        self._rules = {rule.name: rule for rule in rules}
        self.coverage = coverage
        self.costs = costs or {}
        self.currency = currency

    @property
    def rule_set(self):
        """The chosen placement rule set (`rulesets.RuleSet`)."""
        from .rulesets import rule_sets

        return rule_sets()[self.coverage]

    @property
    def coverage_rules(self) -> tuple[Rule, ...]:
        return tuple(coverage.rule for coverage in self.rule_set.rules)

    def __getitem__(self, name: str) -> Rule:
        return self._rules[name]

    def __iter__(self):
        """Every rule in force: the schedule and node rules, then the chosen placement rules."""
        return iter((*self._rules.values(), *self.coverage_rules))

    def interval(self, name: str) -> Interval:
        value = self._rules[name].value
        assert isinstance(value, Interval), name
        return value

    def quantity(self, name: str) -> float:
        value = self._rules[name].value
        assert isinstance(value, Quantity), name
        return value.amount

    def with_override(self, rule: Rule) -> "Policy":
        return self.changed(rules=tuple(rule if r.name == rule.name else r for r in self._rules.values()))

    def changed(self, **changes) -> "Policy":
        """A copy with some of rules, coverage, costs and currency replaced."""
        values = {"rules": tuple(self._rules.values()), "coverage": self.coverage, "costs": self.costs,
                  "currency": self.currency}
        return Policy(**{**values, **changes})


POLICY_KEYS = ("policy", "coverage", "replacement_costs")
COST_KINDS = ("smoke", "co", "smoke_co", "heat", "leak", "listening_node")


_EXAMPLES = {"coverage": "england-2022", "replacement_costs": "{currency: GBP, smoke: 18}"}


def apply_policy_file(tree: Any, path: str, problems: Problems, policy: Policy | None = None) -> Policy:
    """Apply a parsed `policy.yaml` (a located YAML tree) to the defaults.

    Shape:
        coverage: us-irc | england-2022           # placement rule set (default us-irc)
        policy: {RULE_NAME: {value: "1 week", source: "where this comes from"}}
        replacement_costs: {currency: "GBP", smoke: 18, co: 25}   # optional, for the budget chart
    """
    policy = policy or Policy()
    if tree is None:
        return policy
    if not isinstance(tree, dict) or set(tree) - set(POLICY_KEYS):
        line = getattr(tree, "line", 1)
        problems.add(Source(path, line), "policy.yaml holds 'coverage:', 'policy:' (rule name to "
                     "{value, source}) and 'replacement_costs:'; nothing else")
        return policy
    if "coverage" in tree:
        policy = _apply_coverage(tree, path, problems, policy)
    if "replacement_costs" in tree:
        policy = _apply_costs(tree, path, problems, policy)
    overrides = tree.get("policy") or {}
    if not isinstance(overrides, dict):
        problems.add(Source(path, tree.line_of("policy")), "'policy:' must be a mapping of rule name to "
                     "{value, source}")
        return policy
    names = {rule.name for rule in policy if not rule.name.startswith("cov_")}
    for name, body in overrides.items():
        where = Source(path, overrides.key_lines[name])
        if name in POLICY_KEYS:
            problems.add(where, f"'{name}:' belongs at the top level of policy.yaml, not under 'policy:' "
                         f"(write it with no indent, e.g. '{name}: {_EXAMPLES.get(name, '...')}')")
            continue
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
            value = default.parse_value(body["value"])
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


def _apply_coverage(tree, path: str, problems: Problems, policy: Policy) -> Policy:
    chosen = tree["coverage"]
    if chosen not in coverage_set_names():
        problems.add(Source(path, tree.line_of("coverage")),
                     f"coverage: {chosen!r}; choose one of: {', '.join(coverage_set_names())}")
        return policy
    return policy.changed(coverage=chosen)


def _apply_costs(tree, path: str, problems: Problems, policy: Policy) -> Policy:
    costs = tree["replacement_costs"]
    where = Source(path, tree.line_of("replacement_costs"))
    if not isinstance(costs, dict):
        problems.add(where, "replacement_costs: a mapping of device kind to the cost of one replacement")
        return policy
    currency, amounts = "", {}
    for key, value in costs.items():
        line = Source(path, costs.key_lines[key])
        if key == "currency":
            currency = str(value)
        elif key not in COST_KINDS:
            problems.add(line, f"replacement_costs: unknown kind {key!r}; kinds: {', '.join(COST_KINDS)}")
        elif isinstance(value, bool) or not isinstance(value, (int, float)) or value < 0:
            problems.add(line, f"replacement_costs: {key} must be a number, got {value!r}")
        else:
            amounts[key] = float(value)
    return policy.changed(costs=amounts, currency=currency)
