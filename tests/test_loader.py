"""Every kind of bad record is reported as file:line: message, and loading goes on."""
import os
from datetime import date

import pytest

from recordkit.loader import load_records

from .conftest import HOUSE, device_yaml

AS_OF = date(2026, 12, 1)
SMOKE = dict(id="s1", kind="smoke", room="hall", power="sealed", manufactured="2020-01", installed="2020-02-01")


def problems_of(records, files):
    folder = records(files)
    return [(p.source.path.replace(str(folder) + os.sep, ""), p.source.line, p.message)
            for p in load_records(folder, AS_OF).problems]


def one_problem(records, text, name="house.yaml"):
    found = problems_of(records, {name: text})
    assert len(found) == 1, found
    return found[0]


def with_device(**changes):
    fields = {**SMOKE, **changes}
    return HOUSE + device_yaml(**{k: v for k, v in fields.items() if v is not None})


EVENT = "events:\n  - {date: 2026-11-01, device: test-house/main/s1, action: test, result: pass}\n"


@pytest.mark.parametrize("text, line, words", [
    # records, line numbers counted by hand in HOUSE (devices start on line 11)
    (with_device(id="Bad_Id"), 11, "bad id 'Bad_Id'"),
    (with_device(id="con"), 11, "bad id 'con'"),
    (with_device(kind="smoky"), 11, "'kind' is 'smoky'; expected one of"),
    (with_device(room="attic"), 11, "room 'attic' is not a room of this unit"),
    (with_device(room="hal"), 11, "did you mean 'hall'?"),
    (with_device(power=None), 11, "missing 'power'"),
    (with_device(manufactured=None), 11, "missing 'manufactured'"),
    (with_device(manufactured="2026-02-30"), 11, "2026-02-30 is not a real date"),
    (with_device(manufactured="2020-13"), 11, "2020-13 is not a real month"),
    (with_device(manufactured="March 2020"), 11, "expected a date as YYYY-MM-DD, YYYY-MM or unknown"),
    (with_device(manufactured="2020-03", installed="2020-02-01"), 11, "is after installed"),
    (with_device(removed="2019-01-01"), 11, "removed (2019-01-01) is before installed"),
    (with_device(life_years=0), 11, "'life_years' must be at least 1"),
    (with_device(life_years="ten"), 11, "'life_years' must be a whole number"),
    (with_device(sensor="electrochemical"), 11, "does not have a electrochemical sensor"),
    (with_device(colour="white"), 11, "unknown key 'colour'"),
    (with_device(interconnected="yes please"), 11, "must be true or false"),
    (with_device(kind="listening_node"), 11, "needs 'listens_to'"),
    (with_device(listens_to="[s1]"), 11, "only a listening_node"),
    (with_device(kind="listening_node", manufactured=None, listens_to="[nowhere]"), 11, "no device 'nowhere'"),
    (HOUSE.replace("level: 1, use: bedroom", "level: one, use: bedroom") + device_yaml(**SMOKE), 7,
     "'level' must be a whole number"),
    (HOUSE.replace("use: hallway", "use: corridor") + device_yaml(**SMOKE), 8, "'use' is 'corridor'"),
    (HOUSE.replace("id: test-house", "id: Test House") + device_yaml(**SMOKE), 2, "bad id"),
    (HOUSE + device_yaml(**SMOKE) + device_yaml(**SMOKE), 12, "device: duplicate id 's1' (first at"),
    (HOUSE.replace("{id: hall,", "{id: bed-1,") + device_yaml(**{**SMOKE, "room": "bed-1"}), 8,
     "room: duplicate id 'bed-1'"),
    (HOUSE + "        - just text\n", 11, "expected a mapping"),
    ("propertee:\n  id: x\n", 1, "unknown key 'propertee'"),
    ("property:\n  id: x\n  units: []\n", 2, "missing 'name'"),
    # events (the device is on line 11, events from line 13)
    (with_device() + EVENT.replace("test-house/main/s1", "test-house/main/s2"), 13, "no device 'test-house/main/s2'"),
    (with_device() + EVENT.replace("result: pass", "result: maybe"), 13, "'result' is 'maybe'"),
    (with_device() + EVENT.replace(", result: pass", ""), 13, "a test needs 'result: pass'"),
    (with_device() + EVENT.replace("action: test", "action: battery"), 13, "only a test has a result"),
    (with_device() + EVENT.replace("2026-11-01", "2026-12-02"), 13, "after today (2026-12-01): a date in the future"),
    (with_device() + EVENT.replace("2026-11-01", "2019-12-31"), 13, "before 'test-house/main/s1' was installed"),
    (with_device(removed="2026-10-01") + EVENT, 13, "after 'test-house/main/s1' was retired (2026-10-01)"),
    (with_device() + EVENT.replace("2026-11-01", "2026-11-31"), 13, "2026-11-31 is not a real date"),
    (with_device() + "events:\n  - {date: 2026-11-01, device: test-house/main/s1, action: zap}\n", 13,
     "'action' is 'zap'"),
    (with_device() + "events: {date: 2026-11-01}\n", 12, "'events' must be a list"),
])
def test_each_problem_names_file_and_line(records, text, line, words):
    path, found_line, message = one_problem(records, text)
    assert path == "house.yaml"
    assert found_line == line, message
    assert words in message, message


