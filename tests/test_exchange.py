"""log, import, export, calendar and schema through the real entry point."""
import csv
import io
import json
import shutil
from datetime import date, timedelta

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from recordkit.errors import Problems
from recordkit.loader import load_records
from recordkit.schema import record_schema
from recordkit.yamltree import read_yaml

from .conftest import DEMO_AS_OF, DEMO_RECORDS, HOUSE, REPO, device_yaml, run_cli

AS_OF = DEMO_AS_OF.isoformat()
TODAY = date.today()


@pytest.fixture
def demo_copy(tmp_path):
    target = tmp_path / "records"
    shutil.copytree(DEMO_RECORDS, target)
    return target


def small_records(records, installed="2020-02-01"):
    return records({"house.yaml": HOUSE
                    + device_yaml(id="s1", kind="smoke", room="hall", power="battery", manufactured="2020-01",
                                  installed=installed)
                    + device_yaml(id="s2", kind="smoke", room="bed-1", power="sealed", manufactured="2020-01",
                                  installed=installed)
                    + device_yaml(id="old", kind="smoke", room="bed-1", power="sealed", manufactured="2010-01",
                                  installed="2010-02-01", removed="2020-02-01")})


# ---- log ------------------------------------------------------------------------------------

def test_log_appends_and_prints_the_next_due_date(records):
    folder = small_records(records)
    result = run_cli("log", "test-house/main/s1", "test", "--result", "pass", "--by", "me", "--records", str(folder))
    assert result.returncode == 0, result.stderr
    log = folder / "log" / f"{TODAY.year}.yaml"
    assert log.is_file()
    events = load_records(folder, TODAY).portfolio.events
    assert [(e.device, e.action, e.result, e.by, e.date) for e in events] == [
        ("test-house/main/s1", "test", "pass", "me", TODAY)]
    # US Fire Administration / NFPA: monthly tests -> the next test is a month after today
    from dateutil.relativedelta import relativedelta
    assert f"test {TODAY + relativedelta(months=1)}" in result.stdout


def test_log_a_walk_round_for_every_device_in_service(records):
    folder = small_records(records)
    result = run_cli("log", "--unit", "test-house/main", "test", "--result", "pass", "--records", str(folder))
    assert result.returncode == 0, result.stderr
    devices = sorted(e.device for e in load_records(folder, TODAY).portfolio.events)
    assert devices == ["test-house/main/s1", "test-house/main/s2"]  # not the retired one


@pytest.mark.parametrize("args, words", [
    (["test-house/main/s9", "test", "--result", "pass"], "no device 'test-house/main/s9'"),
    (["test-house/main/s1", "test"], "a test needs 'result: pass'"),
    (["test-house/main/s1", "clean", "--result", "pass"], "only a test has a result"),
    (["test-house/main/old", "clean", "--date", "2021-01-01"], "after 'test-house/main/old' was retired"),
    (["test-house/main/s1", "clean", "--date", "2099-01-01"], "a date in the future"),
    (["test-house/main/s1", "clean", "--file", "../outside.yaml"], "not a file inside the records folder"),
])
def test_log_refuses_bad_events_and_writes_nothing(records, args, words):
    folder = small_records(records)
    records_files = lambda: sorted(p.name for p in folder.rglob("*") if ".recordkit" not in p.parts)  # noqa: E731
    before = records_files()
    result = run_cli("log", *args, "--records", str(folder))
    assert result.returncode == 1 and words in result.stderr, result.stderr
    assert records_files() == before


def test_log_usage_errors(records):
    folder = small_records(records)
    assert run_cli("log", "test-house/main/s1", "paint", "--records", str(folder)).returncode == 2
    assert run_cli("log", "--unit", "test-house/nowhere", "clean", "--records", str(folder)).returncode == 2


# ---- import ---------------------------------------------------------------------------------

def write_csv(path, text):
    path.write_text(text, encoding="utf-8")
    return path


