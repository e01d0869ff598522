"""Coverage rule sets as data: every rule of every set fires when it should and not otherwise, on
hand-built units; the scenarios the codes turn on; the data files themselves. Each expected value names its
source (../shared/reference/standards.md)."""
from __future__ import annotations

from datetime import date

import pytest

from recordkit.checks import evaluate
from recordkit.coverage import CHECKS
from recordkit.errors import Problems
from recordkit.loader import load_records
from recordkit.rulesets import RULESETS, load_rule_set, rule_sets

from .conftest import unit_yaml

AS_OF = date(2026, 12, 1)


def coverage(records, rule_set, rooms, devices, flags=""):
    folder = records({"p.yaml": unit_yaml(rooms, devices, flags), "policy.yaml": f"coverage: {rule_set}\n"})
    loaded = load_records(folder, AS_OF)
    assert loaded.problems == [], [str(p) for p in loaded.problems]
    return [(f.rule, f.reason) for f in evaluate(loaded.portfolio, loaded.policy, AS_OF) if f.task == "coverage"]


def fired(records, rule_set, rooms, devices, flags=""):
    return {rule for rule, _ in coverage(records, rule_set, rooms, devices, flags)}


BED = "id: bed, name: Bedroom, level: 1, use: bedroom"
LANDING = "id: landing, name: Landing, level: 1, use: hallway, outside_sleeping: true"
LOUNGE = "id: lounge, name: Lounge, level: 0, use: living"
KITCHEN = "id: kitchen, name: Kitchen, level: 0, use: kitchen"
BOILER_KITCHEN = "id: kitchen, name: Kitchen, level: 0, use: kitchen, appliances: [gas_boiler]"
HOB_KITCHEN = "id: kitchen, name: Kitchen, level: 0, use: kitchen, appliances: [gas_cooker]"
HALL = "id: hall, name: Hall, level: 0, use: hallway"
SMOKE_ALL = [("smoke", "bed", ""), ("smoke", "landing", ""), ("smoke", "lounge", "")]