def test_event_after_a_replace_is_refused(records):
    text = with_device() + ("events:\n"
                            "  - {date: 2026-10-01, device: test-house/main/s1, action: replace}\n"
                            "  - {date: 2026-11-01, device: test-house/main/s1, action: test, result: pass}\n")
    assert one_problem(records, text)[1:] == (14, "event: dated 2026-11-01, after 'test-house/main/s1' was "
                                              "retired (2026-10-01); log it against the device that replaced it")


def test_problems_in_many_files_are_all_collected(records):
    found = problems_of(records, {
        "a.yaml": with_device(kind="smoky"),
        "log/2026.yaml": EVENT.replace("test-house", "no-house"),
        "b.yaml": "property: [1, 2]\n",
    })
    assert {(path, line) for path, line, _ in found} == {("a.yaml", 11), ("b.yaml", 1), ("log/2026.yaml", 2)}


def test_duplicate_property_across_files(records):
    found = problems_of(records, {"a.yaml": with_device(), "b.yaml": with_device()})
    assert [(p, ln) for p, ln, _ in found] == [("b.yaml", 2)]
    assert "duplicate id 'test-house'" in found[0][2] and "a.yaml:2" in found[0][2]


def test_events_may_live_in_their_own_files_and_use_yml(records):
    folder = records({"house.yaml": with_device(), "log/2026.yml": EVENT})
    loaded = load_records(folder, AS_OF)
    assert loaded.problems == [] and len(loaded.portfolio.events) == 1


def test_missing_folder_is_a_problem_not_a_crash(tmp_path):
    loaded = load_records(tmp_path / "nowhere", AS_OF)
    assert "records folder not found" in str(loaded.problems[0])


def test_symlink_leaving_the_folder_is_refused(records, tmp_path):
    outside = tmp_path / "outside.yaml"
    outside.write_text(with_device())
    folder = records({"log/2026.yaml": EVENT.replace("test-house/main/s1", "x/y/z")})
    (folder / "linked.yaml").symlink_to(outside)
    messages = [str(p) for p in load_records(folder, AS_OF).problems]
    assert any("linked.yaml" in m and "outside the records folder" in m for m in messages), messages


def test_a_problem_quoting_record_text_stays_on_one_line(records):
    # found by the fuzz suite: a room id holding a newline made a two-line message
    path, line, message = one_problem(records, with_device(room='"a\\nb"'))
    assert message == "device 's1': room 'a\\nb' is not a room of this unit" and "\n" not in message