def test_import_matches_headers_any_case_and_reads_spreadsheet_dates(records, tmp_path):
    folder = small_records(records)
    sheet = write_csv(tmp_path / "log.csv", "Date,DEVICE,Action,Result,By,Note\n"
                      "2026-03-01,test-house/main/s1,test,pass,ann,\n"
                      "03/04/2026,test-house/main/s1,battery,,ann,new 9V\n"
                      "\n")
    refused = run_cli("import", str(sheet), "--records", str(folder))
    # 03/04/2026 could be 3 April or 4 March, and nothing else in the sheet says which: never guessed
    assert refused.returncode == 1 and f"{sheet}:3:" in refused.stderr and "--monthfirst" in refused.stderr
    result = run_cli("import", str(sheet), "--records", str(folder), "--monthfirst")
    assert result.returncode == 0, result.stderr
    events = load_records(folder, TODAY).portfolio.events
    assert sorted((e.date, e.action) for e in events) == [(date(2026, 3, 1), "test"), (date(2026, 3, 4), "battery")]
    again = run_cli("import", str(sheet), "--records", str(folder), "--monthfirst")
    assert again.returncode == 0 and "0 new event(s), 2 already recorded" in again.stdout
    assert len(load_records(folder, TODAY).portfolio.events) == 2


def test_import_dayfirst(records, tmp_path):
    folder = small_records(records)
    sheet = write_csv(tmp_path / "log.csv", "date,device,action\n03/04/2026,test-house/main/s1,clean\n")
    assert run_cli("import", str(sheet), "--dayfirst", "--records", str(folder)).returncode == 0
    # with --dayfirst 03/04/2026 is 3 April (dateutil dayfirst=True)
    assert [e.date for e in load_records(folder, TODAY).portfolio.events] == [date(2026, 4, 3)]


BAD_SHEET = ("date,device,action,result\n"
             "2026-03-01,test-house/main/s1,test,pass\n"
             "2026-02-30,test-house/main/s1,test,pass\n"
             "2026-03-02,test-house/main/nope,clean,\n"
             "2026-03-03,test-house/main/s1,test,\n")


def test_import_reports_each_bad_row_and_writes_nothing(records, tmp_path):
    folder = small_records(records)
    sheet = write_csv(tmp_path / "bad.csv", BAD_SHEET)
    result = run_cli("import", str(sheet), "--records", str(folder))
    assert result.returncode == 1
    assert f"{sheet}:3: date '2026-02-30'" in result.stderr
    assert f"{sheet}:4: no device 'test-house/main/nope'" in result.stderr
    assert f"{sheet}:5: a test needs 'result: pass'" in result.stderr
    assert not (folder / "log").exists()


def test_import_skip_bad_and_dry_run(records, tmp_path):
    folder = small_records(records)
    sheet = write_csv(tmp_path / "bad.csv", BAD_SHEET)
    dry = run_cli("import", str(sheet), "--skip-bad", "--dry-run", "--records", str(folder))
    assert dry.returncode == 0 and "would add: - {date: 2026-03-01" in dry.stdout and not (folder / "log").exists()
    real = run_cli("import", str(sheet), "--skip-bad", "--records", str(folder))
    assert real.returncode == 0 and "1 new event(s)" in real.stdout
    assert len(load_records(folder, TODAY).portfolio.events) == 1


def test_import_bad_header(records, tmp_path):
    folder = small_records(records)
    sheet = write_csv(tmp_path / "x.csv", "when,device,what\n2026-01-01,a/b/c,clean\n")
    result = run_cli("import", str(sheet), "--records", str(folder))
    assert result.returncode == 1 and f"{sheet}:1: the sheet has no column for date, action" in result.stderr
    assert "--column date=HEADER" in result.stderr  # and says how to map its own columns


# ---- export, round trip ---------------------------------------------------------------------