# (rule set, rule, rooms, devices, unit flags, fires?) - a positive and a negative case for every rule.
CASES = [
    # IRC R314.3 / NFPA 72 §29.5.1 (standards.md, "Placement"); IRC R315 - from memory
    ("us-irc", "cov_rooms_recorded", [], [], "", True),
    ("us-irc", "cov_rooms_recorded", [BED], [], "", False),
    ("us-irc", "cov_smoke_bedroom", [BED, LANDING], [("smoke", "landing", "")], "", True),
    ("us-irc", "cov_smoke_bedroom", [BED, LANDING], [("smoke", "bed", "")], "", False),
    ("us-irc", "cov_smoke_outside_sleeping", [BED, LANDING], [("smoke", "bed", "")], "", True),
    ("us-irc", "cov_smoke_outside_sleeping", [BED, LANDING], [("smoke", "landing", "")], "", False),
    ("us-irc", "cov_smoke_every_level", [BED, LANDING, LOUNGE], SMOKE_ALL[:2], "", True),
    ("us-irc", "cov_smoke_every_level", [BED, LANDING, LOUNGE], SMOKE_ALL, "", False),
    ("us-irc", "cov_co_outside_sleeping", [BED, LANDING, BOILER_KITCHEN], [("co", "kitchen", "")], "", True),
    ("us-irc", "cov_co_outside_sleeping", [BED, LANDING, KITCHEN], [], "", False),  # nothing burns fuel
    ("us-irc", "cov_co_every_level", [BED, LANDING, BOILER_KITCHEN], [("co", "landing", "")], "", True),
    ("us-irc", "cov_co_every_level", [BED, LANDING, BOILER_KITCHEN], [("co", "landing", ""), ("co", "kitchen", "")],
     "", False),
    ("us-irc", "cov_co_fuel_bedroom", ["id: bed, level: 1, use: bedroom, appliances: [gas_fire]", LANDING],
     [("co", "landing", "")], "", True),
    ("us-irc", "cov_co_fuel_bedroom", [BED, LANDING], [], "", False),
    ("us-irc", "cov_no_smoke_kitchen_bath", [KITCHEN], [("smoke", "kitchen", "")], "", True),
    ("us-irc", "cov_no_smoke_kitchen_bath", [KITCHEN], [("heat", "kitchen", "")], "", False),
    ("us-irc", "cov_interconnect", [BED], [("smoke", "bed", "")], "      interconnect_required: true\n", True),
    ("us-irc", "cov_interconnect", [BED], [("smoke", "bed", ", interconnected: true")],
     "      interconnect_required: true\n", False),
    # England: 2015 Regulations as amended 2022 (standards.md, "UK rentals (England)")
    ("england-2022", "cov_rooms_recorded", [], [], "", True),
    ("england-2022", "cov_rooms_recorded", [LOUNGE], [], "", False),
    ("england-2022", "cov_smoke_every_level", [LOUNGE, BED], [("smoke", "lounge", "")], "", True),
    ("england-2022", "cov_smoke_every_level", [LOUNGE, BED], [("smoke", "lounge", ""), ("smoke", "bed", "")], "",
     False),
    ("england-2022", "cov_co_fuel_room", [BOILER_KITCHEN], [], "", True),
    ("england-2022", "cov_co_fuel_room", [HOB_KITCHEN], [], "", False),  # gas cookers are excluded
    ("england-2022", "cov_no_smoke_kitchen_bath", ["id: bath, level: 0, use: bathroom"], [("smoke", "bath", "")],
     "", True),
    ("england-2022", "cov_no_smoke_kitchen_bath", [HALL], [("smoke", "hall", "")], "", False),
    ("england-2022", "cov_interconnect", [LOUNGE], [("smoke", "lounge", "")], "      interconnect_required: true\n",
     True),
    ("england-2022", "cov_interconnect", [LOUNGE], [("smoke", "lounge", "")], "", False),
    # Scotland: tolerable standard, 2019 Order (standards.md, "Scotland") - from memory
    ("scotland-2022", "cov_rooms_recorded", [], [], "", True),
    ("scotland-2022", "cov_rooms_recorded", [LOUNGE], [], "", False),
    ("scotland-2022", "cov_smoke_living_room", [LOUNGE, HALL], [("smoke", "hall", "")], "", True),
    ("scotland-2022", "cov_smoke_living_room", [LOUNGE], [("smoke", "lounge", "")], "", False),
    ("scotland-2022", "cov_smoke_circulation", [LOUNGE, HALL, LANDING], [("smoke", "hall", "")], "", True),
    ("scotland-2022", "cov_smoke_circulation", [LOUNGE, HALL, LANDING], [("smoke", "hall", ""),
                                                                         ("smoke", "landing", "")], "", False),
    ("scotland-2022", "cov_heat_kitchen", [KITCHEN], [("smoke", "kitchen", "")], "", True),  # smoke is not heat
    ("scotland-2022", "cov_heat_kitchen", [KITCHEN], [("heat", "kitchen", "")], "", False),
    ("scotland-2022", "cov_interlinked", [KITCHEN], [("heat", "kitchen", "")], "", True),  # heat alarms too
    ("scotland-2022", "cov_interlinked", [KITCHEN], [("heat", "kitchen", ", interconnected: true")], "", False),
    ("scotland-2022", "cov_sealed_or_mains", [LOUNGE], [("smoke", "lounge", ", power: battery")], "", True),
    ("scotland-2022", "cov_sealed_or_mains", [LOUNGE], [("smoke", "lounge", ", power: mains_backup")], "", False),
    ("scotland-2022", "cov_co_carbon_fuel", ["id: lounge, level: 0, use: living, flue: true"], [], "", True),
    ("scotland-2022", "cov_co_carbon_fuel", [HOB_KITCHEN], [], "", False),  # a cooker alone: no CO rule
    ("scotland-2022", "cov_no_smoke_kitchen_bath", [KITCHEN], [("smoke", "kitchen", "")], "", True),
    ("scotland-2022", "cov_no_smoke_kitchen_bath", [LOUNGE], [("smoke", "lounge", "")], "", False),
]


def test_every_rule_of_every_set_has_a_positive_and_a_negative_case():
    cases = {(rule_set, rule, fires) for rule_set, rule, *_, fires in CASES}
    for name, rule_set in rule_sets().items():
        for coverage_rule in rule_set.rules:
            for fires in (True, False):
                assert (name, coverage_rule.rule.name, fires) in cases, (name, coverage_rule.rule.name, fires)


