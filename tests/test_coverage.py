"""Placement rules on hand-built units; each expected gap names the rule's source beside it."""
from datetime import date

from recordkit import model as m
from recordkit.checks import evaluate
from recordkit.loader import load_records

from .conftest import unit_yaml

AS_OF = date(2026, 12, 1)


def gaps(records, rooms, devices, flags="", policy=""):
    files = {"p.yaml": unit_yaml(rooms, devices, flags)}
    if policy:
        files["policy.yaml"] = policy
    folder = records(files)
    loaded = load_records(folder, AS_OF)
    assert loaded.problems == [], [str(p) for p in loaded.problems]
    return [(f.rule, f.kind, f.reason, f.source) for f in evaluate(loaded.portfolio, loaded.policy, AS_OF)
            if f.task == "coverage"]


BED = "id: bed, name: Bedroom, level: 1, use: bedroom"
HALL = "id: hall, name: Landing, level: 1, use: hallway, outside_sleeping: true"
LOUNGE = "id: lounge, name: Lounge, level: 0, use: living"


def test_fully_covered_unit_has_no_gaps(records):
    assert gaps(records, [BED, HALL, LOUNGE], [("smoke", "bed", ""), ("smoke", "hall", ""),
                                               ("smoke", "lounge", "")]) == []


def test_smoke_alarm_in_each_sleeping_room(records):
    found = gaps(records, [BED, HALL], [("smoke", "hall", "")])
    # IRC R314.3; NFPA 72 §29.5.1: a smoke alarm in each sleeping room
    assert [(r, k) for r, k, _, _ in found] == [("cov_smoke_bedroom", m.Kind.SMOKE)]
    assert "Bedroom" in found[0][2] and "IRC R314.3" in found[0][3]


def test_smoke_alarm_outside_the_sleeping_area(records):
    found = gaps(records, [BED, HALL], [("smoke", "bed", "")])
    # IRC R314.3; NFPA 72 §29.5.1: outside each sleeping area, in the immediate vicinity of the bedrooms
    assert [r for r, *_ in found] == ["cov_smoke_outside_sleeping"]
    assert "level 1" in found[0][2] and "Landing" in found[0][2]


def test_smoke_alarm_on_every_level_basement_included(records):
    basement = "id: cellar, name: Cellar, level: -1, use: basement"
    found = gaps(records, [BED, HALL, basement], [("smoke", "bed", ""), ("smoke", "hall", "")])
    # IRC R314.3; NFPA 72 §29.5.1: every storey, basements included
    assert [r for r, *_ in found] == ["cov_smoke_every_level"] and "basement" in found[0][2]


def test_co_alarm_with_a_fuel_burning_appliance_or_attached_garage(records):
    kitchen = "id: kitchen, name: Kitchen, level: 1, use: kitchen, fuel_burning: true"
    found = gaps(records, [BED, HALL, kitchen], [("smoke", "bed", ""), ("smoke", "hall", ""),
                                                 ("heat", "kitchen", "")])
    # IRC R315; NFPA 720 §9.4.1.1 (from memory): CO outside each sleeping area and on every level
    assert sorted(r for r, *_ in found) == ["cov_co_every_level", "cov_co_outside_sleeping"]
    assert all(k is m.Kind.CO for _, k, _, _ in found) and "Kitchen" in found[0][2]
    covered = gaps(records, [BED, HALL, kitchen], [("smoke", "bed", ""), ("smoke_co", "hall", ""),
                                                   ("heat", "kitchen", "")])
    assert covered == []  # a combination alarm on the landing covers both


def test_attached_garage_alone_asks_for_co(records):
    found = gaps(records, [BED, HALL], [("smoke", "bed", ""), ("smoke", "hall", "")],
                 flags="      attached_garage: true\n")
    assert sorted(r for r, *_ in found) == ["cov_co_every_level", "cov_co_outside_sleeping"]
    assert "attached garage" in found[0][2]


def test_co_alarm_in_a_bedroom_with_a_fuel_burning_appliance(records):
    bed_stove = "id: bed, name: Stove bedroom, level: 1, use: bedroom, fuel_burning: true"
    found = gaps(records, [bed_stove, HALL], [("smoke", "bed", ""), ("smoke_co", "hall", "")])
    # IRC R315 (from memory): also in a bedroom that holds a fuel-burning appliance
    assert [r for r, *_ in found] == ["cov_co_fuel_bedroom"] and "Stove bedroom" in found[0][2]


def test_no_smoke_alarm_in_a_kitchen_or_bathroom(records):
    kitchen = "id: kitchen, name: Kitchen, level: 1, use: kitchen"
    bath = "id: bath, name: Bathroom, level: 1, use: bathroom"
    found = gaps(records, [BED, HALL, kitchen, bath], [("smoke", "bed", ""), ("smoke", "hall", ""),
                                                       ("smoke", "kitchen", ""), ("smoke", "bath", "")])
    # NFPA 72 §29.11.3.4 (from memory): keep smoke alarms away from cooking and bathroom steam
    assert [r for r, *_ in found] == ["cov_no_smoke_kitchen_bath"] * 2
    assert "heat alarm" in found[0][2] and "NFPA 72" in found[0][3]


def test_interconnection_where_the_unit_requires_it(records):
    found = gaps(records, [BED, HALL], [("smoke", "bed", ", interconnected: true"), ("smoke", "hall", "")],
                 flags="      interconnect_required: true\n")
    # IRC R314.4; NFPA 72 §29.8.2: interconnected so all sound when one sounds
    assert [r for r, *_ in found] == ["cov_interconnect"] and "d1" in found[0][2]
    assert "R314.4" in found[0][3]


def test_england_2022_rule_set(records):
    kitchen = "id: kitchen, name: Kitchen, level: 1, use: kitchen, fuel_burning: true"
    downstairs = "id: lounge, name: Lounge, level: 0, use: living"
    found = gaps(records, [BED, HALL, kitchen, downstairs], [("smoke", "hall", ""), ("heat", "kitchen", "")],
                 policy="coverage: england-2022\n")
    # Smoke and CO Alarm (Amendment) Regulations 2022: a smoke alarm on every storey used as living
    # accommodation, and a CO alarm in a room with a fixed combustion appliance; no bedroom rule
    assert sorted(r for r, *_ in found) == ["cov_co_fuel_room", "cov_smoke_every_level"]
    assert all("Regulations 2015" in s or "Regulations 2022" in s for *_, s in found)  # both name the England rules


def test_retired_alarms_do_not_cover(records):
    found = gaps(records, [BED, HALL], [("smoke", "bed", ", removed: 2026-01-01"), ("smoke", "hall", "")])
    assert [r for r, *_ in found] == ["cov_smoke_bedroom"]