def test_csv_import_round_trips_the_export(demo_copy, tmp_path):
    exported = run_cli("export", "-r", str(demo_copy), "--as-of", AS_OF, "--format", "csv", "--table", "events")
    assert exported.returncode == 0
    as_rows = lambda events: sorted((e.date, str(e.time), e.device, e.action, e.result, e.by, e.note,  # noqa: E731
                                     e.evidence) for e in events)
    original = as_rows(load_records(demo_copy, DEMO_AS_OF).portfolio.events)
    shutil.rmtree(demo_copy / "log")  # the events live only in the log files
    sheet = write_csv(tmp_path / "events.csv", exported.stdout)
    result = run_cli("import", str(sheet), "--records", str(demo_copy))
    assert result.returncode == 0, result.stderr
    reloaded = load_records(demo_copy, DEMO_AS_OF)
    assert reloaded.problems == []
    assert as_rows(reloaded.portfolio.events) == original  # times and evidence included, each event once


def test_device_export_agrees_with_status():
    status = json.loads(run_cli("status", "-r", "records", "--as-of", AS_OF, "--format", "json").stdout)
    rows = list(csv.DictReader(io.StringIO(run_cli("export", "-r", "records", "--as-of", AS_OF).stdout)))
    test_due = {i["device"]: i["due"] for i in status["items"] if i["task"] == "test"}
    assert {r["device"]: r["test_due"] for r in rows} == test_due
    exported = json.loads(run_cli("export", "-r", "records", "--as-of", AS_OF, "--format", "json").stdout)
    assert len(exported["devices"]) == len(rows) and len(exported["events"]) == len(
        load_records(DEMO_RECORDS, DEMO_AS_OF).portfolio.events)


# ---- calendar ---------------------------------------------------------------------------------

def read_ics(path):
    from icalendar import Calendar

    return Calendar.from_ical(path.read_bytes())


def test_calendar_has_the_same_tasks_and_dates_as_status(tmp_path):
    out = tmp_path / "due.ics"
    assert run_cli("calendar", "-r", "records", "--as-of", AS_OF, "-o", str(out)).returncode == 0
    status = json.loads(run_cli("status", "-r", "records", "--as-of", AS_OF, "--format", "json").stdout)
    # every dated or device task; coverage gaps belong to a unit and are not calendar events
    expected = sorted((i["device"], i["task"], i["due"] or "unknown") for i in status["items"]
                      if i["task"] != "coverage")
    events = list(read_ics(out).walk("VEVENT"))
    found = sorted((str(e["X-RECORDKIT-DEVICE"]), str(e["X-RECORDKIT-TASK"]), str(e["X-RECORDKIT-DUE"]))
                   for e in events)
    assert found == expected
    for event in events:
        due = str(event["X-RECORDKIT-DUE"])
        start = event.decoded("DTSTART")
        overdue = due == "unknown" or date.fromisoformat(due) < DEMO_AS_OF
        # an overdue task sits on the as-of date, saying since when, so its reminder still fires
        assert start == (DEMO_AS_OF if overdue else date.fromisoformat(due))
        assert str(event["SUMMARY"]).startswith("Overdue") is overdue
        (alarm,) = list(event.walk("VALARM"))  # every task has a reminder
        trigger = alarm.decoded("TRIGGER")
        assert (trigger == timedelta(hours=9)) if overdue else (trigger < timedelta(0))  # RFC 5545 §3.8.6.3


def test_calendar_uids_are_stable_so_reimport_updates(tmp_path):
    first, second = tmp_path / "a.ics", tmp_path / "b.ics"
    run_cli("calendar", "-r", "records", "--as-of", AS_OF, "-o", str(first))
    run_cli("calendar", "-r", "records", "--as-of", "2026-12-20", "-o", str(second))
    uids = lambda path: {str(e["UID"]): int(e["SEQUENCE"]) for e in read_ics(path).walk("VEVENT")}  # noqa: E731
    a, b = uids(first), uids(second)
    assert len(a) == len(list(read_ics(first).walk("VEVENT")))  # unique
    scheduled = lambda ids: {u for u in ids if u.split("@")[0].rsplit("/", 1)[1] in ("replace", "test", "battery")}  # noqa: E731
    assert scheduled(a) == scheduled(b) and scheduled(a)  # the same tasks keep their UIDs as dates move
    assert all(b[uid] > a[uid] for uid in set(a) & set(b))  # a later export supersedes the earlier one