@pytest.mark.parametrize("rule_set, rule, rooms, devices, flags, fires", CASES,
                         ids=[f"{c[0]}:{c[1]}:{'fires' if c[5] else 'quiet'}" for c in CASES])
def test_each_rule_fires_only_when_it_should(records, rule_set, rule, rooms, devices, flags, fires):
    assert (rule in fired(records, rule_set, rooms, devices, flags)) is fires


# ---- scenarios ---------------------------------------------------------------------------------

def test_three_levels_with_a_habitable_loft(records):
    rooms = [LOUNGE, BED, LANDING, "id: attic-bed, name: Attic room, level: 2, use: loft, habitable: true"]
    devices = SMOKE_ALL
    # IRC R314.3 item 3: each storey including habitable attics - from memory
    found = coverage(records, "us-irc", rooms, devices)
    assert [reason for rule, reason in found if rule == "cov_smoke_every_level"] == ["no smoke alarm on level 2"]
    # an unconverted loft does not make level 2 a storey that needs an alarm
    assert "cov_smoke_every_level" not in fired(records, "us-irc", rooms[:3] + [
        "id: loft, name: Loft, level: 2, use: loft"], devices)


def test_two_sleeping_wings_are_two_sleeping_areas(records):
    rooms = ["id: bed-a, name: Bed A, level: 1, use: bedroom", "id: bed-b, name: Bed B, level: 1, use: bedroom",
             "id: bed-c, name: Bed C, level: 1, use: bedroom",
             "id: hall-a, name: East hall, level: 1, use: hallway, serves: [bed-a, bed-b]",
             "id: hall-c, name: West hall, level: 1, use: hallway, serves: [bed-c]"]
    smoke = [("smoke", b, "") for b in ("bed-a", "bed-b", "bed-c")] + [("smoke", "hall-a", "")]
    # IRC R314.3 item 2: outside each *separate* sleeping area (two wings: two areas) - wording from memory
    found = [reason for rule, reason in coverage(records, "us-irc", rooms, smoke)
             if rule == "cov_smoke_outside_sleeping"]
    assert len(found) == 1 and "Bed C" in found[0] and "West hall" in found[0] and "Bed A" not in found[0]


def test_a_hall_on_another_level_does_not_serve_the_bedrooms(records):
    rooms = [BED, "id: hall, name: Hall, level: 0, use: hallway, outside_sleeping: true", LOUNGE]
    # IRC R314.3 item 2: in the immediate vicinity of the bedrooms, on their level
    found = [r for rule, r in coverage(records, "us-irc", rooms, [("smoke", "bed", ""), ("smoke", "hall", "")])
             if rule == "cov_smoke_outside_sleeping"]
    assert len(found) == 1 and "no room on their level is marked outside_sleeping" in found[0] and "level 1" in found[0]


def test_only_rooms_outside_a_sleeping_area_count_for_co(records):
    # a kitchen CO alarm beside the boiler is not "outside the sleeping area" (IRC R315.3 - from memory)
    rooms = [BED, LANDING, "id: kitchen, name: Kitchen, level: 1, use: kitchen, appliances: [gas_boiler]"]
    devices = [("smoke", "bed", ""), ("smoke", "landing", ""), ("co", "kitchen", "")]
    assert "cov_co_outside_sleeping" in fired(records, "us-irc", rooms, devices)


def test_an_attached_garage_needs_co_under_the_irc_not_in_england(records):
    rooms, devices = [BED, LANDING], [("smoke", "bed", ""), ("smoke", "landing", "")]
    flags = "      attached_garage: true\n"
    # IRC R315.2: an attached garage with an opening into the dwelling - from memory
    assert {"cov_co_outside_sleeping", "cov_co_every_level"} <= fired(records, "us-irc", rooms, devices, flags)
    # England 2022: a CO alarm where there is a fixed combustion appliance; a garage alone is not one
    assert not any(r.startswith("cov_co") for r in fired(records, "england-2022", rooms, devices, flags))