# ---- schema -----------------------------------------------------------------------------------

def plain_tree(path):
    problems = Problems()
    tree = read_yaml(path.read_bytes(), str(path), problems)
    assert not problems
    return json.loads(json.dumps(tree))


def test_demo_records_validate_against_the_schema():
    import jsonschema

    validator = jsonschema.Draft202012Validator(record_schema())
    for path in DEMO_RECORDS.rglob("*.yaml"):
        errors = list(validator.iter_errors(plain_tree(path)))
        assert errors == [], (path, [e.message for e in errors])


@pytest.mark.parametrize("change", [
    lambda d: d["property"]["units"][0]["devices"][0].update(kind="smokey"),
    lambda d: d["property"]["units"][0]["devices"][0].pop("manufactured"),
    lambda d: d["property"]["units"][0]["devices"][0].update(colour="white"),
    lambda d: d["property"]["units"][0].update(id="Flat 1"),
    lambda d: d["property"]["units"][0]["rooms"][0].update(level="one"),
])
def test_a_broken_record_fails_the_schema(change):
    import jsonschema

    tree = plain_tree(DEMO_RECORDS / "tansy-house.yaml")
    change(tree)
    assert list(jsonschema.Draft202012Validator(record_schema()).iter_errors(tree))


def test_broken_event_fails_the_schema():
    import jsonschema

    validator = jsonschema.Draft202012Validator(record_schema())
    assert list(validator.iter_errors({"events": [{"date": "2026-01-01", "device": "a/b/c", "action": "test"}]}))
    assert list(validator.iter_errors({"events": [{"date": "2026-01-01", "device": "a/b/c", "action": "clean",
                                                   "result": "pass"}]}))
    assert not list(validator.iter_errors({"events": [{"date": "2026-01-01", "device": "a/b/c", "action": "clean"}]}))


def test_published_schema_file_is_up_to_date():
    published = json.loads((REPO / "site_templates/assets/records.schema.json").read_text())
    assert published == record_schema(), "run: recordkit schema -o site_templates/assets/records.schema.json"


def test_schema_keys_match_what_the_loader_accepts(records):
    # The loader lists the keys it accepts when it meets an unknown one; the schema must list the same.
    schema = record_schema()["properties"]
    prop = schema["property"]
    unit = prop["properties"]["units"]["items"]
    levels = {
        "property": (prop, "property:\n  id: p\n  name: P\n  units: []\n  zzz: 1\n"),
        "unit": (unit, "property:\n  id: p\n  name: P\n  units:\n    - {id: u, rooms: [], zzz: 1}\n"),
        "room": (unit["properties"]["rooms"]["items"],
                 "property:\n  id: p\n  name: P\n  units:\n    - id: u\n      rooms:\n"
                 "        - {id: r, level: 0, use: hallway, zzz: 1}\n"),
        "device": (unit["properties"]["devices"]["items"],
                   "property:\n  id: p\n  name: P\n  units:\n    - id: u\n      rooms: [{id: r, level: 0, use: hallway}]\n"
                   "      devices:\n        - {id: d, kind: leak, room: r, power: battery, installed: 2020-01-01, zzz: 1}\n"),
        "event": (schema["events"]["items"], "events:\n  - {date: 2020-01-01, device: a/b/c, action: clean, zzz: 1}\n"),
    }
    for name, (sub_schema, text) in levels.items():
        folder = records({f"{name}.yaml": text})
        messages = [p.message for p in load_records(folder, DEMO_AS_OF).problems if "unknown key 'zzz'" in p.message]
        assert messages, name
        allowed = set(messages[0].split("allowed here: ")[1].rstrip(")").split(", "))
        assert allowed == set(sub_schema["properties"]), name
        shutil.rmtree(folder)


def test_hostile_text_stays_inert_in_the_calendar(records, tmp_path):
    from icalendar import Calendar

    evil = "Evil\\r\\nBEGIN:VEVENT\\r\\nSUMMARY:injected\\r\\nEND:VEVENT, <script>x</script>"
    folder = records({"h.yaml": HOUSE.replace("name: Test House", f'name: "{evil}"')
                      + device_yaml(id="s1", kind="smoke", room="hall", power="sealed", manufactured="2020-01",
                                    installed="2020-02-01")
                      + "events:\n  - {date: 2026-11-01, device: test-house/main/s1, action: test, result: fail, "
                        f'note: "{evil}"}}\n'})
    out = tmp_path / "due.ics"
    assert run_cli("calendar", "-r", str(folder), "--as-of", AS_OF, "-o", str(out)).returncode == 0
    events = list(Calendar.from_ical(out.read_bytes()).walk("VEVENT"))
    status = json.loads(run_cli("status", "-r", str(folder), "--as-of", AS_OF, "--format", "json").stdout)
    assert len(events) == len([i for i in status["items"] if i["task"] != "coverage"])  # nothing injected
    assert not any(str(e["SUMMARY"]) == "injected" for e in events)
    fix = next(e for e in events if str(e["X-RECORDKIT-TASK"]) == "fix")
    assert "BEGIN:VEVENT" in str(fix["DESCRIPTION"])  # kept as the text it is


@settings(max_examples=200, deadline=None)
@given(text=st.text(st.characters(blacklist_categories=("Cs",)), max_size=300)
       | st.text("ab \\;,\n", max_size=300))  # mostly ASCII with escapes: the sliced path
def test_calendar_text_survives_escaping_and_folding(text):
    """Any text (commas, semicolons, backslashes, line breaks, wide characters) read back by icalendar is
    the text written, and every physical line is at most 75 octets (RFC 5545 §3.1, §3.3.11)."""
    from icalendar import Event

    from recordkit.exports import _fold, _text

    written = _fold("DESCRIPTION:" + _text(text))
    assert all(len(line.encode("utf-8")) <= 75 for line in written.split("\r\n"))
    for line in written.split("\r\n")[:-1]:  # no line ends inside a backslash escape
        assert (len(line) - len(line.rstrip("\\"))) % 2 == 0, line
    read = Event.from_ical(f"BEGIN:VEVENT\r\n{written}\r\nEND:VEVENT\r\n")
    expected = text.replace("\r\n", "\n").replace("\r", "\n")
    expected = "".join(c for c in expected if c in "\t\n" or (ord(c) >= 32 and ord(c) != 127))
    assert str(read["DESCRIPTION"]) == expected


def test_reminder_durations_read_back_as_written():
    from icalendar.prop import vDDDTypes

    from recordkit.exports import _duration

    for delta in (timedelta(days=-30, hours=9), timedelta(days=-1, hours=9), timedelta(hours=9), timedelta(0)):
        assert vDDDTypes.from_ical(_duration(delta)) == delta


def test_folding_never_cuts_an_escape_at_any_offset():
    """RFC 5545 §3.1 folding, tried with the escape at every position around the 75-octet cut."""
    from icalendar import Event

    from recordkit.exports import _fold, _text

    for pad in range(0, 160):
        for text in ("a" * pad + "x;y,z\\w" * 12, "é" * (pad // 2) + "a" * (pad % 2) + ";" * 40):
            written = _fold("DESCRIPTION:" + _text(text))
            lines = written.split("\r\n")
            assert all(len(line.encode("utf-8")) <= 75 for line in lines)
            for line in lines[:-1]:
                assert (len(line) - len(line.rstrip("\\"))) % 2 == 0, (pad, line)
            assert str(Event.from_ical(f"BEGIN:VEVENT\r\n{written}\r\nEND:VEVENT\r\n")["DESCRIPTION"]) == text