def test_a_garage_only_storey_needs_no_alarm(records):
    rooms = ["id: garage, name: Garage, level: 0, use: garage", BED, LANDING]
    devices = [("smoke", "bed", ""), ("smoke", "landing", "")]
    # England reg. 4(1)(a): a storey with living accommodation; IRC: a garage is not a storey of the dwelling
    for rule_set in ("us-irc", "england-2022"):
        assert "cov_smoke_every_level" not in fired(records, rule_set, rooms, devices)


def test_a_gas_hob_only(records):
    rooms = [BED, LANDING, "id: kitchen, name: Kitchen, level: 1, use: kitchen, appliances: [gas_cooker]"]
    devices = [("smoke", "bed", ""), ("smoke", "landing", ""), ("heat", "kitchen", ", interconnected: true")]
    # IRC R315.2: any fuel-fired appliance, cookers included - from memory
    assert "cov_co_every_level" in fired(records, "us-irc", rooms, devices)
    # England 2022 and Scotland 2019: gas cookers are excluded
    assert not any(r.startswith("cov_co") for r in fired(records, "england-2022", rooms, devices))
    assert not any(r.startswith("cov_co") for r in fired(records, "scotland-2022", rooms, devices))


def test_an_unfinished_basement_counts_under_the_irc_not_in_england(records):
    rooms = [LOUNGE, "id: cellar, name: Cellar, level: -1, use: basement"]
    devices = [("smoke", "lounge", "")]
    # IRC R314.3 item 3: "including basements"; England: only storeys with living accommodation
    assert "cov_smoke_every_level" in fired(records, "us-irc", rooms, devices)
    assert "cov_smoke_every_level" not in fired(records, "england-2022", rooms, devices)


def test_a_kitchen_without_a_heat_alarm_in_scotland(records):
    found = coverage(records, "scotland-2022", [KITCHEN, LOUNGE], [("smoke", "lounge", ", interconnected: true")])
    assert ("cov_heat_kitchen", "no heat alarm in the kitchen Kitchen") in found


def test_the_generic_fuel_burning_flag_counts_as_a_fixed_appliance(records):
    rooms = ["id: lounge, name: Lounge, level: 0, use: living, fuel_burning: true"]
    assert "cov_co_fuel_room" in fired(records, "england-2022", rooms, [("smoke", "lounge", "")])


def test_serves_must_name_bedrooms_of_the_unit(records):
    folder = records({"p.yaml": unit_yaml([BED, "id: hall, level: 1, use: hallway, serves: [bed, study]"], [])})
    messages = [str(p) for p in load_records(folder, AS_OF).problems]
    assert len(messages) == 1 and "serves 'study', which is not a bedroom of this unit" in messages[0]
    assert ":8:" in messages[0]  # property, id, name, units, - id: u, rooms:, bed, then the hall on line 8


# ---- the data files -----------------------------------------------------------------------------

def test_every_shipped_rule_set_loads_with_sources():
    found = rule_sets()
    assert set(found) == {"us-irc", "england-2022", "scotland-2022"}
    for rule_set in found.values():
        assert rule_set.title and rule_set.rules
        for rule in rule_set.rules:
            assert rule.check in CHECKS and rule.rule.source and rule.rule.title and rule.finding
    assert "from memory" in found["scotland-2022"].title  # said so, as the issue asks


@pytest.mark.parametrize("edit, message", [
    (("check: alarm_in_each_room\n    alarm: smoke\n    rooms: {use: [bedroom]}",
      "check: alarm_in_every_room\n    alarm: smoke\n    rooms: {use: [bedroom]}"), "unknown check 'alarm_in_every_room'"),
    (("finding: \"no smoke alarm in the sleeping room {room}\"", "finding: \"no alarm in {chamber}\""),
     "'finding' names chamber"),
    (("rooms: {use: [bedroom]}", "rooms: {use: [bedchamber]}"), "'use' has 'bedchamber'"),
])
def test_a_broken_rule_set_file_says_file_and_line(tmp_path, edit, message):
    text = (RULESETS / "us-irc.yaml").read_text()
    assert edit[0] in text
    line = text[:text.index(edit[0])].count("\n") + 1  # the line the edit starts on
    broken = tmp_path / "us-irc.yaml"
    broken.write_text(text.replace(edit[0], edit[1], 1))
    problems = Problems()
    assert load_rule_set(broken, problems) is None or problems
    assert any(p.source.line == line and message in p.message for p in problems), [str(p) for p in problems]
